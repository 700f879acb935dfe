//! The exact curve must equal a brute-force evaluation at every breakpoint it reports.

use hedgerow_core::{evaluate, exact_curve, Policy, Rule};

use crate::harness::{batch, settings, taxonomy, TREE};

fn sample_rows(n: usize) -> (Vec<Vec<f64>>, Vec<&'static str>, Vec<f32>) {
    let ids = ["f", "g", "c", "e", "b", "a", "", "d"];
    let rows = (0..n)
        .map(|i| {
            (0..7)
                .map(|c| (((i * 13 + c * 7) % 17) as f64 * 0.61).cos() * 2.5)
                .collect()
        })
        .collect();
    let labels = (0..n).map(|i| ids[i % ids.len()]).collect();
    let obj = (0..n).map(|i| ((i * 37) % 100) as f32 / 100.0).collect();
    (rows, labels, obj)
}

#[test]
fn curve_matches_brute_force_at_every_point() {
    let tax = taxonomy(TREE);
    let (rows, labels, obj) = sample_rows(64);
    let b = batch(&tax, &rows, &labels, Some(&obj), &[]);
    for rule in [Rule::Cumulative, Rule::Conditional] {
        for policy in [Policy::Credit, Policy::Penalize, Policy::Exclude] {
            let points = exact_curve(&tax, &b, rule, 0.3, policy);
            assert!(points.len() > 5, "{rule:?}: {} points", points.len());
            assert_eq!(points[0].threshold, 1.0);
            for w in points.windows(2) {
                assert!(
                    w[0].threshold > w[1].threshold,
                    "strictly descending, ties merged"
                );
            }
            for p in &points {
                let m = evaluate(&tax, &b, &settings(rule, &[p.threshold], 0.3, policy));
                assert_eq!(
                    (p.correct, p.unverifiable, p.wrong, p.predictions),
                    (m.correct, m.unverifiable, m.wrong, m.predictions),
                    "{rule:?} t={}",
                    p.threshold
                );
                assert_eq!(p.precision, m.precision);
                let (a, b2) = (p.specificity.unwrap_or(-1.0), m.specificity.unwrap_or(-1.0));
                assert!((a - b2).abs() < 1e-12, "{a} vs {b2}");
            }
            // A point holds for thresholds in (next point's threshold, its own]: check midpoints.
            for w in points.windows(2) {
                let mid = (w[0].threshold + w[1].threshold) / 2.0;
                let m = evaluate(&tax, &b, &settings(rule, &[mid], 0.3, policy));
                assert_eq!(
                    (m.correct, m.wrong),
                    (w[0].correct, w[0].wrong),
                    "{rule:?} mid {mid}"
                );
            }
        }
    }
}

/// One depth's sweep equals a fresh evaluation just above each of its breakpoints, starts at
/// t = 0, and passes through the current settings.
#[test]
fn depth_sweep_matches_brute_force() {
    let tax = taxonomy(TREE);
    let (rows, labels, obj) = sample_rows(80);
    let b = batch(&tax, &rows, &labels, Some(&obj), &[]);
    for rule in [Rule::Cumulative, Rule::Conditional] {
        for depth in 1..=3 {
            let base = settings(rule, &[0.4, 0.55, 0.3], 0.2, Policy::Credit);
            let points = hedgerow_core::depth_sweep(&tax, &b, &base, depth);
            assert_eq!(points[0].threshold, 0.0);
            let at = |t: f64| {
                let mut s = base.clone();
                s.thresholds.depths[depth - 1] = t;
                evaluate(&tax, &b, &s)
            };
            for (i, p) in points.iter().enumerate() {
                let next = points.get(i + 1).map_or(1.0, |q| q.threshold);
                let t = if i == 0 {
                    0.0
                } else {
                    (p.threshold + next) / 2.0
                };
                let m = at(t);
                assert_eq!(
                    (p.correct, p.unverifiable, p.wrong),
                    (m.correct, m.unverifiable, m.wrong),
                    "{rule:?} d{depth} t={t}"
                );
                assert!(
                    (p.specificity.unwrap_or(0.0) - m.specificity.unwrap_or(0.0)).abs() < 1e-12
                );
            }
            assert!(points.len() > 3, "{rule:?} d{depth}: {}", points.len());
        }
    }
}

/// Dragging one depth re-scores only the rows that flip, and equals a full evaluation bit for
/// bit at every stop, back and forth, for both rules and with a per-node override present.
#[test]
fn depth_drag_equals_full_evaluation() {
    let tax = taxonomy(TREE);
    let (rows, labels, obj) = sample_rows(120);
    let b = batch(&tax, &rows, &labels, Some(&obj), &[]);
    for rule in [Rule::Cumulative, Rule::Conditional] {
        for depth in 1..=3 {
            for with_override in [false, true] {
                let mut base = settings(rule, &[0.45, 0.5, 0.35], 0.25, Policy::Exclude);
                if with_override {
                    base.thresholds.nodes = vec![(tax.lookup("g").expect("g"), 0.8)];
                }
                let mut drag = hedgerow_core::DepthDrag::new(&tax, &b, &base, depth);
                for t in [0.0, 0.9, 0.2, 0.2, 1.0, 0.61, 0.05, 0.5, 0.35] {
                    let got = drag.set(&tax, &b, t);
                    let mut s = base.clone();
                    s.thresholds.depths[depth - 1] = t;
                    assert_eq!(
                        got,
                        evaluate(&tax, &b, &s),
                        "{rule:?} d{depth} t={t} override={with_override}"
                    );
                }
            }
        }
    }
}

/// A curve drawn to a resolution keeps exact points only: its first and last points are the
/// exact curve's, every kept point is one of the exact ones, and kept points are at least the
/// resolution apart.
#[test]
fn thinned_curve_keeps_exact_points() {
    let tax = taxonomy(TREE);
    let (rows, labels, obj) = sample_rows(200);
    let b = batch(&tax, &rows, &labels, Some(&obj), &[]);
    let index = hedgerow_core::CurveIndex::new(&tax, &b, Rule::Conditional);
    let exact = index.sweep(&tax, &b, 0.1, Policy::Credit);
    let thin = index.sweep_within(&tax, &b, 0.1, Policy::Credit, 0.05);
    assert!(
        thin.len() < exact.len(),
        "{} vs {}",
        thin.len(),
        exact.len()
    );
    assert_eq!(thin.first(), exact.first());
    assert_eq!(thin.last(), exact.last());
    for p in &thin {
        assert!(exact.contains(p), "{p:?} is not an exact point");
    }
    for w in thin[..thin.len() - 1].windows(2) {
        let ds = (w[0].specificity.unwrap_or(0.0) - w[1].specificity.unwrap_or(0.0)).abs();
        let dp = (w[0].precision.unwrap_or(0.0) - w[1].precision.unwrap_or(0.0)).abs();
        assert!(ds >= 0.05 || dp >= 0.05, "{w:?}");
    }
}
