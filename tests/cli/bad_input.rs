//! Every bad input named in the brief: exit code 2 and a message naming file, place and what
//! was expected. One table row per case.

use crate::harness::{
    hedgerow, logits, npy_f32, npy_header, objectness, Scratch, INPUT, LABELS, TAXONOMY,
};

struct Case {
    name: &'static str,
    files: Vec<(&'static str, Vec<u8>)>,
    extra: Vec<&'static str>,
    expect: Vec<&'static str>,
}

fn case(
    name: &'static str,
    files: Vec<(&'static str, Vec<u8>)>,
    extra: &[&'static str],
    expect: &[&'static str],
) -> Case {
    Case {
        name,
        files,
        extra: extra.to_vec(),
        expect: expect.to_vec(),
    }
}

fn base() -> Vec<(&'static str, Vec<u8>)> {
    vec![
        ("t.csv", TAXONOMY.as_bytes().to_vec()),
        ("l.npy", logits(4)),
        ("y.csv", LABELS.as_bytes().to_vec()),
    ]
}

fn with(
    mut files: Vec<(&'static str, Vec<u8>)>,
    name: &'static str,
    bytes: Vec<u8>,
) -> Vec<(&'static str, Vec<u8>)> {
    files.retain(|(n, _)| *n != name);
    files.push((name, bytes));
    files
}

fn cases() -> Vec<Case> {
    let mut nan = npy_header("<f4", "(4, 3)");
    for i in 0..12 {
        let v = match i {
            4 => f32::NAN,
            8 => f32::NEG_INFINITY,
            _ => 0.5,
        };
        nan.extend(v.to_le_bytes());
    }
    let mut ints = npy_header("<i8", "(4, 3)");
    ints.extend([0u8; 96]);
    let full = logits(4);
    let other_profile = br#"{"kind":"hedgerow threshold profile","version":1,"rule":"cumulative","object_threshold":0.5,"thresholds":[0.5],"temperatures":[],"unverifiable":"credit","taxonomy":{"fingerprint":"0123456789abcdef","nodes":9,"depth":2}}"#;
    vec![
        case("wrong column count", with(base(), "l.npy", npy_f32("(4, 2)", &[0.0; 8])), &[], &["l.npy: 2 columns, but the taxonomy has 3 nodes"]),
        case("non-float dtype", with(base(), "l.npy", ints), &[], &["l.npy: dtype `int64`: expected float16, float32 or float64 logits"]),
        case("truncated npy", with(base(), "l.npy", full[..full.len() - 5].to_vec()), &[], &["l.npy, row 3: truncated: expected 48 bytes of data for the shape in the header, found 43"]),
        case("bad npy header", with(base(), "l.npy", b"\x93NUMPY\x01\x00\x10\x00{'descr': <f4}  \n".to_vec()), &[], &["l.npy, byte 0: bad .npy header: expected a quoted dtype string for 'descr'"]),
        case("not an npy file", with(base(), "l.npy", b"row,a,b\n1,2,3\n".to_vec()), &[], &["l.npy, byte 0: not a .npy file: expected the magic bytes"]),
        case("NaN and infinite logits", with(base(), "l.npy", nan), &[], &["l.npy, row 1, column 1 (`y`): expected a finite number, found NaN", "l.npy, row 2, column 2 (`z`): expected a finite number, found -inf"]),
        case("objectness outside [0,1]", with(base(), "o.npy", objectness(&[0.5, 1.2, -0.1, 0.3])), &["--objectness", "o.npy"], &["o.npy, row 1: expected a probability in [0, 1], found 1.2", "o.npy, row 2: expected a probability in [0, 1], found -0.1"]),
        case("label not in taxonomy", with(base(), "y.csv", b"label\ny\nplastic\n\nx\n".to_vec()), &[], &["y.csv, line 3, column label: label `plastic` is not an id of the taxonomy"]),
        case("label rows differ from logits rows", with(base(), "y.csv", b"label\ny\nz\n".to_vec()), &[], &["y.csv: 2 rows, but l.npy has 4 rows"]),
        case("objectness rows differ", with(base(), "o.npy", objectness(&[0.5])), &["--objectness", "o.npy"], &["o.npy: 1 rows, but l.npy has 4 rows"]),
        case("taxonomy with a cycle", with(base(), "t.csv", b"id,parent\nx,z\ny,x\nz,y\n".to_vec()), &[], &["t.csv, line 2, column parent: the parents form a cycle: `x` → `z` → `y` → `x`"]),
        case("duplicate id", with(base(), "t.csv", b"id,parent\nx,\ny,x\ny,x\n".to_vec()), &[], &["t.csv, line 4, column id: duplicate id `y` (first defined at line 3)"]),
        case("parent that does not exist", with(base(), "t.csv", b"id,parent\nx,\ny,x\nz,w\n".to_vec()), &[], &["t.csv, line 4, column parent: parent `w` of `z` is not a node of the taxonomy"]),
        case("empty taxonomy", with(base(), "t.csv", b"id,parent,name\n".to_vec()), &[], &["t.csv: the taxonomy is empty: expected at least one node row"]),
        case("taxonomy row with too many fields", with(base(), "t.csv", b"id,parent\nx,\ny,x,extra\nz,x\n".to_vec()), &[], &["t.csv, line 3: row: expected 2 fields as in the header, found `3 fields`"]),
        case("profile for another taxonomy", with(base(), "p.json", other_profile.to_vec()), &["--profile", "p.json"], &["p.json: this profile was made for another taxonomy (fingerprint 0123456789ab, 9 nodes)"]),
        case("threshold above 1", base(), &["--thresholds", "0.5,1.5"], &["--thresholds: threshold for depth 2 1.5: expected a number in [0, 1]"]),
        case("threshold below 0", base(), &["--thresholds", "-0.1"], &["--thresholds: threshold for depth 1 -0.1: expected a number in [0, 1]"]),
        case("threshold not a number", base(), &["--thresholds", "0.5,high"], &["--thresholds: expected numbers separated by commas, found `high`"]),
        case("object threshold above 1", base(), &["--object-threshold", "2"], &["object threshold 2: expected a number in [0, 1]"]),
        case("temperature zero", base(), &["--temperatures", "1,0"], &["--temperatures: temperature for depth 2 0: expected a number from 0.0001 to 10000"]),
        case("temperature too small to divide by", base(), &["--temperatures", "1e-310"], &["--temperatures: temperature for depth 1 1e-310: expected a number from 0.0001 to 10000"]),
        case("unknown rule", base(), &["--rule", "greedy"], &["--rule: expected cumulative or conditional, found `greedy`"]),
        case("node threshold for an unknown id", base(), &["--node-threshold", "pet-tray=0.7"], &["--node-threshold pet-tray=0.7: pet-tray is not an id of the taxonomy"]),
        case("node threshold above 1", base(), &["--node-threshold", "y=1.5"], &["--node-threshold y=1.5: threshold for node y 1.5: expected a number in [0, 1]"]),
        case("node threshold below 0", base(), &["--node-threshold", "z=-0.2"], &["--node-threshold z=-0.2: threshold for node z -0.2: expected a number in [0, 1]"]),
        case("node threshold not a number", base(), &["--node-threshold", "y=high"], &["--node-threshold y=high: expected a number in [0, 1] after `=`, found `high`"]),
        case("node threshold without a value", base(), &["--node-threshold", "y"], &["--node-threshold y: expected ID=V, a node id and its threshold in [0, 1]"]),
        case("several bad node thresholds", base(), &["--node-threshold", "w=0.5", "--node-threshold", "x=2"], &["--node-threshold w=0.5: w is not an id of the taxonomy", "--node-threshold x=2: threshold for node x 2: expected a number in [0, 1]"]),
    ]
}

/// Every case through `evaluate`, and through `decode` (which streams its output and must
/// still write nothing, to standard output or to `--out`, when an input is bad).
#[test]
fn every_bad_input_is_located_and_exits_2() {
    let mut failures = Vec::new();
    for command in ["evaluate", "decode"] {
        for c in cases() {
            let s = Scratch::new("bad");
            for (name, bytes) in &c.files {
                s.write(name, bytes);
            }
            let mut args = vec![
                command,
                "--taxonomy",
                "t.csv",
                "--logits",
                "l.npy",
                "--labels",
                "y.csv",
            ];
            args.extend(&c.extra);
            let name = format!("{command}: {}", c.name);
            let run = hedgerow(&s.dir, &args);
            if run.code != 2 {
                failures.push(format!(
                    "{name}: exit {} (expected 2); stderr: {}",
                    run.code, run.stderr
                ));
            }
            for want in &c.expect {
                if !run.stderr.contains(want) {
                    failures.push(format!(
                        "{name}: stderr lacks «{want}»; it was:\n{}",
                        run.stderr
                    ));
                }
            }
            if !run.stdout.is_empty() {
                failures.push(format!("{name}: printed to stdout: {}", run.stdout));
            }
            if command == "decode" {
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
