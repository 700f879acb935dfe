//! The page's state and actions, natively, through the page's own loading steps
//! (`hedgerow_board::loading`, driven by `shell.rs` as the page's loader hook drives them):
//! loading in any order, batches that replace each other with the files that no longer fit set
//! aside, errors beside their file with the batch kept, every control re-scoring through the
//! engine, profiles and stored settings, `.npz` bundles.

mod bad_input;
mod baseline;
#[path = "../common/catalogue.rs"]
mod catalogue;
mod nodes;
mod overrides;
mod runner_up;
mod shell;
mod suggest;

use std::rc::Rc;

use hedgerow_board::state::{Action, Board, Origin, Slot, Stored};
use hedgerow_core::{evaluate, Policy, Rule};

use shell::Shell;

fn demo(name: &str) -> Vec<u8> {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/../../demo-data/");
    std::fs::read(format!("{path}{name}")).unwrap_or_else(|e| panic!("{name}: {e}"))
}

fn fixture(name: &str) -> Vec<u8> {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/../../tests/fixtures/numpy/");
    std::fs::read(format!("{path}{name}")).unwrap_or_else(|e| panic!("{name}: {e}"))
}

/// The demo as the page loads it at start (one selection, marked as the demo's).
fn demo_board() -> (Board, Shell) {
    let mut b = Board::new();
    let mut shell = Shell::new();
    let files =
        ["taxonomy.csv", "logits.npy", "labels.csv", "objectness.npy"].map(|n| (n, demo(n)));
    let given: Vec<(&str, &[u8])> = files.iter().map(|(n, v)| (*n, v.as_slice())).collect();
    shell.give_from(&mut b, &given, Origin::Demo);
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    assert_eq!(b.active.as_ref().map(|a| a.origin), Some(Origin::Demo));
    (b, shell)
}

fn loaded() -> Board {
    let mut b = Board::new();
    let mut shell = Shell::new();
    // Files in an awkward order and one at a time: labels and logits before the taxonomy.
    shell.give(&mut b, &[("labels.csv", &demo("labels.csv"))]);
    shell.give(&mut b, &[("logits.npy", &demo("logits.npy"))]);
    assert!(b.active.is_none());
    shell.give(&mut b, &[("objectness.npy", &demo("objectness.npy"))]);
    shell.give(&mut b, &[("taxonomy.csv", &demo("taxonomy.csv"))]);
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    assert!(b.set_aside.is_empty(), "{:?}", b.set_aside);
    assert!(b.active.is_some(), "a whole batch is active");
    b
}

fn check_against_engine(b: &Board) {
    let a = b.active.as_ref().expect("active");
    assert_eq!(
        b.metrics.as_ref(),
        Some(&evaluate(&a.taxonomy, &a.batch, &b.settings))
    );
}

#[test]
fn files_in_any_order_make_a_batch_and_say_what_they_are() {
    let b = loaded();
    assert_eq!(
        b.settings.thresholds.depths.len(),
        5,
        "one control per depth"
    );
    assert_eq!(
        b.notes[&Slot::Taxonomy],
        "taxonomy.csv: 173 nodes, 92 leaves, depth 5"
    );
    assert_eq!(
        b.notes[&Slot::Logits],
        "logits.npy: 20,000 rows × 173 nodes, float16"
    );
    assert!(
        b.notes[&Slot::Labels].contains("20,000 rows, 2,005 background, coarse labels 15.6 %"),
        "{}",
        b.notes[&Slot::Labels]
    );
    assert_eq!(b.active.as_ref().map(|a| a.origin), Some(Origin::User));
    check_against_engine(&b);
    assert!(b.curve.len() > 100);
    assert!(!b.sweep.is_empty());
}

#[test]
fn every_control_rescores_through_the_engine() {
    let mut b = loaded();
    let before = b.metrics.clone();
    b.apply(Action::SetDepth {
        depth: 3,
        value: 0.8,
    });
    assert_eq!(b.settings.thresholds.depths[2], 0.8);
    assert_ne!(b.metrics, before);
    check_against_engine(&b);
    b.apply(Action::SetRule(Rule::Conditional));
    check_against_engine(&b);
    b.apply(Action::SetObject(0.7));
    check_against_engine(&b);
    b.apply(Action::SetAllDepths(0.65));
    assert!(b.settings.thresholds.depths.iter().all(|&t| t == 0.65));
    check_against_engine(&b);
    b.apply(Action::SetPolicy(Policy::Penalize));
    check_against_engine(&b);
    // Out-of-range input is clamped, never an error state.
    b.apply(Action::SetDepth {
        depth: 1,
        value: 7.0,
    });
    assert_eq!(b.settings.thresholds.depths[0], 1.0);
    check_against_engine(&b);
}

#[test]
fn sweep_follows_the_focused_depth_and_holds_the_others() {
    let mut b = loaded();
    b.apply(Action::SetDepth {
        depth: 4,
        value: 0.3,
    });
    let sweep4 = b.sweep.clone();
    assert_eq!(b.tradeoff_view().sweep.map(|(d, _)| d), Some(4));
    // Moving depth 4 itself does not move its own sweep.
    b.apply(Action::SetDepth {
        depth: 4,
        value: 0.9,
    });
    assert!(Rc::ptr_eq(&sweep4, &b.sweep));
    // The current point lies on the (drawn, thinned to 1/2000) sweep.
    b.apply(Action::SetDepth {
        depth: 4,
        value: 0.5,
    });
    let m = b.metrics.as_ref().expect("metrics");
    let (p, s) = (m.precision.expect("p"), m.specificity.expect("s"));
    assert!(
        b.sweep
            .iter()
            .any(|q| (q.precision - p).abs() <= 1.0 / 2000.0
                && (q.specificity - s).abs() <= 1.0 / 2000.0),
        "current point ({p}, {s}) is off the sweep"
    );
    assert!(
        b.sweep.len() < 2000,
        "thinned for drawing: {}",
        b.sweep.len()
    );
}

#[test]
fn a_broken_file_shows_its_error_and_keeps_the_batch() {
    let (mut b, mut shell) = demo_board();
    b.apply(Action::SetDepth {
        depth: 2,
        value: 0.77,
    });
    let kept = b.metrics.clone();
    let generation = b.generation;
    shell.give(&mut b, &[("labels-bad.csv", b"label\nglass\nnot-a-node\n")]);
    let errors = &b.errors[&Slot::Labels];
    assert!(errors.iter().any(|e| e == "labels-bad.csv, line 3, column label: label `not-a-node` is not an id of the taxonomy"), "{errors:?}");
    assert_eq!(b.generation, generation, "the active batch is kept");
    assert_eq!(b.metrics, kept);
    assert_eq!(b.settings.thresholds.depths[1], 0.77, "tuning kept");
    // A truncated logits file: error beside logits, batch kept.
    let bytes = demo("logits.npy");
    shell.give(&mut b, &[("cut.npy", &bytes[..bytes.len() / 2])]);
    assert!(
        b.errors[&Slot::Logits][0].starts_with("cut.npy, row 9999: truncated"),
        "{:?}",
        b.errors[&Slot::Logits]
    );
    assert_eq!(b.metrics, kept);
    assert_eq!(b.active.as_ref().map(|a| a.origin), Some(Origin::Demo));
    // Not a file the page knows.
    shell.give(&mut b, &[("notes.txt", b"hello\n")]);
    assert!(
        b.errors[&Slot::Other][0].starts_with("notes.txt: not recognised: expected a .npy array"),
        "{:?}",
        b.errors
    );
    assert_eq!(b.metrics, kept);
}

#[test]
fn labels_of_the_wrong_size_are_refused_and_the_batch_is_kept() {
    let (mut b, mut shell) = demo_board();
    let kept = b.metrics.clone();
    let labels = demo("labels.csv");
    let short: Vec<u8> = labels
        .split(|&c| c == b'\n')
        .take(101)
        .collect::<Vec<_>>()
        .join(&b'\n');
    shell.give(&mut b, &[("short.csv", &short)]);
    assert_eq!(
        b.errors[&Slot::Labels],
        ["short.csv: 100 rows, but the logits have 20,000 rows: not used"]
    );
    assert_eq!(b.metrics, kept, "the batch in use is kept");
    assert_eq!(
        b.labels.as_ref().map(|l| (l.name.as_str(), l.origin)),
        Some(("labels.csv", Origin::Demo)),
        "the refused file is not staged: the labels it was to replace stay in their slot"
    );
    assert!(
        b.notes[&Slot::Labels].starts_with("labels.csv: 20,000 rows"),
        "{:?}",
        b.notes
    );
    assert_eq!(
        b.staging_line(),
        None,
        "the staged files are the batch in use"
    );
    assert!(b.set_aside.is_empty(), "{:?}", b.set_aside);
    // The same for objectness.
    let mut o = hedgerow_core::npy::header_bytes("<f4", &[3], false);
    for v in [0.5f32, 0.25, 1.0] {
        o.extend(v.to_le_bytes());
    }
    shell.give(&mut b, &[("o3.npy", &o)]);
    assert_eq!(
        b.errors[&Slot::Objectness],
        ["o3.npy: 3 rows, but the logits have 20,000 rows: not used"]
    );
    assert_eq!(b.metrics, kept);
    assert_eq!(
        b.objectness.as_ref().map(|o| (o.name.as_str(), o.origin)),
        Some(("objectness.npy", Origin::Demo))
    );
    assert_eq!(b.staging_line(), None);
}

#[test]
fn a_refused_file_leaves_the_file_before_it_in_its_slot() {
    // Objectness of the wrong size alone: the staged files without it would be a whole batch,
    // which must not replace the one in use.
    let (mut b, mut shell) = demo_board();
    b.apply(Action::SetObject(0.7));
    let kept = b.metrics.clone();
    let generation = b.generation;
    let mut o = hedgerow_core::npy::header_bytes("<f4", &[3], false);
    for v in [0.5f32, 0.25, 1.0] {
        o.extend(v.to_le_bytes());
    }
    shell.give(&mut b, &[("o3.npy", &o)]);
    assert_eq!(
        b.errors[&Slot::Objectness],
        ["o3.npy: 3 rows, but the logits have 20,000 rows: not used"]
    );
    assert_eq!(b.generation, generation, "the batch in use is kept");
    assert!(b.active.as_ref().is_some_and(|a| a.batch.has_objectness()));
    assert_eq!(b.metrics, kept);
    assert_eq!(
        b.notes[&Slot::Objectness],
        "objectness.npy: 20,000 rows",
        "the slot still says what it holds"
    );
    assert_eq!(b.staging_line(), None);
    // Labels that name no node of the taxonomy: refused, the demo's stay staged, and a new
    // batch still forms with them (here: without objectness).
    shell.give(&mut b, &[("labels-bad.csv", b"label\nglass\nnot-a-node\n")]);
    assert!(b.errors.contains_key(&Slot::Labels), "{:?}", b.errors);
    assert_eq!(b.labels.as_ref().map(|l| l.origin), Some(Origin::Demo));
    assert_eq!(b.metrics, kept);
    b.apply(Action::Remove(Slot::Objectness));
    let a = b.active.as_ref().expect("a whole batch");
    assert!(!a.batch.has_objectness());
    assert_eq!(a.names[&Slot::Labels], "labels.csv");
    check_against_engine(&b);
}

#[test]
fn a_new_taxonomy_and_logits_start_a_new_batch_and_set_the_old_files_aside() {
    let (mut b, mut shell) = demo_board();
    // The 7-node tree of the numpy fixtures: a classifier batch (no objectness) of 12 rows.
    shell.stage(
        &mut b,
        &[
            ("tree.csv", TREE.as_bytes()),
            ("logits-f64.npy", &fixture("logits-f64.npy")),
            ("labels-int64.npy", &fixture("labels-int64.npy")),
        ],
        Origin::User,
    );
    // Before the new logits are read, the demo stays in use and the controls stay its own.
    assert_eq!(b.active.as_ref().map(|a| a.origin), Some(Origin::Demo));
    assert_eq!(b.depth(), 5, "controls belong to the batch in use");
    assert_eq!(b.settings.thresholds.depths.len(), 5);
    assert!(
        b.staging_line()
            .is_some_and(|l| l.contains("batch in use is kept")),
        "{:?}",
        b.staging_line()
    );
    assert_eq!(
        b.set_aside[&Slot::Objectness],
        "demo objectness set aside: 20,000 rows, the new logits have 12 rows"
    );
    assert_eq!(
        b.set_aside[&Slot::Logits],
        "demo logits set aside: 173 columns, the new taxonomy has 7 nodes"
    );
    assert!(
        b.set_aside[&Slot::Labels]
            .starts_with("demo labels set aside: they do not name nodes of the new taxonomy"),
        "{}",
        b.set_aside[&Slot::Labels]
    );
    shell.pump(&mut b);
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    let a = b.active.as_ref().expect("the new batch");
    assert_eq!(a.origin, Origin::User);
    assert!(!a.batch.has_objectness(), "complete without objectness");
    assert_eq!(a.batch.len(), 12);
    assert_eq!(b.depth(), 3);
    assert_eq!(
        b.settings.thresholds.depths.len(),
        3,
        "the controls follow the new batch"
    );
    assert_eq!(b.staging_line(), None);
    check_against_engine(&b);
    // A detector batch after that: objectness joins the staged batch.
    shell.give(&mut b, &[("objectness.npy", &fixture("objectness.npy"))]);
    assert!(b.active.as_ref().is_some_and(|a| a.batch.has_objectness()));
    same_numbers(&mut b, &mut separate(true));
}

#[test]
fn removing_a_slot_changes_the_batch_only_when_the_rest_is_whole() {
    let (mut b, _shell) = demo_board();
    let generation = b.generation;
    b.apply(Action::Remove(Slot::Objectness));
    let a = b.active.as_ref().expect("still a whole batch");
    assert!(!a.batch.has_objectness(), "rebuilt without objectness");
    assert!(b.generation > generation);
    check_against_engine(&b);
    let kept = b.metrics.clone();
    b.apply(Action::Remove(Slot::Labels));
    assert!(b.labels.is_none());
    assert_eq!(b.metrics, kept, "the batch in use is kept");
    assert!(
        b.staging_line()
            .is_some_and(|l| l.contains("labels needed")),
        "{:?}",
        b.staging_line()
    );
}

#[test]
fn replacing_only_the_labels_rescores_the_same_paths() {
    let (mut b, mut shell) = demo_board();
    let paths = b.active.as_ref().map(|a| a.batch.paths() as *const _);
    let generation = b.generation;
    let labels = String::from_utf8(demo("labels.csv")).expect("utf8");
    // Every labelled row coarsened to its top-level node is still the same rows.
    let tax = b.active.as_ref().expect("active").taxonomy.clone();
    let coarse: String = labels
        .lines()
        .map(|l| match tax.lookup(l) {
            Some(v) if l != "label" => tax.id(tax.ancestor(v, 1)).to_string(),
            _ => l.to_string(),
        })
        .map(|l| l + "\n")
        .collect();
    shell.give(&mut b, &[("coarse.csv", coarse.as_bytes())]);
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    let a = b.active.as_ref().expect("active");
    assert_eq!(a.names[&Slot::Labels], "coarse.csv");
    assert_eq!(a.origin, Origin::User, "no longer the demo alone");
    assert!(b.generation > generation, "a new batch");
    assert_eq!(
        paths,
        Some(a.batch.paths() as *const _),
        "the same paths: nothing re-read"
    );
    check_against_engine(&b);
}

#[test]
fn profiles_round_trip_and_refuse_another_taxonomy() {
    let mut b = loaded();
    b.apply(Action::SetRule(Rule::Conditional));
    b.apply(Action::SetDepth {
        depth: 5,
        value: 0.42,
    });
    let json = b.profile().expect("profile").to_json();
    let (mut fresh, mut shell) = demo_board();
    shell.give(&mut fresh, &[("p.json", json.as_bytes())]);
    assert!(fresh.errors.is_empty(), "{:?}", fresh.errors);
    assert_eq!(fresh.settings, b.settings);
    assert_eq!(fresh.metrics, b.metrics);
    let other = br#"{"kind":"hedgerow threshold profile","version":1,"rule":"cumulative","object_threshold":0.5,"thresholds":[0.5],"temperatures":[],"unverifiable":"credit","taxonomy":{"fingerprint":"ffff0000ffff","nodes":12,"depth":3}}"#;
    shell.give(&mut fresh, &[("other.json", other)]);
    assert!(fresh.errors[&Slot::Profile][0].starts_with(
        "other.json, key `taxonomy.fingerprint`: this profile was made for another taxonomy"
    ));
    assert_eq!(fresh.settings, b.settings, "settings kept");
}

#[test]
fn a_profile_for_the_staged_taxonomy_waits_for_its_batch() {
    // A profile made on the fixtures' tree.
    let mut tree_board = separate(false);
    tree_board.apply(Action::SetDepth {
        depth: 2,
        value: 0.3,
    });
    let json = tree_board.profile().expect("profile").to_json();
    let (mut b, mut shell) = demo_board();
    let kept = b.settings.clone();
    shell.stage(
        &mut b,
        &[
            ("tree.csv", TREE.as_bytes()),
            ("logits-f64.npy", &fixture("logits-f64.npy")),
            ("labels-int64.npy", &fixture("labels-int64.npy")),
            ("p.json", json.as_bytes()),
        ],
        Origin::User,
    );
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    assert_eq!(
        b.settings, kept,
        "the demo's settings while the demo is in use"
    );
    assert!(b.pending_profile.is_some());
    shell.pump(&mut b);
    assert_eq!(
        b.settings, tree_board.settings,
        "applied once its batch is active"
    );
    assert_eq!(b.metrics, tree_board.metrics);
}

#[test]
fn stored_settings_restore_and_temperatures_ask_for_a_new_read() {
    let (mut b, mut shell) = demo_board();
    let stored = Stored {
        rule: Rule::Conditional,
        object_threshold: 0.25,
        thresholds: vec![0.9, 0.8],
        temperatures: vec![1.0, 1.5],
        unverifiable: Policy::Exclude,
        nodes: Default::default(),
    };
    let text = serde_json::to_string(&stored).expect("json");
    b.apply(Action::Restore(serde_json::from_str(&text).expect("back")));
    assert_eq!(b.settings.thresholds.depths, vec![0.9, 0.8, 0.8, 0.8, 0.8]);
    assert_eq!(b.stored().temperatures, vec![1.0, 1.5]);
    let key = b
        .wanted_ingest()
        .expect("temperatures changed: logits must be read again");
    assert_eq!(key.temperatures, vec![1.0, 1.5, 1.5, 1.5, 1.5]);
    shell.pump(&mut b);
    assert!(b.wanted_ingest().is_none());
    check_against_engine(&b);
    assert_eq!(
        b.active.as_ref().map(|a| a.batch.temperatures().0.clone()),
        Some(vec![1.0, 1.5, 1.5, 1.5, 1.5])
    );
}

#[test]
fn cancelling_a_read_keeps_the_previous_files_and_asks_for_no_read() {
    let (mut b, mut shell) = demo_board();
    let before = b.logits.as_ref().map(|l| l.seq);
    let kept = b.metrics.clone();
    shell.stage(&mut b, &[("other.npy", &demo("logits.npy"))], Origin::User);
    shell.cancel_after(&mut b, 1);
    assert_eq!(b.logits.as_ref().map(|l| l.seq), before);
    assert!(b.progress.is_none());
    assert_eq!(b.wanted_ingest(), None, "no re-read after a cancel");
    assert_eq!(b.metrics, kept);
    // A re-read for new temperatures, cancelled: the temperatures go back.
    b.apply(Action::SetTemperature {
        depth: 2,
        value: 1.5,
    });
    shell.cancel_after(&mut b, 1);
    assert_eq!(b.temperatures.expand(b.depth()), vec![1.0; b.depth()]);
    assert_eq!(b.wanted_ingest(), None);
    assert_eq!(b.metrics, kept);
}

// --- .npz bundles ---

/// The 7-node tree of `tests/engine/harness.rs`, which the numpy fixtures were written for.
const TREE: &str = "id,parent,name\nb,a,B\na,,A\nc,a,C\nd,,D\ne,d,E\nf,b,F\ng,b,G\n";

/// The same arrays as separate files (numpy's own, from the same script).
fn separate(objectness: bool) -> Board {
    let mut b = Board::new();
    let mut shell = Shell::new();
    shell.chunk = 100;
    shell.give(&mut b, &[("tree.csv", TREE.as_bytes())]);
    shell.give(&mut b, &[("logits-f64.npy", &fixture("logits-f64.npy"))]);
    shell.give(
        &mut b,
        &[("labels-int64.npy", &fixture("labels-int64.npy"))],
    );
    if objectness {
        shell.give(&mut b, &[("objectness.npy", &fixture("objectness.npy"))]);
    }
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    assert!(b.active.is_some());
    b
}

/// Settings the numbers are compared under: the defaults, then a few changes.
fn same_numbers(a: &mut Board, b: &mut Board) {
    assert_eq!(a.metrics, b.metrics);
    assert!(a.metrics.is_some());
    let moves = [
        Action::SetDepth {
            depth: 2,
            value: 0.8,
        },
        Action::SetObject(0.3),
        Action::SetRule(Rule::Conditional),
        Action::SetPolicy(Policy::Exclude),
    ];
    for m in moves {
        a.apply(m.clone());
        b.apply(m);
        assert_eq!(a.metrics, b.metrics);
        check_against_engine(a);
    }
}

#[test]
fn savez_and_savez_compressed_bundles_load_like_the_separate_files() {
    for name in ["bundle.npz", "bundle-compressed.npz"] {
        let bytes = fixture(name);
        for chunk in [7, 1 << 20] {
            let mut b = Board::new();
            let mut shell = Shell::new();
            shell.chunk = chunk;
            shell.give(&mut b, &[("tree.csv", TREE.as_bytes()), (name, &bytes)]);
            assert!(b.errors.is_empty(), "{name}: {:?}", b.errors);
            let a = b.active.as_ref().expect("a whole batch from the bundle");
            assert!(a.batch.has_objectness());
            let names: Vec<&str> = a.names.values().map(String::as_str).collect();
            assert_eq!(
                names,
                [
                    "tree.csv",
                    name,
                    &format!("{name}:labels"),
                    &format!("{name}:objectness")
                ]
            );
            assert_eq!(
                b.notes[&Slot::Logits],
                format!("{name}: 12 rows × 7 nodes, float64 (a bundle of `logits`, `labels`, `objectness`)")
            );
            same_numbers(&mut b, &mut separate(true));
        }
    }
}

#[test]
fn progress_counts_the_compressed_bytes_of_the_logits_member() {
    let mut b = Board::new();
    let mut shell = Shell::new();
    shell.stage(
        &mut b,
        &[
            ("tree.csv", TREE.as_bytes()),
            ("bundle-compressed.npz", &fixture("bundle-compressed.npz")),
        ],
        Origin::User,
    );
    assert!(
        b.wanted_ingest().is_some(),
        "the bundle's logits are to be streamed"
    );
    b.apply(Action::LogitsProgress { done: 300 });
    let p = b.progress.clone().expect("progress");
    assert_eq!(
        (p.name.as_str(), p.done, p.total),
        ("bundle-compressed.npz", 300, 776),
        "776 compressed bytes of the 800-byte member (numpy's own file)"
    );
}

#[test]
fn a_bundle_after_the_demo_fills_labels_and_objectness_and_separate_files_win() {
    let (mut b, mut shell) = demo_board();
    shell.give(
        &mut b,
        &[
            ("tree.csv", TREE.as_bytes()),
            ("bundle.npz", &fixture("bundle.npz")),
        ],
    );
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    same_numbers(&mut b, &mut separate(true));

    // Labels chosen with the bundle are used instead of the bundle's (as --labels is).
    let (mut b, mut shell) = demo_board();
    shell.give(
        &mut b,
        &[
            ("tree.csv", TREE.as_bytes()),
            ("bundle.npz", &fixture("bundle.npz")),
            ("labels-str.npy", &fixture("labels-str.npy")),
        ],
    );
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    let a = b.active.as_ref().expect("active");
    assert_eq!(a.names[&Slot::Labels], "labels-str.npy");
    assert_eq!(a.names[&Slot::Objectness], "bundle.npz:objectness");
    same_numbers(&mut b, &mut separate(true));
}

/// The bundle with one member renamed (same length, so every offset stays right).
fn renamed(name: &str, from: &[u8], to: &[u8]) -> Vec<u8> {
    assert_eq!(from.len(), to.len());
    let mut bytes = fixture(name);
    let mut found = 0;
    for i in 0..bytes.len() - from.len() {
        if &bytes[i..i + from.len()] == from {
            bytes[i..i + to.len()].copy_from_slice(to);
            found += 1;
        }
    }
    assert_eq!(found, 2, "a local header and a directory entry");
    bytes
}

#[test]
fn a_bundle_without_objectness_sets_the_old_objectness_aside() {
    let bytes = renamed(
        "bundle-compressed.npz",
        b"objectness.npy",
        b"confidence.npy",
    );
    let (mut b, mut shell) = demo_board();
    shell.chunk = 64;
    shell.give(&mut b, &[("tree.csv", TREE.as_bytes()), ("b.npz", &bytes)]);
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    assert_eq!(
        b.notes[&Slot::Objectness],
        "none: b.npz holds no objectness"
    );
    assert_eq!(
        b.set_aside[&Slot::Objectness],
        "demo objectness set aside: b.npz holds no objectness"
    );
    let a = b.active.as_ref().expect("active without objectness");
    assert!(!a.batch.has_objectness());
    assert!(!a.names.contains_key(&Slot::Objectness));
    same_numbers(&mut b, &mut separate(false));
}

#[test]
fn bundle_errors_show_beside_the_logits_in_the_engines_words_and_keep_the_batch() {
    let (mut b, mut shell) = demo_board();
    b.apply(Action::SetDepth {
        depth: 2,
        value: 0.77,
    });
    let kept = b.metrics.clone();
    let generation = b.generation;
    let check = |b: &Board, want: &str| {
        let errors = b.errors.get(&Slot::Logits).cloned().unwrap_or_default();
        assert!(
            errors.iter().any(|e| e.starts_with(want)),
            "{errors:?}, expected {want:?}"
        );
        assert_eq!(b.metrics, kept, "numbers kept");
        assert_eq!(b.generation, generation, "batch kept");
        assert_eq!(b.settings.thresholds.depths[1], 0.77, "tuning kept");
    };

    // No `logits` member.
    let bytes = renamed("bundle.npz", b"logits.npy", b"scores.npy");
    shell.give(&mut b, &[("scores.npz", &bytes)]);
    check(&b, "scores.npz: expected a `logits` array in the bundle, found `scores`, `labels`, `objectness`");
    assert_eq!(
        b.logits.as_ref().map(|l| l.name.as_str()),
        Some("logits.npy"),
        "the logits in use stay staged"
    );

    // Not a whole zip archive.
    let bytes = fixture("bundle.npz");
    shell.give(&mut b, &[("cut.npz", &bytes[..bytes.len() - 30])]);
    check(&b, "cut.npz: zip bundle: expected an archive as np.savez writes it, found `no end-of-directory record");

    // A compression np.savez does not write (bzip2 = 12) on the logits member.
    let mut bytes = fixture("bundle-compressed.npz");
    let dir = (0..bytes.len() - 4)
        .find(|&i| bytes[i..i + 4] == *b"PK\x01\x02")
        .expect("the first directory entry (logits)");
    bytes[dir + 10] = 12;
    shell.give(&mut b, &[("bzip.npz", &bytes)]);
    check(&b, "bzip.npz:logits: bundle member `logits.npy`: expected stored or deflated (np.savez / np.savez_compressed), found `compression method 12`");

    // Named .npz but not a zip archive.
    shell.give(&mut b, &[("text.npz", b"id,parent\n")]);
    assert_eq!(
        b.errors[&Slot::Other],
        ["text.npz, byte 0: zip bundle: expected an archive as np.savez writes it, found `the first bytes \\x69\\x64\\x2c\\x70 (a zip archive starts with PK\\x03\\x04)`"]
    );

    // Deflate data that is not: found while streaming (its tree first, so it is read).
    let mut bytes = fixture("bundle-compressed.npz");
    let local = (0..bytes.len() - 4)
        .find(|&i| bytes[i..i + 4] == *b"PK\x03\x04")
        .expect("the logits member's local header");
    let n = u16::from_le_bytes([bytes[local + 26], bytes[local + 27]]) as usize;
    let e = u16::from_le_bytes([bytes[local + 28], bytes[local + 29]]) as usize;
    bytes[local + 30 + n + e] = 0xff; // block type 3: reserved
    shell.give(
        &mut b,
        &[("tree.csv", TREE.as_bytes()), ("bad-deflate.npz", &bytes)],
    );
    check(
        &b,
        "bad-deflate.npz:logits: bundle member `logits.npy`: expected valid deflate data",
    );
    assert_eq!(b.wanted_ingest(), None, "a failed read is not retried");
}

#[test]
fn cancelling_a_bundle_puts_back_every_slot_and_starts_no_read() {
    let (mut b, mut shell) = demo_board();
    let before = (
        b.labels.as_ref().map(|l| l.name.clone()),
        b.objectness.as_ref().map(|o| o.name.clone()),
        b.notes.clone(),
        b.metrics.clone(),
        b.errors.clone(),
    );
    let bytes = fixture("bundle-compressed.npz");
    shell.stage(&mut b, &[("bundle-compressed.npz", &bytes)], Origin::User);
    assert_eq!(
        b.labels.as_ref().map(|l| l.name.as_str()),
        Some("bundle-compressed.npz:labels"),
        "column indices: they fit any taxonomy of 7 nodes or more"
    );
    // Cancelled after the first few bytes, before the header shows it is for another tree.
    shell.chunk = 16;
    shell.cancel_after(&mut b, 16);
    assert!(b.progress.is_none());
    assert_eq!(
        b.logits.as_ref().map(|l| l.name.as_str()),
        Some("logits.npy")
    );
    assert_eq!(b.labels.as_ref().map(|l| l.name.clone()), before.0);
    assert_eq!(b.objectness.as_ref().map(|o| o.name.clone()), before.1);
    assert_eq!(b.notes[&Slot::Labels], before.2[&Slot::Labels]);
    assert_eq!(b.metrics, before.3, "the batch in use is kept");
    assert_eq!(
        b.errors, before.4,
        "the errors of the slots put back, and no other"
    );
    assert_eq!(b.wanted_ingest(), None, "no read after a cancel");
    // Choosing the bundle again with its taxonomy reads it.
    shell.give(
        &mut b,
        &[
            ("tree.csv", TREE.as_bytes()),
            ("bundle-compressed.npz", &bytes),
        ],
    );
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    same_numbers(&mut b, &mut separate(true));
}

#[test]
fn a_temperature_change_streams_the_bundles_logits_again() {
    let mut b = Board::new();
    let mut shell = Shell::new();
    shell.chunk = 100;
    shell.give(
        &mut b,
        &[
            ("tree.csv", TREE.as_bytes()),
            ("bundle-compressed.npz", &fixture("bundle-compressed.npz")),
        ],
    );
    let mut plain = separate(true);
    let mut plain_shell = Shell::new();
    plain_shell.stage(
        &mut plain,
        &[("logits-f64.npy", &fixture("logits-f64.npy"))],
        Origin::User,
    );
    plain_shell.pump(&mut plain);
    for board in [&mut b, &mut plain] {
        board.apply(Action::SetTemperature {
            depth: 2,
            value: 2.5,
        });
        assert!(
            board.wanted_ingest().is_some(),
            "new temperatures: read again"
        );
    }
    shell.pump(&mut b);
    plain_shell.pump(&mut plain);
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    assert_eq!(
        b.active.as_ref().map(|a| a.batch.temperatures().0.clone()),
        Some(vec![1.0, 2.5, 1.0])
    );
    same_numbers(&mut b, &mut plain);
}

#[test]
fn precision_shows_its_wilson_interval_over_the_predictions_it_counts() {
    let b = loaded();
    let mut m = b.metrics.clone().expect("metrics");
    // Newcombe (1998), Statistics in Medicine 17:857–872, Table I: 81/263 has the Wilson
    // interval 0.2553–0.3662 (recomputed with scipy.stats.binomtest(81, 263)
    // .proportion_ci(method="wilson")). Under `exclude` the counts are correct / (correct + wrong).
    m.unverifiable_policy = Policy::Exclude;
    (m.correct, m.unverifiable, m.wrong) = (81, 40, 182);
    assert_eq!(
        hedgerow_board::state::show_precision_interval(&m).as_deref(),
        Some("95 % 0.2553–0.3662 (Wilson, n = 263)")
    );
    // Under `credit` the unverifiable predictions count as right and are in n.
    m.unverifiable_policy = Policy::Credit;
    let line = hedgerow_board::state::show_precision_interval(&m).expect("interval");
    assert!(line.ends_with("(Wilson, n = 303)"), "{line}");
    (m.correct, m.unverifiable, m.wrong) = (0, 0, 0);
    assert_eq!(hedgerow_board::state::show_precision_interval(&m), None);
}
