//! Moving per-depth thresholds down one at a time over a part of a batch, re-scoring only the
//! rows whose decision flips: the incremental engine under the suggestion's path search and
//! its test walk.
//!
//! Each row keeps the value the rule compares at every depth of its path (cumulative P or the
//! conditional, the same f64 the evaluation compares), and, per depth, the rows sorted by that
//! value. Lowering depth d's threshold from a to b < a moves exactly the rows that stopped at
//! d − 1 with a value in [b, a): they descend from d on under the other thresholds. Every
//! threshold only falls along a path, so each depth's cursor only advances.

use crate::batch::Batch;
use crate::eval::{outcome_at, Outcome};
use crate::settings::{Policy, Rule, Settings};
use crate::taxonomy::Taxonomy;

/// Outcome counts and information-gain sums over the predicting rows of a part.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Tally {
    pub correct: i64,
    pub unverifiable: i64,
    pub wrong: i64,
    /// Σ IG(prediction) (specificity × predictions).
    pub gain: f64,
    /// Σ IG(prediction)·[correct] (reward × predictions).
    pub reward: f64,
}

impl Tally {
    fn add(&mut self, outcome: Outcome, gain: f64, sign: i64) {
        let s = sign as f64;
        self.gain += s * gain;
        match outcome {
            Outcome::Correct => {
                self.correct += sign;
                self.reward += s * gain;
            }
            Outcome::Unverifiable => self.unverifiable += sign,
            _ => self.wrong += sign,
        }
    }

    pub(crate) fn plus(mut self, o: &Tally) -> Tally {
        self.correct += o.correct;
        self.unverifiable += o.unverifiable;
        self.wrong += o.wrong;
        self.gain += o.gain;
        self.reward += o.reward;
        self
    }

    /// (k, n): the predictions the policy counts as right, and those it counts at all.
    pub fn successes(&self, policy: Policy) -> (u64, u64) {
        let (c, u, w) = (
            self.correct.max(0) as u64,
            self.unverifiable.max(0) as u64,
            self.wrong.max(0) as u64,
        );
        match policy {
            Policy::Credit => (c + u, c + u + w),
            Policy::Penalize => (c, c + u + w),
            Policy::Exclude => (c, c + w),
        }
    }

    pub fn precision(&self, policy: Policy) -> Option<f64> {
        let (k, n) = self.successes(policy);
        (n > 0).then(|| k as f64 / n as f64)
    }
}

/// One part of a batch under per-depth thresholds that only fall.
pub struct Walk<'a> {
    tax: &'a Taxonomy,
    batch: &'a Batch,
    width: usize,
    /// Predicting rows (P(root) passes the object threshold), as indices into `batch`.
    rows: Vec<u32>,
    /// `q[i * width + d - 1]`: what row `rows[i]` compares at depth d; −∞ past its leaf and
    /// where a per-node override fails, +∞ where one passes.
    q: Vec<f64>,
    /// Per depth, the local row indices with a finite or +∞ value, by value descending.
    sorted: Vec<Vec<u32>>,
    /// Per depth, how far `sorted` has been passed by the threshold.
    cursor: Vec<usize>,
    stop: Vec<u8>,
    thresholds: Vec<f64>,
    tally: Tally,
}

impl<'a> Walk<'a> {
    /// The part `batch` under `settings`' rule, object threshold and per-node overrides, with
    /// every depth's threshold at 1 (the most cautious setting).
    pub fn new(tax: &'a Taxonomy, batch: &'a Batch, settings: &Settings) -> Self {
        let width = batch.paths().width();
        let object = crate::curve::object_threshold(tax, settings);
        let resolved = settings.thresholds.resolve(tax);
        let overridden: Vec<bool> = {
            let mut o = vec![false; tax.len()];
            for &(v, _) in &settings.thresholds.nodes {
                if let Some(slot) = o.get_mut(v as usize) {
                    *slot = true;
                }
            }
            o
        };
        let rows: Vec<u32> = (0..batch.len() as u32)
            .filter(|&r| !batch.has_objectness() || batch.root_probability(r as usize) >= object)
            .collect();
        let mut q = vec![f64::NEG_INFINITY; rows.len() * width];
        for (i, &r) in rows.iter().enumerate() {
            let r = r as usize;
            let leaf = batch.paths().leaf(r);
            let cond = batch.paths().cond(r);
            let mut p = batch.root_probability(r);
            for d in 1..=tax.depth(leaf).min(width) {
                let c = cond[d - 1] as f64;
                p *= c;
                let v = match settings.rule {
                    Rule::Cumulative => p,
                    Rule::Conditional => c,
                };
                let node = tax.ancestor(leaf, d) as usize;
                q[i * width + d - 1] = if overridden.get(node).copied().unwrap_or(false) {
                    if v >= resolved[node] {
                        f64::INFINITY
                    } else {
                        f64::NEG_INFINITY
                    }
                } else if v.is_nan() {
                    f64::NEG_INFINITY
                } else {
                    v
                };
            }
        }
        let sorted = (0..width)
            .map(|d| {
                // Keys order like the values: non-negative floats order like their bits
                // (−0.0 passes only a threshold of 0, as 0.0 does); −∞ never passes, so
                // those rows are left out.
                let mut keyed: Vec<(u64, u32)> = (0..rows.len())
                    .filter_map(|i| {
                        let v = q[i * width + d];
                        (v >= 0.0).then(|| ((v + 0.0).to_bits(), i as u32))
                    })
                    .collect();
                keyed.sort_unstable_by(|a, b| b.cmp(a));
                keyed.into_iter().map(|(_, i)| i).collect()
            })
            .collect();
        let mut walk = Walk {
            tax,
            batch,
            width,
            rows,
            q,
            sorted,
            cursor: vec![0; width],
            stop: Vec::new(),
            thresholds: vec![1.0; width],
            tally: Tally::default(),
        };
        for d in 0..width {
            walk.cursor[d] =
                walk.sorted[d].partition_point(|&i| walk.value(i as usize, d + 1) >= 1.0);
        }
        walk.stop = (0..walk.rows.len())
            .map(|i| walk.descend(i, 0, 0, 1.0) as u8)
            .collect();
        for i in 0..walk.rows.len() {
            let s = walk.stop[i] as usize;
            let (o, g) = walk.scored(i, s);
            walk.tally.add(o, g, 1);
        }
        walk
    }

    fn value(&self, i: usize, d: usize) -> f64 {
        self.q[i * self.width + d - 1]
    }

    /// Where local row `i`, now at depth `from`, stops, with depth `moved`'s threshold read
    /// as `t` (`moved` = 0: none replaced).
    fn descend(&self, i: usize, from: usize, moved: usize, t: f64) -> usize {
        let mut s = from;
        while s < self.width {
            let th = if s + 1 == moved {
                t
            } else {
                self.thresholds[s]
            };
            if self.value(i, s + 1) >= th {
                s += 1;
            } else {
                break;
            }
        }
        s
    }

    fn scored(&self, i: usize, s: usize) -> (Outcome, f64) {
        let r = self.rows[i] as usize;
        (
            outcome_at(self.batch, r, s),
            self.tax.gain_at(self.batch.paths().leaf(r), s),
        )
    }

    pub fn tally(&self) -> Tally {
        self.tally
    }

    /// Depth thresholds t_1…t_D now.
    pub fn thresholds(&self) -> &[f64] {
        &self.thresholds
    }

    /// Predicting rows of the part.
    pub fn predictions(&self) -> usize {
        self.rows.len()
    }

    /// The rows depth `d` (1…D) passes at threshold `t`, counted from the top: the cursor
    /// position that lowering to `t` would reach.
    fn reach(&self, d: usize, t: f64) -> usize {
        let list = &self.sorted[d - 1];
        let start = self.cursor[d - 1];
        start + list[start..].partition_point(|&i| self.value(i as usize, d) >= t)
    }

    /// The values at which depth `d` would next move something, from the current cursor: the
    /// value of the first row in `sorted` below the cursor that stopped at d − 1 (`None`: no
    /// row can move at this depth now).
    pub fn next_mover(&self, d: usize) -> Option<f64> {
        let list = &self.sorted[d - 1];
        list[self.cursor[d - 1]..]
            .iter()
            .find(|&&i| self.stop[i as usize] as usize == d - 1)
            .map(|&i| self.value(i as usize, d))
    }

    /// What lowering depth `d`'s threshold to `t` would change, without changing anything.
    pub fn delta(&self, d: usize, t: f64) -> (Tally, usize) {
        let mut change = Tally::default();
        let mut moved = 0;
        let end = self.reach(d, t);
        for &i in &self.sorted[d - 1][self.cursor[d - 1]..end] {
            let i = i as usize;
            if self.stop[i] as usize != d - 1 {
                continue;
            }
            let s = self.descend(i, d - 1, d, t);
            let (o, g) = self.scored(i, d - 1);
            change.add(o, g, -1);
            let (o, g) = self.scored(i, s);
            change.add(o, g, 1);
            moved += 1;
        }
        (change, moved)
    }

    /// Lower depth `d`'s threshold to `t` (a higher `t` than now is ignored: thresholds only
    /// fall along a walk).
    pub fn lower(&mut self, d: usize, t: f64) {
        if t >= self.thresholds[d - 1] {
            return;
        }
        self.thresholds[d - 1] = t;
        let end = self.reach(d, t);
        for k in self.cursor[d - 1]..end {
            let i = self.sorted[d - 1][k] as usize;
            if self.stop[i] as usize != d - 1 {
                continue;
            }
            let s = self.descend(i, d - 1, 0, t);
            let (o, g) = self.scored(i, d - 1);
            self.tally.add(o, g, -1);
            let (o, g) = self.scored(i, s);
            self.tally.add(o, g, 1);
            self.stop[i] = s as u8;
        }
        self.cursor[d - 1] = end;
    }
}

impl Walk<'_> {
    /// Up to `k` candidate thresholds for depth `d`, descending: the values at evenly spaced
    /// ranks of the part's own values at that depth (so each step moves about as many rows),
    /// those in [0, 1] only, without repeats, ending with 0.
    pub fn grid(&self, d: usize, k: usize) -> Vec<f64> {
        let list = &self.sorted[d - 1];
        let mut out: Vec<f64> = Vec::with_capacity(k + 1);
        for j in 1..=k {
            let rank = (j * list.len()).div_ceil(k);
            let Some(&i) = rank.checked_sub(1).and_then(|r| list.get(r)) else {
                continue;
            };
            let v = self.value(i as usize, d) + 0.0;
            if (0.0..=1.0).contains(&v) && out.last().is_none_or(|&l| v < l) {
                out.push(v);
            }
        }
        if out.last() != Some(&0.0) {
            out.push(0.0);
        }
        out
    }
}
