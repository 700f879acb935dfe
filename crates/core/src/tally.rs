//! Tallies: the integer sums behind one evaluation's metrics, which add across the parts of a
//! batch. Every sum is an integer (information gain is weighed in only when the metrics are
//! made, from per-node counts in node order), so the parts of a batch tallied apart and added,
//! in any order and grouping, give the metrics of the whole batch bit for bit.

use std::ops::Add;

use serde::{Deserialize, Serialize};

use crate::batch::Batch;
use crate::error::ErrorKind;
use crate::eval::{precision, ratio, Metrics, OutcomeCount, OutcomeShare, Sums};
use crate::settings::{Policy, Rule, Settings, Temperatures, Thresholds};
use crate::taxonomy::Taxonomy;

/// What a tally was counted for: only tallies with equal stamps add.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TallyStamp {
    /// The taxonomy's fingerprint, node count and depth.
    pub taxonomy: String,
    pub nodes: usize,
    pub depth: usize,
    pub rule: Rule,
    pub policy: Policy,
    /// Per-node overrides sorted by node, so the order they were given in does not matter.
    pub thresholds: Thresholds,
    pub temperatures: Temperatures,
    /// Whether P(root) came from objectness (so the object threshold applied).
    pub objectness: bool,
}

/// The sums of one evaluation before they become ratios. `a + b` adds two tallies made under
/// the same taxonomy and settings (an error otherwise); [`Tallies::into_metrics`] turns them
/// into the metrics [`evaluate`](crate::evaluate) gives.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Tallies {
    pub stamp: TallyStamp,
    pub rows: u64,
    pub labelled_rows: u64,
    /// Σ depth(label) over labelled rows: the denominator of hierarchical recall.
    pub label_depth_sum: u64,
    sums: Sums,
}

impl Tallies {
    pub(crate) fn new(tax: &Taxonomy, batch: &Batch, settings: &Settings, sums: Sums) -> Self {
        let mut thresholds = settings.thresholds.clone();
        thresholds.nodes.sort_by_key(|&(v, _)| v);
        Tallies {
            stamp: TallyStamp {
                taxonomy: tax.fingerprint().to_string(),
                nodes: tax.len(),
                depth: tax.max_depth(),
                rule: settings.rule,
                policy: settings.policy,
                thresholds,
                temperatures: batch.temperatures().clone(),
                objectness: batch.has_objectness(),
            },
            rows: batch.len() as u64,
            labelled_rows: batch.labelled_rows(),
            label_depth_sum: batch.label_depth_sum(),
            sums,
        }
    }

    /// Whether the per-node and per-depth tables have the sizes the stamp says (tallies read
    /// back from JSON may not).
    pub fn validate(&self) -> Result<(), ErrorKind> {
        let s = &self.sums;
        let nodes = self.stamp.nodes + 1;
        let levels = self.stamp.depth + 1;
        let sizes = [
            ("predictions per node", s.predicted_at.len(), nodes),
            ("correct predictions per node", s.correct_at.len(), nodes),
            ("counts per stop depth", s.stop_count.len(), levels),
        ];
        for (what, found, expected) in sizes {
            if found != expected {
                return Err(ErrorKind::Invalid {
                    what: format!("tallies: {what}"),
                    expected: format!("{expected} entries"),
                    found: found.to_string(),
                });
            }
        }
        Ok(())
    }

    /// Add `other` into `self`; refused unless both were counted under the same taxonomy,
    /// settings and temperatures, with or both without objectness.
    pub fn merge(&mut self, other: &Tallies) -> Result<(), ErrorKind> {
        self.validate()?;
        other.validate()?;
        if self.stamp != other.stamp {
            return Err(ErrorKind::Invalid {
                what: "tallies to add".into(),
                expected: "tallies of the same taxonomy, settings and temperatures, all with or \
                           all without objectness"
                    .into(),
                found: differences(&self.stamp, &other.stamp),
            });
        }
        // Wrapping, as the sums themselves are kept: tallies read back from JSON are not
        // trusted to stay below 2^64, and a sum of that size is not a real count anyway.
        let add = |a: &mut u64, b: u64| *a = a.wrapping_add(b);
        add(&mut self.rows, other.rows);
        add(&mut self.labelled_rows, other.labelled_rows);
        add(&mut self.label_depth_sum, other.label_depth_sum);
        let (s, o) = (&mut self.sums, &other.sums);
        for (a, b) in s.stop_count.iter_mut().zip(&o.stop_count) {
            add(&mut a.correct, b.correct);
            add(&mut a.unverifiable, b.unverifiable);
            add(&mut a.wrong, b.wrong);
        }
        for (a, &b) in s.predicted_at.iter_mut().zip(&o.predicted_at) {
            add(a, b);
        }
        for (a, &b) in s.correct_at.iter_mut().zip(&o.correct_at) {
            add(a, b);
        }
        add(&mut s.abstained, o.abstained);
        add(&mut s.false_alarms, o.false_alarms);
        add(&mut s.h_inter, o.h_inter);
        add(&mut s.h_pred, o.h_pred);
        add(&mut s.severity, o.severity);
        add(&mut s.severity_n, o.severity_n);
        Ok(())
    }

    /// The metrics, for the taxonomy the tallies were counted over (refused for another).
    pub fn into_metrics(self, tax: &Taxonomy) -> Result<Metrics, ErrorKind> {
        self.validate()?;
        if self.stamp.taxonomy != tax.fingerprint() || self.stamp.nodes != tax.len() {
            return Err(ErrorKind::Invalid {
                what: "tallies".into(),
                expected: format!(
                    "tallies of the taxonomy with fingerprint {} ({} nodes)",
                    short(tax.fingerprint()),
                    tax.len()
                ),
                found: format!(
                    "fingerprint {} ({} nodes)",
                    short(&self.stamp.taxonomy),
                    self.stamp.nodes
                ),
            });
        }
        Ok(self.metrics(tax))
    }

    pub fn to_json(&self) -> String {
        serde_json::to_string(self).unwrap_or_default()
    }

    /// Tallies written by [`to_json`](Self::to_json), checked with [`validate`](Self::validate).
    pub fn from_json(bytes: &[u8]) -> Result<Self, ErrorKind> {
        let t: Tallies =
            serde_json::from_slice(bytes).map_err(|e| ErrorKind::Json(e.to_string()))?;
        t.validate()?;
        Ok(t)
    }

    /// The metrics; the tables' sizes and the taxonomy are the caller's to have checked.
    pub(crate) fn metrics(&self, tax: &Taxonomy) -> Metrics {
        let Sums {
            stop_count,
            abstained,
            false_alarms,
            predicted_at,
            correct_at,
            h_inter,
            h_pred,
            severity: severity_sum,
            severity_n,
        } = &self.sums;
        let weigh = |counts: &[u64]| -> f64 {
            counts
                .iter()
                .enumerate()
                .filter(|(_, &k)| k > 0)
                .map(|(v, &k)| k as f64 * tax.gain(v as u32))
                .sum()
        };
        let (gain_sum, reward_sum) = (weigh(predicted_at), weigh(correct_at));
        // Wrapping sums: tallies read back from JSON may hold any u64 (see `merge`).
        let total =
            |k: fn(&OutcomeCount) -> u64| stop_count.iter().fold(0u64, |a, c| a.wrapping_add(k(c)));
        let correct = total(|c| c.correct);
        let unverifiable = total(|c| c.unverifiable);
        let wrong = total(|c| c.wrong);
        let predictions = correct.wrapping_add(unverifiable).wrapping_add(wrong);
        let n = predictions as f64;
        let hp = ratio(*h_inter as f64, *h_pred as f64);
        let hr = ratio(*h_inter as f64, self.label_depth_sum as f64);
        let hf = match (hp, hr) {
            (Some(p), Some(r)) if p + r > 0.0 => Some(2.0 * p * r / (p + r)),
            (Some(_), Some(_)) => Some(0.0),
            _ => None,
        };
        let policy = self.stamp.policy;
        Metrics {
            rows: self.rows,
            predictions,
            abstained: *abstained,
            correct,
            unverifiable,
            wrong,
            labelled_rows: self.labelled_rows,
            background_rows: self.rows.wrapping_sub(self.labelled_rows),
            false_alarms: *false_alarms,
            precision: precision(policy, correct, unverifiable, wrong),
            precision_interval: {
                let (k, m) = crate::nodes::precision_counts(policy, correct, unverifiable, wrong);
                crate::stats::wilson(k, m, crate::stats::Z95)
            },
            specificity: ratio(gain_sum, n),
            reward: ratio(reward_sum, n),
            stop_share: stop_count
                .iter()
                .map(|c| {
                    let k = c.correct.wrapping_add(c.unverifiable).wrapping_add(c.wrong);
                    ratio(k as f64, n)
                })
                .collect(),
            stop_outcome: stop_count
                .iter()
                .map(|c| {
                    let share = |k: u64| ratio(k as f64, n);
                    OutcomeShare {
                        correct: share(c.correct),
                        unverifiable: share(c.unverifiable),
                        wrong: share(c.wrong),
                    }
                })
                .collect(),
            stop_count: stop_count.clone(),
            hierarchical_precision: hp,
            hierarchical_recall: hr,
            hierarchical_f1: hf,
            mistake_severity: ratio(*severity_sum as f64, *severity_n as f64),
            rule: self.stamp.rule,
            unverifiable_policy: policy,
        }
    }
}

impl Add for Tallies {
    /// Tallies of different taxonomies or settings do not add.
    type Output = Result<Tallies, ErrorKind>;

    fn add(mut self, other: Tallies) -> Self::Output {
        self.merge(&other)?;
        Ok(self)
    }
}

/// What differs between two stamps, for the message.
fn differences(a: &TallyStamp, b: &TallyStamp) -> String {
    let mut out = Vec::new();
    if a.taxonomy != b.taxonomy || a.nodes != b.nodes {
        out.push(format!(
            "taxonomy {} ({} nodes) and {} ({} nodes)",
            short(&a.taxonomy),
            a.nodes,
            short(&b.taxonomy),
            b.nodes
        ));
    }
    if a.rule != b.rule {
        out.push(format!("rule {} and {}", a.rule.as_str(), b.rule.as_str()));
    }
    if a.policy != b.policy {
        out.push(format!(
            "unverifiable {} and {}",
            a.policy.as_str(),
            b.policy.as_str()
        ));
    }
    if a.thresholds != b.thresholds {
        out.push("different thresholds".into());
    }
    if a.temperatures != b.temperatures {
        out.push("different temperatures".into());
    }
    if a.objectness != b.objectness {
        out.push("one with objectness, one without".into());
    }
    out.join("; ")
}

fn short(fingerprint: &str) -> String {
    fingerprint.chars().take(12).collect()
}
