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
use crate::eval::{outcome_at, precision, Outcome};
use crate::settings::{Policy, Rule};
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
    // (breakpoint m, row, depth reached at m); a row's equal consecutive m_d merge into the
    // deepest d so each event moves its row strictly deeper.
    let mut events: Vec<(f64, u32, u8)> = Vec::new();
    let mut depth_now: Vec<u8> = vec![0; batch.len()];
    let mut run = Running::default();
    let mut predicting = 0u64;
    for r in 0..batch.len() {
        let p_root = batch.root_probability(r);
        if batch.has_objectness() && p_root < object_threshold {
            continue;
        }
        predicting += 1;
        run.add(outcome_at(batch, r, 0), 0.0, 1);
        let leaf = batch.paths().leaf(r);
        let cond = batch.paths().cond(r);
        let (mut p, mut m) = (p_root, f64::INFINITY);
        for d in 1..=tax.depth(leaf) {
            let c = cond[d - 1] as f64;
            p *= c;
            let q = match rule {
                Rule::Cumulative => p,
                Rule::Conditional => c,
            };
            m = m.min(q);
            match events.last_mut() {
                Some(last) if last.1 == r as u32 && last.0 == m => last.2 = d as u8,
                _ => events.push((m, r as u32, d as u8)),
            }
        }
    }
    events.sort_unstable_by(|a, b| b.0.total_cmp(&a.0));
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
    let mut out = Vec::new();
    let mut i = 0;
    let mut apply = |i: usize, run: &mut Running| {
        let (_, r, d) = events[i];
        let (r, d) = (r as usize, d as usize);
        let leaf = batch.paths().leaf(r);
        let old = depth_now[r] as usize;
        run.add(
            outcome_at(batch, r, old),
            tax.gain(tax.ancestor(leaf, old)),
            -1,
        );
        run.add(outcome_at(batch, r, d), tax.gain(tax.ancestor(leaf, d)), 1);
        depth_now[r] = d as u8;
    };
    while i < events.len() && events[i].0 >= 1.0 {
        apply(i, &mut run);
        i += 1;
    }
    out.push(point(1.0, &run));
    while i < events.len() {
        let t = events[i].0;
        while i < events.len() && events[i].0 == t {
            apply(i, &mut run);
            i += 1;
        }
        out.push(point(t, &run));
    }
    out
}
