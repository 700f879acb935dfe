//! The per-node report equals a brute-force count from `decode_row`, its sums agree with
//! `evaluate`, and adding/removing the rows that flip gives exactly a fresh pass.

use std::collections::BTreeMap;

use hedgerow_core::nodes::{node_counts, node_report, NodeCounts, TOP_WRONG};
use hedgerow_core::{
    decode_row, evaluate, stats, Batch, Outcome, Policy, Rule, Settings, Taxonomy,
};

use crate::harness::{batch, settings, taxonomy, TREE};
use crate::overrides::demo_batch;

fn sample(n: usize) -> (Vec<Vec<f64>>, Vec<&'static str>, Vec<f32>) {
    let ids = ["f", "g", "c", "e", "b", "a", "", "d", "f", "c"];
    let rows = (0..n)
        .map(|i| {
            (0..7)
                .map(|c| (((i * 7 + c * 13) % 23) as f64 * 0.57).cos() * 2.4)
                .collect()
        })
        .collect();
    let labels = (0..n).map(|i| ids[i % ids.len()]).collect();
    let obj = (0..n).map(|i| ((i * 29) % 100) as f32 / 100.0).collect();
    (rows, labels, obj)
}

fn overridden(tax: &Taxonomy, mut s: Settings, nodes: &[(&str, f64)]) -> Settings {
    s.thresholds.nodes = nodes
        .iter()
        .map(|(id, t)| (tax.lookup(id).unwrap_or_else(|| panic!("no {id}")), *t))
        .collect();
    s
}

/// Whether `a` is `v` or one of its ancestors (the root, `tax.root()`, is everyone's).
fn at_or_above(tax: &Taxonomy, a: u32, v: u32) -> bool {
    a == tax.root() || tax.path(v).contains(&a)
}

/// The report counted the slow way: decode each row, then test every node against it.
fn brute_force(tax: &Taxonomy, b: &Batch, s: &Settings) {
    let report = node_report(tax, b, s);
    let th = s.thresholds.resolve(tax);
    let rows: Vec<_> = (0..b.len())
        .map(|r| decode_row(tax, b, s, &th, r))
        .collect();
    let all: Vec<u32> = (0..tax.len() as u32).chain([tax.root()]).collect();
    for &v in &all {
        let rec = if v == tax.root() {
            &report.root
        } else {
            &report.nodes[v as usize]
        };
        assert_eq!(rec.node, v);
        let (mut c, mut u, mut w, mut labelled, mut above) = (0, 0, 0, 0, 0);
        let mut wrong: BTreeMap<u32, u64> = BTreeMap::new();
        for (r, d) in rows.iter().enumerate() {
            if d.predicted == Some(v) {
                match d.outcome {
                    Outcome::Correct => c += 1,
                    Outcome::Unverifiable => u += 1,
                    Outcome::Wrong => w += 1,
                    _ => {}
                }
            }
            let g = b.label(r);
            if g == hedgerow_core::taxonomy::NONE || !at_or_above(tax, v, g) {
                continue;
            }
            labelled += 1;
            if let Some(p) = d.predicted {
                if p != v && at_or_above(tax, p, v) {
                    above += 1;
                }
                if d.outcome == Outcome::Wrong {
                    *wrong.entry(p).or_default() += 1;
                }
            }
        }
        let mut top: Vec<(u32, u64)> = wrong.into_iter().collect();
        top.sort_by_key(|&(p, k)| (std::cmp::Reverse(k), p));
        top.truncate(TOP_WRONG);
        let what = format!("{:?} {:?} node {}", s.rule, s.thresholds.nodes, tax.id(v));
        assert_eq!(
            (rec.correct, rec.unverifiable, rec.wrong, rec.stops),
            (c, u, w, c + u + w),
            "{what}"
        );
        assert_eq!(
            (rec.labelled, rec.stopped_above),
            (labelled, above),
            "{what}"
        );
        assert_eq!(rec.top_wrong, top, "{what}");
        assert_eq!(
            rec.precision,
            hedgerow_core::eval::precision(s.policy, c, u, w),
            "{what}"
        );
        let (k, n) = match s.policy {
            Policy::Credit => (c + u, c + u + w),
            Policy::Penalize => (c, c + u + w),
            Policy::Exclude => (c, c + w),
        };
        assert_eq!(
            rec.precision_interval,
            stats::wilson(k, n, stats::Z95),
            "{what}"
        );
        assert_eq!(rec.threshold, th[v as usize], "{what}");
    }
}

fn settings_grid(tax: &Taxonomy) -> Vec<Settings> {
    let mut out = Vec::new();
    for rule in [Rule::Cumulative, Rule::Conditional] {
        for (policy, depths) in [
            (Policy::Credit, vec![0.5]),
            (Policy::Penalize, vec![0.7, 0.4, 0.2]),
            (Policy::Exclude, vec![0.0]),
            (Policy::Credit, vec![1.0]),
        ] {
            let s = settings(rule, &depths, 0.3, policy);
            out.push(s.clone());
            out.push(overridden(tax, s, &[("b", 0.9), ("c", 0.05)]));
        }
    }
    out
}

#[test]
fn report_equals_brute_force() {
    let tax = taxonomy(TREE);
    let (rows, labels, obj) = sample(160);
    for objectness in [Some(obj.as_slice()), None] {
        let b = batch(&tax, &rows, &labels, objectness, &[]);
        for s in settings_grid(&tax) {
            brute_force(&tax, &b, &s);
        }
    }
}

/// Σ stops over the nodes and the root = predictions, and so on for each outcome; the root's
/// labelled rows are every labelled row, a node's are its own plus its children's; nothing is
/// stopped above the root, and a top-level node's stopped-above rows are its labelled rows that
/// predict the root.
fn check_sums(tax: &Taxonomy, b: &Batch, s: &Settings) {
    let report = node_report(tax, b, s);
    let m = evaluate(tax, b, s);
    let all: Vec<_> = report.nodes.iter().chain([&report.root]).collect();
    let sum = |f: &dyn Fn(&hedgerow_core::NodeRecord) -> u64| all.iter().map(|r| f(r)).sum::<u64>();
    assert_eq!(sum(&|r| r.stops), m.predictions);
    assert_eq!(sum(&|r| r.correct), m.correct);
    assert_eq!(sum(&|r| r.unverifiable), m.unverifiable);
    assert_eq!(sum(&|r| r.wrong), m.wrong);
    for (d, count) in m.stop_count.iter().enumerate() {
        let at = |f: &dyn Fn(&hedgerow_core::NodeRecord) -> u64| {
            all.iter()
                .filter(|r| r.depth == d)
                .map(|r| f(r))
                .sum::<u64>()
        };
        assert_eq!(
            (
                at(&|r| r.correct),
                at(&|r| r.unverifiable),
                at(&|r| r.wrong)
            ),
            (count.correct, count.unverifiable, count.wrong),
            "depth {d}"
        );
    }
    assert_eq!(report.root.labelled, m.labelled_rows);
    assert_eq!(report.root.stopped_above, 0);
    let root_wrong: u64 = report.root.top_wrong.iter().map(|x| x.1).sum();
    assert!(root_wrong <= m.wrong - m.false_alarms);
    let direct = |v: u32| b.labels().iter().filter(|&&g| g == v).count() as u64;
    for (v, rec) in report.nodes.iter().enumerate() {
        let v = v as u32;
        let children: u64 = tax
            .children(v)
            .iter()
            .map(|&c| report.nodes[c as usize].labelled)
            .sum();
        assert_eq!(rec.labelled, direct(v) + children, "{}", tax.id(v));
        assert!(rec.stopped_above <= rec.labelled);
    }
    let top_level: u64 = tax
        .children(tax.root())
        .iter()
        .map(|&c| report.nodes[c as usize].labelled)
        .sum();
    assert_eq!(top_level, m.labelled_rows);
    // A root prediction on a background row is wrong, so the root's correct predictions are
    // exactly the labelled rows that predict the root.
    let above_top: u64 = tax
        .children(tax.root())
        .iter()
        .map(|&c| report.nodes[c as usize].stopped_above)
        .sum();
    assert_eq!(above_top, report.root.correct);
}

#[test]
fn sums_agree_with_evaluate() {
    let tax = taxonomy(TREE);
    let (rows, labels, obj) = sample(160);
    let b = batch(&tax, &rows, &labels, Some(&obj), &[]);
    for s in settings_grid(&tax) {
        check_sums(&tax, &b, &s);
    }
    let (tax, b) = demo_batch();
    for rule in [Rule::Cumulative, Rule::Conditional] {
        let s = settings(rule, &[0.9, 0.8, 0.6, 0.5], 0.5, Policy::Credit);
        check_sums(&tax, &b, &s);
        brute_force(
            &tax,
            &b,
            &overridden(&tax, s, &[("pet", 0.2), ("glass", 0.7)]),
        );
    }
}

/// Moving only the rows whose stop depth changes (as the page does while a threshold is
/// dragged) gives exactly the counts of a fresh pass, and removing every row leaves zeros.
#[test]
fn adding_and_removing_rows_equals_a_fresh_pass() {
    let tax = taxonomy(TREE);
    let (rows, labels, obj) = sample(200);
    let b = batch(&tax, &rows, &labels, Some(&obj), &[]);
    let stops = |s: &Settings| {
        let th = s.thresholds.resolve(&tax);
        (0..b.len())
            .map(|r| hedgerow_core::eval::stop_depth(&tax, &b, s.rule, &th, r))
            .collect::<Vec<_>>()
    };
    for rule in [Rule::Cumulative, Rule::Conditional] {
        let start = settings(rule, &[0.5], 0.3, Policy::Credit);
        let mut counts = node_counts(&tax, &b, &start);
        let mut now = stops(&start);
        let mut moved_rows = 0;
        for (depths, nodes) in [
            (vec![0.2], vec![]),
            (vec![0.8, 0.3], vec![("b", 0.1)]),
            (vec![0.0], vec![("a", 0.95)]),
            (vec![0.5], vec![]),
        ] {
            let s = overridden(&tax, settings(rule, &depths, 0.3, Policy::Credit), &nodes);
            let next = stops(&s);
            for r in 0..b.len() {
                if now[r] != next[r] {
                    moved_rows += 1;
                }
                counts.shift(&tax, &b, r, now[r], next[r]);
            }
            now = next;
            assert_eq!(
                counts,
                node_counts(&tax, &b, &s),
                "{rule:?} {depths:?} {nodes:?}"
            );
            assert_eq!(
                counts.report(&tax, &s, TOP_WRONG),
                node_report(&tax, &b, &s)
            );
        }
        assert!(moved_rows > 0);
        for (r, s) in now.iter().enumerate() {
            counts.remove(&tax, &b, r, *s);
        }
        assert_eq!(counts, NodeCounts::new(&tax));
    }
}
