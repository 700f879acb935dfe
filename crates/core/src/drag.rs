//! Dragging one depth's threshold: after one pass that finds, for every row, the single value
//! at which its decision at that depth flips, each move of the threshold re-scores only the rows
//! whose breakpoint lies between the old and the new value. The sums are integers, so the
//! metrics equal a full [`evaluate`](crate::evaluate) bit for bit.

use crate::batch::Batch;
use crate::eval::{finish, stop_depth, Metrics, Sums};
use crate::settings::{Rule, Settings};
use crate::taxonomy::{Taxonomy, NONE};

/// A row whose stop depth depends on the dragged threshold: at thresholds ≤ `at` it descends
/// to `high`, above it it stops at `low` (= depth − 1).
#[derive(Clone, Copy)]
pub(crate) struct Move {
    pub at: f64,
    pub row: u32,
    pub low: u8,
    pub high: u8,
}

/// Every row's behaviour as the threshold of `depth` moves, the others held.
pub(crate) struct Moves {
    /// Sorted by `at`, ascending.
    pub moves: Vec<Move>,
    /// Per row: where it stops at threshold 0 (`None`: it abstains).
    pub high: Vec<Option<u8>>,
}

pub(crate) fn moves(tax: &Taxonomy, batch: &Batch, settings: &Settings, depth: usize) -> Moves {
    let base = settings.thresholds.resolve(tax);
    let overridden: std::collections::HashSet<u32> =
        settings.thresholds.nodes.iter().map(|&(v, _)| v).collect();
    let moved = |value: f64| {
        let mut t = base.clone();
        for v in 0..tax.len() as u32 {
            if tax.depth(v) == depth && !overridden.contains(&v) {
                t[v as usize] = value;
            }
        }
        t
    };
    let (pass, fail) = (moved(f64::NEG_INFINITY), moved(f64::INFINITY));
    let mut moves = Vec::new();
    let mut high = Vec::with_capacity(batch.len());
    for r in 0..batch.len() {
        let h = stop_depth(tax, batch, settings.rule, &pass, r);
        high.push(h.map(|s| s as u8));
        let (Some(h), Some(low)) = (h, stop_depth(tax, batch, settings.rule, &fail, r)) else {
            continue;
        };
        if h != low {
            let cond = batch.paths().cond(r);
            let at = match settings.rule {
                Rule::Conditional => cond[depth - 1] as f64,
                Rule::Cumulative => {
                    (0..depth).fold(batch.root_probability(r), |p, d| p * cond[d] as f64)
                }
            };
            moves.push(Move {
                at,
                row: r as u32,
                low: low as u8,
                high: h as u8,
            });
        }
    }
    moves.sort_unstable_by(|a, b| a.at.total_cmp(&b.at));
    Moves { moves, high }
}

/// Incremental re-scoring while one depth's threshold is dragged.
#[derive(Debug, Clone)]
pub struct DepthDrag {
    depth: usize,
    settings: Settings,
    moves: Vec<Move>,
    /// Per row, where it stops at threshold 0 (`None`: abstains).
    high: Vec<Option<u8>>,
    /// `moves[..applied]` are at `low` (the threshold is above their breakpoint).
    applied: usize,
    sums: Sums,
}

impl std::fmt::Debug for Move {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}@{}:{}→{}", self.row, self.at, self.high, self.low)
    }
}

impl DepthDrag {
    /// Index `depth` (1…D) under `settings`; the current threshold of that depth is taken from
    /// `settings`. Costs about two full evaluations and a sort.
    pub fn new(tax: &Taxonomy, batch: &Batch, settings: &Settings, depth: usize) -> Self {
        let Moves { moves, high } = moves(tax, batch, settings, depth);
        let t = settings.thresholds.at_depth(depth);
        let applied = moves.partition_point(|m| m.at < t);
        let mut stop = high.clone();
        for m in &moves[..applied] {
            stop[m.row as usize] = Some(m.low);
        }
        let mut sums = Sums::new(tax, batch.paths().width() + 1);
        for (r, s) in stop.iter().enumerate() {
            match s {
                None => sums.abstained += 1,
                Some(s) => {
                    sums.row(tax, batch, r, *s as usize, true);
                    sums.false_alarms += (batch.label(r) == NONE) as u64;
                }
            }
        }
        let mut settings = settings.clone();
        let d = batch.paths().width().max(depth);
        settings.thresholds.depths = (1..=d).map(|i| settings.thresholds.at_depth(i)).collect();
        DepthDrag {
            depth,
            settings,
            moves,
            high,
            applied,
            sums,
        }
    }

    pub fn depth(&self) -> usize {
        self.depth
    }

    /// The settings the current metrics belong to.
    pub fn settings(&self) -> &Settings {
        &self.settings
    }

    /// Rows whose decision at this depth can flip.
    pub fn movable(&self) -> usize {
        self.moves.len()
    }

    /// The operating point's path as this depth's threshold goes from 0 to 1 (exact; the
    /// first point is t = 0, each further one holds just above its threshold).
    pub fn sweep(&self, tax: &Taxonomy, batch: &Batch) -> Vec<crate::CurvePoint> {
        self.sweep_within(tax, batch, 0.0)
    }

    /// [`sweep`](Self::sweep) drawn to a resolution: a point is kept once precision or
    /// specificity moved by at least `resolution` (first and last always kept).
    pub fn sweep_within(
        &self,
        tax: &Taxonomy,
        batch: &Batch,
        resolution: f64,
    ) -> Vec<crate::CurvePoint> {
        crate::curve::sweep_moves(
            tax,
            batch,
            self.settings.policy,
            &self.moves,
            &self.high,
            resolution,
        )
    }

    /// Move the threshold to `t` and return the metrics there.
    pub fn set(&mut self, tax: &Taxonomy, batch: &Batch, t: f64) -> Metrics {
        self.set_reporting(tax, batch, t, |_, _, _| {})
    }

    /// [`set`](Self::set), calling `moved(row, from, to)` for every row whose stop depth
    /// changes, so a caller can keep per-row or per-node state in step with the rows that flip
    /// only (the page's per-node counts).
    pub fn set_reporting(
        &mut self,
        tax: &Taxonomy,
        batch: &Batch,
        t: f64,
        mut moved: impl FnMut(usize, usize, usize),
    ) -> Metrics {
        let target = self.moves.partition_point(|m| m.at < t);
        while self.applied < target {
            let m = self.moves[self.applied];
            let (r, high, low) = (m.row as usize, m.high as usize, m.low as usize);
            self.sums.row(tax, batch, r, high, false);
            self.sums.row(tax, batch, r, low, true);
            moved(r, high, low);
            self.applied += 1;
        }
        while self.applied > target {
            self.applied -= 1;
            let m = self.moves[self.applied];
            let (r, high, low) = (m.row as usize, m.high as usize, m.low as usize);
            self.sums.row(tax, batch, r, low, false);
            self.sums.row(tax, batch, r, high, true);
            moved(r, low, high);
        }
        if let Some(slot) = self.settings.thresholds.depths.get_mut(self.depth - 1) {
            *slot = t;
        }
        finish(tax, batch, &self.settings, self.sums.clone())
    }
}
