//! Decode settings: stopping rule, thresholds (per depth, with room for per-node overrides),
//! temperatures and the unverifiable policy.

use serde::{Deserialize, Serialize};

use crate::error::ErrorKind;
use crate::taxonomy::Taxonomy;

/// When descent steps into the next node of the greedy path.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Rule {
    /// Step into the child at depth d iff P(child) = P(root)·Π p(·|·) ≥ t_d.
    #[default]
    Cumulative,
    /// Step into the child at depth d iff p(child | parent) ≥ t_d.
    Conditional,
}

impl Rule {
    pub fn parse(s: &str) -> Option<Self> {
        match s.trim().to_ascii_lowercase().as_str() {
            "cumulative" => Some(Rule::Cumulative),
            "conditional" => Some(Rule::Conditional),
            _ => None,
        }
    }
    pub fn as_str(self) -> &'static str {
        match self {
            Rule::Cumulative => "cumulative",
            Rule::Conditional => "conditional",
        }
    }
}

/// How precision treats an *unverifiable* prediction (one below a coarse label).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Policy {
    /// Counted as right: (correct + unverifiable) / predictions.
    #[default]
    Credit,
    /// Counted as wrong: correct / predictions.
    Penalize,
    /// Left out of the ratio: correct / (correct + wrong).
    Exclude,
}

impl Policy {
    pub fn parse(s: &str) -> Option<Self> {
        match s.trim().to_ascii_lowercase().as_str() {
            "credit" => Some(Policy::Credit),
            "penalize" => Some(Policy::Penalize),
            "exclude" => Some(Policy::Exclude),
            _ => None,
        }
    }
    pub fn as_str(self) -> &'static str {
        match self {
            Policy::Credit => "credit",
            Policy::Penalize => "penalize",
            Policy::Exclude => "exclude",
        }
    }
}

/// Stopping thresholds. `depths[0]` is t_1; a list shorter than the taxonomy's depth repeats
/// its last value. A node listed in `nodes` uses its own threshold instead of its depth's.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Thresholds {
    /// t_0: a row predicts only if P(root) ≥ t_0 (applies only with objectness).
    pub object: f64,
    pub depths: Vec<f64>,
    /// Per-node overrides by column index.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub nodes: Vec<(u32, f64)>,
}

impl Default for Thresholds {
    fn default() -> Self {
        Thresholds {
            object: 0.5,
            depths: vec![0.5],
            nodes: Vec::new(),
        }
    }
}

impl Thresholds {
    /// t_d for depth `d ≥ 1`.
    pub fn at_depth(&self, d: usize) -> f64 {
        let i = d.saturating_sub(1);
        self.depths
            .get(i)
            .or(self.depths.last())
            .copied()
            .unwrap_or(0.0)
    }

    /// The threshold each node is entered with: its override, else its depth's. Length
    /// `taxonomy.len() + 1` (the root's entry is t_0).
    pub fn resolve(&self, tax: &Taxonomy) -> Vec<f64> {
        let mut out: Vec<f64> = (0..tax.len() as u32)
            .map(|v| self.at_depth(tax.depth(v)))
            .collect();
        out.push(self.object);
        for &(v, t) in &self.nodes {
            if let Some(slot) = out.get_mut(v as usize) {
                *slot = t;
            }
        }
        out
    }

    /// Every value must be a number in [0, 1].
    pub fn validate(&self) -> Result<(), ErrorKind> {
        let check = |what: String, t: f64| {
            if (0.0..=1.0).contains(&t) {
                Ok(())
            } else {
                Err(ErrorKind::ThresholdRange {
                    what,
                    found: t.to_string(),
                })
            }
        };
        check("object threshold".into(), self.object)?;
        if self.depths.is_empty() {
            return Err(ErrorKind::Invalid {
                what: "thresholds".into(),
                expected: "at least one value".into(),
                found: "none".into(),
            });
        }
        for (i, &t) in self.depths.iter().enumerate() {
            check(format!("threshold for depth {}", i + 1), t)?;
        }
        for &(v, t) in &self.nodes {
            check(format!("threshold for node {v}"), t)?;
        }
        Ok(())
    }
}

/// Softmax temperatures per depth: `0[d - 1]` divides the logits of the children at depth d.
/// A shorter list repeats its last value; empty means 1 everywhere.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
pub struct Temperatures(pub Vec<f64>);

impl Temperatures {
    pub fn at_depth(&self, d: usize) -> f64 {
        self.0
            .get(d.saturating_sub(1))
            .or(self.0.last())
            .copied()
            .unwrap_or(1.0)
    }
    /// Smallest and largest temperature accepted. Logits are finite (checked on read); divided
    /// by a temperature in this range, float16 and float32 logits stay far inside f64, and
    /// float64 ones up to 10^304 do. Outside it (`1e-310`, say) `logit / t` overflows to ±inf
    /// and the softmax to NaN.
    pub const RANGE: std::ops::RangeInclusive<f64> = 1e-4..=1e4;

    /// Whether `t` is a temperature the engine accepts: a normal float in [`Self::RANGE`].
    pub fn valid(t: f64) -> bool {
        t.is_normal() && Self::RANGE.contains(&t)
    }

    /// Every value must be [`valid`](Self::valid); the error names the depth of the first that
    /// is not.
    pub fn validate(&self) -> Result<(), ErrorKind> {
        for (i, &t) in self.0.iter().enumerate() {
            if !Self::valid(t) {
                return Err(ErrorKind::TemperatureRange {
                    depth: i + 1,
                    found: shown(t),
                    min: *Self::RANGE.start(),
                    max: *Self::RANGE.end(),
                });
            }
        }
        Ok(())
    }
    /// One value per depth 1..=D (expanded).
    pub fn expand(&self, max_depth: usize) -> Vec<f64> {
        (1..=max_depth).map(|d| self.at_depth(d)).collect()
    }
}

/// A number as a user would write it: `1e-310`, not three hundred zeros.
fn shown(t: f64) -> String {
    if t != 0.0 && t.is_finite() && !(1e-4..1e16).contains(&t.abs()) {
        format!("{t:e}")
    } else {
        t.to_string()
    }
}

/// Everything that decides a decode and how it is scored, except the temperatures (which
/// decide the stored paths and so live with the batch).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Settings {
    pub rule: Rule,
    pub thresholds: Thresholds,
    pub policy: Policy,
}
