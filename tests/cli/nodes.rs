//! Per-node thresholds on the command line (every command takes `--node-threshold`, profiles
//! keep them, flags override the profile's) and `hedgerow nodes` in its three formats.

use crate::harness::{hedgerow, logits, objectness, Run, Scratch, INPUT, LABELS, TAXONOMY};

fn batch(s: &Scratch) {
    s.write("t.csv", TAXONOMY.as_bytes());
    s.write("l.npy", &logits(6));
    s.write("y.csv", format!("{LABELS}y\nz\n").as_bytes());
    s.write("o.npy", &objectness(&[0.9, 0.4, 0.7, 0.8, 0.95, 0.6]));
}

fn json(run: &Run) -> serde_json::Value {
    assert_eq!(run.code, 0, "{}", run.stderr);
    serde_json::from_str(&run.stdout).unwrap_or_else(|e| panic!("not JSON ({e}): {}", run.stdout))
}

fn run(s: &Scratch, command: &str, extra: &[&str]) -> Run {
    let mut args = vec![command];
    args.extend(INPUT);
    args.extend(extra);
    hedgerow(&s.dir, &args)
}

#[test]
fn node_threshold_changes_the_decode_and_the_profile_keeps_it() {
    let s = Scratch::new("node-threshold");
    batch(&s);
    let base = ["--thresholds", "0.3", "--object-threshold", "0.3", "--json"];
    let plain = json(&run(&s, "evaluate", &base));
    let mut with = base.to_vec();
    with.extend(["--node-threshold", "x=0.99"]);
    let held = json(&run(&s, "evaluate", &with));
    assert_ne!(
        plain["stop_share"], held["stop_share"],
        "the override is used"
    );
    // Nothing enters x at 0.99 (its P is at most 0.95), so every prediction stops at the root.
    assert_eq!(held["stop_share"][0], 1.0);

    let profile = ["--thresholds", "0.3", "--object-threshold", "0.3"];
    let mut args = profile.to_vec();
    args.extend(["--node-threshold", "x=0.99", "--node-threshold", "y=0.2"]);
    args.extend(["--out", "p.json"]);
    assert_eq!(run(&s, "profile", &args).code, 0);
    let saved: serde_json::Value =
        serde_json::from_slice(&std::fs::read(s.dir.join("p.json")).expect("profile"))
            .expect("json");
    assert_eq!(
        saved["node_thresholds"],
        serde_json::json!({"x": 0.99, "y": 0.2})
    );
    let via = json(&run(&s, "evaluate", &["--profile", "p.json", "--json"]));
    assert_eq!(via, saved["scored"]["metrics"]);
    // A flag replaces the profile's value for its node and keeps the others.
    let flagged = json(&run(
        &s,
        "evaluate",
        &["--profile", "p.json", "--node-threshold", "x=0", "--json"],
    ));
    let mut args = base.to_vec();
    args.extend(["--node-threshold", "y=0.2", "--node-threshold", "x=0"]);
    assert_eq!(flagged, json(&run(&s, "evaluate", &args)));
    assert_ne!(flagged, via);
    let mut args = vec!["--profile", "p.json", "--node-threshold", "x=0.5"];
    args.extend(["--out", "q.json"]);
    assert_eq!(run(&s, "profile", &args).code, 0);
    let saved: serde_json::Value =
        serde_json::from_slice(&std::fs::read(s.dir.join("q.json")).expect("profile"))
            .expect("json");
    assert_eq!(
        saved["node_thresholds"],
        serde_json::json!({"x": 0.5, "y": 0.2})
    );
}

/// Every command sharing the settings flags refuses a bad `--node-threshold` the same way.
#[test]
fn every_command_refuses_an_unknown_node() {
    let s = Scratch::new("node-threshold-bad");
    batch(&s);
    for command in ["evaluate", "decode", "curve", "profile", "nodes", "bench"] {
        let out = run(&s, command, &["--node-threshold", "pet-tray=0.7"]);
        assert_eq!(out.code, 2, "{command}: {}", out.stderr);
        assert!(
            out.stderr
                .contains("--node-threshold pet-tray=0.7: pet-tray is not an id of the taxonomy"),
            "{command}: {}",
            out.stderr
        );
        assert!(out.stdout.is_empty(), "{command}: {}", out.stdout);
    }
}

/// The decode CSV follows the override too.
#[test]
fn decode_follows_node_thresholds() {
    let s = Scratch::new("node-decode");
    batch(&s);
    let args = [
        "--thresholds",
        "0",
        "--object-threshold",
        "0",
        "--node-threshold",
        "x=1",
    ];
    let out = run(&s, "decode", &args);
    assert_eq!(out.code, 0, "{}", out.stderr);
    let mut lines = out.stdout.lines();
    let header: Vec<&str> = lines.next().unwrap_or("").split(',').collect();
    let col = |name: &str| {
        header
            .iter()
            .position(|h| *h == name)
            .unwrap_or_else(|| panic!("no {name} column: {header:?}"))
    };
    let (predicted, depth) = (col("predicted"), col("depth"));
    let mut rows = 0;
    for line in lines {
        let cells: Vec<&str> = line.split(',').collect();
        assert_eq!((cells[predicted], cells[depth]), ("", "0"), "{line}");
        rows += 1;
    }
    assert_eq!(rows, 6);
}

#[test]
fn nodes_json_sums_to_evaluate() {
    let s = Scratch::new("nodes-json");
    batch(&s);
    for extra in [
        vec!["--thresholds", "0.4", "--object-threshold", "0.3"],
        vec!["--rule", "conditional", "--thresholds", "0.6,0.3"],
        vec![
            "--thresholds",
            "0.2",
            "--node-threshold",
            "y=0.9",
            "--unverifiable",
            "exclude",
        ],
    ] {
        let mut e = extra.clone();
        e.push("--json");
        let m = json(&run(&s, "evaluate", &e));
        let v = json(&run(&s, "nodes", &e));
        let nodes = v["nodes"].as_array().expect("nodes");
        let ids: Vec<&str> = nodes
            .iter()
            .map(|n| n["id"].as_str().unwrap_or("?"))
            .collect();
        assert_eq!(ids, ["x", "y", "z"], "file order");
        assert_eq!(v["root"]["id"], "");
        assert_eq!(v["root"]["depth"], 0);
        let all: Vec<&serde_json::Value> = nodes.iter().chain([&v["root"]]).collect();
        for key in ["correct", "unverifiable", "wrong"] {
            let sum: u64 = all.iter().map(|n| n[key].as_u64().unwrap_or(0)).sum();
            assert_eq!(serde_json::json!(sum), m[key], "{key} {extra:?}");
        }
        let stops: u64 = all.iter().map(|n| n["stops"].as_u64().unwrap_or(0)).sum();
        assert_eq!(serde_json::json!(stops), m["predictions"]);
        assert_eq!(v["predictions"], m["predictions"]);
        assert_eq!(v["root"]["labelled"], m["labelled_rows"]);
        // x is the only top-level node: every labelled row is under it.
        assert_eq!(nodes[0]["labelled"], m["labelled_rows"]);
        for n in &all {
            for key in [
                "id",
                "name",
                "threshold",
                "overridden",
                "stopped_above",
                "precision",
            ] {
                assert!(n.get(key).is_some(), "{key} missing in {n}");
            }
            assert!(n["top_wrong"].as_array().is_some_and(|a| a.len() <= 3));
            if let (Some(lo), Some(p), Some(hi)) = (
                n["precision_low"].as_f64(),
                n["precision"].as_f64(),
                n["precision_high"].as_f64(),
            ) {
                assert!(lo <= p && p <= hi, "{n}");
            }
        }
    }
}

#[test]
fn nodes_writes_csv_and_a_table() {
    let s = Scratch::new("nodes-csv");
    batch(&s);
    let args = ["--thresholds", "0.4", "--node-threshold", "z=0.1"];
    let mut to_file = args.to_vec();
    to_file.extend(["--out", "n.csv"]);
    let out = run(&s, "nodes", &to_file);
    assert_eq!(out.code, 0, "{}", out.stderr);
    assert!(out.stdout.is_empty());
    let text = std::fs::read_to_string(s.dir.join("n.csv")).expect("nodes csv");
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(
        lines[0],
        "id,name,depth,threshold,overridden,stops,correct,unverifiable,wrong,labelled,\
         stopped_above,precision,precision_low,precision_high,wrong_1,wrong_1_count,wrong_2,\
         wrong_2_count,wrong_3,wrong_3_count"
    );
    assert_eq!(lines.len(), 5, "header, root, x, y, z");
    assert!(lines[1].starts_with(",,0,"), "{}", lines[1]);
    assert!(lines[4].starts_with("z,,2,0.1,true,"), "{}", lines[4]);
    let table = run(&s, "nodes", &args);
    assert_eq!(table.code, 0, "{}", table.stderr);
    assert!(table.stdout.contains("(root)"), "{}", table.stdout);
    assert!(
        table.stdout.contains("\n  z "),
        "z indented: {}",
        table.stdout
    );
    assert!(
        table.stdout.contains("0.1*"),
        "override marked: {}",
        table.stdout
    );
    let mut as_json = args.to_vec();
    as_json.extend(["--json", "--out", "n.json"]);
    assert_eq!(run(&s, "nodes", &as_json).code, 0);
    let v: serde_json::Value =
        serde_json::from_slice(&std::fs::read(s.dir.join("n.json")).expect("json")).expect("json");
    assert_eq!(v["nodes"][2]["overridden"], true);
}

/// On the demo data, the curve with overrides: each sampled row equals `evaluate` with every
/// depth at the row's threshold plus the same overrides; without them the curve differs.
#[test]
fn curve_with_node_thresholds_matches_evaluate_on_the_demo() {
    let root = concat!(env!("CARGO_MANIFEST_DIR"), "/../..");
    let demo = |f: &str| format!("{root}/demo-data/{f}");
    let files = [
        "--taxonomy".to_string(),
        demo("taxonomy.csv"),
        "--logits".into(),
        demo("logits.npy"),
        "--labels".into(),
        demo("labels.csv"),
        "--objectness".into(),
        demo("objectness.npy"),
    ];
    let overrides = [
        "--node-threshold",
        "pet=0.15",
        "--node-threshold",
        "glass=0.8",
        "--node-threshold",
        "paper=0.4",
        "--object-threshold",
        "0.4",
        "--unverifiable",
        "exclude",
    ];
    let go = |command: &str, extra: &[&str]| {
        let mut args: Vec<&str> = vec![command];
        args.extend(files.iter().map(String::as_str));
        args.extend(extra);
        hedgerow(std::path::Path::new(root), &args)
    };
    let curve = go("curve", &overrides);
    assert_eq!(curve.code, 0, "{}", curve.stderr);
    let plain = go("curve", &overrides[8..]);
    assert_ne!(curve.stdout, plain.stdout, "overrides are not ignored");
    let rows: Vec<Vec<String>> = curve
        .stdout
        .lines()
        .skip(1)
        .map(|l| l.split(',').map(String::from).collect())
        .collect();
    assert!(rows.len() > 50, "{} points", rows.len());
    let step = rows.len() / 6;
    for row in rows.iter().step_by(step).chain(rows.last()) {
        let mut args = overrides.to_vec();
        args.extend(["--thresholds", &row[0], "--json"]);
        let m = json(&go("evaluate", &args));
        let at = |k: &str| m[k].to_string();
        assert_eq!(
            [
                at("predictions"),
                at("correct"),
                at("unverifiable"),
                at("wrong")
            ],
            [&row[1], &row[2], &row[3], &row[4]].map(|s| s.clone()),
            "t={}",
            row[0]
        );
        let close = |k: &str, cell: &str| {
            let (a, b) = (m[k].as_f64().unwrap_or(-1.0), cell.parse().unwrap_or(-1.0));
            (a - b).abs() < 1e-12
        };
        assert!(
            close("precision", &row[5]) && close("specificity", &row[6]),
            "t={}",
            row[0]
        );
    }
}
