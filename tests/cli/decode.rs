//! `hedgerow decode` in production: without labels, with them (outcomes as the batch decode
//! gives them), JSON Lines equal to CSV, the objectness guard of profiles, and a closed pipe.

use std::io::{BufRead, BufReader};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

use hedgerow_core::{decode_row, paths, Batch, Labels, Objectness, Profile, Taxonomy};

use crate::harness::{hedgerow, Run, Scratch};

fn demo() -> PathBuf {
    PathBuf::from(concat!(env!("CARGO_MANIFEST_DIR"), "/../../demo-data"))
}

fn demo_file(name: &str) -> String {
    demo().join(name).display().to_string()
}

fn ok(run: Run) -> Run {
    assert_eq!(run.code, 0, "{}", run.stderr);
    run
}

/// A profile scored on the demo batch with objectness, written to `p.json` in `s`.
fn demo_profile(s: &Scratch) -> String {
    let (t, l, y, o) = (
        demo_file("taxonomy.csv"),
        demo_file("logits.npy"),
        demo_file("labels.csv"),
        demo_file("objectness.npy"),
    );
    ok(hedgerow(
        &s.dir,
        &[
            "profile",
            "--taxonomy",
            &t,
            "--logits",
            &l,
            "--labels",
            &y,
            "--objectness",
            &o,
            "--thresholds",
            "0.9,0.8,0.6,0.5",
            "--object-threshold",
            "0.55",
            "--out",
            "p.json",
        ],
    ));
    s.dir.join("p.json").display().to_string()
}

fn csv_rows(text: &str) -> (Vec<String>, Vec<Vec<String>>) {
    let mut r = csv::Reader::from_reader(text.as_bytes());
    let header = r
        .headers()
        .expect("header")
        .iter()
        .map(String::from)
        .collect();
    let rows = r
        .records()
        .map(|rec| rec.expect("record").iter().map(String::from).collect())
        .collect();
    (header, rows)
}

fn decode(dir: &Path, extra: &[&str]) -> Run {
    let (t, l) = (demo_file("taxonomy.csv"), demo_file("logits.npy"));
    let mut args = vec!["decode", "--taxonomy", &t, "--logits", &l];
    args.extend(extra);
    ok(hedgerow(dir, &args))
}

#[test]
fn decode_runs_without_labels_and_with_them_adds_label_and_outcome_only() {
    let s = Scratch::new("nolabels");
    let profile = demo_profile(&s);
    let (o, y) = (demo_file("objectness.npy"), demo_file("labels.csv"));
    let bare = decode(&s.dir, &["--objectness", &o, "--profile", &profile]);
    let labelled = decode(
        &s.dir,
        &["--objectness", &o, "--labels", &y, "--profile", &profile],
    );
    let (h, rows) = csv_rows(&bare.stdout);
    let mut want = vec!["row", "predicted", "depth", "probability", "abstained"]
        .into_iter()
        .map(String::from)
        .collect::<Vec<_>>();
    for d in 1..=5 {
        want.extend([
            format!("node_{d}"),
            format!("conditional_{d}"),
            format!("cumulative_{d}"),
        ]);
    }
    assert_eq!(h, want);
    assert_eq!(rows.len(), 20_000);
    let (hl, lrows) = csv_rows(&labelled.stdout);
    want.extend(["label".into(), "outcome".into()]);
    assert_eq!(hl, want);
    for (a, b) in rows.iter().zip(&lrows) {
        assert_eq!(a[..], b[..a.len()]);
    }
    // Abstentions: depth and predicted empty, marked `true`; predictions have a depth.
    let abstained: Vec<_> = rows.iter().filter(|r| r[4] == "true").collect();
    assert!(!abstained.is_empty());
    assert!(abstained.iter().all(|r| r[1].is_empty() && r[2].is_empty()));
    assert!(rows
        .iter()
        .filter(|r| r[4] == "false")
        .all(|r| r[2].parse::<usize>().is_ok()));
    // The root prediction: predicted empty, depth 0.
    assert!(rows.iter().any(|r| r[1].is_empty() && r[2] == "0"));
}

/// The streamed outcomes equal the batch decode (`decode_row` over a whole `Batch`, what
/// `hedgerow decode` printed before it streamed), and their counts equal `evaluate`'s.
#[test]
fn outcomes_equal_the_batch_decode_and_the_metrics() {
    let s = Scratch::new("outcomes");
    let profile = demo_profile(&s);
    let (o, y) = (demo_file("objectness.npy"), demo_file("labels.csv"));
    let run = decode(
        &s.dir,
        &["--objectness", &o, "--labels", &y, "--profile", &profile],
    );
    let (_, rows) = csv_rows(&run.stdout);

    let read = |n: &str| std::fs::read(demo().join(n)).expect("demo file");
    let tax = Taxonomy::parse(&read("taxonomy.csv"), "taxonomy.csv").expect("taxonomy");
    let p = Profile::from_json(&std::fs::read(&profile).expect("profile"), "p.json", &tax)
        .expect("profile");
    assert_eq!(p.objectness, Some(true));
    let settings = p.settings(&tax).expect("settings");
    let ingested = paths::ingest_bytes("logits.npy", &tax, &p.temperatures(), &read("logits.npy"))
        .expect("logits");
    let batch = Batch::new(
        &tax,
        "logits.npy",
        ingested,
        p.temperatures(),
        Labels::parse(&read("labels.csv"), "labels.csv", &tax).expect("labels"),
        Some(Objectness::parse(&read("objectness.npy"), "objectness.npy").expect("objectness")),
    )
    .expect("batch");
    let th = settings.thresholds.resolve(&tax);
    assert_eq!(rows.len(), batch.len());
    for (r, row) in rows.iter().enumerate() {
        let want = decode_row(&tax, &batch, &settings, &th, r);
        let outcome = &row[row.len() - 1];
        assert_eq!(outcome, want.outcome.as_str(), "row {r}");
        assert_eq!(row[1], want.predicted.map_or("", |v| tax.id(v)), "row {r}");
        assert_eq!(
            row[3].parse::<f64>().ok(),
            Some(want.probability),
            "row {r}"
        );
    }

    let (t, l) = (demo_file("taxonomy.csv"), demo_file("logits.npy"));
    let metrics: serde_json::Value = serde_json::from_str(
        &ok(hedgerow(
            &s.dir,
            &[
                "evaluate",
                "--taxonomy",
                &t,
                "--logits",
                &l,
                "--labels",
                &y,
                "--objectness",
                &o,
                "--profile",
                &profile,
                "--json",
            ],
        ))
        .stdout,
    )
    .expect("json");
    let count = |k: &str| rows.iter().filter(|r| r[r.len() - 1] == k).count() as u64;
    for key in ["correct", "unverifiable", "wrong"] {
        assert_eq!(metrics[key].as_u64(), Some(count(key)), "{key}");
    }
    assert_eq!(
        metrics["abstained"].as_u64(),
        Some(count("abstained") + count("rejected"))
    );
}

#[test]
fn jsonl_holds_the_same_fields_as_csv() {
    let s = Scratch::new("jsonl");
    let profile = demo_profile(&s);
    let (o, y) = (demo_file("objectness.npy"), demo_file("labels.csv"));
    for labels in [false, true] {
        let mut args = vec!["--objectness", &o, "--profile", &profile];
        if labels {
            args.extend(["--labels", &y]);
        }
        let (header, rows) = csv_rows(&decode(&s.dir, &args).stdout);
        args.extend(["--format", "jsonl"]);
        let text = decode(&s.dir, &args).stdout;
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines.len(), rows.len());
        for (line, row) in lines.iter().zip(&rows) {
            let v: serde_json::Value = serde_json::from_str(line).expect("a JSON object per line");
            let num = |s: &str| s.parse::<f64>().ok();
            assert_eq!(v["row"].to_string(), row[0]);
            assert_eq!(v["predicted"].as_str().unwrap_or(""), row[1]);
            assert_eq!(v["predicted"].is_null(), row[4] == "true");
            assert_eq!(
                v["depth"]
                    .as_u64()
                    .map(|d| d.to_string())
                    .unwrap_or_default(),
                row[2]
            );
            assert_eq!(v["probability"].as_f64(), num(&row[3]));
            assert_eq!(v["abstained"].to_string(), row[4]);
            let path = v["path"].as_array().expect("path array");
            for d in 0..5 {
                let cells = &row[5 + 3 * d..8 + 3 * d];
                match path.get(d) {
                    Some(step) => {
                        assert_eq!(step["id"].as_str(), Some(cells[0].as_str()));
                        assert_eq!(step["conditional"].as_f64(), num(&cells[1]));
                        assert_eq!(step["cumulative"].as_f64(), num(&cells[2]));
                    }
                    None => assert!(cells.iter().all(String::is_empty)),
                }
            }
            if labels {
                assert_eq!(v["label"].as_str(), Some(row[header.len() - 2].as_str()));
                assert_eq!(v["outcome"].as_str(), Some(row[header.len() - 1].as_str()));
            } else {
                assert!(v.get("label").is_none() && v.get("outcome").is_none());
            }
        }
    }
}

#[test]
fn a_profile_scored_with_objectness_needs_objectness_or_the_flag() {
    let s = Scratch::new("guard");
    let profile = demo_profile(&s);
    let (t, l, o) = (
        demo_file("taxonomy.csv"),
        demo_file("logits.npy"),
        demo_file("objectness.npy"),
    );
    let base = [
        "decode",
        "--taxonomy",
        &t,
        "--logits",
        &l,
        "--profile",
        &profile,
    ];
    let refused = hedgerow(&s.dir, &base);
    assert_eq!(refused.code, 2, "{}", refused.stderr);
    assert!(refused.stdout.is_empty());
    assert!(
        refused
            .stderr
            .contains("p.json: this profile was scored with objectness")
            && refused.stderr.contains("--no-objectness"),
        "{}",
        refused.stderr
    );
    let mut flagged = base.to_vec();
    flagged.push("--no-objectness");
    let (_, rows) = csv_rows(&ok(hedgerow(&s.dir, &flagged)).stdout);
    assert_eq!(rows.len(), 20_000);
    // P(root) = 1 and no object threshold: no row abstains.
    assert!(rows.iter().all(|r| r[4] == "false"));
    // Both flags at once is a usage error.
    let mut both = flagged.clone();
    both.extend(["--objectness", &o]);
    let run = hedgerow(&s.dir, &both);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("--no-objectness"), "{}", run.stderr);
}

/// np.savez bundles: labels and objectness come from the bundle, as with separate files.
#[test]
fn bundles_and_fortran_order_decode_like_separate_files() {
    let s = Scratch::new("bundle");
    s.numpy_fixtures(&[
        "bundle.npz",
        "bundle-compressed.npz",
        "logits-f64.npy",
        "logits-fortran.npy",
        "labels-int64.npy",
        "objectness.npy",
    ]);
    let run = |extra: &[&str]| {
        let mut args = vec!["decode", "--taxonomy", "t.csv", "--thresholds", "0.6,0.4"];
        args.extend(extra);
        ok(hedgerow(&s.dir, &args)).stdout
    };
    let want = run(&[
        "--logits",
        "logits-f64.npy",
        "--labels",
        "labels-int64.npy",
        "--objectness",
        "objectness.npy",
    ]);
    assert_eq!(want.lines().count(), 13);
    assert!(want
        .lines()
        .next()
        .is_some_and(|h| h.ends_with(",label,outcome")));
    for bundle in ["bundle.npz", "bundle-compressed.npz"] {
        assert_eq!(run(&["--logits", bundle]), want, "{bundle}");
    }
    let fortran = run(&[
        "--logits",
        "logits-fortran.npy",
        "--labels",
        "labels-int64.npy",
        "--objectness",
        "objectness.npy",
    ]);
    assert_eq!(fortran, want);
}

/// `hedgerow decode … | head`: the reader goes away, the command ends quietly with exit 0.
#[test]
fn a_closed_pipe_ends_quietly() {
    let (t, l) = (demo_file("taxonomy.csv"), demo_file("logits.npy"));
    for format in ["csv", "jsonl"] {
        let mut child = Command::new(env!("CARGO_BIN_EXE_hedgerow"))
            .args([
                "decode",
                "--taxonomy",
                &t,
                "--logits",
                &l,
                "--format",
                format,
            ])
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .expect("spawn hedgerow");
        let stdout = child.stdout.take().expect("stdout");
        let mut lines = BufReader::new(stdout).lines();
        for _ in 0..3 {
            assert!(lines.next().is_some_and(|l| l.is_ok()));
        }
        drop(lines);
        let out = child.wait_with_output().expect("wait");
        assert_eq!(out.status.code(), Some(0), "{format}");
        assert!(
            out.stderr.is_empty(),
            "{format}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
}

/// Scoring commands apply a profile as it was scored: without the objectness it was scored with,
/// every row would predict and its object threshold would be ignored without a word.
#[test]
fn scoring_commands_refuse_a_profile_scored_with_objectness_without_it() {
    let s = Scratch::new("guard-scoring");
    let profile = demo_profile(&s);
    let (t, l, y, o) = (
        demo_file("taxonomy.csv"),
        demo_file("logits.npy"),
        demo_file("labels.csv"),
        demo_file("objectness.npy"),
    );
    for command in ["evaluate", "curve", "nodes"] {
        let base = [
            command,
            "--taxonomy",
            &t,
            "--logits",
            &l,
            "--labels",
            &y,
            "--profile",
            &profile,
        ];
        let refused = hedgerow(&s.dir, &base);
        assert_eq!(refused.code, 2, "{command}: {}", refused.stderr);
        assert!(
            refused
                .stderr
                .contains("p.json: this profile was scored with objectness (object threshold")
                && refused.stderr.contains("expected --objectness FILE")
                && !refused.stderr.contains("--no-objectness"),
            "{command}: {}",
            refused.stderr
        );
        let mut given = base.to_vec();
        given.extend(["--objectness", &o]);
        ok(hedgerow(&s.dir, &given));
    }
}
