//! Where predictions fail, node by node: per taxonomy node the predictions that stop there by
//! outcome, the labelled rows at or below it, how many of those stopped above it, its precision
//! with a Wilson interval, and the wrong answers most often given for rows labelled under it.
//!
//! Every count is an integer that one row adds or removes ([`NodeCounts::add`],
//! [`NodeCounts::remove`]), so a caller that knows which rows changed their stop depth (a
//! dragged threshold) can update the counts without a new pass and get exactly what a full
//! pass ([`node_counts`]) gives.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use crate::batch::Batch;
use crate::eval::{outcome_at, precision, stop_depth, Outcome, OutcomeCount};
use crate::settings::{Policy, Settings};
use crate::stats::{wilson, Interval, Z95};
use crate::taxonomy::{Taxonomy, NONE};

/// How many wrong answers [`node_report`] lists per node.
pub const TOP_WRONG: usize = 3;

/// The per-node counts of one decode. Index `v` is node `v`; index `tax.len()` is the root.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct NodeCounts {
    /// Predictions stopping at the node, by outcome.
    stops: Vec<OutcomeCount>,
    /// Labelled rows whose label is the node or below it (every labelled row at the root).
    labelled: Vec<u64>,
    /// Of those, the rows that predict a strict ancestor of the node (the root included).
    stopped_above: Vec<u64>,
    /// Wrong predictions on labelled rows, by (label, predicted node).
    wrong: BTreeMap<(u32, u32), u64>,
}

/// One node's line of the report.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NodeRecord {
    /// Column index (`tax.len()` for the root).
    pub node: u32,
    pub depth: usize,
    /// The threshold for stepping into the node: its override, else its depth's (t_0 at the
    /// root).
    pub threshold: f64,
    /// Whether `threshold` is a per-node override.
    pub overridden: bool,
    /// Predictions that stop at the node, and their outcomes.
    pub stops: u64,
    pub correct: u64,
    pub unverifiable: u64,
    pub wrong: u64,
    /// Labelled rows whose label is the node or below it.
    pub labelled: u64,
    /// Of `labelled`, the rows whose prediction is a strict ancestor of the node: right, but
    /// less specific than the node.
    pub stopped_above: u64,
    /// Precision of the predictions stopping at the node, under the unverifiable policy.
    pub precision: Option<f64>,
    /// Wilson score 95 % interval for `precision`.
    pub precision_interval: Option<Interval>,
    /// The most frequent wrong predictions for rows labelled at or below the node: (predicted
    /// node, rows), most frequent first, ties by column.
    pub top_wrong: Vec<(u32, u64)>,
}

/// Every node's record, in file (column) order, and the root's.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NodeReport {
    pub root: NodeRecord,
    pub nodes: Vec<NodeRecord>,
}

/// The counts behind precision under `policy` as (successes, trials), for its interval.
pub fn precision_counts(policy: Policy, c: u64, u: u64, w: u64) -> (u64, u64) {
    match policy {
        Policy::Credit => (c + u, c + u + w),
        Policy::Penalize => (c, c + u + w),
        Policy::Exclude => (c, c + w),
    }
}

/// Precision under `policy` with its Wilson score 95 % interval.
pub fn precision_with_interval(
    policy: Policy,
    c: u64,
    u: u64,
    w: u64,
) -> (Option<f64>, Option<Interval>) {
    let (k, n) = precision_counts(policy, c, u, w);
    (precision(policy, c, u, w), wilson(k, n, Z95))
}

fn step(x: &mut u64, add: bool) {
    *x = if add {
        x.wrapping_add(1)
    } else {
        x.wrapping_sub(1)
    };
}

impl NodeCounts {
    /// All counts zero, sized for `tax`.
    pub fn new(tax: &Taxonomy) -> Self {
        let n = tax.len() + 1;
        NodeCounts {
            stops: vec![OutcomeCount::default(); n],
            labelled: vec![0; n],
            stopped_above: vec![0; n],
            wrong: BTreeMap::new(),
        }
    }

    /// Add row `r`, which stops at depth `stop` of its path (`None`: it abstains).
    pub fn add(&mut self, tax: &Taxonomy, batch: &Batch, r: usize, stop: Option<usize>) {
        self.row(tax, batch, r, stop, true);
    }

    /// Remove row `r` as it was added (same `stop`). Removing a row that was not added gives
    /// meaningless counts (never a panic).
    pub fn remove(&mut self, tax: &Taxonomy, batch: &Batch, r: usize, stop: Option<usize>) {
        self.row(tax, batch, r, stop, false);
    }

    /// Move row `r` from stop depth `from` to `to`.
    pub fn shift(
        &mut self,
        tax: &Taxonomy,
        batch: &Batch,
        r: usize,
        from: Option<usize>,
        to: Option<usize>,
    ) {
        if from != to {
            self.remove(tax, batch, r, from);
            self.add(tax, batch, r, to);
        }
    }

    fn row(&mut self, tax: &Taxonomy, batch: &Batch, r: usize, stop: Option<usize>, add: bool) {
        let g = batch.label(r);
        let label_depth = if g == NONE { 0 } else { tax.depth(g) };
        if g != NONE {
            for d in 0..=label_depth {
                if let Some(x) = self.labelled.get_mut(tax.ancestor(g, d) as usize) {
                    step(x, add);
                }
            }
        }
        let Some(s) = stop else { return };
        let leaf = batch.paths().leaf(r);
        let node = tax.ancestor(leaf, s);
        let outcome = outcome_at(batch, r, s);
        if let Some(slot) = self.stops.get_mut(node as usize) {
            match outcome {
                Outcome::Correct => step(&mut slot.correct, add),
                Outcome::Unverifiable => step(&mut slot.unverifiable, add),
                _ => step(&mut slot.wrong, add),
            }
        }
        if g == NONE {
            return;
        }
        match outcome {
            // The prediction is an ancestor of the label (or the label): it stopped above every
            // node of the label's path deeper than it.
            Outcome::Correct => {
                for d in s + 1..=label_depth {
                    if let Some(x) = self.stopped_above.get_mut(tax.ancestor(g, d) as usize) {
                        step(x, add);
                    }
                }
            }
            Outcome::Wrong => {
                let k = self.wrong.entry((g, node)).or_insert(0);
                step(k, add);
                if *k == 0 {
                    self.wrong.remove(&(g, node));
                }
            }
            _ => {}
        }
    }

    /// Predictions stopping at node `v` (the root at `tax.len()`), by outcome.
    pub fn stops(&self, v: u32) -> OutcomeCount {
        self.stops.get(v as usize).copied().unwrap_or_default()
    }

    /// Labelled rows at or below node `v`.
    pub fn labelled(&self, v: u32) -> u64 {
        self.labelled.get(v as usize).copied().unwrap_or(0)
    }

    /// Labelled rows at or below node `v` that predict a strict ancestor of `v`.
    pub fn stopped_above(&self, v: u32) -> u64 {
        self.stopped_above.get(v as usize).copied().unwrap_or(0)
    }

    /// Wrong predictions on labelled rows: ((label, predicted node), rows), by label then
    /// prediction.
    pub fn wrong_pairs(&self) -> impl Iterator<Item = ((u32, u32), u64)> + '_ {
        self.wrong.iter().map(|(&k, &v)| (k, v))
    }

    /// Per node (root last), the `top` most frequent wrong predictions for rows labelled at or
    /// below it. O(pairs × depth · log) where pairs are the distinct (label, prediction)
    /// pairs.
    fn top_wrong(&self, tax: &Taxonomy, top: usize) -> Vec<Vec<(u32, u64)>> {
        let mut spread: Vec<(u32, u32, u64)> = Vec::new();
        for (&(g, p), &k) in &self.wrong {
            for d in 0..=tax.depth(g) {
                spread.push((tax.ancestor(g, d), p, k));
            }
        }
        spread.sort_unstable_by_key(|&(v, p, _)| (v, p));
        let mut merged: Vec<(u32, u32, u64)> = Vec::with_capacity(spread.len());
        for (v, p, k) in spread {
            match merged.last_mut() {
                Some(last) if (last.0, last.1) == (v, p) => last.2 += k,
                _ => merged.push((v, p, k)),
            }
        }
        let mut out = vec![Vec::new(); tax.len() + 1];
        for chunk in merged.chunk_by(|a, b| a.0 == b.0) {
            let mut list: Vec<(u32, u64)> = chunk.iter().map(|&(_, p, k)| (p, k)).collect();
            list.sort_unstable_by_key(|&(p, k)| (std::cmp::Reverse(k), p));
            list.truncate(top);
            if let Some(slot) = chunk.first().and_then(|c| out.get_mut(c.0 as usize)) {
                *slot = list;
            }
        }
        out
    }

    /// The records of every node and the root, with `settings`' thresholds and policy and the
    /// `top` most frequent wrong predictions per node.
    pub fn report(&self, tax: &Taxonomy, settings: &Settings, top: usize) -> NodeReport {
        let thresholds = settings.thresholds.resolve(tax);
        let overridden: std::collections::HashSet<u32> =
            settings.thresholds.nodes.iter().map(|&(v, _)| v).collect();
        let mut tops = self.top_wrong(tax, top);
        let mut record = |v: u32| {
            let c = self.stops(v);
            let (precision, precision_interval) =
                precision_with_interval(settings.policy, c.correct, c.unverifiable, c.wrong);
            NodeRecord {
                node: v,
                depth: if v == tax.root() { 0 } else { tax.depth(v) },
                threshold: thresholds.get(v as usize).copied().unwrap_or(f64::NAN),
                overridden: overridden.contains(&v),
                stops: c.correct + c.unverifiable + c.wrong,
                correct: c.correct,
                unverifiable: c.unverifiable,
                wrong: c.wrong,
                labelled: self.labelled(v),
                stopped_above: self.stopped_above(v),
                precision,
                precision_interval,
                top_wrong: tops
                    .get_mut(v as usize)
                    .map(std::mem::take)
                    .unwrap_or_default(),
            }
        };
        let nodes = (0..tax.len() as u32).map(&mut record).collect();
        NodeReport {
            root: record(tax.root()),
            nodes,
        }
    }
}

/// Decode every row under `settings` and count per node: one pass, O(rows × depth).
pub fn node_counts(tax: &Taxonomy, batch: &Batch, settings: &Settings) -> NodeCounts {
    let thresholds = settings.thresholds.resolve(tax);
    let mut counts = NodeCounts::new(tax);
    for r in 0..batch.len() {
        let stop = stop_depth(tax, batch, settings.rule, &thresholds, r);
        counts.add(tax, batch, r, stop);
    }
    counts
}

/// Every node's record under `settings`, with the [`TOP_WRONG`] most frequent wrong answers.
pub fn node_report(tax: &Taxonomy, batch: &Batch, settings: &Settings) -> NodeReport {
    node_counts(tax, batch, settings).report(tax, settings, TOP_WRONG)
}

/// The CSV columns of [`report_csv`]: a node's record, then the `TOP_WRONG` most frequent wrong
/// answers as (id, count) pairs.
pub fn csv_header() -> Vec<String> {
    let mut header: Vec<String> = [
        "id",
        "name",
        "depth",
        "threshold",
        "overridden",
        "stops",
        "correct",
        "unverifiable",
        "wrong",
        "labelled",
        "stopped_above",
        "precision",
        "precision_low",
        "precision_high",
    ]
    .map(String::from)
    .to_vec();
    for i in 1..=TOP_WRONG {
        header.extend([format!("wrong_{i}"), format!("wrong_{i}_count")]);
    }
    header
}

/// One record as its CSV fields (ids for columns; an absent value is an empty field).
pub fn csv_fields(tax: &Taxonomy, r: &NodeRecord) -> Vec<String> {
    let cell = |v: Option<f64>| v.map_or_else(String::new, |v| v.to_string());
    let mut rec = vec![
        tax.id(r.node).to_string(),
        tax.name(r.node).to_string(),
        r.depth.to_string(),
        r.threshold.to_string(),
        r.overridden.to_string(),
        r.stops.to_string(),
        r.correct.to_string(),
        r.unverifiable.to_string(),
        r.wrong.to_string(),
        r.labelled.to_string(),
        r.stopped_above.to_string(),
        cell(r.precision),
        cell(r.precision_interval.map(|i| i.low)),
        cell(r.precision_interval.map(|i| i.high)),
    ];
    for i in 0..TOP_WRONG {
        match r.top_wrong.get(i) {
            Some(&(v, k)) => rec.extend([tax.id(v).to_string(), k.to_string()]),
            None => rec.extend([String::new(), String::new()]),
        }
    }
    rec
}

/// The report as CSV: one row per node in file order, the root (empty id, depth 0) first.
/// `hedgerow nodes --out nodes.csv` and the page's download both write it, byte for byte.
pub fn report_csv(tax: &Taxonomy, report: &NodeReport) -> Result<Vec<u8>, csv::Error> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(csv_header())?;
    for r in std::iter::once(&report.root).chain(&report.nodes) {
        w.write_record(csv_fields(tax, r))?;
    }
    w.into_inner().map_err(|e| csv::Error::from(e.into_error()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn precision_counts_follow_the_policy() {
        assert_eq!(precision_counts(Policy::Credit, 3, 2, 1), (5, 6));
        assert_eq!(precision_counts(Policy::Penalize, 3, 2, 1), (3, 6));
        assert_eq!(precision_counts(Policy::Exclude, 3, 2, 1), (3, 4));
        let (p, i) = precision_with_interval(Policy::Exclude, 0, 4, 0);
        assert_eq!((p, i), (None, None));
    }
}
