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
#[derive(Clone)]
pub struct Walk {
    width: usize,
    /// One record of `stride` values per predicting row (P(root) passes the object
    /// threshold), kept together because the rows a move touches are scattered: at
    /// `d − 1` (d = 1…D) what the row compares at depth d (−∞ past its leaf and where a
    /// per-node override fails, +∞ where one passes); at `width + s` (s = 0…D) the information
    /// gain of stopping at depth s; last, the outcome of stopping at each depth, two bits per
    /// depth (0 correct, 1 unverifiable, 2 wrong), 32 depths to a value, stored as its bits.
    rec: Vec<f64>,
    stride: usize,
    rows: usize,
    /// Per depth, the local row indices with a finite or +∞ value, by value descending, and
    /// those values beside them (read in order, where the rows themselves are scattered).
    sorted: Vec<Vec<u32>>,
    keys: Vec<Vec<f64>>,
    /// Per depth, how far `sorted` has been passed by the threshold.
    cursor: Vec<usize>,
    stop: Vec<u8>,
    thresholds: Vec<f64>,
    tally: Tally,
}

impl Walk {
    /// The part `batch` under `settings`' rule, object threshold and per-node overrides, with
    /// every depth's threshold at 1 (the most cautious setting).
    pub fn new(tax: &Taxonomy, batch: &Batch, settings: &Settings) -> Self {
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
        let stride = 2 * width + 1 + (width + 1).div_ceil(32);
        let mut rec = vec![f64::NEG_INFINITY; rows.len() * stride];
        for (i, &r) in rows.iter().enumerate() {
            let r = r as usize;
            let leaf = batch.paths().leaf(r);
            for s in 0..=width {
                rec[i * stride + width + s] = tax.gain_at(leaf, s.min(tax.depth(leaf)));
                let code = match outcome_at(batch, r, s) {
                    Outcome::Correct => 0,
                    Outcome::Unverifiable => 1,
                    _ => 2,
                };
                let slot = &mut rec[i * stride + 2 * width + 1 + s / 32];
                let bits = if s % 32 == 0 { 0 } else { slot.to_bits() };
                *slot = f64::from_bits(bits | code << (2 * (s % 32)));
            }
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
                rec[i * stride + d - 1] = if overridden.get(node).copied().unwrap_or(false) {
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
        let (sorted, keys): (Vec<Vec<u32>>, Vec<Vec<f64>>) = (0..width)
            .map(|d| {
                // Keys order like the values: non-negative floats order like their bits
                // (−0.0 passes only a threshold of 0, as 0.0 does); −∞ never passes, so
                // those rows are left out.
                let mut keyed: Vec<(u64, u32)> = (0..rows.len())
                    .filter_map(|i| {
                        let v = rec[i * stride + d];
                        (v >= 0.0).then(|| ((v + 0.0).to_bits(), i as u32))
                    })
                    .collect();
                keyed.sort_unstable_by(|a, b| b.cmp(a));
                let values = keyed.iter().map(|&(k, _)| f64::from_bits(k)).collect();
                (keyed.into_iter().map(|(_, i)| i).collect(), values)
            })
            .unzip();
        let mut walk = Walk {
            width,
            rec,
            stride,
            rows: rows.len(),
            sorted,
            keys,
            cursor: vec![0; width],
            stop: Vec::new(),
            thresholds: vec![1.0; width],
            tally: Tally::default(),
        };
        for d in 0..width {
            walk.cursor[d] = walk.keys[d].partition_point(|&v| v >= 1.0);
        }
        walk.stop = (0..walk.rows)
            .map(|i| walk.descend(i, 0, 0, 1.0) as u8)
            .collect();
        for i in 0..walk.rows {
            let s = walk.stop[i] as usize;
            let (o, g) = walk.scored(i, s);
            walk.tally.add(o, g, 1);
        }
        walk
    }

    fn value(&self, i: usize, d: usize) -> f64 {
        self.rec[i * self.stride + d - 1]
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
        let base = i * self.stride;
        let codes = self.rec[base + 2 * self.width + 1 + s / 32].to_bits();
        let outcome = match (codes >> (2 * (s % 32))) & 3 {
            0 => Outcome::Correct,
            1 => Outcome::Unverifiable,
            _ => Outcome::Wrong,
        };
        (outcome, self.rec[base + self.width + s])
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
        self.rows
    }

    /// The rows depth `d` (1…D) passes at threshold `t`, counted from the top: the cursor
    /// position that lowering to `t` would reach.
    fn reach(&self, d: usize, t: f64) -> usize {
        let keys = &self.keys[d - 1];
        let start = self.cursor[d - 1];
        start + keys[start..].partition_point(|&v| v >= t)
    }

    /// The values at which depth `d` would next move something, from the current cursor: the
    /// value of the first row in `sorted` below the cursor that stopped at d − 1 (`None`: no
    /// row can move at this depth now).
    pub fn next_mover(&self, d: usize) -> Option<f64> {
        let start = self.cursor[d - 1];
        self.sorted[d - 1][start..]
            .iter()
            .position(|&i| self.stop[i as usize] as usize == d - 1)
            .map(|k| self.keys[d - 1][start + k])
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

impl Walk {
    /// Up to `k` candidate thresholds for depth `d`, descending: the values at evenly spaced
    /// ranks of the part's own values at that depth (so each step moves about as many rows),
    /// those in [0, 1] only, without repeats, ending with 0.
    pub fn grid(&self, d: usize, k: usize) -> Vec<f64> {
        let keys = &self.keys[d - 1];
        let mut out: Vec<f64> = Vec::with_capacity(k + 1);
        for j in 1..=k {
            let rank = (j * keys.len()).div_ceil(k);
            let Some(&v) = rank.checked_sub(1).and_then(|r| keys.get(r)) else {
                continue;
            };
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
