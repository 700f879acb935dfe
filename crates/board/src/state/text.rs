//! The words and number formats the page shows, beside the state they describe.

use hedgerow_core::Errors;

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
