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

/// P(root) = −0.0 (a valid objectness: it is in [0, 1]) makes every cumulative value −0.0,
/// whose bits sort above 1's: the curve must still put the row's breakpoint at 0, and the
/// kernel must not descend past the leaf (P(root) · padding is −0.0 too, which passes 0).
#[test]
fn negative_zero_objectness_breaks_at_zero() {
    let tax = taxonomy(TREE);
    let rows = vec![
        crate::harness::row(&tax, &[("a", 2.0), ("c", 3.0)]),
        crate::harness::row(&tax, &[("a", 2.0), ("b", 1.0), ("f", 1.0)]),
    ];
    for obj in [[-0.0f32, 0.7], [0.0, 0.7]] {
        // Row 0 descends to `c` (depth 2), labelled `e`: correct only at the root.
        let b = batch(&tax, &rows, &["e", "f"], Some(&obj), &[]);
        for rule in [Rule::Cumulative, Rule::Conditional] {
            let points = exact_curve(&tax, &b, rule, 0.0, Policy::Credit);
            assert_eq!(points[0].threshold, 1.0);
            for p in &points {
                let m = evaluate(
                    &tax,
                    &b,
                    &settings(rule, &[p.threshold], 0.0, Policy::Credit),
                );
                assert_eq!(
                    (p.correct, p.unverifiable, p.wrong, p.predictions),
                    (m.correct, m.unverifiable, m.wrong, m.predictions),
                    "{rule:?} t={} objectness {obj:?}",
                    p.threshold
                );
            }
            // At threshold 0 every row descends to its leaf (depths 2 and 3), and no further.
            let m = evaluate(&tax, &b, &settings(rule, &[0.0], 0.0, Policy::Credit));
            assert_eq!(
                (m.stop_count[2].wrong, m.stop_count[3].correct),
                (1, 1),
                "{rule:?}"
            );
        }
    }
}
