//! Simulated classifier output over the cut-out taxonomy: one logit per node per row, the true
//! class of each row, its label (sometimes coarser than the truth) and P(object).
//!
//! Each row draws a true class: usually a leaf, sometimes an internal node (an item that is
//! only a "bottle", no finer kind). Every logit is a per-group offset plus noise; the true
//! path's nodes get a boost that shrinks with depth, so the top levels are clear and the deep
//! ones uncertain; a look-alike sibling gets a boost as large now and then (more often deeper
//! down); a per-row clarity scales the whole path (a crumpled item is hard at every level).
//! Each row has its own PRNG stream (`crate::rng`), so a row does not depend on the ones
//! before it, and only `+ - * /` turn bits into numbers: the same seed gives the same bytes
//! everywhere.

use super::tree::Tree;
use crate::rng::Rng;

/// Rows where the detector fired on nothing (only in detector batches, with objectness).
const BACKGROUND_RATE: f64 = 0.10;
/// Foreground rows whose true class is an internal node.
const INTERNAL_TRUTH_RATE: f64 = 0.10;
/// Rows with a leaf truth that the annotator labelled with a strict ancestor.
const COARSE_LABEL_RATE: f64 = 0.12;
/// Boost of the true node at depth 1, its shrink per level, and its floor.
const BOOST_TOP: f64 = 6.0;
const BOOST_DECAY: f64 = 0.72;
const BOOST_FLOOR: f64 = 0.9;
const BOOST_JITTER: f64 = 0.6;
/// Chance that a sibling of the true node looks alike: `LOOKALIKE_TOP + LOOKALIKE_STEP * (d-1)`.
const LOOKALIKE_TOP: f64 = 0.03;
const LOOKALIKE_STEP: f64 = 0.05;
const NOISE_SD: f64 = 1.0;
const OFFSET_MEAN: f64 = -0.5;
const OFFSET_SD: f64 = 0.6;
/// Partly hidden items: weaker evidence and lower objectness.
const OCCLUDED_RATE: f64 = 0.10;
/// Shares of rows whose objectness is exactly 1.0 (foreground) or 0.0 (background): detectors
/// saturate, and the evaluator must take both ends.
const CERTAIN_OBJECT_RATE: f64 = 0.05;
const CERTAIN_BACKGROUND_RATE: f64 = 0.25;
/// Background rows that still look like objects.
const FALSE_ALARM_RATE: f64 = 0.08;

/// What to simulate.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct RowSpec {
    pub rows: usize,
    pub seed: u64,
    /// A detector batch: background rows and P(object) per row.
    pub objectness: bool,
}

/// The simulated batch.
#[derive(Debug, Clone, PartialEq)]
pub struct Rows {
    /// `(rows, nodes)`, row-major.
    pub logits: Vec<f32>,
    /// The label column per row; `None` = background.
    pub labels: Vec<Option<usize>>,
    pub objectness: Option<Vec<f32>>,
}

impl Rows {
    pub fn background(&self) -> usize {
        self.labels.iter().filter(|l| l.is_none()).count()
    }

    /// Rows labelled with an internal node.
    pub fn coarse(&self, tree: &Tree) -> usize {
        self.labels
            .iter()
            .filter(|l| l.is_some_and(|v| !tree.is_leaf(v)))
            .count()
    }
}

fn pick(rng: &mut Rng, from: &[usize]) -> Option<usize> {
    if from.is_empty() {
        return None;
    }
    from.get(rng.below(from.len() as u64) as usize).copied()
}

pub fn simulate(tree: &Tree, spec: RowSpec) -> Rows {
    let m = tree.len();
    let leaves = tree.leaves();
    let internal: Vec<usize> = (0..m).filter(|&v| !tree.is_leaf(v)).collect();
    // One offset per sibling group, keyed by the group's first column.
    let mut offset_rng = Rng::new(spec.seed, u64::MAX);
    let mut offset = vec![0.0; m];
    let mut groups: Vec<&[usize]> = vec![&tree.top];
    groups.extend(
        tree.children
            .iter()
            .filter(|c| !c.is_empty())
            .map(Vec::as_slice),
    );
    for group in groups {
        let o = OFFSET_MEAN + OFFSET_SD * offset_rng.normal();
        for &v in group {
            offset[v] = o;
        }
    }

    let mut logits = Vec::with_capacity(spec.rows * m);
    let mut labels = Vec::with_capacity(spec.rows);
    let mut objectness = Vec::with_capacity(if spec.objectness { spec.rows } else { 0 });
    let mut row = vec![0.0f64; m];
    for r in 0..spec.rows {
        let mut rng = Rng::new(spec.seed, r as u64);
        for (v, z) in row.iter_mut().enumerate() {
            *z = offset[v] + NOISE_SD * rng.normal_fast();
        }
        if spec.objectness && rng.uniform() < BACKGROUND_RATE {
            let u = rng.uniform();
            let p = if u < CERTAIN_BACKGROUND_RATE {
                0.0
            } else if u < CERTAIN_BACKGROUND_RATE + FALSE_ALARM_RATE {
                0.45 + 0.30 * rng.uniform()
            } else {
                0.02 + 0.40 * 0.5 * (rng.uniform() + rng.uniform())
            };
            objectness.push(p as f32);
            labels.push(None);
            logits.extend(row.iter().map(|&z| z as f32));
            continue;
        }

        let truth = if rng.uniform() < INTERNAL_TRUTH_RATE {
            pick(&mut rng, &internal)
        } else {
            None
        };
        let truth = truth.or_else(|| pick(&mut rng, &leaves)).unwrap_or(0);
        let occluded = rng.uniform() < OCCLUDED_RATE;
        let clarity = (0.6 + 0.8 * rng.uniform()) * if occluded { 0.65 } else { 1.0 };
        let path = tree.path(truth);
        let mut boost = BOOST_TOP;
        for (i, &v) in path.iter().enumerate() {
            let b = boost.max(BOOST_FLOOR) * clarity;
            row[v] += b + BOOST_JITTER * rng.normal();
            let siblings = tree.siblings(v);
            let lookalike = LOOKALIKE_TOP + LOOKALIKE_STEP * i as f64;
            if siblings.len() > 1 && rng.uniform() < lookalike {
                let mut other = siblings[rng.below(siblings.len() as u64 - 1) as usize];
                if other == v {
                    other = siblings[siblings.len() - 1];
                }
                row[other] += b + BOOST_JITTER * rng.normal();
            }
            boost *= BOOST_DECAY;
        }

        let label = if tree.is_leaf(truth) && path.len() >= 2 && rng.uniform() < COARSE_LABEL_RATE {
            path[rng.below(path.len() as u64 - 1) as usize]
        } else {
            truth
        };
        labels.push(Some(label));
        if spec.objectness {
            let p = if occluded {
                0.15 + 0.40 * rng.uniform()
            } else if rng.uniform() < CERTAIN_OBJECT_RATE {
                1.0
            } else {
                1.0 - 0.45 * rng.uniform() * rng.uniform()
            };
            objectness.push(p as f32);
        }
        logits.extend(row.iter().map(|&z| z as f32));
    }
    Rows {
        logits,
        labels,
        objectness: spec.objectness.then_some(objectness),
    }
}
