//! Where one row's greedy path stops, from the path alone: no labels, no batch. Scoring
//! (`eval`) and streaming decode (`hedgerow decode`, rows written as they are read) both ask
//! [`Decoder`], so the two cannot disagree.

use crate::eval::Outcome;
use crate::settings::Rule;
use crate::taxonomy::{Taxonomy, NONE};

/// Whether a value reaches a threshold. A NaN reaches none (as in the kernel's `q >= t` and
/// the curve), which `q < t` would not say.
#[inline]
fn passes(q: f64, t: f64) -> bool {
    q >= t
}

/// One node on a decoded path.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Step {
    pub node: u32,
    /// p(node | parent).
    pub conditional: f64,
    /// P(node) = P(root) · Π conditionals.
    pub cumulative: f64,
}

/// What one row decodes to.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Decision {
    /// The node where descent stopped (the root index for "an object, type unknown"), or
    /// `None` when the row abstained (P(root) under the object threshold, with objectness).
    pub predicted: Option<u32>,
    /// Depth of `predicted` (0 at the root, and 0 when the row abstained).
    pub depth: usize,
    /// The quantity the rule compared for the predicted node (P(root) at the root and when
    /// the row abstained).
    pub probability: f64,
}

impl Decision {
    pub fn abstained(&self) -> bool {
        self.predicted.is_none()
    }
}

/// The stopping rule with its resolved thresholds.
#[derive(Debug, Clone, Copy)]
pub struct Decoder<'a> {
    pub tax: &'a Taxonomy,
    pub rule: Rule,
    /// [`Thresholds::resolve`]'s table: one threshold per node, the root's (t_0) last.
    ///
    /// [`Thresholds::resolve`]: crate::settings::Thresholds::resolve
    pub thresholds: &'a [f64],
    /// Whether P(root) comes from objectness, so the object threshold t_0 applies.
    pub objectness: bool,
}

impl Decoder<'_> {
    /// The depth where descent along the path to `leaf` stops (`cond` holds its conditionals,
    /// depth 1 first), or `None` when the row abstains.
    #[inline]
    pub fn stop(&self, p_root: f64, leaf: u32, cond: &[f32]) -> Option<usize> {
        let tax = self.tax;
        // `!passes`, not `<`: a NaN reaches no threshold, as in the kernel and the curve.
        if self.objectness && !passes(p_root, self.thresholds[tax.root() as usize]) {
            return None;
        }
        let depth = tax.depth(leaf);
        let mut p = p_root;
        for d in 1..=depth {
            let c = cond[d - 1] as f64;
            let q = match self.rule {
                Rule::Cumulative => {
                    p *= c;
                    p
                }
                Rule::Conditional => c,
            };
            if !passes(q, self.thresholds[tax.ancestor(leaf, d) as usize]) {
                return Some(d - 1);
            }
        }
        Some(depth)
    }

    /// The row's decision, with its whole greedy path (depth 1 first) written into `path`
    /// (cleared first, so one buffer serves every row).
    pub fn decide(&self, p_root: f64, leaf: u32, cond: &[f32], path: &mut Vec<Step>) -> Decision {
        let tax = self.tax;
        path.clear();
        let mut p = p_root;
        for d in 1..=tax.depth(leaf) {
            let c = cond[d - 1] as f64;
            p *= c;
            path.push(Step {
                node: tax.ancestor(leaf, d),
                conditional: c,
                cumulative: p,
            });
        }
        match self.stop(p_root, leaf, cond) {
            None => Decision {
                predicted: None,
                depth: 0,
                probability: p_root,
            },
            Some(s) => {
                let probability = match (s.checked_sub(1).and_then(|i| path.get(i)), self.rule) {
                    (None, _) => p_root,
                    (Some(step), Rule::Cumulative) => step.cumulative,
                    (Some(step), Rule::Conditional) => step.conditional,
                };
                Decision {
                    predicted: Some(tax.ancestor(leaf, s)),
                    depth: s,
                    probability,
                }
            }
        }
    }

    /// The outcome of `decision` for a row whose path ends at `leaf` and whose label is
    /// `label` ([`NONE`] for a background row).
    pub fn outcome(&self, decision: &Decision, leaf: u32, label: u32) -> Outcome {
        let labelled = label != NONE;
        if decision.abstained() {
            return if labelled {
                Outcome::Abstained
            } else {
                Outcome::Rejected
            };
        }
        let (agree, label_depth) = if labelled {
            (self.tax.lca_depth(leaf, label), self.tax.depth(label))
        } else {
            (0, 0)
        };
        prediction_outcome(labelled, decision.depth, agree, label_depth)
    }
}

/// The outcome of a prediction stopping at depth `s`, for a row whose label sits at depth
/// `label_depth` and shares its first `agree` levels with the row's path.
#[inline]
pub(crate) fn prediction_outcome(
    labelled: bool,
    s: usize,
    agree: usize,
    label_depth: usize,
) -> Outcome {
    if !labelled {
        Outcome::Wrong
    } else if s <= agree {
        Outcome::Correct
    } else if agree == label_depth {
        Outcome::Unverifiable
    } else {
        Outcome::Wrong
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::settings::Thresholds;

    fn tax() -> Taxonomy {
        // x → y → w, x → z
        Taxonomy::parse(b"id,parent\nx,\ny,x\nz,x\nw,y\n", "t.csv").expect("taxonomy")
    }

    #[test]
    fn stops_where_the_rule_fails_and_reports_the_compared_probability() {
        let tax = tax();
        let th = Thresholds {
            object: 0.5,
            depths: vec![0.9, 0.6, 0.5],
            nodes: Vec::new(),
        }
        .resolve(&tax);
        let w = tax.lookup("w").expect("w");
        let cond = [1.0f32, 0.75, 1.0];
        let mut path = Vec::new();
        let cumulative = Decoder {
            tax: &tax,
            rule: Rule::Cumulative,
            thresholds: &th,
            objectness: true,
        };
        // P(x) = 0.8 · 1 ≥ 0.9 fails: stop at the root.
        let d = cumulative.decide(0.8, w, &cond, &mut path);
        assert_eq!(
            (d.predicted, d.depth, d.probability),
            (Some(tax.root()), 0, 0.8)
        );
        assert_eq!(path.len(), 3);
        assert_eq!(path[1].cumulative, 0.8 * 0.75);
        // P(root) under t_0: abstain, the path is still given.
        let d = cumulative.decide(0.4, w, &cond, &mut path);
        assert!(d.abstained());
        assert_eq!(path.len(), 3);
        // Without objectness t_0 does not apply.
        let no_object = Decoder {
            objectness: false,
            ..cumulative
        };
        assert_eq!(no_object.stop(0.4, w, &cond), Some(0));
        let conditional = Decoder {
            rule: Rule::Conditional,
            ..cumulative
        };
        // p(x) = 1 ≥ 0.9, p(y | x) = 0.75 ≥ 0.6, p(w | y) = 1 ≥ 0.5: the leaf.
        let d = conditional.decide(0.8, w, &cond, &mut path);
        assert_eq!((d.predicted, d.depth, d.probability), (Some(w), 3, 1.0));
        // Outcomes against labels: the leaf under its own label, under a coarser one, a
        // sibling's, and a background row; then the root under a fine label.
        let id = |s: &str| tax.lookup(s).expect("node");
        assert_eq!(conditional.outcome(&d, w, w), Outcome::Correct);
        assert_eq!(conditional.outcome(&d, w, id("y")), Outcome::Unverifiable);
        assert_eq!(conditional.outcome(&d, w, id("z")), Outcome::Wrong);
        assert_eq!(conditional.outcome(&d, w, NONE), Outcome::Wrong);
        let root = cumulative.decide(0.8, w, &cond, &mut path);
        assert_eq!(cumulative.outcome(&root, w, id("z")), Outcome::Correct);
        let abstained = cumulative.decide(0.4, w, &cond, &mut path);
        assert_eq!(cumulative.outcome(&abstained, w, w), Outcome::Abstained);
        assert_eq!(cumulative.outcome(&abstained, w, NONE), Outcome::Rejected);
    }
}
