//! The words and number formats the page shows, beside the state they describe.

use hedgerow_core::nodes::precision_counts;
use hedgerow_core::stats::{wilson, Z95};
use hedgerow_core::{Errors, Metrics};

pub(crate) fn clamp01(v: f64) -> f64 {
    if v.is_nan() {
        0.0
    } else {
        v.clamp(0.0, 1.0)
    }
}

pub(crate) fn messages(e: &Errors) -> Vec<String> {
    e.iter().map(|e| e.to_string()).collect()
}

/// Names as the page quotes them: `` `logits`, `labels` ``.
pub(crate) fn quoted(names: &[String]) -> String {
    names
        .iter()
        .map(|n| format!("`{n}`"))
        .collect::<Vec<_>>()
        .join(", ")
}

pub(crate) fn join(values: &[f64]) -> String {
    values
        .iter()
        .map(|v| v.to_string())
        .collect::<Vec<_>>()
        .join(", ")
}

/// A ratio as the page shows it: 4 decimals, or "n/a" with no denominator.
pub fn show_ratio(v: Option<f64>) -> String {
    v.map_or_else(|| "n/a".to_string(), |v| format!("{v:.4}"))
}

/// Precision's Wilson score 95 % interval beside the headline figure, with the number of
/// predictions it counts under the policy: "95 % 0.8990–0.9120 (Wilson, n = 12 345)".
pub fn show_precision_interval(m: &Metrics) -> Option<String> {
    let (k, n) = precision_counts(m.unverifiable_policy, m.correct, m.unverifiable, m.wrong);
    let i = wilson(k, n, Z95)?;
    Some(format!(
        "95 % {:.4}–{:.4} (Wilson, n = {})",
        i.low,
        i.high,
        thin_thousands(n)
    ))
}

/// Thousands separated by a thin space, as the page shows counts.
pub fn thin_thousands(n: u64) -> String {
    let digits = n.to_string();
    let mut out = String::new();
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            out.push('\u{2009}');
        }
        out.push(c);
    }
    out
}

/// One line explaining each headline number.
pub const HELP: &[(&str, &str, &str)] = &[
    ("predictions", "predictions", "rows that predict: P(root) reached the object threshold"),
    ("precision", "precision", "share of predictions that are right: the true node or one of its ancestors (unverifiable ones per the policy)"),
    ("specificity", "specificity (information gain)", "mean information gain of the predicted node: 0 at the root, 1 at a leaf"),
    ("reward", "reward", "mean information gain counted only for correct predictions"),
    ("hierarchical-precision", "hier. precision", "shared ancestors of prediction and label over the prediction's ancestors (micro, root excluded)"),
    ("hierarchical-recall", "hier. recall", "shared ancestors of prediction and label over the label's ancestors (micro, root excluded)"),
    ("hierarchical-f1", "hier. F1", "harmonic mean of hierarchical precision and recall"),
    ("mistake-severity", "mistake severity", "mean tree distance between a wrong prediction and its label, in edges"),
];

impl super::Board {
    /// A line about the staged files while they are not the batch in use (a new batch is being
    /// staged or read); `None` when they are, or when no batch is in use yet.
    pub fn staging_line(&self) -> Option<String> {
        self.active.as_ref()?;
        if !self.staging_differs() {
            return None;
        }
        if let Some(p) = &self.progress {
            return Some(format!(
                "Reading {} for a new batch: the batch in use stays until it is read.",
                p.name
            ));
        }
        let missing = self.missing();
        if !missing.is_empty() {
            return Some(format!(
                "The staged files are not a whole batch yet ({} needed): the batch in use is kept.",
                missing.join(", ")
            ));
        }
        Some("The staged files do not make a batch yet: the batch in use is kept.".into())
    }
}
