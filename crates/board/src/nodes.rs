//! Where it fails, node by node, as the page shows it: the core's per-node counts
//! ([`NodeCounts`]) kept in step with the thresholds by moving only the rows whose stop depth
//! changes ([`NodeTracker`]), and the table the page lists them in (sorted, filtered, paged:
//! [`table`]). The numbers are the core's `node_report`, not a copy of it.

use hedgerow_core::nodes::{report_csv, TOP_WRONG};
use hedgerow_core::stats::Interval;
use hedgerow_core::{Batch, NodeCounts, NodeRecord, NodeReport, Settings, Taxonomy};

/// Every row's stop depth under the settings last scored, and the per-node counts of those
/// stops. Moving a row (`moved`) shifts its counts; `resync` finds the rows that changed after
/// any other settings change and shifts only those.
#[derive(Debug, Clone)]
pub struct NodeTracker {
    /// Per row: the depth its path stops at (`None`: it abstains).
    stops: Vec<Option<u8>>,
    counts: NodeCounts,
    /// Per node (the root at `len()`): labelled rows at or below it that abstain.
    abstained: Vec<u64>,
}

/// What happens to the labelled rows at or below one node (the taxonomy view's colours). The
/// four parts add up to `labelled`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Fate {
    pub labelled: u64,
    /// The prediction is the node or deeper, on the label's path or below a coarse label.
    pub reached: u64,
    /// The prediction is right but stops above the node.
    pub above: u64,
    /// The prediction is wrong.
    pub wrong: u64,
    /// The row did not predict.
    pub abstained: u64,
}

/// Add or remove row `r`'s label path in `abstained`.
fn count_abstained(tax: &Taxonomy, batch: &Batch, abstained: &mut [u64], r: usize, add: bool) {
    let g = batch.label(r);
    if g == hedgerow_core::taxonomy::NONE {
        return;
    }
    for d in 0..=tax.depth(g) {
        if let Some(x) = abstained.get_mut(tax.ancestor(g, d) as usize) {
            *x = if add {
                x.wrapping_add(1)
            } else {
                x.wrapping_sub(1)
            };
        }
    }
}

impl NodeTracker {
    /// One full pass under `settings`.
    pub fn new(tax: &Taxonomy, batch: &Batch, settings: &Settings) -> Self {
        let thresholds = settings.thresholds.resolve(tax);
        let mut counts = NodeCounts::new(tax);
        let mut abstained = vec![0; tax.len() + 1];
        let stops = (0..batch.len())
            .map(|r| {
                let s = hedgerow_core::eval::stop_depth(tax, batch, settings.rule, &thresholds, r);
                counts.add(tax, batch, r, s);
                if s.is_none() {
                    count_abstained(tax, batch, &mut abstained, r, true);
                }
                s.map(|s| s as u8)
            })
            .collect();
        NodeTracker {
            stops,
            counts,
            abstained,
        }
    }

    /// Row `r` now stops at `to` (it stopped at `from`; from a drag's moved rows).
    pub fn moved(&mut self, tax: &Taxonomy, batch: &Batch, r: usize, from: usize, to: usize) {
        if let Some(slot) = self.stops.get_mut(r) {
            self.counts.shift(tax, batch, r, Some(from), Some(to));
            *slot = Some(to as u8);
        }
    }

    /// Decode every row's stop under `settings` again and shift the rows that changed; returns
    /// how many did. Costs one pass over the stored paths (no softmax), and per-node work only
    /// for the rows that flip.
    pub fn resync(&mut self, tax: &Taxonomy, batch: &Batch, settings: &Settings) -> usize {
        let thresholds = settings.thresholds.resolve(tax);
        let mut flipped = 0;
        for (r, slot) in self.stops.iter_mut().enumerate() {
            let s = hedgerow_core::eval::stop_depth(tax, batch, settings.rule, &thresholds, r);
            let new = s.map(|s| s as u8);
            if new != *slot {
                self.counts.shift(tax, batch, r, slot.map(usize::from), s);
                if slot.is_none() != new.is_none() {
                    count_abstained(tax, batch, &mut self.abstained, r, new.is_none());
                }
                *slot = new;
                flipped += 1;
            }
        }
        flipped
    }

    /// The counts as they stand.
    pub fn counts(&self) -> &NodeCounts {
        &self.counts
    }

    /// Where each row stops as they stand (`None`: abstains).
    pub fn stop(&self, r: usize) -> Option<usize> {
        self.stops.get(r).copied().flatten().map(usize::from)
    }

    /// Per node (the root at `len()`), what happens to the rows labelled at or below it.
    /// O(nodes + distinct (label, wrong prediction) pairs × depth).
    pub fn fates(&self, tax: &Taxonomy) -> Vec<Fate> {
        let n = tax.len() + 1;
        let mut wrong = vec![0u64; n];
        for ((g, _), k) in self.counts.wrong_pairs() {
            for d in 0..=tax.depth(g) {
                if let Some(x) = wrong.get_mut(tax.ancestor(g, d) as usize) {
                    *x += k;
                }
            }
        }
        (0..n as u32)
            .map(|v| {
                let labelled = self.counts.labelled(v);
                let above = self.counts.stopped_above(v);
                let wrong = wrong.get(v as usize).copied().unwrap_or(0);
                let abstained = self.abstained.get(v as usize).copied().unwrap_or(0);
                Fate {
                    labelled,
                    reached: labelled.saturating_sub(above + wrong + abstained),
                    above,
                    wrong,
                    abstained,
                }
            })
            .collect()
    }

    /// The report under `settings`' thresholds and policy (what `hedgerow nodes` prints).
    pub fn report(&self, tax: &Taxonomy, settings: &Settings) -> NodeReport {
        self.counts.report(tax, settings, TOP_WRONG)
    }
}

/// The per-node report as CSV, the same bytes as `hedgerow nodes --out nodes.csv`.
pub fn csv(tax: &Taxonomy, report: &NodeReport) -> Option<String> {
    let bytes = report_csv(tax, report).ok()?;
    String::from_utf8(bytes).ok()
}

/// The exact shared-threshold curve under the board's settings (per-node thresholds held) as
/// CSV, the bytes `hedgerow curve` writes for the same files and flags. Computed on request:
/// the chart draws a thinned copy.
pub fn curve_csv(board: &crate::state::Board) -> Option<String> {
    let a = board.active.as_ref()?;
    let points = hedgerow_core::exact_curve_for(&a.taxonomy, &a.batch, &board.settings);
    String::from_utf8(hedgerow_core::curve::curve_csv(&points).ok()?).ok()
}

/// A column of the table, to sort by.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Column {
    /// File order (the root first), as `hedgerow nodes` lists them.
    #[default]
    File,
    Id,
    Name,
    Depth,
    Threshold,
    Stops,
    Correct,
    Unverifiable,
    Wrong,
    Labelled,
    StoppedAbove,
    Precision,
}

impl Column {
    /// The sortable columns with their headers, in table order.
    pub const ALL: [(Column, &'static str); 12] = [
        (Column::File, "#"),
        (Column::Id, "id"),
        (Column::Name, "name"),
        (Column::Depth, "depth"),
        (Column::Threshold, "threshold"),
        (Column::Stops, "stops"),
        (Column::Correct, "correct"),
        (Column::Unverifiable, "unverifiable"),
        (Column::Wrong, "wrong"),
        (Column::Labelled, "labelled"),
        (Column::StoppedAbove, "stopped above"),
        (Column::Precision, "precision (95 %)"),
    ];

    /// Whether a first click sorts this column high to low (counts and precision: the largest
    /// first is what one looks for).
    pub fn starts_descending(self) -> bool {
        !matches!(
            self,
            Column::File | Column::Id | Column::Name | Column::Depth
        )
    }
}

/// What the table shows: sort, filters and page.
#[derive(Debug, Clone, PartialEq)]
pub struct TableQuery {
    pub sort: Column,
    pub descending: bool,
    /// Kept when the id or name contains it (case-insensitive); empty keeps all.
    pub filter: String,
    /// Kept when at least this many rows are labelled under the node or stop at it.
    pub min_rows: u64,
    /// 0-based.
    pub page: usize,
    pub page_size: usize,
}

impl Default for TableQuery {
    fn default() -> Self {
        TableQuery {
            sort: Column::File,
            descending: false,
            filter: String::new(),
            min_rows: 0,
            page: 0,
            page_size: 50,
        }
    }
}

impl TableQuery {
    /// A click on `column`'s header: sort by it, or reverse it when it is already the sort.
    pub fn clicked(&self, column: Column) -> TableQuery {
        let descending = if self.sort == column {
            !self.descending
        } else {
            column.starts_descending()
        };
        TableQuery {
            sort: column,
            descending,
            page: 0,
            ..self.clone()
        }
    }
}

/// One line of the table: a node's record with ids for columns.
#[derive(Debug, Clone, PartialEq)]
pub struct TableRow {
    /// Column index (`tax.len()` for the root).
    pub node: u32,
    /// Empty for the root.
    pub id: String,
    pub name: String,
    pub depth: usize,
    pub threshold: f64,
    pub overridden: bool,
    pub stops: u64,
    pub correct: u64,
    pub unverifiable: u64,
    pub wrong: u64,
    pub labelled: u64,
    pub stopped_above: u64,
    pub precision: Option<f64>,
    pub interval: Option<Interval>,
    /// (id, rows), most frequent first.
    pub top_wrong: Vec<(String, u64)>,
}

impl TableRow {
    fn new(tax: &Taxonomy, r: &NodeRecord) -> Self {
        TableRow {
            node: r.node,
            id: tax.id(r.node).to_string(),
            name: tax.name(r.node).to_string(),
            depth: r.depth,
            threshold: r.threshold,
            overridden: r.overridden,
            stops: r.stops,
            correct: r.correct,
            unverifiable: r.unverifiable,
            wrong: r.wrong,
            labelled: r.labelled,
            stopped_above: r.stopped_above,
            precision: r.precision,
            interval: r.precision_interval,
            top_wrong: r
                .top_wrong
                .iter()
                .map(|&(v, k)| (tax.id(v).to_string(), k))
                .collect(),
        }
    }
}

/// One page of the table.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct TablePage {
    pub rows: Vec<TableRow>,
    /// Nodes that pass the filters (the root included), over all pages.
    pub matching: usize,
    /// The page shown (0-based; clamped to the last page) and how many there are.
    pub page: usize,
    pub pages: usize,
}

/// The records that pass `query`'s filters, sorted, and the page asked for. Sorting is by the
/// column, ties in file order; a node without precision sorts below every number. Only the
/// page's rows are turned into [`TableRow`]s.
pub fn table(tax: &Taxonomy, report: &NodeReport, query: &TableQuery) -> TablePage {
    let needle = query.filter.trim().to_lowercase();
    let keep = |r: &&NodeRecord| {
        let rows = r.labelled.max(r.stops);
        rows >= query.min_rows
            && (needle.is_empty()
                || tax.id(r.node).to_lowercase().contains(&needle)
                || tax.name(r.node).to_lowercase().contains(&needle))
    };
    let mut list: Vec<&NodeRecord> = std::iter::once(&report.root)
        .chain(&report.nodes)
        .filter(keep)
        .collect();
    let number = |r: &NodeRecord| -> f64 {
        match query.sort {
            Column::Depth => r.depth as f64,
            Column::Threshold => r.threshold,
            Column::Stops => r.stops as f64,
            Column::Correct => r.correct as f64,
            Column::Unverifiable => r.unverifiable as f64,
            Column::Wrong => r.wrong as f64,
            Column::Labelled => r.labelled as f64,
            Column::StoppedAbove => r.stopped_above as f64,
            Column::Precision => r.precision.unwrap_or(f64::NEG_INFINITY),
            Column::File | Column::Id | Column::Name => 0.0,
        }
    };
    let file_order = |r: &NodeRecord| {
        // The root first, then columns, as the CSV lists them.
        if r.node == tax.root() {
            0
        } else {
            r.node as u64 + 1
        }
    };
    list.sort_by(|a, b| {
        let by = match query.sort {
            Column::File => file_order(a).cmp(&file_order(b)),
            Column::Id => tax.id(a.node).cmp(tax.id(b.node)),
            Column::Name => tax.name(a.node).cmp(tax.name(b.node)),
            _ => number(a).total_cmp(&number(b)),
        };
        let by = if query.descending { by.reverse() } else { by };
        by.then_with(|| file_order(a).cmp(&file_order(b)))
    });
    let size = query.page_size.max(1);
    let pages = list.len().div_ceil(size).max(1);
    let page = query.page.min(pages - 1);
    let rows = list
        .iter()
        .skip(page * size)
        .take(size)
        .map(|r| TableRow::new(tax, r))
        .collect();
    TablePage {
        rows,
        matching: list.len(),
        page,
        pages,
    }
}
