//! Comparing two settings: a baseline (the current setting pinned, or a second profile loaded
//! "as baseline") beside the setting being tuned — metrics side by side, both points on the
//! trade-off chart, and the rows whose outcome changes between them as a table of transitions.
//!
//! The baseline's per-row outcomes are decoded once, when it is set (one byte per row). A drag
//! of one depth's threshold moves only the rows `DepthDrag` reports as flipping between the
//! transitions (`Comparison::shift`); any other change of the current settings costs one pass
//! of the core's `Decoder::stop` over the stored paths (no softmax, no allocation per row;
//! about 30–45 ms natively at 1M rows, depth 5, on the shared build machine). A baseline
//! belongs to the batch it was set on: a new batch drops it.

use std::rc::Rc;

use hedgerow_core::taxonomy::NONE;
use hedgerow_core::{
    evaluate, Batch, Decision, Decoder, Metrics, Outcome, Profile, Settings, Taxonomy,
};

use crate::charts::TradePoint;
use crate::state::Board;

/// The outcomes in the order the transition table lists them (a row's code is its index).
pub const OUTCOMES: [Outcome; 5] = [
    Outcome::Correct,
    Outcome::Unverifiable,
    Outcome::Wrong,
    Outcome::Abstained,
    Outcome::Rejected,
];

/// Legend text of the baseline's mark on the trade-off chart.
pub const MARK_LABEL: &str = "baseline";

fn code(o: Outcome) -> u8 {
    OUTCOMES.iter().position(|&x| x == o).unwrap_or(0) as u8
}

/// What the baseline controls do.
#[derive(Debug, Clone)]
pub enum BaselineAction {
    /// The current settings become the baseline.
    Pin,
    /// A profile file as the baseline (the current settings stay as they are).
    Load {
        name: String,
        bytes: Rc<Vec<u8>>,
    },
    Clear,
}

/// The setting compared against.
#[derive(Debug, Clone)]
pub struct Baseline {
    /// "pinned setting" or the profile's file name.
    pub name: String,
    pub settings: Settings,
    pub metrics: Metrics,
    /// The batch generation it was decoded on.
    pub generation: usize,
    /// Per row: the index in [`OUTCOMES`] of its outcome under the baseline.
    outcomes: Vec<u8>,
}

impl Baseline {
    /// Decodes every row of the batch under `settings` once.
    pub fn new(
        name: &str,
        tax: &Taxonomy,
        batch: &Batch,
        settings: &Settings,
        generation: usize,
    ) -> Self {
        let mut outcomes = Vec::with_capacity(batch.len());
        each_outcome(tax, batch, settings, |_, o| outcomes.push(code(o)));
        Baseline {
            name: name.to_string(),
            settings: settings.clone(),
            metrics: evaluate(tax, batch, settings),
            generation,
            outcomes,
        }
    }

    /// The baseline's outcome of row `r`.
    pub fn outcome(&self, r: usize) -> Option<Outcome> {
        self.outcomes
            .get(r)
            .and_then(|&c| OUTCOMES.get(c as usize).copied())
    }

    /// The baseline's point on the trade-off chart.
    pub fn point(&self) -> Option<TradePoint> {
        Some(TradePoint {
            threshold: f64::NAN,
            specificity: self.metrics.specificity?,
            precision: self.metrics.precision?,
        })
    }
}

/// Calls `f(row, outcome)` for every row under `settings`: the core's `Decoder` on the stored
/// path, as `decode_row` decides it.
pub fn each_outcome(
    tax: &Taxonomy,
    batch: &Batch,
    settings: &Settings,
    mut f: impl FnMut(usize, Outcome),
) {
    let thresholds = settings.thresholds.resolve(tax);
    let decoder = Decoder {
        tax,
        rule: settings.rule,
        thresholds: &thresholds,
        objectness: batch.has_objectness(),
    };
    let paths = batch.paths();
    for r in 0..batch.len() {
        let leaf = paths.leaf(r);
        let label = batch.label(r);
        let decision = match decoder.stop(batch.root_probability(r), leaf, paths.cond(r)) {
            None => Decision {
                predicted: None,
                depth: 0,
                probability: f64::NAN,
            },
            Some(s) => Decision {
                predicted: Some(tax.ancestor(leaf, s)),
                depth: s,
                probability: f64::NAN,
            },
        };
        let o = if label == NONE && decision.predicted.is_none() {
            Outcome::Rejected
        } else {
            decoder.outcome(&decision, leaf, label)
        };
        f(r, o);
    }
}

/// One line of the transition table.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Transition {
    pub from: Outcome,
    pub to: Outcome,
    pub rows: u64,
}

/// The baseline against the current settings.
#[derive(Debug, Clone, PartialEq)]
pub struct Comparison {
    /// `counts[a][b]`: rows whose outcome is `OUTCOMES[a]` under the baseline and `OUTCOMES[b]`
    /// under the current settings.
    pub counts: [[u64; 5]; 5],
}

/// The outcome of row `r` when its descent stops at depth `s` (so it predicts).
fn outcome_at_stop(tax: &Taxonomy, batch: &Batch, r: usize, s: usize) -> Outcome {
    let leaf = batch.paths().leaf(r);
    let decoder = Decoder {
        tax,
        rule: hedgerow_core::Rule::Cumulative,
        thresholds: &[],
        objectness: false,
    };
    let decision = Decision {
        predicted: Some(tax.ancestor(leaf, s)),
        depth: s,
        probability: f64::NAN,
    };
    decoder.outcome(&decision, leaf, batch.label(r))
}

impl Comparison {
    /// Row `r` moved its stop from depth `from` to `to` (a depth's threshold dragged, as
    /// `DepthDrag::set_reporting` reports it): move it between the transitions, so a drag
    /// costs the rows that flip, not a pass over the batch.
    pub fn shift(
        &mut self,
        baseline: &Baseline,
        tax: &Taxonomy,
        batch: &Batch,
        r: usize,
        from: usize,
        to: usize,
    ) {
        let a = baseline.outcomes.get(r).copied().unwrap_or(0) as usize;
        let (was, now) = (
            code(outcome_at_stop(tax, batch, r, from)) as usize,
            code(outcome_at_stop(tax, batch, r, to)) as usize,
        );
        if let Some(row) = self.counts.get_mut(a) {
            row[was] = row[was].saturating_sub(1);
            row[now] += 1;
        }
    }

    /// The rows that changed outcome, most rows first (then in table order).
    pub fn transitions(&self) -> Vec<Transition> {
        let mut out: Vec<Transition> = (0..5)
            .flat_map(|a| (0..5).map(move |b| (a, b)))
            .filter(|&(a, b)| a != b && self.counts[a][b] > 0)
            .map(|(a, b)| Transition {
                from: OUTCOMES[a],
                to: OUTCOMES[b],
                rows: self.counts[a][b],
            })
            .collect();
        out.sort_by_key(|t| std::cmp::Reverse(t.rows));
        out
    }

    /// Rows whose outcome is the same under both.
    pub fn unchanged(&self) -> u64 {
        (0..5).map(|a| self.counts[a][a]).sum()
    }
}

/// Counts the transitions from `baseline` to `settings` in one pass.
pub fn compare(
    tax: &Taxonomy,
    batch: &Batch,
    baseline: &Baseline,
    settings: &Settings,
) -> Comparison {
    let mut counts = [[0u64; 5]; 5];
    each_outcome(tax, batch, settings, |r, o| {
        let a = baseline.outcomes.get(r).copied().unwrap_or(0) as usize;
        if let Some(row) = counts.get_mut(a) {
            row[code(o) as usize] += 1;
        }
    });
    Comparison { counts }
}

/// The rows that went from `from` (baseline) to `to` (current), in row order.
pub fn transition_rows(
    tax: &Taxonomy,
    batch: &Batch,
    baseline: &Baseline,
    settings: &Settings,
    from: Outcome,
    to: Outcome,
) -> Vec<u32> {
    let mut rows = Vec::new();
    each_outcome(tax, batch, settings, |r, o| {
        if o == to && baseline.outcome(r) == Some(from) {
            rows.push(r as u32);
        }
    });
    rows
}

/// A metric's difference, current minus baseline, as the comparison shows it ("+0.0123",
/// "−12", "0").
pub fn delta(current: Option<f64>, baseline: Option<f64>) -> String {
    match (current, baseline) {
        (Some(c), Some(b)) => signed(c - b, 4),
        _ => "–".into(),
    }
}

/// A count's difference, current minus baseline.
pub fn delta_count(current: u64, baseline: u64) -> String {
    signed(current as f64 - baseline as f64, 0)
}

fn signed(d: f64, places: usize) -> String {
    if d == 0.0 {
        "0".into()
    } else if d > 0.0 {
        format!("+{d:.places$}")
    } else {
        format!("−{:.places$}", -d)
    }
}

impl Board {
    pub(crate) fn baseline_action(&mut self, action: BaselineAction) {
        self.baseline_error = None;
        match action {
            BaselineAction::Clear => {
                self.baseline = None;
                self.comparison = None;
            }
            BaselineAction::Pin => {
                let Some(a) = self.active.clone() else {
                    self.baseline_error = Some("load a complete batch first".into());
                    return;
                };
                self.baseline = Some(Rc::new(Baseline::new(
                    "pinned setting",
                    &a.taxonomy,
                    &a.batch,
                    &self.settings,
                    self.generation,
                )));
                self.compare_baseline();
            }
            BaselineAction::Load { name, bytes } => {
                let Some(a) = self.active.clone() else {
                    self.baseline_error = Some(format!(
                        "{name}: load a complete batch first: the baseline is scored on it"
                    ));
                    return;
                };
                let settings = Profile::from_json(&bytes, &name, &a.taxonomy)
                    .map_err(|e| crate::state::text::messages(&e).join("; "))
                    .and_then(|p| p.settings(&a.taxonomy).map_err(|k| format!("{name}: {k}")));
                match settings {
                    Ok(s) => {
                        self.baseline = Some(Rc::new(Baseline::new(
                            &name,
                            &a.taxonomy,
                            &a.batch,
                            &s,
                            self.generation,
                        )));
                        self.compare_baseline();
                    }
                    // Beside the baseline's control: the current settings and the Profile slot
                    // are untouched.
                    Err(e) => self.baseline_error = Some(e),
                }
            }
        }
    }

    /// Recounts the transitions after the current settings changed (drops a baseline set on
    /// another batch).
    pub(crate) fn compare_baseline(&mut self) {
        let Some(b) = self.baseline.clone() else {
            self.comparison = None;
            return;
        };
        let Some(a) = self.active.clone() else {
            self.comparison = None;
            return;
        };
        if b.generation != self.generation {
            self.baseline = None;
            self.comparison = None;
            return;
        }
        self.comparison = Some(Rc::new(compare(&a.taxonomy, &a.batch, &b, &self.settings)));
    }

    /// The rows of one transition, for the row inspector.
    pub fn transition_rows(&self, from: Outcome, to: Outcome) -> Option<Vec<u32>> {
        let a = self.active.as_ref()?;
        let b = self.baseline.as_ref()?;
        Some(transition_rows(
            &a.taxonomy,
            &a.batch,
            b,
            &self.settings,
            from,
            to,
        ))
    }
}
