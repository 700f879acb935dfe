//! The row inspector: rows filtered by outcome, stop depth, predicted node or label, listed a
//! page at a time from a starting row (the scan stops once a page is full, so it costs the rows
//! read, not the batch), and one row's greedy path step by step — conditional and cumulative
//! probability, the threshold that applied (its depth's or the node's own), where descent
//! stopped and why. Every decision is the core's `decode_row`; nothing is decoded here.
//!
//! The runner-up sibling at each step is not here: the stored paths keep only the greedy
//! child's conditional per depth, so `crate::runner_up` reads the opened row's logits again.

use hedgerow_core::taxonomy::NONE;
use hedgerow_core::{decode_row, Batch, Outcome, Rule, Settings, Taxonomy};

/// Which rows to list. Every part that is set must hold.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct RowFilter {
    pub outcome: Option<Outcome>,
    /// Depth where descent stopped (abstaining rows have none).
    pub stop_depth: Option<usize>,
    /// The predicted node (the root at `len()`).
    pub predicted: Option<u32>,
    /// The label is this node or below it (the root: any labelled row).
    pub label_under: Option<u32>,
    /// Only these rows (ascending), e.g. the rows of one transition between a baseline and
    /// the current settings (`crate::baseline::transition_rows`).
    pub rows: Option<std::rc::Rc<Vec<u32>>>,
}

/// One listed row.
#[derive(Debug, Clone, PartialEq)]
pub struct RowLine {
    pub row: usize,
    /// The label's id ("" for a background row).
    pub label: String,
    /// The predicted node's id ("(root)" at the root, "" when the row abstained).
    pub predicted: String,
    pub depth: Option<usize>,
    pub outcome: Outcome,
}

/// A page of rows and where the next one starts.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct RowPage {
    pub rows: Vec<RowLine>,
    /// The row to scan from for the next page (`None`: the batch ends).
    pub next: Option<usize>,
}

fn shown_node(tax: &Taxonomy, v: Option<u32>) -> String {
    match v {
        None => String::new(),
        Some(v) if v == tax.root() => "(root)".into(),
        Some(v) => tax.id(v).to_string(),
    }
}

/// Rows one page scans at most: a filter that few rows pass still answers at once, and the
/// next page goes on from where the scan stopped.
pub const SCAN_LIMIT: usize = 100_000;

/// Up to `count` rows from row `start` on that pass `filter`, under `settings`, reading at
/// most [`SCAN_LIMIT`] rows.
pub fn list_rows(
    tax: &Taxonomy,
    batch: &Batch,
    settings: &Settings,
    filter: &RowFilter,
    start: usize,
    count: usize,
) -> RowPage {
    let thresholds = settings.thresholds.resolve(tax);
    let line = |r: usize| -> Option<RowLine> {
        let g = batch.label(r);
        let label_ok = filter.label_under.is_none_or(|v| {
            g != NONE
                && (v == tax.root()
                    || (tax.depth(g) >= tax.depth(v) && tax.ancestor(g, tax.depth(v)) == v))
        });
        if !label_ok {
            return None;
        }
        let d = decode_row(tax, batch, settings, &thresholds, r);
        let depth = d.predicted.map(|_| d.depth);
        let pass = filter.outcome.is_none_or(|o| o == d.outcome)
            && filter.stop_depth.is_none_or(|s| depth == Some(s))
            && filter.predicted.is_none_or(|v| d.predicted == Some(v));
        pass.then(|| RowLine {
            row: r,
            label: if g == NONE {
                String::new()
            } else {
                tax.id(g).to_string()
            },
            predicted: shown_node(tax, d.predicted),
            depth,
            outcome: d.outcome,
        })
    };
    let mut rows = Vec::new();
    if let Some(list) = &filter.rows {
        // A list of rows: scan it from the first listed row at or after `start`.
        let mut i = list.partition_point(|&x| (x as usize) < start);
        let end = list.len().min(i.saturating_add(SCAN_LIMIT));
        while i < end && rows.len() < count {
            let r = list[i] as usize;
            if r < batch.len() {
                rows.extend(line(r));
            }
            i += 1;
        }
        return RowPage {
            rows,
            next: list.get(i).map(|&x| x as usize),
        };
    }
    let mut r = start;
    let end = batch.len().min(start.saturating_add(SCAN_LIMIT));
    while r < end && rows.len() < count {
        rows.extend(line(r));
        r += 1;
    }
    RowPage {
        rows,
        next: (r < batch.len()).then_some(r),
    }
}

/// Where a step's threshold comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Source {
    /// The depth's threshold (t_0 for the object step).
    Depth,
    /// The node's own threshold.
    Node,
    /// No threshold applies (P(root) without objectness).
    None,
}

/// One step of a row's greedy path (depth 0 is P(root)).
#[derive(Debug, Clone, PartialEq)]
pub struct PathStep {
    pub depth: usize,
    pub node: u32,
    /// "(root)" at depth 0.
    pub id: String,
    /// p(node | parent) (P(root) at depth 0).
    pub conditional: f64,
    /// P(node) = P(root) · Π conditionals.
    pub cumulative: f64,
    /// What the rule compares with the threshold: the cumulative or the conditional.
    pub compared: f64,
    pub threshold: f64,
    pub source: Source,
    /// Whether descent stepped into this node.
    pub taken: bool,
}

/// One row, decoded.
#[derive(Debug, Clone, PartialEq)]
pub struct RowDetail {
    pub row: usize,
    /// The label's id ("" for a background row).
    pub label: String,
    pub predicted: String,
    pub depth: Option<usize>,
    pub outcome: Outcome,
    /// P(root) first, then depth 1 to the path's leaf.
    pub steps: Vec<PathStep>,
    /// Why descent stopped where it did, in words.
    pub why: String,
}

/// Row `r` decoded under `settings` (`None` past the batch's end).
pub fn row_detail(
    tax: &Taxonomy,
    batch: &Batch,
    settings: &Settings,
    r: usize,
) -> Option<RowDetail> {
    if r >= batch.len() {
        return None;
    }
    let thresholds = settings.thresholds.resolve(tax);
    let d = decode_row(tax, batch, settings, &thresholds, r);
    let overridden = |v: u32| settings.thresholds.nodes.iter().any(|&(n, _)| n == v);
    let p_root = batch.root_probability(r);
    let objectness = batch.has_objectness();
    let mut steps = vec![PathStep {
        depth: 0,
        node: tax.root(),
        id: "(root)".into(),
        conditional: p_root,
        cumulative: p_root,
        compared: p_root,
        threshold: if objectness {
            settings.thresholds.object
        } else {
            f64::NAN
        },
        source: if objectness {
            Source::Depth
        } else {
            Source::None
        },
        taken: d.predicted.is_some(),
    }];
    let stop = d.predicted.map(|_| d.depth);
    for (i, s) in d.path.iter().enumerate() {
        let depth = i + 1;
        steps.push(PathStep {
            depth,
            node: s.node,
            id: tax.id(s.node).to_string(),
            conditional: s.conditional,
            cumulative: s.cumulative,
            compared: match settings.rule {
                Rule::Cumulative => s.cumulative,
                Rule::Conditional => s.conditional,
            },
            threshold: thresholds.get(s.node as usize).copied().unwrap_or(f64::NAN),
            source: if overridden(s.node) {
                Source::Node
            } else {
                Source::Depth
            },
            taken: stop.is_some_and(|st| depth <= st),
        });
    }
    let quantity = match settings.rule {
        Rule::Cumulative => "P",
        Rule::Conditional => "p(· | parent)",
    };
    let why = match stop {
        None => format!(
            "abstained: P(object) = {p_root:.4} is under the object threshold {}",
            settings.thresholds.object
        ),
        Some(s) => match steps.get(s + 1) {
            None => format!(
                "reached a leaf ({}) at depth {s}",
                shown_node(tax, d.predicted)
            ),
            Some(next) => format!(
                "stopped at depth {s}: stepping into {} needs {quantity} ≥ {} ({}), it is {:.4}",
                next.id,
                next.threshold,
                match next.source {
                    Source::Node => "the node's own threshold",
                    _ => "its depth's threshold",
                },
                next.compared
            ),
        },
    };
    let g = batch.label(r);
    Some(RowDetail {
        row: r,
        label: if g == NONE {
            String::new()
        } else {
            tax.id(g).to_string()
        },
        predicted: shown_node(tax, d.predicted),
        depth: stop,
        outcome: d.outcome,
        steps,
        why,
    })
}
