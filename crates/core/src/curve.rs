//! The exact precision–specificity curve for one threshold shared by depths 1…D, swept from 1
//! to 0 with the object threshold held: every distinct operating point, from the sorted
//! breakpoints of every row's path (O(N·L log N·L)).
//!
//! A row reaches depth d iff t ≤ m_d, where m_d is the minimum over depths 1..=d of the
//! quantity the rule compares (cumulative P, or the conditional). So as t falls, each row
//! deepens exactly at its distinct m_d values; sweeping those in descending order and updating
//! running sums gives every operating point.
//!
//! With per-node overrides the overridden nodes keep their own threshold at every point of the
//! curve: a step into such a node does not depend on t, so it either always passes (and leaves
//! m_d as it was: the minimum runs over the shared-threshold steps only, +∞ when there are
//! none yet) or always fails (and caps the row's depth just above it). The stop depth is still
//! monotone non-increasing in t, with breakpoints only where a shared-threshold step's value
//! crosses t.

use serde::{Deserialize, Serialize};

use crate::batch::Batch;
use crate::eval::{outcome_at, precision, Outcome};
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
    /// The operating point these sums describe, at threshold `t`.
    fn point(&self, t: f64, predicting: u64, policy: Policy) -> CurvePoint {
        let (c, u, w) = (
            self.correct.max(0) as u64,
            self.unverifiable.max(0) as u64,
            self.wrong.max(0) as u64,
        );
        let n = predicting as f64;
        CurvePoint {
            threshold: t,
            predictions: predicting,
            correct: c,
            unverifiable: u,
            wrong: w,
            precision: precision(policy, c, u, w),
            specificity: (predicting > 0).then(|| self.gain / n),
            reward: (predicting > 0).then(|| self.reward / n),
        }
    }

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

/// Compute the curve without per-node overrides. Points come in descending threshold order;
/// the first is t = 1. For settings that may hold overrides, use [`exact_curve_for`].
pub fn exact_curve(
    tax: &Taxonomy,
    batch: &Batch,
    rule: Rule,
    object_threshold: f64,
    policy: Policy,
) -> Vec<CurvePoint> {
    CurveIndex::new(tax, batch, rule).sweep(tax, batch, object_threshold, policy)
}

/// The curve as CSV, one row per point: `hedgerow curve` and the page's download write these
/// bytes. An absent ratio is an empty field.
pub fn curve_csv(points: &[CurvePoint]) -> Result<Vec<u8>, csv::Error> {
    let cell = |v: Option<f64>| v.map_or_else(String::new, |v| v.to_string());
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record([
        "threshold",
        "predictions",
        "correct",
        "unverifiable",
        "wrong",
        "precision",
        "specificity",
        "reward",
    ])?;
    for p in points {
        w.write_record([
            p.threshold.to_string(),
            p.predictions.to_string(),
            p.correct.to_string(),
            p.unverifiable.to_string(),
            p.wrong.to_string(),
            cell(p.precision),
            cell(p.specificity),
            cell(p.reward),
        ])?;
    }
    w.into_inner().map_err(|e| csv::Error::from(e.into_error()))
}

/// The curve of `settings`: its rule, object threshold and policy, and its per-node overrides
/// held fixed while the threshold shared by every other node sweeps from 1 to 0 (the per-depth
/// thresholds of `settings` are what is swept, so they are not used). Each point equals
/// [`evaluate`](crate::evaluate) with every depth at the point's threshold and the same
/// overrides.
pub fn exact_curve_for(tax: &Taxonomy, batch: &Batch, settings: &Settings) -> Vec<CurvePoint> {
    let th = &settings.thresholds;
    CurveIndex::with_overrides(tax, batch, settings.rule, &th.nodes).sweep(
        tax,
        batch,
        object_threshold(tax, settings),
        settings.policy,
    )
}

/// The object threshold `evaluate` applies: t_0, or an override given for the root's index.
pub(crate) fn object_threshold(tax: &Taxonomy, settings: &Settings) -> f64 {
    let th = &settings.thresholds;
    th.nodes
        .iter()
        .rev()
        .find(|&&(v, _)| v == tax.root())
        .map_or(th.object, |&(_, t)| t)
}

/// One breakpoint: row `row` reaches depth `depth` once the shared threshold is ≤ the f64 whose
/// bits are `key` (non-negative floats order like their bits).
#[derive(Debug, Clone, Copy)]
struct Event {
    key: u64,
    row: u32,
    depth: u8,
}

/// Every row's breakpoints, sorted once per (batch, rule, overrides). Moving the object
/// threshold or changing the policy re-sweeps it in linear time without sorting again.
#[derive(Debug, Clone)]
pub struct CurveIndex {
    rule: Rule,
    /// The per-node overrides held fixed (as given, by column).
    nodes: Vec<(u32, f64)>,
    events: Vec<Event>,
}

impl CurveIndex {
    /// The index without per-node overrides: every node follows the shared threshold.
    pub fn new(tax: &Taxonomy, batch: &Batch, rule: Rule) -> Self {
        Self::with_overrides(tax, batch, rule, &[])
    }

    /// The index with the nodes of `nodes` (column, threshold; a later entry for the same node
    /// wins, as in [`Thresholds::resolve`](crate::Thresholds::resolve)) keeping their own
    /// threshold at every point. An entry for the root's index is ignored here: the object
    /// threshold is given to [`sweep`](Self::sweep).
    pub fn with_overrides(tax: &Taxonomy, batch: &Batch, rule: Rule, nodes: &[(u32, f64)]) -> Self {
        // NaN marks a node that follows the shared threshold.
        let fixed: Option<Vec<f64>> = (!nodes.is_empty()).then(|| {
            let mut f = vec![f64::NAN; tax.len()];
            for &(v, t) in nodes {
                if let Some(slot) = f.get_mut(v as usize) {
                    *slot = t;
                }
            }
            f
        });
        // A row's equal consecutive m_d merge into the deepest d, so each event moves its row
        // strictly deeper. Counted first, so the list is allocated once at its exact size (it
        // is the largest thing the page holds for a big batch).
        let each_row = |r: usize, emit: &mut dyn FnMut(u64, u8)| {
            let leaf = batch.paths().leaf(r);
            let cond = batch.paths().cond(r);
            let (mut p, mut m) = (batch.root_probability(r), f64::INFINITY);
            let mut last: Option<(u64, u8)> = None;
            for d in 1..=tax.depth(leaf) {
                let c = cond[d - 1] as f64;
                p *= c;
                let q = match rule {
                    Rule::Cumulative => p,
                    Rule::Conditional => c,
                };
                // A NaN or negative value passes no threshold in [0, 1] (evaluation compares
                // `q >= t`): the row never reaches this depth.
                if q.is_nan() || q < 0.0 {
                    break;
                }
                let own = fixed.as_ref().map_or(f64::NAN, |f| {
                    f.get(tax.ancestor(leaf, d) as usize)
                        .copied()
                        .unwrap_or(f64::NAN)
                });
                if own.is_nan() {
                    m = m.min(q);
                } else if q < own {
                    // Fails at every t: the row never goes deeper than d − 1.
                    break;
                }
                // Keys order like the floats only for non-negative ones; −0.0 (P(root) = −0.0)
                // has the sign bit set and would sort above 1, so it becomes +0.0.
                let key = if m > 0.0 { m.to_bits() } else { 0 };
                match last {
                    Some((k, _)) if k == key => last = Some((key, d as u8)),
                    Some((k, depth)) => {
                        emit(k, depth);
                        last = Some((key, d as u8));
                    }
                    None => last = Some((key, d as u8)),
                }
            }
            if let Some((k, depth)) = last {
                emit(k, depth);
            }
        };
        let mut count = 0usize;
        for r in 0..batch.len() {
            each_row(r, &mut |_, _| count += 1);
        }
        let mut events: Vec<Event> = Vec::with_capacity(count);
        for r in 0..batch.len() {
            each_row(r, &mut |key, depth| {
                events.push(Event {
                    key,
                    row: r as u32,
                    depth,
                })
            });
        }
        events.sort_unstable_by_key(|e| std::cmp::Reverse(e.key));
        CurveIndex {
            rule,
            nodes: nodes.to_vec(),
            events,
        }
    }

    pub fn rule(&self) -> Rule {
        self.rule
    }

    /// The per-node overrides this index holds fixed (empty for [`new`](Self::new)).
    pub fn overrides(&self) -> &[(u32, f64)] {
        &self.nodes
    }

    /// Breakpoints held (memory is about 16 bytes each).
    pub fn len(&self) -> usize {
        self.events.len()
    }

    pub fn is_empty(&self) -> bool {
        self.events.is_empty()
    }

    /// The curve with the object threshold held at `object_threshold`: every distinct point.
    pub fn sweep(
        &self,
        tax: &Taxonomy,
        batch: &Batch,
        object_threshold: f64,
        policy: Policy,
    ) -> Vec<CurvePoint> {
        self.sweep_within(tax, batch, object_threshold, policy, 0.0)
    }

    /// The curve drawn to a resolution: a point is kept only once precision or specificity has
    /// moved by at least `resolution` since the last kept one (the first and last are always
    /// kept). With 0, every distinct point. For a chart, 1/2000 loses nothing visible and keeps
    /// a million-row curve to a few thousand points.
    pub fn sweep_within(
        &self,
        tax: &Taxonomy,
        batch: &Batch,
        object_threshold: f64,
        policy: Policy,
        resolution: f64,
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
        out.push(run.point(1.0, predicting, policy));
        let mut pending = None;
        while i < self.events.len() {
            let key = self.events[i].key;
            while i < self.events.len() && self.events[i].key == key {
                apply(&self.events[i], &mut run);
                i += 1;
            }
            let t = f64::from_bits(key);
            let Some(last) = out.last() else { continue };
            // Breakpoints that belong only to rows under the object threshold change nothing.
            let same = (last.correct, last.unverifiable, last.wrong)
                == (
                    run.correct as u64,
                    run.unverifiable as u64,
                    run.wrong as u64,
                )
                && same_gain(last, &run, predicting);
            if same {
                continue;
            }
            if resolution > 0.0 && predicting > 0 {
                let n = predicting as f64;
                let spec = run.gain / n;
                let prec = precision(
                    policy,
                    run.correct.max(0) as u64,
                    run.unverifiable.max(0) as u64,
                    run.wrong.max(0) as u64,
                );
                let close = (last.specificity.unwrap_or(0.0) - spec).abs() < resolution
                    && match (last.precision, prec) {
                        (Some(a), Some(b)) => (a - b).abs() < resolution,
                        (a, b) => a == b,
                    };
                if close {
                    pending = Some(t);
                    continue;
                }
            }
            pending = None;
            out.push(run.point(t, predicting, policy));
        }
        if let Some(t) = pending {
            out.push(run.point(t, predicting, policy));
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
    crate::drag::DepthDrag::new(tax, batch, settings, depth).sweep(tax, batch)
}

/// Walk the moves of one depth from threshold 0 upwards (see [`depth_sweep`]).
pub(crate) fn sweep_moves(
    tax: &Taxonomy,
    batch: &Batch,
    policy: Policy,
    moves: &[crate::drag::Move],
    high: &[Option<u8>],
    resolution: f64,
) -> Vec<CurvePoint> {
    let mut run = Running::default();
    let mut predicting = 0u64;
    for (r, h) in high.iter().enumerate() {
        if let Some(h) = h {
            predicting += 1;
            let s = *h as usize;
            run.add(
                outcome_at(batch, r, s),
                tax.gain_at(batch.paths().leaf(r), s),
                1,
            );
        }
    }
    let mut out = vec![run.point(0.0, predicting, policy)];
    let mut pending = None;
    let mut i = 0;
    while i < moves.len() {
        let b = moves[i].at;
        while i < moves.len() && moves[i].at == b {
            let m = moves[i];
            let (r, low, high) = (m.row as usize, m.low as usize, m.high as usize);
            let leaf = batch.paths().leaf(r);
            run.add(outcome_at(batch, r, high), tax.gain_at(leaf, high), -1);
            run.add(outcome_at(batch, r, low), tax.gain_at(leaf, low), 1);
            i += 1;
        }
        if b >= 1.0 {
            break;
        }
        let p = run.point(b, predicting, policy);
        match out.last() {
            Some(last) if resolution > 0.0 && near(last, &p, resolution) => pending = Some(p),
            _ => {
                out.push(p);
                pending = None;
            }
        }
    }
    out.extend(pending);
    out
}

/// Whether two points are within `resolution` in both precision and specificity.
fn near(a: &CurvePoint, b: &CurvePoint, resolution: f64) -> bool {
    let close = |x: Option<f64>, y: Option<f64>| match (x, y) {
        (Some(x), Some(y)) => (x - y).abs() < resolution,
        (x, y) => x == y,
    };
    close(a.specificity, b.specificity) && close(a.precision, b.precision)
}
