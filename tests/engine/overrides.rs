//! Per-node overrides in the curve: the overridden nodes keep their own threshold at every
//! point while the shared threshold sweeps, and every point equals `evaluate` with all depths at
//! the point's threshold plus the same overrides.

use hedgerow_core::{
    evaluate, exact_curve, exact_curve_for, paths, Batch, CurvePoint, Labels, Objectness, Policy,
    Rule, Settings, Taxonomy, Temperatures,
};

use crate::harness::{batch, settings, taxonomy, TREE};

fn sample_rows(n: usize) -> (Vec<Vec<f64>>, Vec<&'static str>, Vec<f32>) {
    let ids = ["f", "g", "c", "e", "b", "a", "", "d", "g"];
    let rows = (0..n)
        .map(|i| {
            (0..7)
                .map(|c| (((i * 11 + c * 5) % 19) as f64 * 0.73).sin() * 2.2)
                .collect()
        })
        .collect();
    let labels = (0..n).map(|i| ids[i % ids.len()]).collect();
    let obj = (0..n).map(|i| ((i * 41) % 100) as f32 / 100.0).collect();
    (rows, labels, obj)
}

fn with_overrides(tax: &Taxonomy, base: Settings, nodes: &[(&str, f64)]) -> Settings {
    let mut s = base;
    s.thresholds.nodes = nodes
        .iter()
        .map(|(id, t)| (tax.lookup(id).unwrap_or_else(|| panic!("no {id}")), *t))
        .collect();
    s
}

/// `evaluate` at shared threshold `t` with the overrides of `s`.
fn at(tax: &Taxonomy, b: &Batch, s: &Settings, t: f64) -> hedgerow_core::Metrics {
    let mut s = s.clone();
    s.thresholds.depths = vec![t];
    evaluate(tax, b, &s)
}

fn check_point(tax: &Taxonomy, b: &Batch, s: &Settings, p: &CurvePoint, t: f64, what: &str) {
    let m = at(tax, b, s, t);
    assert_eq!(
        (p.predictions, p.correct, p.unverifiable, p.wrong),
        (m.predictions, m.correct, m.unverifiable, m.wrong),
        "{what} t={t}"
    );
    assert_eq!(p.precision, m.precision, "{what} t={t}");
    let (a, e) = (p.specificity.unwrap_or(-1.0), m.specificity.unwrap_or(-1.0));
    assert!(
        (a - e).abs() < 1e-12,
        "{what} t={t}: specificity {a} vs {e}"
    );
    let (a, e) = (p.reward.unwrap_or(-1.0), m.reward.unwrap_or(-1.0));
    assert!((a - e).abs() < 1e-12, "{what} t={t}: reward {a} vs {e}");
}

/// Every point and every midpoint between points, for overrides that always pass, that cap
/// the depth, at 0 and 1, at every depth, for both rules and every policy.
#[test]
fn curve_with_overrides_equals_evaluate_at_every_point() {
    let tax = taxonomy(TREE);
    let (rows, labels, obj) = sample_rows(150);
    let b = batch(&tax, &rows, &labels, Some(&obj), &[]);
    let sets: [&[(&str, f64)]; 6] = [
        &[("a", 0.05)],
        &[("b", 0.9), ("d", 0.2)],
        &[("a", 1.0)],
        &[("g", 0.0), ("f", 0.0), ("c", 0.7)],
        &[("b", 0.3), ("b", 0.6)],
        &[("a", 0.4), ("b", 0.35), ("f", 0.3), ("g", 0.3), ("c", 0.3)],
    ];
    for rule in [Rule::Cumulative, Rule::Conditional] {
        for policy in [Policy::Credit, Policy::Penalize, Policy::Exclude] {
            for nodes in sets {
                let s = with_overrides(&tax, settings(rule, &[0.5], 0.25, policy), nodes);
                let what = format!("{rule:?} {policy:?} {nodes:?}");
                let points = exact_curve_for(&tax, &b, &s);
                assert_eq!(points[0].threshold, 1.0, "{what}");
                for w in points.windows(2) {
                    assert!(w[0].threshold > w[1].threshold, "{what}: descending");
                }
                for p in &points {
                    check_point(&tax, &b, &s, p, p.threshold, &what);
                }
                for w in points.windows(2) {
                    let mid = (w[0].threshold + w[1].threshold) / 2.0;
                    check_point(&tax, &b, &s, &w[0], mid, &what);
                }
                let last = points.last().expect("a point");
                if last.threshold > 0.0 {
                    check_point(&tax, &b, &s, last, 0.0, &what);
                }
            }
        }
    }
}

/// Without overrides the settings' curve is the plain one; with them it differs (they are not
/// ignored), and an override for every node at a depth makes that depth's step independent of
/// the shared threshold.
#[test]
fn overrides_change_the_curve_and_none_changes_nothing() {
    let tax = taxonomy(TREE);
    let (rows, labels, obj) = sample_rows(150);
    let b = batch(&tax, &rows, &labels, Some(&obj), &[]);
    let plain = settings(Rule::Cumulative, &[0.5], 0.25, Policy::Credit);
    assert_eq!(
        exact_curve_for(&tax, &b, &plain),
        exact_curve(&tax, &b, Rule::Cumulative, 0.25, Policy::Credit)
    );
    let capped = with_overrides(&tax, plain.clone(), &[("a", 1.0), ("d", 1.0)]);
    let points = exact_curve_for(&tax, &b, &capped);
    // Nothing can step into depth 1 (a cumulative P reaches 1 only by rounding): one point.
    assert_eq!(points.len(), 1, "{points:?}");
    assert_eq!(points[0].specificity, Some(0.0));
    assert_ne!(
        points,
        exact_curve(&tax, &b, Rule::Cumulative, 0.25, Policy::Credit)
    );
}

fn demo(name: &str) -> Vec<u8> {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/../../demo-data/");
    std::fs::read(format!("{path}{name}")).unwrap_or_else(|e| panic!("{name}: {e}"))
}

/// The demo batch (20,000 rows), as the CLI loads it.
pub fn demo_batch() -> (Taxonomy, Batch) {
    let tax = Taxonomy::parse(&demo("taxonomy.csv"), "taxonomy.csv").expect("taxonomy");
    let temps = Temperatures::default();
    let ingested =
        paths::ingest_bytes("logits.npy", &tax, &temps, &demo("logits.npy")).expect("logits");
    let labels = Labels::parse(&demo("labels.csv"), "labels.csv", &tax).expect("labels");
    let obj = Objectness::parse(&demo("objectness.npy"), "objectness.npy").expect("objectness");
    let b = Batch::new(&tax, "logits.npy", ingested, temps, labels, Some(obj)).expect("batch");
    (tax, b)
}

/// On the demo data, a sample of the curve's points with overrides set equals `evaluate`.
#[test]
fn demo_curve_with_overrides_equals_evaluate_at_sampled_points() {
    let (tax, b) = demo_batch();
    for rule in [Rule::Cumulative, Rule::Conditional] {
        let s = with_overrides(
            &tax,
            settings(rule, &[0.5], 0.3, Policy::Exclude),
            &[
                ("pet", 0.2),
                ("pet-bottle", 0.95),
                ("glass", 0.6),
                ("hdpe-milk", 0.1),
            ],
        );
        let points = exact_curve_for(&tax, &b, &s);
        assert!(points.len() > 100, "{rule:?}: {} points", points.len());
        let step = points.len() / 40;
        for p in points.iter().step_by(step.max(1)).chain(points.last()) {
            check_point(&tax, &b, &s, p, p.threshold, &format!("demo {rule:?}"));
        }
    }
}
