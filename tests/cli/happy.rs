//! The commands agree with each other: JSON keys, profile round trip, decode and curve shapes.

use crate::harness::{hedgerow, logits, objectness, Scratch, INPUT, LABELS, TAXONOMY};

fn batch(s: &Scratch) {
    s.write("t.csv", TAXONOMY.as_bytes());
    s.write("l.npy", &logits(4));
    s.write("y.csv", LABELS.as_bytes());
    s.write("o.npy", &objectness(&[0.9, 0.4, 0.2, 0.8]));
}

fn json(run: &crate::harness::Run) -> serde_json::Value {
    assert_eq!(run.code, 0, "{}", run.stderr);
    serde_json::from_str(&run.stdout).unwrap_or_else(|e| panic!("not JSON ({e}): {}", run.stdout))
}

#[test]
fn evaluate_json_has_the_documented_keys() {
    let s = Scratch::new("keys");
    batch(&s);
    let mut args = vec!["evaluate"];
    args.extend(INPUT);
    args.push("--json");
    let v = json(&hedgerow(&s.dir, &args));
    for key in [
        "rows",
        "predictions",
        "abstained",
        "correct",
        "unverifiable",
        "wrong",
        "precision",
        "specificity",
        "reward",
        "stop_share",
        "hierarchical_precision",
        "hierarchical_recall",
        "hierarchical_f1",
        "mistake_severity",
    ] {
        assert!(v.get(key).is_some(), "missing {key}");
    }
    assert_eq!(v["rows"], 4);
    assert_eq!(
        v["stop_share"].as_array().map(Vec::len),
        Some(3),
        "depths 0..=2"
    );
    // Object threshold 0.5 by default: rows 1 (0.4) and 2 (0.2) abstain.
    assert_eq!(v["abstained"], 2);
}

#[test]
fn no_predictions_gives_null_ratios_and_n_a() {
    let s = Scratch::new("null");
    batch(&s);
    let mut args = vec!["evaluate"];
    args.extend(INPUT);
    args.extend(["--object-threshold", "1", "--json"]);
    let v = json(&hedgerow(&s.dir, &args));
    assert_eq!(v["predictions"], 0);
    assert!(v["precision"].is_null() && v["specificity"].is_null() && v["reward"].is_null());
    args.pop();
    let run = hedgerow(&s.dir, &args);
    assert!(
        run.stdout.contains("precision         n/a"),
        "{}",
        run.stdout
    );
}

#[test]
fn saved_profile_reproduces_the_metrics() {
    let s = Scratch::new("profile");
    batch(&s);
    let settings = [
        "--rule",
        "conditional",
        "--thresholds",
        "0.61,0.3",
        "--object-threshold",
        "0.35",
        "--unverifiable",
        "exclude",
        "--temperatures",
        "1.5",
    ];
    let mut args = vec!["profile"];
    args.extend(INPUT);
    args.extend(settings);
    args.extend(["--out", "p.json"]);
    let run = hedgerow(&s.dir, &args);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let mut direct = vec!["evaluate"];
    direct.extend(INPUT);
    direct.extend(settings);
    direct.push("--json");
    let mut via = vec!["evaluate"];
    via.extend(INPUT);
    via.extend(["--profile", "p.json", "--json"]);
    let (a, b) = (
        json(&hedgerow(&s.dir, &direct)),
        json(&hedgerow(&s.dir, &via)),
    );
    assert_eq!(a, b);
    let saved: serde_json::Value =
        serde_json::from_slice(&std::fs::read(s.dir.join("p.json")).expect("profile"))
            .expect("json");
    assert_eq!(saved["scored"]["metrics"], a);
    assert_eq!(saved["thresholds"], serde_json::json!([0.61, 0.3]));
}

#[test]
fn decode_and_curve_write_csv() {
    let s = Scratch::new("csv");
    batch(&s);
    let mut args = vec!["decode"];
    args.extend(INPUT);
    args.extend(["--out", "d.csv"]);
    assert_eq!(hedgerow(&s.dir, &args).code, 0);
    let text = std::fs::read_to_string(s.dir.join("d.csv")).expect("decode out");
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], "row,predicted,depth,probability,abstained,node_1,conditional_1,cumulative_1,node_2,conditional_2,cumulative_2,label,outcome");
    assert_eq!(lines.len(), 5);
    assert!(lines[2].starts_with("1,,,0.4"), "{}", lines[2]);
    assert!(lines[2].ends_with(",z,abstained"), "{}", lines[2]);
    assert!(lines[3].ends_with(",,rejected"), "{}", lines[3]);
    let mut args = vec!["curve"];
    args.extend(INPUT);
    let run = hedgerow(&s.dir, &args);
    assert_eq!(run.code, 0);
    assert!(
        run.stdout.starts_with(
            "threshold,predictions,correct,unverifiable,wrong,precision,specificity,reward\n1,"
        ),
        "{}",
        run.stdout
    );
}

/// np.savez / np.savez_compressed bundles (tests/fixtures/numpy, written by numpy) give the same
/// metrics as the separate .npy files, with labels and objectness taken from the bundle.
#[test]
fn npz_bundles_evaluate_like_separate_files() {
    let s = Scratch::new("npz");
    s.numpy_fixtures(&[
        "bundle.npz",
        "bundle-compressed.npz",
        "logits-f64.npy",
        "labels-int64.npy",
        "labels-str.npy",
        "objectness.npy",
    ]);
    let run = |args: &[&str]| json(&hedgerow(&s.dir, args));
    let base = [
        "evaluate",
        "--taxonomy",
        "t.csv",
        "--rule",
        "conditional",
        "--thresholds",
        "0.6,0.4",
        "--json",
    ];
    let mut separate = base.to_vec();
    separate.extend([
        "--logits",
        "logits-f64.npy",
        "--labels",
        "labels-int64.npy",
        "--objectness",
        "objectness.npy",
    ]);
    let want = run(&separate);
    assert_eq!(want["rows"], 12);
    let mut strings = base.to_vec();
    strings.extend([
        "--logits",
        "logits-f64.npy",
        "--labels",
        "labels-str.npy",
        "--objectness",
        "objectness.npy",
    ]);
    assert_eq!(run(&strings), want, "string labels");
    for bundle in ["bundle.npz", "bundle-compressed.npz"] {
        let mut args = base.to_vec();
        args.extend(["--logits", bundle]);
        assert_eq!(run(&args), want, "{bundle}");
    }
    // Without labels anywhere: a clear message, exit 2.
    let out = hedgerow(
        &s.dir,
        &[
            "evaluate",
            "--taxonomy",
            "t.csv",
            "--logits",
            "logits-f64.npy",
        ],
    );
    assert_eq!(out.code, 2);
    assert!(
        out.stderr.contains("--labels: expected a labels file"),
        "{}",
        out.stderr
    );
}

/// Objectness exactly 0 with every threshold 0 on a tree whose leaves lie at different depths:
/// P(root) times the padding past a shallow leaf is −0.0, which passes 0; `evaluate` and
/// `profile` panicked in the evaluation kernel. Every row now stops at its leaf.
#[test]
fn zero_objectness_at_threshold_zero_stops_at_the_leaf() {
    let s = Scratch::new("zero-objectness");
    // x ─ y ─ w, x ─ z: leaves at depths 2 (z) and 3 (w).
    s.write("t.csv", b"id,parent\nx,\ny,x\nz,x\nw,y\n");
    let values = [0.0, 0.0, 1.0, 0.0, 0.0, 1.0, 0.0, 0.0];
    s.write("l.npy", &crate::harness::npy_f32("(2, 4)", &values));
    s.write("y.csv", b"label\nz\nw\n");
    s.write("o.npy", &objectness(&[0.0, 0.0]));
    let flags = ["--thresholds", "0", "--object-threshold", "0"];
    let mut args = vec!["profile"];
    args.extend(INPUT);
    args.extend(flags);
    let run = hedgerow(&s.dir, &args);
    assert_eq!(run.code, 0, "profile: {}", run.stderr);
    let mut args = vec!["evaluate"];
    args.extend(INPUT);
    args.extend(flags);
    args.push("--json");
    let v = json(&hedgerow(&s.dir, &args));
    assert_eq!(v["correct"], 2, "{v}");
    let shares: Vec<f64> = v["stop_share"]
        .as_array()
        .expect("stop_share")
        .iter()
        .map(|x| x.as_f64().unwrap_or(-1.0))
        .collect();
    assert_eq!(shares, vec![0.0, 0.0, 0.5, 0.5]);
}

#[test]
fn help_says_specificity_is_information_gain() {
    // Most readers take the bare word for the true-negative rate.
    let s = Scratch::new("help");
    for args in [
        &["--help"][..],
        &["evaluate", "--help"],
        &["curve", "--help"],
    ] {
        let run = hedgerow(&s.dir, args);
        assert_eq!(run.code, 0, "{args:?}: {}", run.stderr);
        assert!(
            run.stdout.contains("specificity (information gain)"),
            "{args:?}: {}",
            run.stdout
        );
    }
    let run = hedgerow(&s.dir, &["evaluate", "--help"]);
    assert!(
        run.stdout.contains("not the true-negative rate"),
        "{}",
        run.stdout
    );
}
