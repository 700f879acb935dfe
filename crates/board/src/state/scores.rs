//! The scores: metrics, the shared-threshold curve and the focused depth's sweep, all from the
//! active batch's stored paths (a threshold change never recomputes a softmax), with the caches
//! that keep a slider drag to the rows that flip.

use std::rc::Rc;

use hedgerow_core::{CurveIndex, CurvePoint, DepthDrag, Policy, Rule};

use crate::nodes::NodeTracker;

use super::Board;
use crate::charts::{StopView, TradePoint, TradeoffView};

/// The chart's curve keeps a point once precision or specificity moved by this much: finer
/// than a pixel at any sensible chart size, and a million-row curve stays a few thousand points.
const CURVE_RESOLUTION: f64 = 1.0 / 2000.0;

#[derive(Debug, Clone, PartialEq)]
struct SweepKey {
    depth: usize,
    generation: usize,
    rule: Rule,
    policy: Policy,
    thresholds: Vec<u64>,
}

/// A curve point as chart 1 draws it (points without predictions have no place on it).
fn trade_point(p: &CurvePoint) -> Option<TradePoint> {
    Some(TradePoint {
        threshold: p.threshold,
        specificity: p.specificity?,
        precision: p.precision?,
    })
}

/// What the scores keep between actions, keyed on what they were computed for.
#[derive(Debug, Clone, Default)]
pub struct Caches {
    curve_key: Option<(Rule, u64, Policy, usize)>,
    curve_index: Option<(usize, Rule, Rc<CurveIndex>)>,
    sweep_key: Option<SweepKey>,
    /// The focused depth's drag index: shared by the clones of one board (replacing or moving
    /// it changes no field an older board shows).
    drag: Rc<std::cell::RefCell<Option<DepthDrag>>>,
    /// Every row's stop and the per-node counts, for the batch of this generation; shared like
    /// `drag` and moved in step with it.
    nodes: Rc<std::cell::RefCell<Option<(usize, NodeTracker)>>>,
}

impl Board {
    /// Recompute everything shown from the active batch (never the softmax).
    pub(crate) fn rescore(&mut self) {
        let Some(a) = self.active.clone() else {
            self.metrics = None;
            self.node_report = None;
            self.node_fates = None;
            return;
        };
        if self.settings.thresholds.validate().is_err() {
            return;
        }
        let object = if a.batch.has_objectness() {
            self.settings.thresholds.object
        } else {
            0.0
        };
        let curve_key = (
            self.settings.rule,
            object.to_bits(),
            self.settings.policy,
            self.generation,
        );
        if self.caches.curve_key != Some(curve_key) {
            // Breakpoints are sorted once per (batch, rule); the object threshold and the
            // policy only re-sweep them.
            let index = match &self.caches.curve_index {
                Some((g, rule, index)) if *g == self.generation && *rule == self.settings.rule => {
                    index.clone()
                }
                _ => {
                    let index = Rc::new(CurveIndex::new(&a.taxonomy, &a.batch, self.settings.rule));
                    self.caches.curve_index =
                        Some((self.generation, self.settings.rule, index.clone()));
                    index
                }
            };
            self.curve = Rc::new(index.sweep_within(
                &a.taxonomy,
                &a.batch,
                object,
                self.settings.policy,
                CURVE_RESOLUTION,
            ));
            self.caches.curve_key = Some(curve_key);
        }
        let depth = self.focus.clamp(1, a.taxonomy.max_depth().max(1));
        let mut others: Vec<u64> = self
            .settings
            .thresholds
            .depths
            .iter()
            .map(|t| t.to_bits())
            .collect();
        if let Some(x) = others.get_mut(depth - 1) {
            *x = 0;
        }
        others.push(object.to_bits());
        others.extend(
            self.settings
                .thresholds
                .nodes
                .iter()
                .flat_map(|&(v, t)| [v as u64, t.to_bits()]),
        );
        let key = SweepKey {
            depth,
            generation: self.generation,
            rule: self.settings.rule,
            policy: self.settings.policy,
            thresholds: others,
        };
        let t = self.settings.thresholds.at_depth(depth);
        let (drag_cell, nodes_cell) = (self.caches.drag.clone(), self.caches.nodes.clone());
        let mut drag = drag_cell.borrow_mut();
        let mut nodes = nodes_cell.borrow_mut();
        let tracker = match nodes.take() {
            Some((g, tracker)) if g == self.generation => Some(tracker),
            _ => None,
        };
        let mut compared = false;
        match (drag.as_mut(), tracker) {
            // Only the focused depth moved: re-score just the rows that flip, and move them in
            // the per-node counts.
            (Some(d), Some(mut tracker))
                if self.caches.sweep_key.as_ref() == Some(&key) && d.depth() == depth =>
            {
                let (tax, batch) = (&a.taxonomy, &a.batch);
                // The comparison with a baseline moves with the same rows.
                let baseline = self
                    .baseline
                    .clone()
                    .filter(|b| b.generation == self.generation);
                let mut comparison = baseline.as_ref().and(self.comparison.as_deref().cloned());
                self.metrics = Some(d.set_reporting(tax, batch, t, |r, from, to| {
                    tracker.moved(tax, batch, r, from, to);
                    if let (Some(c), Some(b)) = (comparison.as_mut(), baseline.as_ref()) {
                        c.shift(b, tax, batch, r, from, to);
                    }
                }));
                *nodes = Some((self.generation, tracker));
                if let Some(c) = comparison {
                    self.comparison = Some(Rc::new(c));
                    compared = true;
                }
            }
            (_, tracker) => {
                // Anything else moved (another depth, a node, the rule): find the rows whose
                // stop changed in one pass over the paths; a new batch counts from scratch.
                let tracker = match tracker {
                    Some(mut tracker) => {
                        tracker.resync(&a.taxonomy, &a.batch, &self.settings);
                        tracker
                    }
                    None => NodeTracker::new(&a.taxonomy, &a.batch, &self.settings),
                };
                *nodes = Some((self.generation, tracker));
                self.full_rescore(&a, &mut drag, key, depth, t);
            }
        }
        if let Some((_, tracker)) = nodes.as_ref() {
            self.node_report = Some(Rc::new(tracker.report(&a.taxonomy, &self.settings)));
            self.node_fates = Some(Rc::new(tracker.fates(&a.taxonomy)));
        }
        drop((drag, nodes));
        if self.baseline.is_some() && !compared {
            self.compare_baseline();
        }
    }

    fn full_rescore(
        &mut self,
        a: &super::Active,
        drag: &mut Option<DepthDrag>,
        key: SweepKey,
        depth: usize,
        t: f64,
    ) {
        // Exact: one breakpoint per row that reaches the depth (not a sampled grid).
        let mut d = DepthDrag::new(&a.taxonomy, &a.batch, &self.settings, depth);
        let points = d
            .sweep_within(&a.taxonomy, &a.batch, CURVE_RESOLUTION)
            .iter()
            .filter_map(trade_point)
            .collect();
        self.sweep = Rc::new(points);
        self.caches.sweep_key = Some(key);
        self.metrics = Some(d.set(&a.taxonomy, &a.batch, t));
        *drag = Some(d);
    }

    /// Chart 1's data.
    pub fn tradeoff_view(&self) -> TradeoffView {
        let curve = self.curve.iter().filter_map(trade_point).collect();
        let current = self.metrics.as_ref().and_then(|m| {
            Some(TradePoint {
                threshold: f64::NAN,
                specificity: m.specificity?,
                precision: m.precision?,
            })
        });
        let sweep = (!self.sweep.is_empty()).then(|| (self.focus, (*self.sweep).clone()));
        TradeoffView {
            curve,
            current,
            sweep,
            rule: self.settings.rule.as_str().to_string(),
            marks: self
                .current_suggestion()
                .map(|s| {
                    s.marks
                        .iter()
                        .map(|(l, p)| (l.to_string(), *p))
                        .collect::<Vec<_>>()
                })
                .unwrap_or_default()
                .into_iter()
                .chain(
                    self.baseline
                        .as_ref()
                        .filter(|b| b.generation == self.generation)
                        .and_then(|b| b.point())
                        .map(|p| (crate::baseline::MARK_LABEL.to_string(), p)),
                )
                .collect(),
        }
    }

    /// Chart 2's data.
    pub fn stop_view(&self) -> StopView {
        let shares = self
            .metrics
            .as_ref()
            .map(|m| {
                m.stop_outcome
                    .iter()
                    .map(|o| {
                        (
                            o.correct.unwrap_or(0.0),
                            o.unverifiable.unwrap_or(0.0),
                            o.wrong.unwrap_or(0.0),
                        )
                    })
                    .collect()
            })
            .unwrap_or_default();
        StopView { shares }
    }
}
