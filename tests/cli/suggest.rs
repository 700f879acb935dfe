//! `hedgerow suggest` on the demo data: the profile it writes loads in evaluate and decode, it
//! is not less specific on held-out rows than the shared threshold, it is the same for the same
//! seed, an unreachable target exits 3 with the highest guaranteeable precision, bad flags exit 2.

use std::path::PathBuf;

use crate::harness::{hedgerow, Run, Scratch};

fn demo(file: &str) -> String {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("../../demo-data")
        .join(file)
        .display()
        .to_string()
}

fn suggest(s: &Scratch, extra: &[&str]) -> Run {
    let (t, l, y, o) = (
        demo("taxonomy.csv"),
        demo("logits.npy"),
        demo("labels.csv"),
        demo("objectness.npy"),
    );
    let mut args = vec![
        "suggest",
        "--taxonomy",
        &t,
        "--logits",
        &l,
        "--labels",
        &y,
        "--objectness",
        &o,
    ];
    args.extend_from_slice(extra);
    hedgerow(&s.dir, &args)
}

fn held(v: &serde_json::Value, which: &str, key: &str) -> f64 {
    v[which]["holdout"][key]
        .as_f64()
        .unwrap_or_else(|| panic!("{which}.holdout.{key} in {v}"))
}

#[test]
fn the_demo_suggestion_holds_out_and_loads() {
    let s = Scratch::new("suggest-demo");
    let flags = [
        "--min-precision",
        "0.9",
        "--holdout",
        "0.3",
        "--seed",
        "1",
        "--out",
        "p.json",
        "--json",
    ];
    let run = suggest(&s, &flags);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let v: serde_json::Value = serde_json::from_str(&run.stdout).expect("json");
    // Specificity is a mean of information gain over ~5,000 held-out predictions (standard
    // deviation under 0.35, so a standard error under 0.005): 0.01 is noise, no more.
    let (ours, shared) = (
        held(&v, "suggestion", "specificity"),
        held(&v, "shared", "specificity"),
    );
    assert!(ours >= shared - 0.01, "suggestion {ours}, shared {shared}");
    assert!(v["record"]["bound"].as_f64().is_some_and(|b| b >= 0.9));
    let low = v["suggestion"]["holdout"]["wilson"]["low"]
        .as_f64()
        .expect("wilson");
    assert!(low > 0.85, "held-out Wilson low {low}");
    // Same seed, same profile.
    let first = std::fs::read_to_string(s.dir.join("p.json")).expect("profile");
    let mut again = flags;
    again[7] = "q.json";
    assert_eq!(suggest(&s, &again).code, 0);
    let second = std::fs::read_to_string(s.dir.join("q.json")).expect("profile");
    assert_eq!(first, second);
    let profile: serde_json::Value = serde_json::from_str(&first).expect("profile json");
    assert_eq!(profile["made_by"]["target"], 0.9);
    // The profile is an ordinary one: evaluate and decode apply it.
    let (t, l, y, o) = (
        demo("taxonomy.csv"),
        demo("logits.npy"),
        demo("labels.csv"),
        demo("objectness.npy"),
    );
    let common = [
        "--taxonomy",
        &t,
        "--logits",
        &l,
        "--labels",
        &y,
        "--objectness",
        &o,
        "--profile",
        "p.json",
    ];
    let mut args = vec!["evaluate"];
    args.extend_from_slice(&common);
    args.push("--json");
    let e = hedgerow(&s.dir, &args);
    assert_eq!(e.code, 0, "{}", e.stderr);
    let m: serde_json::Value = serde_json::from_str(&e.stdout).expect("evaluate json");
    assert_eq!(
        m["predictions"],
        profile["scored"]["metrics"]["predictions"]
    );
    assert!(m["precision_interval"]["low"].as_f64().is_some());
    let mut args = vec!["decode"];
    args.extend_from_slice(&common);
    args.extend_from_slice(&["--out", "d.csv"]);
    let d = hedgerow(&s.dir, &args);
    assert_eq!(d.code, 0, "{}", d.stderr);
}

#[test]
fn an_unreachable_target_exits_3() {
    let s = Scratch::new("suggest-unmet");
    let run = suggest(&s, &["--min-precision", "0.9999", "--out", "p.json"]);
    assert_eq!(run.code, 3, "{}", run.stderr);
    assert!(
        run.stderr
            .contains("the highest precision that can be is 0.9"),
        "{}",
        run.stderr
    );
    assert!(!s.dir.join("p.json").exists());
}

#[test]
fn bad_flags_exit_2() {
    let s = Scratch::new("suggest-bad");
    for (flags, says) in [
        (&["--min-precision", "1.5"][..], "--min-precision"),
        (
            &["--min-precision", "0.9", "--confidence", "1"][..],
            "--confidence",
        ),
        (
            &["--min-precision", "0.9", "--holdout", "-0.1"][..],
            "--holdout",
        ),
        (
            &["--min-precision", "0.9", "--maximize", "coverage"][..],
            "--maximize",
        ),
        (
            &["--min-precision", "0.9", "--group-column", "image"][..],
            "`image` column",
        ),
        (&["--min-precision", "x"][..], "--min-precision"),
    ] {
        let mut args = flags.to_vec();
        args.extend_from_slice(&["--out", "p.json"]);
        let run = suggest(&s, &args);
        assert_eq!(run.code, 2, "{flags:?}: {}", run.stderr);
        assert!(run.stderr.contains(says), "{flags:?}: {}", run.stderr);
    }
}

#[test]
fn groups_come_from_a_labels_column() {
    let s = Scratch::new("suggest-groups");
    // The demo's labels with an image column: five consecutive rows per image.
    let labels = std::fs::read_to_string(demo("labels.csv")).expect("labels");
    let mut out = String::new();
    for (i, line) in labels.lines().enumerate() {
        if i == 0 {
            out.push_str(&format!("{line},image\n"));
        } else {
            out.push_str(&format!("{line},img{}\n", (i - 1) / 5));
        }
    }
    s.write("grouped.csv", out.as_bytes());
    let (t, l, o) = (
        demo("taxonomy.csv"),
        demo("logits.npy"),
        demo("objectness.npy"),
    );
    let args = [
        "suggest",
        "--taxonomy",
        &t,
        "--logits",
        &l,
        "--labels",
        "grouped.csv",
        "--objectness",
        &o,
        "--min-precision",
        "0.9",
        "--holdout",
        "0.2",
        "--group-column",
        "image",
        "--out",
        "p.json",
        "--json",
    ];
    let run = hedgerow(&s.dir, &args);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let v: serde_json::Value = serde_json::from_str(&run.stdout).expect("json");
    let g = &v["record"]["groups"];
    assert_eq!(g["holdout"], 800);
    let rows = &v["record"]["rows"];
    assert_eq!(rows["holdout"], 4000);
    assert_eq!(
        g["optimisation"].as_u64().map(|x| x * 5),
        rows["optimisation"].as_u64()
    );
}
