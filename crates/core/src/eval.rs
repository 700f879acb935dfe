//! Decoding under thresholds and every metric, from one pass over the precomputed paths.
//! Nothing here touches logits: a threshold change costs O(rows × depth reached).

use serde::{Deserialize, Serialize};

use crate::batch::Batch;
pub use crate::decode::Step;
use crate::decode::{prediction_outcome, Decoder};
use crate::settings::{Policy, Rule, Settings};
pub use crate::tally::Tallies;
use crate::taxonomy::{Taxonomy, NONE};

/// What happened to one row.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Outcome {
    /// The prediction is the label or one of its ancestors.
    Correct,
    /// The prediction is strictly below a coarse label: cannot be checked.
    Unverifiable,
    /// Anything else, including a prediction on a background row.
    Wrong,
    /// A labelled row that did not predict (P(root) under the object threshold).
    Abstained,
    /// A background row that did not predict: a correct rejection.
    Rejected,
}

impl Outcome {
    pub fn as_str(self) -> &'static str {
        match self {
            Outcome::Correct => "correct",
            Outcome::Unverifiable => "unverifiable",
            Outcome::Wrong => "wrong",
            Outcome::Abstained => "abstained",
            Outcome::Rejected => "rejected",
        }
    }
}

/// Shares of all predictions that stop at one depth, split by outcome (`None` without
/// predictions).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct OutcomeShare {
    pub correct: Option<f64>,
    pub unverifiable: Option<f64>,
    pub wrong: Option<f64>,
}

/// Counts of predictions that stop at one depth, split by outcome.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub struct OutcomeCount {
    pub correct: u64,
    pub unverifiable: u64,
    pub wrong: u64,
}

/// Every metric of one evaluation. Ratios with an empty denominator are `None` (`null`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Metrics {
    pub rows: u64,
    pub predictions: u64,
    pub abstained: u64,
    pub correct: u64,
    pub unverifiable: u64,
    pub wrong: u64,
    pub labelled_rows: u64,
    pub background_rows: u64,
    /// Background rows that predicted (counted in `wrong`).
    pub false_alarms: u64,
    pub precision: Option<f64>,
    /// Wilson 95 % interval of precision, n = the predictions the policy counts (`None`
    /// without any). Profiles saved before the field existed read it as `None`.
    #[serde(default)]
    pub precision_interval: Option<crate::stats::Interval>,
    pub specificity: Option<f64>,
    pub reward: Option<f64>,
    /// Index d = 0..=D: share of predictions stopping at depth d.
    pub stop_share: Vec<Option<f64>>,
    /// Index d: shares of predictions stopping at depth d with each outcome.
    pub stop_outcome: Vec<OutcomeShare>,
    /// Index d: counts behind `stop_outcome`.
    pub stop_count: Vec<OutcomeCount>,
    pub hierarchical_precision: Option<f64>,
    pub hierarchical_recall: Option<f64>,
    pub hierarchical_f1: Option<f64>,
    pub mistake_severity: Option<f64>,
    pub rule: Rule,
    pub unverifiable_policy: Policy,
}

pub(crate) fn ratio(num: f64, den: f64) -> Option<f64> {
    (den > 0.0).then(|| num / den)
}

/// Precision under a policy from outcome counts.
pub fn precision(policy: Policy, correct: u64, unverifiable: u64, wrong: u64) -> Option<f64> {
    let (c, u, w) = (correct as f64, unverifiable as f64, wrong as f64);
    match policy {
        Policy::Credit => ratio(c + u, c + u + w),
        Policy::Penalize => ratio(c, c + u + w),
        Policy::Exclude => ratio(c, c + w),
    }
}

/// Where one row's descent stops. `thresholds` is [`Thresholds::resolve`]'s table.
///
/// [`Thresholds::resolve`]: crate::settings::Thresholds::resolve
#[inline]
pub fn stop_depth(
    tax: &Taxonomy,
    batch: &Batch,
    rule: Rule,
    thresholds: &[f64],
    r: usize,
) -> Option<usize> {
    let decoder = Decoder {
        tax,
        rule,
        thresholds,
        objectness: batch.has_objectness(),
    };
    let paths = batch.paths();
    decoder.stop(batch.root_probability(r), paths.leaf(r), paths.cond(r))
}

/// Outcome of row `r` stopping at depth `s`.
#[inline]
pub(crate) fn outcome_at(batch: &Batch, r: usize, s: usize) -> Outcome {
    prediction_outcome(
        batch.label(r) != NONE,
        s,
        batch.agree(r),
        batch.label_depth(r),
    )
}

/// Running sums of one evaluation, before they become ratios. All integers: information gain
/// is summed at the end from per-node counts (in node order), so any way of reaching the same
/// decisions (a full pass, or moving only the rows that flip) gives bit-identical metrics.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
pub(crate) struct Sums {
    pub(crate) stop_count: Vec<OutcomeCount>,
    pub(crate) abstained: u64,
    pub(crate) false_alarms: u64,
    /// Predictions per predicted node (index `len()` is the root).
    pub(crate) predicted_at: Vec<u64>,
    /// Correct predictions per predicted node.
    pub(crate) correct_at: Vec<u64>,
    pub(crate) h_inter: u64,
    pub(crate) h_pred: u64,
    pub(crate) severity: u64,
    pub(crate) severity_n: u64,
}

impl Sums {
    pub(crate) fn new(tax: &Taxonomy, levels: usize) -> Self {
        Sums {
            stop_count: vec![OutcomeCount::default(); levels],
            predicted_at: vec![0; tax.len() + 1],
            correct_at: vec![0; tax.len() + 1],
            ..Sums::default()
        }
    }

    /// Add (`add`) or remove row `r`'s prediction at stop depth `s`.
    pub(crate) fn row(&mut self, tax: &Taxonomy, batch: &Batch, r: usize, s: usize, add: bool) {
        let step = |x: &mut u64, by: u64| {
            *x = if add {
                x.wrapping_add(by)
            } else {
                x.wrapping_sub(by)
            }
        };
        let node = tax.ancestor(batch.paths().leaf(r), s) as usize;
        let outcome = outcome_at(batch, r, s);
        step(&mut self.predicted_at[node], 1);
        let slot = &mut self.stop_count[s];
        match outcome {
            Outcome::Correct => {
                step(&mut slot.correct, 1);
                step(&mut self.correct_at[node], 1);
            }
            Outcome::Unverifiable => step(&mut slot.unverifiable, 1),
            _ => step(&mut slot.wrong, 1),
        }
        if batch.label(r) == NONE {
            return;
        }
        let a = batch.agree(r);
        step(&mut self.h_pred, s as u64);
        step(&mut self.h_inter, s.min(a) as u64);
        if outcome == Outcome::Wrong {
            step(
                &mut self.severity,
                (s + batch.label_depth(r) - 2 * s.min(a)) as u64,
            );
            step(&mut self.severity_n, 1);
        }
    }
}

/// Decode every row under `settings` and compute all metrics.
///
/// Without per-node overrides this runs a branch-free kernel over the stored paths (one pass,
/// no ancestor lookups while descending); with overrides, the general loop. Both give the same
/// sums in the same order, so the results are identical.
pub fn evaluate(tax: &Taxonomy, batch: &Batch, settings: &Settings) -> Metrics {
    tally(tax, batch, settings).metrics(tax)
}

/// The integer sums behind [`evaluate`]'s metrics, which add across batches: the tallies of
/// the parts of a batch, added, give the very metrics of the whole (see [`Tallies`]).
pub fn tally(tax: &Taxonomy, batch: &Batch, settings: &Settings) -> Tallies {
    let sums = if settings.thresholds.nodes.is_empty() {
        let depths: Vec<f64> = (1..=batch.paths().width())
            .map(|d| settings.thresholds.at_depth(d))
            .collect();
        let object = settings.thresholds.object;
        // Past six levels most rows stop well before the leaf: leaving early pays.
        match (settings.rule, depths.len() > 6) {
            (Rule::Cumulative, false) => kernel::<true, false>(tax, batch, &depths, object),
            (Rule::Cumulative, true) => kernel::<true, true>(tax, batch, &depths, object),
            (Rule::Conditional, false) => kernel::<false, false>(tax, batch, &depths, object),
            (Rule::Conditional, true) => kernel::<false, true>(tax, batch, &depths, object),
        }
    } else {
        general(tax, batch, settings)
    };
    Tallies::new(tax, batch, settings, sums)
}

/// The fast path: per row, the stop depth is the number of leading depths that pass, at most
/// the leaf's depth; every count is updated with selects instead of branches, which keeps the
/// data-dependent stop decision from stalling the CPU.
fn kernel<const CUMULATIVE: bool, const EARLY_EXIT: bool>(
    tax: &Taxonomy,
    batch: &Batch,
    depths: &[f64],
    object: f64,
) -> Sums {
    let paths = batch.paths();
    let w = paths.width();
    let levels = w + 1;
    // counts[s * 3 + outcome], then one bucket for abstentions; two copies for alternate rows
    // so consecutive increments of the same bucket do not wait on each other.
    let stride = levels * 3 + 1;
    let mut counts = vec![0u64; 2 * stride];
    let abstain_bucket = levels * 3;
    let mut sums = Sums::new(tax, levels);
    let has_object = batch.has_objectness();
    let cond = paths.cond_all();
    let leaves = paths.leaves();
    let agree = batch.agree_all();
    let label_depth = batch.label_depth_all();
    for r in 0..batch.len() {
        let p_root = batch.root_probability(r);
        let predicts = !has_object || p_root >= object;
        let row = &cond[r * w..(r + 1) * w];
        let mut p = p_root;
        let mut alive = true;
        let mut s = 0usize;
        // Depths in blocks of four without branches; in deep taxonomies (EARLY_EXIT) leave
        // after a block in which descent stopped, skipping depths no row reaches. In shallow
        // ones the exit costs more than the block it would skip.
        for (rows, ts) in row.chunks(4).zip(depths.chunks(4)) {
            for (&c, &t) in rows.iter().zip(ts) {
                let c = c as f64;
                let q = if CUMULATIVE {
                    p *= c;
                    p
                } else {
                    c
                };
                alive &= q >= t;
                s += alive as usize;
            }
            if EARLY_EXIT && !alive {
                break;
            }
        }
        // Padding past the leaf is negative, but with P(root) = 0 the cumulative product there
        // is −0.0, which passes a threshold of 0: descent never goes below the path's leaf (as
        // in the general loop, which stops there).
        let s = s.min(tax.depth(leaves[r]));
        let a = agree[r] as usize;
        let gd = label_depth[r] as usize;
        let labelled = gd > 0;
        let correct = labelled & (s <= a);
        let unverifiable = labelled & !correct & (a == gd);
        let outcome = if correct {
            0
        } else if unverifiable {
            1
        } else {
            2
        };
        counts[(r & 1) * stride
            + if predicts {
                s * 3 + outcome
            } else {
                abstain_bucket
            }] += 1;
        let node = tax.ancestor(leaves[r], s) as usize;
        sums.predicted_at[node] += predicts as u64;
        sums.correct_at[node] += (predicts & correct) as u64;
        let scored = (predicts & labelled) as u64;
        let inter = s.min(a) as u64;
        sums.h_pred += s as u64 * scored;
        sums.h_inter += inter * scored;
        let wrong = scored * (outcome == 2) as u64;
        sums.severity += (s as u64 + gd as u64 - 2 * inter) * wrong;
        sums.severity_n += wrong;
        sums.false_alarms += (predicts & !labelled) as u64;
    }
    let count = |i: usize| counts[i] + counts[stride + i];
    sums.abstained = count(abstain_bucket);
    sums.stop_count = (0..levels)
        .map(|s| OutcomeCount {
            correct: count(s * 3),
            unverifiable: count(s * 3 + 1),
            wrong: count(s * 3 + 2),
        })
        .collect();
    sums
}

/// The general path: per-node thresholds looked up along each row's path.
fn general(tax: &Taxonomy, batch: &Batch, settings: &Settings) -> Sums {
    let thresholds = settings.thresholds.resolve(tax);
    let mut sums = Sums::new(tax, batch.paths().width() + 1);
    for r in 0..batch.len() {
        match stop_depth(tax, batch, settings.rule, &thresholds, r) {
            None => sums.abstained += 1,
            Some(s) => {
                sums.row(tax, batch, r, s, true);
                sums.false_alarms += (batch.label(r) == NONE) as u64;
            }
        }
    }
    sums
}

pub(crate) fn finish(tax: &Taxonomy, batch: &Batch, settings: &Settings, sums: Sums) -> Metrics {
    Tallies::new(tax, batch, settings, sums).metrics(tax)
}

/// The full decode of one row, for `hedgerow decode`.
#[derive(Debug, Clone, PartialEq)]
pub struct RowDecode {
    /// The node where descent stopped (the root index for "an object, type unknown"), or
    /// `None` when the row abstained.
    pub predicted: Option<u32>,
    pub depth: usize,
    /// The quantity the rule compared for the predicted node (P(root) at the root).
    pub probability: f64,
    pub outcome: Outcome,
    /// The whole greedy path to its leaf, depth 1 first.
    pub path: Vec<Step>,
}

pub fn decode_row(
    tax: &Taxonomy,
    batch: &Batch,
    settings: &Settings,
    thresholds: &[f64],
    r: usize,
) -> RowDecode {
    let decoder = Decoder {
        tax,
        rule: settings.rule,
        thresholds,
        objectness: batch.has_objectness(),
    };
    let paths = batch.paths();
    let mut path = Vec::new();
    let d = decoder.decide(
        batch.root_probability(r),
        paths.leaf(r),
        paths.cond(r),
        &mut path,
    );
    let outcome = match d.predicted {
        None if batch.label(r) == NONE => Outcome::Rejected,
        None => Outcome::Abstained,
        Some(_) => outcome_at(batch, r, d.depth),
    };
    RowDecode {
        predicted: d.predicted,
        depth: d.depth,
        probability: d.probability,
        outcome,
        path,
    }
}
