//! The threshold suggestion: its incremental walk equals a full evaluation, the guarantee holds
//! by simulation, it is deterministic for a seed, groups stay whole, and an unreachable target
//! reports the highest precision that can be guaranteed.

use hedgerow_core::suggest::path::pareto_path;
use hedgerow_core::suggest::split::{split, splitmix64};
use hedgerow_core::suggest::walk::Walk;
use hedgerow_core::suggest::{suggest, Maximize, Request};
use hedgerow_core::taxonomy::NONE;
use hedgerow_core::{evaluate, Batch, Paths, Policy, Rule, Settings, Taxonomy, Temperatures};

use crate::harness;

fn uniform(s: &mut u64) -> f64 {
    (splitmix64(s) >> 11) as f64 / (1u64 << 53) as f64
}

/// A complete ternary tree of depth 3 (3 + 9 + 27 nodes).
fn tree() -> Taxonomy {
    let mut csv = String::from("id,parent\n");
    for a in 0..3 {
        csv.push_str(&format!("m{a},\n"));
        for b in 0..3 {
            csv.push_str(&format!("m{a}{b},m{a}\n"));
            for c in 0..3 {
                csv.push_str(&format!("m{a}{b}{c},m{a}{b}\n"));
            }
        }
    }
    harness::taxonomy(&csv)
}

/// `n` rows from one fixed distribution, so a setting's true precision is what it scores on
/// many fresh rows. Labels: a uniform leaf, its depth-2 ancestor for 15 % of rows (coarse),
/// background for 10 %. Along the path each depth draws a clarity u; the conditional is
/// 0.34 + 0.66·u and the path keeps to the label with probability 0.55 + 0.45·u, otherwise it
/// takes a sibling (and any node below it). Objectness: 0.3–1 for objects, 0–0.6 for background.
fn rows(tax: &Taxonomy, n: usize, seed: u64) -> Batch {
    let mut s = seed.wrapping_mul(0x2545_F491_4F6C_DD1D) ^ 0x5EED;
    let leaves: Vec<u32> = (0..tax.len() as u32).filter(|&v| tax.is_leaf(v)).collect();
    let mut paths = Paths::new(tax.max_depth());
    let (mut labels, mut objectness) = (Vec::with_capacity(n), Vec::with_capacity(n));
    for _ in 0..n {
        let background = uniform(&mut s) < 0.1;
        let truth = leaves[(uniform(&mut s) * leaves.len() as f64) as usize % leaves.len()];
        let mut v = tax.root();
        let mut on_path = !background;
        let mut cond = Vec::new();
        while !tax.is_leaf(v) {
            let u = uniform(&mut s);
            cond.push((0.34 + 0.66 * u) as f32);
            let kids = tax.children(v);
            let right = tax.ancestor(truth, tax.depth(v) + 1);
            v = if on_path && uniform(&mut s) < 0.55 + 0.45 * u {
                right
            } else {
                on_path = false;
                let others: Vec<u32> = kids.iter().copied().filter(|&k| k != right).collect();
                others[(uniform(&mut s) * others.len() as f64) as usize % others.len()]
            };
        }
        paths.push(v, &cond);
        let label = if background {
            NONE
        } else if uniform(&mut s) < 0.15 {
            tax.ancestor(truth, 2)
        } else {
            truth
        };
        labels.push(label);
        objectness.push(if background {
            0.6 * uniform(&mut s) as f32
        } else {
            (0.3 + 0.7 * uniform(&mut s)) as f32
        });
    }
    Batch::from_parts(
        tax,
        paths,
        labels,
        Some(objectness),
        Temperatures::default(),
        format!("generated {seed}"),
    )
}

fn request(target: f64, seed: u64) -> Request {
    Request {
        target,
        confidence: 0.9,
        maximize: Maximize::Specificity,
        holdout: 0.0,
        seed,
    }
}

#[test]
fn the_walk_counts_what_evaluate_counts() {
    let tax = tree();
    let batch = rows(&tax, 3000, 11);
    for rule in [Rule::Cumulative, Rule::Conditional] {
        for policy in [Policy::Credit, Policy::Penalize, Policy::Exclude] {
            for overrides in [vec![], vec![(tax.lookup("m1").expect("node"), 0.7)]] {
                let mut settings = harness::settings(rule, &[0.5], 0.4, policy);
                settings.thresholds.nodes = overrides;
                let mut walk = Walk::new(&tax, &batch, &settings);
                let path = pareto_path(&mut walk, Maximize::Reward, policy);
                assert!(
                    path.len() > 10,
                    "{rule:?} {policy:?}: {} points",
                    path.len()
                );
                for p in path.iter().step_by(7).chain(path.last()) {
                    let mut at = settings.clone();
                    at.thresholds.depths = p.thresholds.clone();
                    let m = evaluate(&tax, &batch, &at);
                    let t = p.tally;
                    assert_eq!(
                        (t.correct as u64, t.unverifiable as u64, t.wrong as u64),
                        (m.correct, m.unverifiable, m.wrong),
                        "{rule:?} {policy:?} at {:?}",
                        p.thresholds
                    );
                    let n = m.predictions as f64;
                    let spec = m.specificity.unwrap_or(0.0) * n;
                    assert!((t.gain - spec).abs() < 1e-6 * n.max(1.0));
                    let reward = m.reward.unwrap_or(0.0) * n;
                    assert!((t.reward - reward).abs() < 1e-6 * n.max(1.0));
                }
            }
        }
    }
}

/// The smallest m with P(Bin(trials, p) > m) ≤ 0.001: the 99.9 % upper quantile.
fn upper_quantile(trials: u64, p: f64) -> u64 {
    (0..=trials)
        .find(|&m| hedgerow_core::stats::binomial_upper_tail(m + 1, trials, p) <= 0.001)
        .unwrap_or(trials)
}

#[test]
fn the_guarantee_holds_by_simulation() {
    // 200 independent tuning draws of 4,000 rows; each suggestion's true precision is its
    // precision on 1,000,000 fresh rows of the same generator. The share of suggestions below
    // the target must stay within 1 − C plus binomial slack: at most the 99.9 % upper quantile
    // of Bin(200, 1 − C) draws (a correct method fails this check with probability ≤ 0.001).
    let tax = tree();
    let truth = rows(&tax, 1_000_000, 1_000_001);
    let target = 0.9;
    let settings = harness::settings(Rule::Cumulative, &[0.5], 0.5, Policy::Credit);
    let (mut made, mut below) = (0u64, 0u64);
    let mut specific = 0.0;
    for draw in 0..200u64 {
        let tuning = rows(&tax, 4000, draw);
        let report =
            suggest(&tax, &tuning, &settings, None, &request(target, draw)).expect("valid request");
        let Some(s) = report.suggestion else { continue };
        made += 1;
        let mut at = settings.clone();
        at.thresholds = s.thresholds;
        let m = evaluate(&tax, &truth, &at);
        below += (m.precision.unwrap_or(0.0) < target) as u64;
        specific += m.specificity.unwrap_or(0.0);
    }
    let slack = upper_quantile(200, 0.1);
    assert!(made >= 190, "only {made} of 200 draws gave a suggestion");
    assert!(
        below <= slack,
        "{below} of {made} suggestions below precision {target} (allowed {slack})"
    );
    eprintln!("suggestions {made}, below the target {below} (allowed {slack}), mean true specificity {:.4}", specific / made as f64);
    // Not vacuous: the suggestions descend below the root.
    assert!(
        specific / made as f64 > 0.15,
        "mean specificity {}",
        specific / made as f64
    );
}

#[test]
fn a_seed_decides_the_suggestion() {
    let tax = tree();
    let batch = rows(&tax, 5000, 3);
    let settings = harness::settings(Rule::Cumulative, &[0.5], 0.5, Policy::Credit);
    let mut req = request(0.9, 42);
    req.holdout = 0.2;
    let a = suggest(&tax, &batch, &settings, None, &req).expect("valid");
    let b = suggest(&tax, &batch, &settings, None, &req).expect("valid");
    assert_eq!(a, b);
    req.seed = 43;
    let c = suggest(&tax, &batch, &settings, None, &req).expect("valid");
    assert_ne!(a.suggestion, c.suggestion);
    assert_eq!(a.record.rows.holdout, 1000);
    assert_eq!(a.record.rows.optimisation, 1200);
}

#[test]
fn groups_stay_whole() {
    // Groups of 1 to 6 consecutive rows.
    let mut s = 9u64;
    let mut groups = Vec::new();
    let mut g = 0u32;
    while groups.len() < 5000 {
        let size = 1 + (uniform(&mut s) * 6.0) as usize;
        groups.extend(std::iter::repeat_n(g, size));
        g += 1;
    }
    groups.truncate(5000);
    let parts = split(groups.len(), Some(&groups), 0.25, 5);
    let tuning_parts = split(groups.len(), Some(&groups), 0.0, 5);
    let mut part_of = std::collections::HashMap::new();
    for (i, list) in [&parts.optimisation, &parts.calibration, &parts.holdout]
        .iter()
        .enumerate()
    {
        for &r in list.iter() {
            let seen = *part_of.entry(groups[r as usize]).or_insert(i);
            assert_eq!(seen, i, "group {} split across parts", groups[r as usize]);
        }
    }
    let units: usize = parts.units.iter().sum();
    assert_eq!(units, g as usize);
    let tax = tree();
    let batch = rows(&tax, 5000, 4);
    let settings = harness::settings(Rule::Cumulative, &[0.5], 0.5, Policy::Credit);
    let report = suggest(&tax, &batch, &settings, Some(&groups), &request(0.9, 5)).expect("ok");
    assert_eq!(
        report.record.groups.map(|p| p.optimisation),
        Some(tuning_parts.units[0])
    );
    assert!(suggest(
        &tax,
        &batch,
        &settings,
        Some(&groups[1..]),
        &request(0.9, 5)
    )
    .is_err());
}

#[test]
fn an_unreachable_target_reports_what_can_be_guaranteed() {
    let tax = tree();
    let batch = rows(&tax, 3000, 8);
    let settings = harness::settings(Rule::Cumulative, &[0.5], 0.5, Policy::Credit);
    let none = suggest(&tax, &batch, &settings, None, &request(0.999, 1)).expect("valid");
    assert!(none.suggestion.is_none());
    let best = none.guaranteeable;
    assert!(best > 0.9 && best < 0.999, "highest guaranteeable {best}");
    // Just under that value the first setting is certified; just over it, none is.
    let under = suggest(&tax, &batch, &settings, None, &request(best - 1e-6, 1)).expect("ok");
    assert!(under.suggestion.is_some());
    let over = suggest(&tax, &batch, &settings, None, &request(best + 1e-6, 1)).expect("ok");
    assert!(over.suggestion.is_none());
    for bad in [0.0, 1.0, f64::NAN] {
        assert!(suggest(&tax, &batch, &settings, None, &request(bad, 1)).is_err());
    }
}

#[test]
fn a_subset_scores_like_its_rows() {
    let tax = tree();
    let batch = rows(&tax, 400, 2);
    let even: Vec<u32> = (0..400).step_by(2).collect();
    let sub = batch.subset(&tax, &even);
    let settings: Settings = harness::settings(Rule::Cumulative, &[0.3], 0.5, Policy::Credit);
    for (i, &r) in even.iter().enumerate() {
        let r = r as usize;
        assert_eq!(sub.paths().leaf(i), batch.paths().leaf(r));
        assert_eq!(sub.label(i), batch.label(r));
        assert_eq!(sub.root_probability(i), batch.root_probability(r));
    }
    assert_eq!(evaluate(&tax, &sub, &settings).rows, 200);
}

#[test]
fn the_walk_counts_deep_trees_too() {
    // 40 levels: a chain with a leaf beside every link, so outcomes span more than 32 depths.
    let mut csv = String::from("id,parent\nc1,\nx1,\n");
    for k in 2..=40 {
        csv.push_str(&format!("c{k},c{}\nx{k},c{}\n", k - 1, k - 1));
    }
    let tax = harness::taxonomy(&csv);
    assert_eq!(tax.max_depth(), 40);
    let batch = rows(&tax, 2000, 6);
    let settings = harness::settings(Rule::Conditional, &[0.5], 0.3, Policy::Credit);
    let mut walk = Walk::new(&tax, &batch, &settings);
    let path = pareto_path(&mut walk, Maximize::Specificity, Policy::Credit);
    for p in path.iter().step_by(5).chain(path.last()) {
        let mut at = settings.clone();
        at.thresholds.depths = p.thresholds.clone();
        let m = evaluate(&tax, &batch, &at);
        let t = p.tally;
        assert_eq!(
            (t.correct as u64, t.unverifiable as u64, t.wrong as u64),
            (m.correct, m.unverifiable, m.wrong)
        );
    }
}
