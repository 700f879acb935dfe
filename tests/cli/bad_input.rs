//! Every case of the bad-input catalogue (`tests/bad-input/`, shared with the page's intake
//! test in `tests/board/catalogue.rs`): exit code 2 and a message naming file, place and what
//! was expected, never a panic.

use crate::catalogue;
use crate::harness::{hedgerow, npy_f32, objectness, Scratch, INPUT, TAXONOMY};

/// The command line's flag for each slot of the catalogue.
const FLAGS: [(&str, &str); 5] = [
    ("taxonomy", "--taxonomy"),
    ("logits", "--logits"),
    ("labels", "--labels"),
    ("objectness", "--objectness"),
    ("profile", "--profile"),
];

/// Every case of the catalogue through `evaluate`, and through `decode` (which streams its
/// output and must still write nothing, to standard output or to `--out`, when an input is
/// bad).
#[test]
fn every_bad_input_is_located_and_exits_2() {
    let cases = catalogue::cases();
    assert!(cases.len() >= 30, "{} cases", cases.len());
    let mut failures = Vec::new();
    for command in ["evaluate", "decode"] {
        for entry in &cases {
            let s = Scratch::new("bad");
            let mut args = vec![command.to_string()];
            for (slot, flag) in FLAGS {
                if let Some((name, bytes)) = entry.file(slot) {
                    s.write(&name, &bytes);
                    args.extend([flag.to_string(), name]);
                }
            }
            args.extend(entry.case.flags.iter().cloned());
            let args: Vec<&str> = args.iter().map(String::as_str).collect();
            let name = format!("{command}: {} ({})", entry.name, entry.case.about);
            let run = hedgerow(&s.dir, &args);
            if run.code != 2 {
                failures.push(format!(
                    "{name}: exit {} (expected 2); stderr: {}",
                    run.code, run.stderr
                ));
            }
            for want in entry.case.expect.iter().chain(&entry.case.cli) {
                if !run.stderr.contains(want.as_str()) {
                    failures.push(format!(
                        "{name}: stderr lacks «{want}»; it was:\n{}",
                        run.stderr
                    ));
                }
            }
            if run.stderr.contains("panicked") {
                failures.push(format!("{name}: panicked: {}", run.stderr));
            }
            if !run.stdout.is_empty() {
                failures.push(format!("{name}: printed to stdout: {}", run.stdout));
            }
            if command == "decode" {
                let mut args = args.clone();
                args.extend(["--out", "d.csv"]);
                let run = hedgerow(&s.dir, &args);
                if run.code != 2 || s.dir.join("d.csv").exists() {
                    failures.push(format!(
                        "{name} --out: exit {}, d.csv left: {}",
                        run.code,
                        s.dir.join("d.csv").exists()
                    ));
                }
            }
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

#[test]
fn several_files_wrong_at_once_are_all_reported() {
    let s = Scratch::new("many");
    s.write("t.csv", TAXONOMY.as_bytes());
    s.write("l.npy", &npy_f32("(4, 2)", &[0.0; 8]));
    s.write("y.csv", b"label\nnope\n");
    s.write("o.npy", &objectness(&[2.0, 0.5, 0.5, 0.5]));
    let mut args = vec!["evaluate"];
    args.extend(INPUT);
    let run = hedgerow(&s.dir, &args);
    assert_eq!(run.code, 2);
    for want in ["y.csv, line 2", "o.npy, row 0", "l.npy: 2 columns"] {
        assert!(run.stderr.contains(want), "lacks {want}: {}", run.stderr);
    }
}
