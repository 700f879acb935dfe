//! The exact precision–specificity curve for one threshold shared by depths 1…D, swept from 1
//! to 0 with the object threshold held: every distinct operating point, from the sorted
//! breakpoints of every row's path (O(N·L log N·L)).
//!
//! A row reaches depth d iff t ≤ m_d, where m_d is the minimum over depths 1..=d of the
//! quantity the rule compares (cumulative P, or the conditional). So as t falls, each row
//! deepens exactly at its distinct m_d values; sweeping those in descending order and updating
//! running sums gives every operating point.

use serde::{Deserialize, Serialize};

use crate::batch::Batch;
use crate::eval::{outcome_at, precision, stop_depth, Outcome};
use crate::settings::{Policy, Rule, Settings};
use crate::taxonomy::Taxonomy;

/// One operating point: what thresholds in (next point's threshold, `threshold`] give.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CurvePoint {
    pub threshold: f64,
    pub predictions: u64,
    pub correct: u64,
    pub unverifiable: u64,
    pub wrong: u64,
    pub precision: Option<f64>,
    pub specificity: Option<f64>,
    pub reward: Option<f64>,
}

#[derive(Default)]
struct Running {
    correct: i64,
    unverifiable: i64,
    wrong: i64,
    gain: f64,
    reward: f64,
}

impl Running {
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
}

/// Compute the curve. Points come in descending threshold order; the first is t = 1.
pub fn exact_curve(
    tax: &Taxonomy,
    batch: &Batch,
    rule: Rule,
    object_threshold: f64,
    policy: Policy,
) -> Vec<CurvePoint> {
    CurveIndex::new(tax, batch, rule).sweep(tax, batch, object_threshold, policy)
}

/// One breakpoint: row `row` reaches depth `depth` once the shared threshold is ≤ the f64 whose
/// bits are `key` (non-negative floats order like their bits).
#[derive(Debug, Clone, Copy)]
struct Event {
    key: u64,
    row: u32,
    depth: u8,
}

/// Every row's breakpoints, sorted once per (batch, rule). Moving the object threshold or
/// changing the policy re-sweeps it in linear time without sorting again.
#[derive(Debug, Clone)]
pub struct CurveIndex {
    rule: Rule,
    events: Vec<Event>,
}

impl CurveIndex {
    pub fn new(tax: &Taxonomy, batch: &Batch, rule: Rule) -> Self {
        // A row's equal consecutive m_d merge into the deepest d, so each event moves its row
        // strictly deeper.
        let mut events: Vec<Event> = Vec::with_capacity(batch.len() * 2);
        for r in 0..batch.len() {
            let leaf = batch.paths().leaf(r);
            let cond = batch.paths().cond(r);
            let (mut p, mut m) = (batch.root_probability(r), f64::INFINITY);
            for d in 1..=tax.depth(leaf) {
                let c = cond[d - 1] as f64;
                p *= c;
                let q = match rule {
                    Rule::Cumulative => p,
                    Rule::Conditional => c,
                };
                m = m.min(q);
                let key = m.max(0.0).to_bits();
                match events.last_mut() {
                    Some(last) if last.row == r as u32 && last.key == key => last.depth = d as u8,
                    _ => events.push(Event {
                        key,
                        row: r as u32,
                        depth: d as u8,
                    }),
                }
            }
        }
        events.sort_unstable_by_key(|e| std::cmp::Reverse(e.key));
        CurveIndex { rule, events }
    }

    pub fn rule(&self) -> Rule {
        self.rule
    }

    /// Breakpoints held (memory is about 16 bytes each).
    pub fn len(&self) -> usize {
        self.events.len()
    }

    pub fn is_empty(&self) -> bool {
        self.events.is_empty()
    }

    /// The curve with the object threshold held at `object_threshold`.
    pub fn sweep(
        &self,
        tax: &Taxonomy,
        batch: &Batch,
        object_threshold: f64,
        policy: Policy,
    ) -> Vec<CurvePoint> {
        let predicts: Vec<bool> = (0..batch.len())
            .map(|r| !batch.has_objectness() || batch.root_probability(r) >= object_threshold)
            .collect();
        let mut depth_now: Vec<u8> = vec![0; batch.len()];
        let mut run = Running::default();
        let mut predicting = 0u64;
        for (r, _) in predicts.iter().enumerate().filter(|(_, &p)| p) {
            predicting += 1;
            run.add(outcome_at(batch, r, 0), 0.0, 1);
        }
        let point = |t: f64, run: &Running| {
            let (c, u, w) = (
                run.correct.max(0) as u64,
                run.unverifiable.max(0) as u64,
                run.wrong.max(0) as u64,
            );
            let n = predicting as f64;
            CurvePoint {
                threshold: t,
                predictions: predicting,
                correct: c,
                unverifiable: u,
                wrong: w,
                precision: precision(policy, c, u, w),
                specificity: (predicting > 0).then(|| run.gain / n),
                reward: (predicting > 0).then(|| run.reward / n),
            }
        };
        let mut apply = |e: &Event, run: &mut Running| {
            let (r, d) = (e.row as usize, e.depth as usize);
            if !predicts[r] {
                return;
            }
            let leaf = batch.paths().leaf(r);
            let old = depth_now[r] as usize;
            run.add(outcome_at(batch, r, old), tax.gain_at(leaf, old), -1);
            run.add(outcome_at(batch, r, d), tax.gain_at(leaf, d), 1);
            depth_now[r] = d as u8;
        };
        let one = 1f64.to_bits();
        let mut out = Vec::new();
        let mut i = 0;
        while i < self.events.len() && self.events[i].key >= one {
            apply(&self.events[i], &mut run);
            i += 1;
        }
        out.push(point(1.0, &run));
        while i < self.events.len() {
            let key = self.events[i].key;
            while i < self.events.len() && self.events[i].key == key {
                apply(&self.events[i], &mut run);
                i += 1;
            }
            // Skip breakpoints that belong only to rows under the object threshold.
            let t = f64::from_bits(key);
            match out.last() {
                Some(last)
                    if (last.correct, last.unverifiable, last.wrong)
                        == (
                            run.correct as u64,
                            run.unverifiable as u64,
                            run.wrong as u64,
                        )
                        && same_gain(last, &run, predicting) => {}
                _ => out.push(point(t, &run)),
            }
        }
        out
    }
}

/// Whether a point already describes the running state (only rows that do not predict moved).
fn same_gain(last: &CurvePoint, run: &Running, predicting: u64) -> bool {
    predicting == 0 || last.specificity == Some(run.gain / predicting as f64)
}

/// The path of the operating point as one depth's threshold moves from 0 to 1, every other
/// threshold held: exact, from one breakpoint per row.
///
/// A row that reaches depth `depth − 1` tests its path's node at `depth` once: at thresholds up
/// to its value there (the rule's quantity) it descends to where the other thresholds stop it
/// (`high`), above it it stops at `depth − 1` (`low`). Rows that never reach `depth − 1`, or
/// whose node there has its own override, do not move. The first point is t = 0; each further
/// point holds for thresholds just above its `threshold`. A node with a per-node override keeps
/// it.
pub fn depth_sweep(
    tax: &Taxonomy,
    batch: &Batch,
    settings: &Settings,
    depth: usize,
) -> Vec<CurvePoint> {
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
    let mut run = Running::default();
    let mut predicting = 0u64;
    // (breakpoint, row, low, high)
    let mut moves: Vec<(f64, u32, u8, u8)> = Vec::new();
    for r in 0..batch.len() {
        let (Some(high), Some(low)) = (
            stop_depth(tax, batch, settings.rule, &pass, r),
            stop_depth(tax, batch, settings.rule, &fail, r),
        ) else {
            continue;
        };
        predicting += 1;
        let leaf = batch.paths().leaf(r);
        run.add(outcome_at(batch, r, high), tax.gain_at(leaf, high), 1);
        if high != low {
            let cond = batch.paths().cond(r);
            let c = cond[depth - 1] as f64;
            let b = match settings.rule {
                Rule::Conditional => c,
                Rule::Cumulative => {
                    (0..depth).fold(batch.root_probability(r), |p, d| p * cond[d] as f64)
                }
            };
            moves.push((b, r as u32, low as u8, high as u8));
        }
    }
    moves.sort_unstable_by(|a, b| a.0.total_cmp(&b.0));
    let policy = settings.policy;
    let point = |t: f64, run: &Running| {
        let (c, u, w) = (
            run.correct.max(0) as u64,
            run.unverifiable.max(0) as u64,
            run.wrong.max(0) as u64,
        );
        let n = predicting as f64;
        CurvePoint {
            threshold: t,
            predictions: predicting,
            correct: c,
            unverifiable: u,
            wrong: w,
            precision: precision(policy, c, u, w),
            specificity: (predicting > 0).then(|| run.gain / n),
            reward: (predicting > 0).then(|| run.reward / n),
        }
    };
    let mut out = vec![point(0.0, &run)];
    let mut i = 0;
    while i < moves.len() {
        let b = moves[i].0;
        while i < moves.len() && moves[i].0 == b {
            let (_, r, low, high) = moves[i];
            let (r, low, high) = (r as usize, low as usize, high as usize);
            let leaf = batch.paths().leaf(r);
            run.add(outcome_at(batch, r, high), tax.gain_at(leaf, high), -1);
            run.add(outcome_at(batch, r, low), tax.gain_at(leaf, low), 1);
            i += 1;
        }
        if b >= 1.0 {
            break;
        }
        out.push(point(b, &run));
    }
    out
}
