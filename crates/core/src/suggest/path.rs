//! The two halves of the suggestion: a path of per-depth settings from cautious to bold built
//! on one part (Pareto Testing: Laufer-Goldshtein, Fisch, Barzilay & Jaakkola, ICLR 2023), and
//! the fixed-sequence test along it on another (Learn-then-Test: Angelopoulos, Bates, Candès,
//! Jordan & Lei 2021).

use super::walk::{Tally, Walk};
use super::Maximize;
use crate::settings::Policy;
use crate::stats::binomial_upper_tail;

/// Candidate thresholds per depth for the path search.
pub const GRID: usize = 128;

/// One setting on the path: the step that reached it from the previous one.
#[derive(Debug, Clone, PartialEq)]
pub struct Point {
    /// The depth whose threshold fell (0 for the starting point).
    pub depth: usize,
    /// t_1…t_D at this point.
    pub thresholds: Vec<f64>,
    /// The counts on the part the path was built on.
    pub tally: Tally,
}

fn objective(t: &Tally, maximize: Maximize) -> f64 {
    match maximize {
        Maximize::Specificity => t.gain,
        Maximize::Reward => t.reward,
    }
}

/// Greedy coordinate moves from every threshold at 1: at each step, of the moves that lower
/// one depth's threshold to the next grid value that changes some row, take the one that buys
/// the most of the objective per unit of precision lost (a move that loses none comes first,
/// largest gain first); stop when no move gains. Each point is then on, or close to, the
/// precision/objective front of the settings reachable so far, and the points run from the most
/// precise to the boldest.
pub fn pareto_path(walk: &mut Walk, maximize: Maximize, policy: Policy) -> Vec<Point> {
    let width = walk.thresholds().len();
    let grids: Vec<Vec<f64>> = (1..=width).map(|d| walk.grid(d, GRID)).collect();
    let mut path = vec![Point {
        depth: 0,
        thresholds: walk.thresholds().to_vec(),
        tally: walk.tally(),
    }];
    loop {
        let now = walk.tally();
        let precision_now = now.precision(policy).unwrap_or(0.0);
        // (free, score, depth, threshold): free moves rank above costly ones.
        let mut best: Option<(bool, f64, usize, f64)> = None;
        for d in 1..=width {
            let Some(v) = walk.next_mover(d) else {
                continue;
            };
            let Some(&t) = grids[d - 1].iter().find(|&&g| g <= v) else {
                continue;
            };
            let (change, moved) = walk.delta(d, t);
            let gain = objective(&change, maximize);
            if moved == 0 || gain <= 0.0 {
                continue;
            }
            let after = now.plus(&change);
            let loss = precision_now - after.precision(policy).unwrap_or(0.0);
            let candidate = if loss <= 0.0 {
                (true, gain, d, t)
            } else {
                (false, gain / loss, d, t)
            };
            let better = match best {
                None => true,
                Some((free, score, _, _)) => {
                    (candidate.0 && !free) || (candidate.0 == free && candidate.1 > score)
                }
            };
            if better {
                best = Some(candidate);
            }
        }
        let Some((_, _, d, t)) = best else { break };
        walk.lower(d, t);
        path.push(Point {
            depth: d,
            thresholds: walk.thresholds().to_vec(),
            tally: walk.tally(),
        });
    }
    path
}

/// The counts of every point of `path` on another part, walked in order.
pub fn replay(walk: &mut Walk, path: &[Point]) -> Vec<Tally> {
    path.iter()
        .map(|p| {
            if p.depth > 0 {
                walk.lower(p.depth, p.thresholds[p.depth - 1]);
            }
            walk.tally()
        })
        .collect()
}

/// The exact binomial p-value of H0: precision < `target`, from k right of n counted:
/// P(Bin(n, target) ≥ k) (Clopper–Pearson's test). With no counted prediction there is no
/// evidence: 1.
pub fn p_value(k: u64, n: u64, target: f64) -> f64 {
    if n == 0 {
        1.0
    } else {
        binomial_upper_tail(k, n, target)
    }
}

/// Fixed-sequence testing at level δ over `counts` (k, n) in their order: reject while the
/// p-value is ≤ δ, stop at the first that is not. The index of the last rejected hypothesis
/// (the boldest certified setting), and how many were tested. Because the order was fixed
/// before these counts were seen, the chance that any rejected setting has precision below the
/// target is at most δ (Learn-then-Test, Angelopoulos et al. 2021, fixed-sequence procedure).
pub fn fixed_sequence(
    counts: impl IntoIterator<Item = (u64, u64)>,
    target: f64,
    delta: f64,
) -> (Option<usize>, usize) {
    let mut last = None;
    let mut tested = 0;
    for (i, (k, n)) in counts.into_iter().enumerate() {
        tested += 1;
        if p_value(k, n, target) <= delta {
            last = Some(i);
        } else {
            break;
        }
    }
    (last, tested)
}
