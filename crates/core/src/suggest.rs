//! Suggesting per-depth thresholds for a precision target, with a finite-sample guarantee.
//!
//! The tuning rows (those not held out) are split by seed into an optimisation part (30 %) and
//! a calibration part (70 %), whole groups at a time when a group per row is given.
//! - **Pareto Testing** (Laufer-Goldshtein, Fisch, Barzilay & Jaakkola, ICLR 2023): on the
//!   optimisation part, greedy coordinate moves from every depth's threshold at 1 trace a path
//!   of per-depth settings along the precision/objective front, cautious first ([`path`]).
//! - **Learn-then-Test** (Angelopoulos, Bates, Candès, Jordan & Lei 2021): on the calibration
//!   part, fixed-sequence testing along that path of H0 "precision < P" with the exact binomial
//!   (Clopper–Pearson) p-value P(Bin(n, P) ≥ k), rejecting while p ≤ δ = 1 − C. The suggestion
//!   is the last rejected setting. With probability at least C over the draw of the tuning
//!   rows, its precision on new rows from the same distribution is at least P (rows, or groups,
//!   exchangeable).
//!
//! The object threshold is not searched: depth thresholds only move where a predicting row
//! stops, while t_0 decides which rows predict at all, and specificity and reward (means over
//! predictions) would be bought by predicting less. It stays as given.
//!
//! Beside the suggestion: (a) one shared threshold for every depth, chosen with the same test
//! on the calibration part along 1, 1 − 1/4096, …, 0; (b) the
//! in-sample optimum without a guarantee: the point of the path with the highest objective
//! whose precision on all tuning rows is at least P.

pub mod groups;
pub mod path;
pub mod split;
pub mod walk;

use serde::{Deserialize, Serialize};

use crate::batch::Batch;
use crate::error::ErrorKind;
use crate::eval::evaluate;
use crate::settings::{Settings, Thresholds};
use crate::stats::{clopper_pearson, clopper_pearson_lower, wilson, Interval, Z95};
use crate::taxonomy::Taxonomy;

use self::path::{fixed_sequence, pareto_path, replay};
use self::split::{split, OPTIMISATION_SHARE};
use self::walk::{Tally, Walk};

/// What a suggestion makes as large as it can while precision holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Maximize {
    /// Mean information gain of the predictions.
    #[default]
    Specificity,
    /// Mean information gain of the correct predictions (0 for the others).
    Reward,
}

impl Maximize {
    pub fn parse(s: &str) -> Option<Self> {
        match s.trim().to_ascii_lowercase().as_str() {
            "specificity" => Some(Maximize::Specificity),
            "reward" => Some(Maximize::Reward),
            _ => None,
        }
    }
}

/// What to suggest for.
#[derive(Debug, Clone, PartialEq)]
pub struct Request {
    /// P: the precision to guarantee, in (0, 1).
    pub target: f64,
    /// C: the probability over the tuning draw that the guarantee holds, in (0, 1).
    pub confidence: f64,
    pub maximize: Maximize,
    /// Share of rows (or groups) kept out of tuning, in [0, 1).
    pub holdout: f64,
    pub seed: u64,
}

impl Request {
    pub fn validate(&self) -> Result<(), ErrorKind> {
        let open = |what: &str, v: f64| {
            if v > 0.0 && v < 1.0 {
                Ok(())
            } else {
                Err(ErrorKind::Invalid {
                    what: what.into(),
                    expected: "a number strictly between 0 and 1".into(),
                    found: v.to_string(),
                })
            }
        };
        open("target precision", self.target)?;
        open("confidence", self.confidence)?;
        if !(0.0..1.0).contains(&self.holdout) {
            return Err(ErrorKind::Invalid {
                what: "hold-out share".into(),
                expected: "a number from 0 up to (not including) 1".into(),
                found: self.holdout.to_string(),
            });
        }
        Ok(())
    }
}

/// Rows (and units: groups, or rows) in each part.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Parts {
    pub optimisation: usize,
    pub calibration: usize,
    pub holdout: usize,
}

/// How a suggestion was made: stored in the profile it writes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Record {
    pub method: String,
    pub target: f64,
    pub confidence: f64,
    pub maximize: Maximize,
    pub seed: u64,
    pub holdout_share: f64,
    pub optimisation_share: f64,
    /// Rows in each part.
    pub rows: Parts,
    /// Groups in each part, when rows were split by group.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub groups: Option<Parts>,
    /// Settings on the path, and how many the test looked at.
    pub path_length: usize,
    pub tested: usize,
    /// The one-sided Clopper–Pearson lower bound at `confidence` of the suggestion's precision
    /// on the calibration part (`None` when nothing was certified).
    pub bound: Option<f64>,
}

/// Precision counted on one part: k right of n counted, under the policy.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Counted {
    pub k: u64,
    pub n: u64,
    pub precision: Option<f64>,
}

/// A setting scored on held-out rows.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Held {
    pub predictions: u64,
    pub k: u64,
    pub n: u64,
    pub precision: Option<f64>,
    /// Wilson 95 % interval of precision (n = predictions the policy counts).
    pub wilson: Option<Interval>,
    /// Clopper–Pearson 95 % interval of precision.
    pub clopper_pearson: Option<Interval>,
    pub specificity: Option<f64>,
    pub reward: Option<f64>,
}

/// One setting of the report: the suggestion or a baseline.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Choice {
    pub thresholds: Thresholds,
    /// On the calibration part, and its one-sided Clopper–Pearson lower bound at C.
    pub calibration: Counted,
    pub bound: Option<f64>,
    /// On all tuning rows (what in-sample tuning reads).
    pub tuning: Counted,
    pub holdout: Option<Held>,
}

/// Everything `suggest` found.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Report {
    pub record: Record,
    /// The boldest setting of the path certified at precision ≥ P with confidence C.
    pub suggestion: Option<Choice>,
    /// (a) One shared threshold, certified with the same test.
    pub shared: Option<Choice>,
    /// (b) The path's in-sample optimum on all tuning rows, without a guarantee.
    pub in_sample: Option<Choice>,
    /// The highest target this run could have certified: the largest P′ for which the test's
    /// first hypothesis (the most cautious setting) is rejected, which is that setting's
    /// one-sided Clopper–Pearson lower bound at C on the calibration part (0 with no counted
    /// prediction there). Any P ≤ it yields a suggestion; a P above it none. A target chosen
    /// after reading this number is no longer covered by the guarantee for these same rows.
    pub guaranteeable: f64,
}

/// The indices of the candidates on their precision/objective front on the optimisation part
/// (`tallies` there), cautious first: a point is kept when its precision is above that of every bolder point (one with more
/// of the objective), so the kept points' precision falls as the objective grows. The most
/// cautious point is always first when nothing bolder is as precise.
pub fn front<'a>(
    tallies: impl IntoIterator<Item = &'a Tally>,
    maximize: Maximize,
    policy: crate::settings::Policy,
) -> Vec<usize> {
    let objective = |t: &Tally| match maximize {
        Maximize::Specificity => t.gain,
        Maximize::Reward => t.reward,
    };
    let tallies: Vec<&Tally> = tallies.into_iter().collect();
    let mut order: Vec<usize> = (0..tallies.len()).collect();
    // Boldest first (ties: the later candidate first), then keep a running best precision.
    order.sort_by(|&a, &b| {
        objective(tallies[b])
            .total_cmp(&objective(tallies[a]))
            .then(b.cmp(&a))
    });
    let mut kept = Vec::new();
    let mut best = f64::NEG_INFINITY;
    for i in order {
        let p = tallies[i].precision(policy).unwrap_or(0.0);
        if p > best {
            best = p;
            kept.push(i);
        }
    }
    kept.reverse();
    kept
}

/// Shared thresholds among the candidates: 1, 1 − 1/256, …, 0 for every depth, with their counts
/// on the optimisation and the calibration parts (walks with every threshold at 1).
pub const SHARED_CANDIDATES: u32 = 256;

fn shared_candidates(mut opt: Walk, mut cal: Walk) -> Vec<(Vec<f64>, Tally, Tally)> {
    let width = opt.thresholds().len();
    (0..=SHARED_CANDIDATES)
        .map(|j| {
            let t = 1.0 - f64::from(j) / f64::from(SHARED_CANDIDATES);
            for d in 1..=width {
                opt.lower(d, t);
                cal.lower(d, t);
            }
            (vec![t; width], opt.tally(), cal.tally())
        })
        .collect()
}

pub const METHOD: &str = "Pareto Testing (Laufer-Goldshtein et al., ICLR 2023): a greedy path of per-depth settings on the optimisation part; Learn-then-Test (Angelopoulos et al. 2021): fixed-sequence testing along it on the calibration part with exact binomial (Clopper-Pearson) p-values";

fn counted(t: &Tally, settings: &Settings) -> Counted {
    let (k, n) = t.successes(settings.policy);
    Counted {
        k,
        n,
        precision: t.precision(settings.policy),
    }
}

fn tally_of(m: &crate::eval::Metrics) -> Tally {
    let n = m.predictions as f64;
    Tally {
        correct: m.correct as i64,
        unverifiable: m.unverifiable as i64,
        wrong: m.wrong as i64,
        gain: m.specificity.unwrap_or(0.0) * n,
        reward: m.reward.unwrap_or(0.0) * n,
    }
}

fn held(tax: &Taxonomy, batch: &Batch, settings: &Settings) -> Held {
    let m = evaluate(tax, batch, settings);
    let t = tally_of(&m);
    let (k, n) = t.successes(settings.policy);
    Held {
        predictions: m.predictions,
        k,
        n,
        precision: m.precision,
        wilson: wilson(k, n, Z95),
        clopper_pearson: clopper_pearson(k, n, 0.95),
        specificity: m.specificity,
        reward: m.reward,
    }
}

/// Suggest depth thresholds for `request` on `batch` under `settings` (its rule, policy,
/// object threshold and per-node overrides are kept; its depth thresholds are replaced).
/// `groups`: one dense group index per row, or `None` to split rows one by one.
pub fn suggest(
    tax: &Taxonomy,
    batch: &Batch,
    settings: &Settings,
    groups: Option<&[u32]>,
    request: &Request,
) -> Result<Report, ErrorKind> {
    request.validate()?;
    settings.thresholds.validate()?;
    if let Some(g) = groups {
        if g.len() != batch.len() {
            return Err(ErrorKind::RowCount {
                found: g.len() as u64,
                other: "the batch".into(),
                expected: batch.len() as u64,
            });
        }
    }
    let parts = split(batch.len(), groups, request.holdout, request.seed);
    let opt = batch.subset(tax, &parts.optimisation);
    let cal = batch.subset(tax, &parts.calibration);
    let delta = 1.0 - request.confidence;
    let policy = settings.policy;

    let mut opt_walk = Walk::new(tax, &opt, settings);
    let opt_fresh = opt_walk.clone();
    let path = pareto_path(&mut opt_walk, request.maximize, policy);
    let mut cal_walk = Walk::new(tax, &cal, settings);
    let cal_fresh = cal_walk.clone();
    let shared = shared_baseline(cal_walk.clone(), settings, request);
    let on_cal = replay(&mut cal_walk, &path);
    // The candidates: the greedy path's settings and the shared thresholds on a fixed grid,
    // each with its counts on both parts. Only their front on the optimisation part is tested
    // (a candidate a bolder one beats on precision too is dropped), cautious first, so the test
    // does not stop at a dip the greedy path passed through, and the suggestion is never behind
    // a shared threshold on the optimisation part.
    let mut candidates: Vec<(Vec<f64>, Tally, Tally)> = path
        .iter()
        .zip(&on_cal)
        .map(|(p, c)| (p.thresholds.clone(), p.tally, *c))
        .collect();
    candidates.extend(shared_candidates(opt_fresh, cal_fresh));
    let front = front(
        candidates.iter().map(|(_, o, _)| o),
        request.maximize,
        policy,
    );
    let (last, tested) = fixed_sequence(
        front.iter().map(|&i| candidates[i].2.successes(policy)),
        request.target,
        delta,
    );
    let last = last.map(|j| front[j]);
    let guaranteeable = front
        .first()
        .map(|&i| &candidates[i].2)
        .map(|t| t.successes(policy))
        .and_then(|(k, n)| clopper_pearson_lower(k, n, request.confidence))
        .unwrap_or(0.0);

    let holdout = (!parts.holdout.is_empty()).then(|| batch.subset(tax, &parts.holdout));
    let with_depths = |depths: Vec<f64>| Settings {
        thresholds: Thresholds {
            object: settings.thresholds.object,
            depths,
            nodes: settings.thresholds.nodes.clone(),
        },
        ..settings.clone()
    };
    let choice = |s: Settings, on_cal: &Tally, tuning: &Tally| {
        let calibration = counted(on_cal, &s);
        Choice {
            bound: clopper_pearson_lower(calibration.k, calibration.n, request.confidence),
            calibration,
            tuning: counted(tuning, &s),
            holdout: holdout.as_ref().map(|h| held(tax, h, &s)),
            thresholds: s.thresholds,
        }
    };
    let pooled: Vec<Tally> = candidates.iter().map(|(_, o, c)| o.plus(c)).collect();
    let suggestion = last.map(|i| {
        choice(
            with_depths(candidates[i].0.clone()),
            &candidates[i].2,
            &pooled[i],
        )
    });

    // (b): the most of the objective among path points whose pooled precision reaches P.
    let objective = |t: &Tally| match request.maximize {
        Maximize::Specificity => t.gain,
        Maximize::Reward => t.reward,
    };
    let mut best: Option<usize> = None;
    for (i, t) in pooled.iter().enumerate() {
        let reaches = t.precision(policy).is_some_and(|p| p >= request.target);
        if reaches && best.is_none_or(|b| objective(t) > objective(&pooled[b])) {
            best = Some(i);
        }
    }
    let in_sample = best.map(|i| {
        choice(
            with_depths(candidates[i].0.clone()),
            &candidates[i].2,
            &pooled[i],
        )
    });

    let shared = shared.map(|(t, on_cal)| {
        let s = with_depths(vec![t]);
        let on_opt = tally_of(&evaluate(tax, &opt, &s));
        choice(s, &on_cal, &on_opt.plus(&on_cal))
    });

    let rows = Parts {
        optimisation: parts.optimisation.len(),
        calibration: parts.calibration.len(),
        holdout: parts.holdout.len(),
    };
    let record = Record {
        method: METHOD.into(),
        target: request.target,
        confidence: request.confidence,
        maximize: request.maximize,
        seed: request.seed,
        holdout_share: request.holdout,
        optimisation_share: OPTIMISATION_SHARE,
        rows,
        groups: groups.map(|_| Parts {
            optimisation: parts.units[0],
            calibration: parts.units[1],
            holdout: parts.units[2],
        }),
        path_length: path.len(),
        tested,
        bound: suggestion.as_ref().and_then(|s| s.bound),
    };
    Ok(Report {
        record,
        suggestion,
        shared,
        in_sample,
        guaranteeable,
    })
}

/// Shared thresholds tested for baseline (a), from 1 down to 0: fixed in advance, fine enough
/// (1/4096) that the certified value sits within a hair of the exact curve's.
pub const SHARED_STEPS: u32 = 4096;

/// Baseline (a): fixed-sequence testing of one threshold shared by every depth, at
/// 1, 1 − 1/4096, …, 0 in that order, on the calibration part (`fresh`: its walk with every
/// threshold at 1). The certified threshold and its counts there.
fn shared_baseline(mut walk: Walk, settings: &Settings, request: &Request) -> Option<(f64, Tally)> {
    let width = walk.thresholds().len();
    let delta = 1.0 - request.confidence;
    let mut last = None;
    for j in 0..=SHARED_STEPS {
        let t = 1.0 - j as f64 / SHARED_STEPS as f64;
        for d in 1..=width {
            walk.lower(d, t);
        }
        let tally = walk.tally();
        let (k, n) = tally.successes(settings.policy);
        if path::p_value(k, n, request.target) > delta {
            break;
        }
        last = Some((t, tally));
    }
    last
}
