//! The page's state and actions, natively: loading in any order, errors beside their file with
//! the batch kept, every control re-scoring through the engine, profiles and stored settings.

use std::rc::Rc;

use hedgerow_board::state::{recognise, Action, Board, Slot, Stored};
use hedgerow_core::{evaluate, LogitsReader, Policy, Rule};

fn demo(name: &str) -> Rc<Vec<u8>> {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/../../demo-data/");
    Rc::new(std::fs::read(format!("{path}{name}")).unwrap_or_else(|e| panic!("{name}: {e}")))
}

/// What the page's shell does with a logits file: stream it in chunks when asked.
fn stream_logits(board: &mut Board, name: &str, bytes: &[u8]) {
    board.apply(Action::LogitsChosen {
        name: name.into(),
        total: bytes.len() as u64,
    });
    pump(board, bytes);
}

fn pump(board: &mut Board, bytes: &[u8]) {
    while let Some(key) = board.wanted_ingest() {
        let tax = board
            .taxonomy
            .as_ref()
            .map(|(_, t)| t.clone())
            .expect("taxonomy");
        let temps = hedgerow_core::Temperatures(key.temperatures.clone());
        let mut reader = LogitsReader::new(board.logits.as_deref().unwrap_or(""), &tax, &temps);
        let mut result = Ok(());
        for (i, chunk) in bytes.chunks(1 << 20).enumerate() {
            result = reader.feed(&tax, chunk);
            board.apply(Action::LogitsProgress {
                done: ((i + 1) << 20).min(bytes.len()) as u64,
            });
            if result.is_err() {
                break;
            }
        }
        let result = result.and_then(|()| reader.finish(&tax));
        board.apply(Action::LogitsDone { key, result });
    }
}

fn loaded() -> Board {
    let mut b = Board::new();
    // Files in an awkward order: labels and logits before the taxonomy.
    b.apply(Action::File {
        name: "labels.csv".into(),
        bytes: demo("labels.csv"),
    });
    stream_logits(&mut b, "logits.npy", &demo("logits.npy"));
    assert!(b.active.is_none());
    b.apply(Action::File {
        name: "objectness.npy".into(),
        bytes: demo("objectness.npy"),
    });
    b.apply(Action::File {
        name: "taxonomy.csv".into(),
        bytes: demo("taxonomy.csv"),
    });
    pump(&mut b, &demo("logits.npy"));
    assert!(b.errors.is_empty(), "{:?}", b.errors);
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
        "logits.npy: 20000 rows × 173 nodes, float16"
    );
    assert!(
        b.notes[&Slot::Labels].contains("20000 rows, 2005 background, coarse labels 15.6 %"),
        "{}",
        b.notes[&Slot::Labels]
    );
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
    let mut b = loaded();
    b.apply(Action::SetDepth {
        depth: 2,
        value: 0.77,
    });
    let kept = b.metrics.clone();
    let generation = b.generation;
    b.apply(Action::File {
        name: "labels-bad.csv".into(),
        bytes: Rc::new(b"label\nglass\nnot-a-node\n".to_vec()),
    });
    let errors = &b.errors[&Slot::Labels];
    assert!(errors.iter().any(|e| e == "labels-bad.csv, line 3, column label: label `not-a-node` is not an id of the taxonomy"), "{errors:?}");
    assert_eq!(b.generation, generation, "the active batch is kept");
    assert_eq!(b.metrics, kept);
    assert_eq!(b.settings.thresholds.depths[1], 0.77, "tuning kept");
    // A truncated logits file: error beside logits, batch kept.
    let bytes = demo("logits.npy");
    stream_logits(&mut b, "cut.npy", &bytes[..bytes.len() / 2]);
    assert!(
        b.errors[&Slot::Logits][0].starts_with("cut.npy, row 9999: truncated"),
        "{:?}",
        b.errors[&Slot::Logits]
    );
    assert_eq!(b.metrics, kept);
    // Not a file the page knows.
    b.apply(Action::File {
        name: "notes.txt".into(),
        bytes: Rc::new(b"hello\n".to_vec()),
    });
    assert!(b.errors[&Slot::Other][0].starts_with("notes.txt: not recognised"));
    assert_eq!(b.metrics, kept);
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
    let mut fresh = loaded();
    fresh.apply(Action::File {
        name: "p.json".into(),
        bytes: Rc::new(json.into_bytes()),
    });
    assert!(fresh.errors.is_empty(), "{:?}", fresh.errors);
    assert_eq!(fresh.settings, b.settings);
    assert_eq!(fresh.metrics, b.metrics);
    let other = br#"{"kind":"hedgerow threshold profile","version":1,"rule":"cumulative","object_threshold":0.5,"thresholds":[0.5],"temperatures":[],"unverifiable":"credit","taxonomy":{"fingerprint":"ffff0000ffff","nodes":12,"depth":3}}"#;
    fresh.apply(Action::File {
        name: "other.json".into(),
        bytes: Rc::new(other.to_vec()),
    });
    assert!(fresh.errors[&Slot::Profile][0]
        .starts_with("other.json: this profile was made for another taxonomy"));
    assert_eq!(fresh.settings, b.settings, "settings kept");
}

#[test]
fn stored_settings_restore_and_temperatures_ask_for_a_new_read() {
    let mut b = loaded();
    let stored = Stored {
        rule: Rule::Conditional,
        object_threshold: 0.25,
        thresholds: vec![0.9, 0.8],
        temperatures: vec![1.0, 1.5],
        unverifiable: Policy::Exclude,
    };
    let text = serde_json::to_string(&stored).expect("json");
    b.apply(Action::Restore(serde_json::from_str(&text).expect("back")));
    assert_eq!(b.settings.thresholds.depths, vec![0.9, 0.8, 0.8, 0.8, 0.8]);
    assert_eq!(b.stored().temperatures, vec![1.0, 1.5]);
    let key = b
        .wanted_ingest()
        .expect("temperatures changed: logits must be read again");
    assert_eq!(key.temperatures, vec![1.0, 1.5, 1.5, 1.5, 1.5]);
    pump(&mut b, &demo("logits.npy"));
    assert!(b.wanted_ingest().is_none());
    check_against_engine(&b);
    assert_eq!(
        b.active.as_ref().map(|a| a.batch.temperatures().0.clone()),
        Some(vec![1.0, 1.5, 1.5, 1.5, 1.5])
    );
}

#[test]
fn files_are_recognised_by_content() {
    assert_eq!(recognise("t.csv", b"id,parent,name\n"), Ok(Slot::Taxonomy));
    assert_eq!(
        recognise("whatever", b"[{\"id\":\"a\"}]"),
        Ok(Slot::Taxonomy)
    );
    assert_eq!(recognise("y.csv", b"row,label\n0,a\n"), Ok(Slot::Labels));
    assert_eq!(recognise("p.json", b"{\"kind\": \"x\"}"), Ok(Slot::Profile));
    assert_eq!(
        recognise("l.npy", &demo("logits.npy")[..256]),
        Ok(Slot::Logits)
    );
    assert_eq!(
        recognise("o.npy", &demo("objectness.npy")[..256]),
        Ok(Slot::Objectness)
    );
    assert!(recognise("x.bin", b"\x00\x01").is_err());
}
