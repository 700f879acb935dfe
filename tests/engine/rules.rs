//! Every decode rule: ties, single children, thresholds 0 and 1, background rows, objectness,
//! temperatures, per-node overrides, empty denominators, and located input errors.

use hedgerow_core::{
    decode_row, evaluate, paths, ErrorKind, Labels, Objectness, Outcome, Policy, Rule, Taxonomy,
    Temperatures,
};

use crate::harness::{batch, close, npy_f64, npy_header, row, settings, taxonomy, TREE};

#[test]
fn rows_in_any_order_build_the_same_tree() {
    let tax = taxonomy(TREE);
    assert_eq!(tax.len(), 7);
    assert_eq!(tax.max_depth(), 3);
    assert_eq!(tax.id(tax.parent(tax.lookup("f").expect("f"))), "b");
    assert_eq!(tax.children(tax.lookup("b").expect("b")), &[5, 6]);
    assert_eq!(tax.children(tax.root()), &[1, 3]);
}

#[test]
fn single_child_has_probability_one_and_ties_take_lowest_column() {
    let tax = taxonomy(TREE);
    // a and d tie at the root (0.5 each): a is column 1, d column 3 → a. With d ahead, d's
    // only child e gets probability exactly 1.
    let tie = row(&tax, &[]);
    let to_d = row(&tax, &[("d", 5.0), ("e", -40.0)]);
    let b = batch(&tax, &[tie, to_d], &["c", "e"], None, &[]);
    assert_eq!(
        tax.ancestor(b.paths().leaf(0), 1),
        tax.lookup("a").expect("a")
    );
    assert_eq!(b.paths().cond(0)[0], 0.5);
    assert_eq!(tax.id(b.paths().leaf(1)), "e");
    assert_eq!(b.paths().cond(1)[1], 1.0);
}

#[test]
fn threshold_zero_reaches_leaves_and_one_stays_at_root() {
    let tax = taxonomy(TREE);
    let r = row(&tax, &[("a", 2.0), ("c", 1.0), ("g", 0.3)]);
    let b = batch(&tax, &[r.clone(), r], &["c", "f"], None, &[]);
    for rule in [Rule::Cumulative, Rule::Conditional] {
        let m = evaluate(&tax, &b, &settings(rule, &[0.0], 0.5, Policy::Credit));
        assert_eq!(
            m.stop_share[2],
            Some(1.0),
            "{rule:?} at 0: every row at its leaf c"
        );
        let m = evaluate(&tax, &b, &settings(rule, &[1.0], 0.5, Policy::Credit));
        assert_eq!(
            m.stop_share[0],
            Some(1.0),
            "{rule:?} at 1: every row at the root"
        );
        // The root counts as correct for a labelled row, with no information gain.
        assert_eq!(m.correct, 2);
        assert!(close(m.specificity, 0.0));
        assert!(close(m.precision, 1.0));
    }
}

#[test]
fn single_child_passes_conditional_one_but_not_cumulative() {
    let tax = taxonomy(TREE);
    // p(d) = 1/(1+e^-3) ≈ 0.9526; e is d's only child: conditional 1, cumulative 0.9526.
    let r = row(&tax, &[("d", 3.0)]);
    let b = batch(&tax, &[r], &["e"], None, &[]);
    let m = evaluate(
        &tax,
        &b,
        &settings(Rule::Conditional, &[0.96], 0.5, Policy::Credit),
    );
    assert_eq!(
        m.stop_share[0],
        Some(1.0),
        "d's 0.9526 < 0.96 stops at the root"
    );
    let m = evaluate(
        &tax,
        &b,
        &settings(Rule::Conditional, &[0.9, 0.999], 0.5, Policy::Credit),
    );
    assert_eq!(m.stop_share[2], Some(1.0), "e's conditional 1 ≥ 0.999");
    let m = evaluate(
        &tax,
        &b,
        &settings(Rule::Cumulative, &[0.9, 0.999], 0.5, Policy::Credit),
    );
    assert_eq!(m.stop_share[1], Some(1.0), "e's cumulative 0.9526 < 0.999");
}

#[test]
fn shorter_threshold_list_repeats_its_last_value() {
    let tax = taxonomy(TREE);
    let r = row(&tax, &[("a", 3f64.ln()), ("f", 4f64.ln())]);
    let b = batch(&tax, &[r], &["f"], None, &[]);
    let short = evaluate(
        &tax,
        &b,
        &settings(Rule::Conditional, &[0.6, 0.4], 0.5, Policy::Credit),
    );
    let long = evaluate(
        &tax,
        &b,
        &settings(Rule::Conditional, &[0.6, 0.4, 0.4], 0.5, Policy::Credit),
    );
    assert_eq!(short, long);
    assert_eq!(short.stop_share[3], Some(1.0));
}

#[test]
fn background_rows_are_false_alarms_or_correct_rejections() {
    let tax = taxonomy(TREE);
    let r = row(&tax, &[("a", 2.0)]);
    let b = batch(
        &tax,
        &[r.clone(), r.clone(), r],
        &["", "", "c"],
        Some(&[0.2, 0.9, 0.8]),
        &[],
    );
    let s = settings(Rule::Cumulative, &[0.5], 0.5, Policy::Credit);
    let m = evaluate(&tax, &b, &s);
    // Row 0: P(root) 0.2 < 0.5 → abstains, a correct rejection, not a prediction.
    // Row 1: background that predicts → wrong (false alarm). Row 2: labelled, predicts.
    assert_eq!(
        (m.predictions, m.abstained, m.wrong, m.false_alarms),
        (2, 1, 1, 1)
    );
    assert_eq!((m.labelled_rows, m.background_rows), (1, 2));
    let th = s.thresholds.resolve(&tax);
    assert_eq!(decode_row(&tax, &b, &s, &th, 0).outcome, Outcome::Rejected);
    assert_eq!(decode_row(&tax, &b, &s, &th, 1).outcome, Outcome::Wrong);
    // Hierarchical scores ignore background rows entirely.
    let only_labelled = evaluate(
        &tax,
        &b,
        &settings(Rule::Cumulative, &[0.5], 0.95, Policy::Credit),
    );
    assert_eq!(only_labelled.predictions, 0);
    assert_eq!(only_labelled.precision, None);
    assert_eq!(only_labelled.specificity, None);
    assert!(only_labelled.stop_share.iter().all(Option::is_none));
    // The labelled row abstains: empty predicted set, so hP has no denominator, hR = 0.
    assert_eq!(only_labelled.hierarchical_precision, None);
    assert!(close(only_labelled.hierarchical_recall, 0.0));
}

#[test]
fn objectness_multiplies_into_cumulative_only() {
    let tax = taxonomy(TREE);
    let r = row(&tax, &[("a", 3f64.ln()), ("f", 4f64.ln())]);
    let b = batch(&tax, &[r], &["f"], Some(&[0.5]), &[]);
    // P(a) = 0.5·0.75 = 0.375 < 0.4 under cumulative; conditional ignores P(root).
    let m = evaluate(
        &tax,
        &b,
        &settings(Rule::Cumulative, &[0.4], 0.3, Policy::Credit),
    );
    assert_eq!(m.stop_share[0], Some(1.0));
    let m = evaluate(
        &tax,
        &b,
        &settings(Rule::Conditional, &[0.4], 0.3, Policy::Credit),
    );
    assert_eq!(m.stop_share[3], Some(1.0));
}

#[test]
fn temperature_softens_the_conditionals_of_its_depth() {
    let tax = taxonomy(TREE);
    let r = row(&tax, &[("a", 2.0), ("f", 2.0)]);
    // Depth 1 at T = 2: p(a) = 1/(1 + e^-1) = 0.731059; depth 3 at T = 1: p(f) = 1/(1 + e^-2) = 0.880797.
    let b = batch(&tax, &[r], &["f"], None, &[2.0, 1.0]);
    let c = b.paths().cond(0);
    assert!((c[0] as f64 - 0.731_058_6).abs() < 1e-6);
    assert!((c[2] as f64 - 0.880_797_1).abs() < 1e-6);
}

#[test]
fn node_override_replaces_its_depth_threshold() {
    let tax = taxonomy(TREE);
    let r = row(&tax, &[("a", 3f64.ln()), ("f", 4f64.ln())]);
    let b = batch(&tax, &[r], &["f"], None, &[]);
    let mut s = settings(Rule::Conditional, &[0.5], 0.5, Policy::Credit);
    s.thresholds.nodes = vec![(tax.lookup("f").expect("f"), 0.9)];
    let m = evaluate(&tax, &b, &s);
    assert_eq!(
        m.stop_share[2],
        Some(1.0),
        "f needs 0.9 now, has 0.8: stops at b"
    );
}

fn kinds(e: &hedgerow_core::Errors) -> Vec<ErrorKind> {
    e.iter().map(|e| e.kind.clone()).collect()
}

#[test]
fn bad_taxonomies_report_every_problem_with_its_line() {
    let e = Taxonomy::parse(b"id,parent\na,\nb,a\nb,a\nc,zz\n", "t.csv").expect_err("bad");
    let text = e.to_string();
    assert!(
        text.contains("t.csv, line 4, column id: duplicate id `b` (first defined at line 3)"),
        "{text}"
    );
    assert!(
        text.contains("t.csv, line 5, column parent: parent `zz` of `c` is not a node"),
        "{text}"
    );
    let e = Taxonomy::parse(b"id,parent\nx,z\ny,x\nz,y\nok,\n", "t.csv").expect_err("cycle");
    assert!(matches!(&kinds(&e)[..], [ErrorKind::Cycle { .. }]), "{e}");
    assert!(
        e.to_string().contains("`x` → `z` → `y` → `x`") || e.to_string().contains("→"),
        "{e}"
    );
    let e = Taxonomy::parse(b"id,parent\n", "t.csv").expect_err("empty");
    assert_eq!(kinds(&e), vec![ErrorKind::EmptyTaxonomy]);
    let e = Taxonomy::parse(b"name,up\na,\n", "t.csv").expect_err("columns");
    assert!(
        e.to_string()
            .contains("expected a header with a `id` column"),
        "{e}"
    );
}

#[test]
fn quoted_csv_ids_and_json_taxonomies() {
    let tax = taxonomy(
        "id,parent,name\n\"cans, steel\",,\"Steel \"\"tin\"\" cans\"\nlid,\"cans, steel\",Lid\n",
    );
    assert_eq!(tax.id(0), "cans, steel");
    assert_eq!(tax.name(0), "Steel \"tin\" cans");
    assert_eq!(tax.parent(1), 0);
    let json = Taxonomy::parse(
        br#"[{"id":"lid","parent":"cans, steel"},{"id":"cans, steel","parent":null,"name":"x"}]"#,
        "t.json",
    )
    .expect("json");
    assert_eq!(json.depth(json.lookup("lid").expect("lid")), 2);
    let e = Taxonomy::parse(br#"[{"id":"a"},{"id":["x"]}]"#, "t.json").expect_err("bad");
    assert!(
        e.to_string()
            .contains("t.json, entry 1: `id`: expected a string, found `an array`"),
        "{e}"
    );
}

#[test]
fn logits_errors_are_located() {
    let tax = taxonomy(TREE);
    let t = Temperatures::default();
    let mut rows = vec![vec![0.0; 7]; 3];
    rows[2][5] = f64::NAN;
    rows[1][0] = f64::INFINITY;
    let e = paths::ingest_bytes("l.npy", &tax, &t, &npy_f64(&rows)).expect_err("nan");
    let text = e.to_string();
    assert!(
        text.contains("l.npy, row 1, column 0 (`b`): expected a finite number, found inf"),
        "{text}"
    );
    assert!(
        text.contains("l.npy, row 2, column 5 (`f`): expected a finite number, found NaN"),
        "{text}"
    );
    let e = paths::ingest_bytes("l.npy", &tax, &t, &npy_f64(&[vec![0.0; 6]])).expect_err("cols");
    assert_eq!(
        kinds(&e),
        vec![ErrorKind::ColumnCount {
            found: 6,
            expected: 7
        }]
    );
    let full = npy_f64(&rows);
    let e = paths::ingest_bytes("l.npy", &tax, &t, &full[..full.len() - 3]).expect_err("short");
    assert!(
        matches!(
            kinds(&e)[..],
            [ErrorKind::Truncated {
                expected: 168,
                found: 165
            }]
        ),
        "{e}"
    );
    let mut ints = npy_header("<i4", "(1, 7)");
    ints.extend([0u8; 28]);
    let e = paths::ingest_bytes("l.npy", &tax, &t, &ints).expect_err("dtype");
    assert!(
        e.to_string()
            .contains("dtype `int32`: expected float16, float32 or float64 logits"),
        "{e}"
    );
}

#[test]
fn every_logits_encoding_gives_the_same_paths() {
    let tax = taxonomy(TREE);
    let t = Temperatures::default();
    let rows: Vec<Vec<f64>> = (0..5)
        .map(|i| {
            (0..7)
                .map(|c| ((i * 7 + c) as f64 * 0.37).sin() * 3.0)
                .collect()
        })
        .collect();
    let reference = paths::ingest_bytes("l.npy", &tax, &t, &npy_f64(&rows)).expect("f8");
    // float32 big-endian, version 2.0 header, fed in 3-byte chunks.
    let mut be = npy_header(">f4", "(5, 7)");
    for r in &rows {
        for v in r {
            be.extend((*v as f32).to_be_bytes());
        }
    }
    let mut reader = hedgerow_core::LogitsReader::new("l.npy", &tax, &t);
    for chunk in be.chunks(3) {
        reader.feed(&tax, chunk).expect("feed");
    }
    let got = reader.finish(&tax).expect("be f4");
    assert_eq!(got.paths.leaves(), reference.paths.leaves());
    // Fortran order holds the same values column by column.
    let mut fortran = hedgerow_core::npy::header_bytes("<f8", &[5, 7], true);
    for c in 0..7 {
        for r in &rows {
            fortran.extend(r[c].to_le_bytes());
        }
    }
    let got = paths::ingest_bytes("l.npy", &tax, &t, &fortran).expect("fortran");
    assert_eq!(got.paths.leaves(), reference.paths.leaves());
    for r in 0..5 {
        assert_eq!(got.paths.cond(r), reference.paths.cond(r));
    }
}

#[test]
fn label_and_objectness_errors_are_located() {
    let tax = taxonomy(TREE);
    let e = Labels::parse(b"row,label\n0,f\n1,nope\n2,\n", "y.csv", &tax).expect_err("unknown");
    assert_eq!(
        e.to_string(),
        "y.csv, line 3, column label: label `nope` is not an id of the taxonomy"
    );
    let mut ints = npy_header("<i8", "(3,)");
    for v in [0i64, -1, 7] {
        ints.extend(v.to_le_bytes());
    }
    let e = Labels::parse(&ints, "y.npy", &tax).expect_err("index");
    assert_eq!(
        e.to_string(),
        "y.npy, row 2: label index 7: expected -1 (background) or a column index 0..7"
    );
    let l = Labels::parse(
        &ints[..ints.len() - 8]
            .iter()
            .copied()
            .chain(1i64.to_le_bytes())
            .collect::<Vec<_>>(),
        "y.npy",
        &tax,
    )
    .expect("ok");
    assert_eq!(l.nodes, vec![0, u32::MAX, 1]);
    let mut o = npy_header("<f4", "(2,)");
    o.extend(0.5f32.to_le_bytes());
    o.extend(1.5f32.to_le_bytes());
    let e = Objectness::parse(&o, "o.npy").expect_err("range");
    assert_eq!(
        e.to_string(),
        "o.npy, row 1: expected a probability in [0, 1], found 1.5"
    );
}

#[test]
fn one_column_label_csv_keeps_blank_lines_as_background() {
    let tax = taxonomy(TREE);
    // pandas `to_csv(index=False)` of a single column writes a missing label as an empty line.
    let l = Labels::parse(b"label\nf\n\n\nc\n\n", "y.csv", &tax).expect("ok");
    let (f, c, bg) = (
        tax.lookup("f").expect("f"),
        tax.lookup("c").expect("c"),
        u32::MAX,
    );
    assert_eq!(l.nodes, vec![f, bg, bg, c, bg]);
    let l = Labels::parse(b"label\r\nf\r\n\r\nc\r\n", "y.csv", &tax).expect("crlf");
    assert_eq!(l.nodes, vec![f, bg, c]);
    let l = Labels::parse(b"row,label\n0,f\n1,\n", "y.csv", &tax).expect("two columns");
    assert_eq!(l.nodes, vec![f, bg]);
}

/// The branch-free kernel (no overrides) and the general loop (with overrides) must agree
/// exactly: a no-op override (equal to its depth's threshold) forces the general loop.
#[test]
fn fast_kernel_equals_general_loop() {
    let tax = taxonomy(TREE);
    let ids = ["f", "g", "c", "e", "b", "a", "", "d"];
    let rows: Vec<Vec<f64>> = (0..200)
        .map(|i| {
            (0..7)
                .map(|c| (((i * 31 + c * 17) % 23) as f64 * 0.47).sin() * 3.0)
                .collect()
        })
        .collect();
    let labels: Vec<&str> = (0..200).map(|i| ids[(i * 7) % ids.len()]).collect();
    let obj: Vec<f32> = (0..200).map(|i| ((i * 53) % 101) as f32 / 100.0).collect();
    let b = batch(&tax, &rows, &labels, Some(&obj), &[]);
    let f = tax.lookup("f").expect("f");
    for rule in [Rule::Cumulative, Rule::Conditional] {
        for (i, depths) in [
            vec![0.0],
            vec![1.0],
            vec![0.5],
            vec![0.9, 0.6, 0.3],
            vec![0.2, 0.75],
        ]
        .into_iter()
        .enumerate()
        {
            let policy = [Policy::Credit, Policy::Penalize, Policy::Exclude][i % 3];
            let fast = settings(rule, &depths, 0.1 * i as f64, policy);
            let mut slow = fast.clone();
            slow.thresholds.nodes = vec![(f, fast.thresholds.at_depth(3))];
            assert_eq!(
                evaluate(&tax, &b, &fast),
                evaluate(&tax, &b, &slow),
                "{rule:?} {depths:?}"
            );
        }
    }
}
