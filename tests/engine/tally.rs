//! Tallies add: the demo batch cut into uneven parts, each part tallied apart, and the tallies
//! added in two different orders give exactly the metrics of the whole batch (every float
//! compared with `==`), under both rules, every policy, and with per-node overrides.

use hedgerow_core::{
    evaluate, tally, Batch, Metrics, Paths, Policy, Rule, Settings, Tallies, Taxonomy,
};

use crate::harness::settings;
use crate::overrides::demo_batch;

/// Rows `range` of `b` as a batch of their own.
fn part(tax: &Taxonomy, b: &Batch, range: std::ops::Range<usize>) -> Batch {
    let paths = b.paths();
    let mut sub = Paths::new(paths.width());
    for r in range.clone() {
        sub.push(paths.leaf(r), paths.cond(r));
    }
    let objectness = b.has_objectness().then(|| {
        range
            .clone()
            .map(|r| b.root_probability(r) as f32)
            .collect()
    });
    Batch::from_parts(
        tax,
        sub,
        b.labels()[range].to_vec(),
        objectness,
        b.temperatures().clone(),
        String::new(),
    )
}

/// Cut points giving parts of uneven size, one of them empty.
const CUTS: [usize; 9] = [0, 1, 1, 2_503, 6_000, 9_999, 12_345, 17_777, 20_000];

fn parts(tax: &Taxonomy, b: &Batch, s: &Settings) -> Vec<Tallies> {
    assert_eq!(b.len(), 20_000);
    CUTS.windows(2)
        .map(|w| tally(tax, &part(tax, b, w[0]..w[1]), s))
        .collect()
}

fn check(tax: &Taxonomy, b: &Batch, s: &Settings) {
    let whole: Metrics = evaluate(tax, b, s);
    let tallies = parts(tax, b, s);
    // Left to right.
    let mut sum = tallies[0].clone();
    for t in &tallies[1..] {
        sum = (sum + t.clone()).expect("same settings");
    }
    assert_eq!(sum.clone().into_metrics(tax).expect("metrics"), whole);
    // Right to left, in pairs: another grouping of the same parts.
    let mut rest: Vec<Tallies> = tallies.into_iter().rev().collect();
    while rest.len() > 1 {
        rest = rest
            .chunks(2)
            .map(|c| match c {
                [a, b] => (a.clone() + b.clone()).expect("same settings"),
                [a] => a.clone(),
                _ => unreachable!("chunks of two"),
            })
            .collect();
    }
    let paired = rest.pop().expect("one tally");
    assert_eq!(paired.into_metrics(tax).expect("metrics"), whole);
    // Through JSON (how the Python package pickles them) and back.
    let back = Tallies::from_json(sum.to_json().as_bytes()).expect("json");
    assert_eq!(back, sum);
}

#[test]
fn parts_of_the_demo_batch_add_up_to_the_whole_bit_for_bit() {
    let (tax, b) = demo_batch();
    for rule in [Rule::Cumulative, Rule::Conditional] {
        for policy in [Policy::Credit, Policy::Penalize, Policy::Exclude] {
            check(&tax, &b, &settings(rule, &[0.6, 0.45, 0.3], 0.4, policy));
        }
        // Per-node overrides take the general loop instead of the kernel.
        let mut s = settings(rule, &[0.5], 0.3, Policy::Credit);
        let node = |id: &str| tax.lookup(id).unwrap_or_else(|| panic!("no {id}"));
        s.thresholds.nodes = vec![(node("pet-bottle"), 0.95), (node("glass"), 0.2)];
        check(&tax, &b, &s);
    }
}

#[test]
fn tallies_of_other_settings_or_another_taxonomy_are_refused() {
    let (tax, b) = demo_batch();
    let a = tally(
        &tax,
        &b,
        &settings(Rule::Cumulative, &[0.5], 0.5, Policy::Credit),
    );
    let other = tally(
        &tax,
        &b,
        &settings(Rule::Conditional, &[0.6], 0.5, Policy::Credit),
    );
    let e = (a.clone() + other).expect_err("other settings");
    let text = e.to_string();
    assert!(
        text.contains("rule cumulative and conditional") && text.contains("different thresholds"),
        "{text}"
    );
    let small = crate::harness::taxonomy(crate::harness::TREE);
    let e = a.clone().into_metrics(&small).expect_err("other taxonomy");
    assert!(e.to_string().contains("7 nodes"), "{e}");
    // Tables of the wrong size, as a tampered JSON would give.
    let json = a
        .to_json()
        .replacen("\"predicted_at\":[", "\"predicted_at\":[0,", 1);
    let e = Tallies::from_json(json.as_bytes()).expect_err("wrong size");
    assert!(e.to_string().contains("predictions per node"), "{e}");
    // Counts at the top of u64, as a tampered JSON may hold: they add and make metrics without
    // a panic (the sums wrap).
    let max = u64::MAX.to_string();
    let json = a
        .to_json()
        .replacen("\"correct\":", &format!("\"correct\":{max},\"x\":"), 1)
        .replacen("\"rows\":", &format!("\"rows\":{max},\"y\":"), 1);
    let big = Tallies::from_json(json.as_bytes()).expect("sizes are right");
    let sum = (big.clone() + big).expect("same stamp");
    let m = sum.into_metrics(&tax).expect("metrics");
    assert_eq!(m.rows, u64::MAX - 1);
}
