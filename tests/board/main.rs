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

// --- .npz bundles: the steps the page's shell takes with `Blob.slice`, on bytes in memory ---

use hedgerow_board::state::{is_bundle, Bundle, LogitsFeed};
use hedgerow_core::{npz, Errors, Taxonomy, Temperatures};

/// The 7-node tree of `tests/engine/harness.rs`, which the numpy fixtures were written for.
const TREE: &str = "id,parent,name\nb,a,B\na,,A\nc,a,C\nd,,D\ne,d,E\nf,b,F\ng,b,G\n";

fn fixture(name: &str) -> Vec<u8> {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/../../tests/fixtures/numpy/");
    std::fs::read(format!("{path}{name}")).unwrap_or_else(|e| panic!("{name}: {e}"))
}

fn tree(b: &mut Board) {
    b.apply(Action::File {
        name: "tree.csv".into(),
        bytes: Rc::new(TREE.as_bytes().to_vec()),
    });
}

/// Stream what `make` feeds into paths whenever the board asks, in chunks of `chunk` bytes.
fn pump_feed(
    board: &mut Board,
    data: &[u8],
    chunk: usize,
    make: impl Fn(&Taxonomy, &Temperatures) -> Result<LogitsFeed, Errors>,
) {
    while let Some(key) = board.wanted_ingest() {
        let tax = board
            .taxonomy
            .as_ref()
            .map(|(_, t)| t.clone())
            .expect("taxonomy");
        let temps = Temperatures(key.temperatures.clone());
        board.apply(Action::LogitsProgress { done: 0 });
        let result = make(&tax, &temps).and_then(|mut feed| {
            for (i, c) in data.chunks(chunk).enumerate() {
                feed.feed(&tax, c)?;
                board.apply(Action::LogitsProgress {
                    done: ((i + 1) * chunk).min(data.len()) as u64,
                });
            }
            feed.finish(&tax)
        });
        board.apply(Action::LogitsDone { key, result });
    }
}

/// The bundle's directory, read from the tail as the shell does.
fn open_bundle(name: &str, bytes: &[u8]) -> Result<Bundle, String> {
    let len = bytes.len() as u64;
    let (a, z) = Bundle::tail(len);
    let (ds, de) = Bundle::directory(name, &bytes[a as usize..z as usize], len)?;
    Bundle::open(name, len, &bytes[ds as usize..de as usize])
}

fn data_range(bundle: &Bundle, bytes: &[u8], m: &npz::Member) -> Result<(usize, usize), String> {
    let at = m.local_header as usize;
    let local =
        &bytes[at.min(bytes.len())..(at + npz::LOCAL_HEADER_BYTES as usize).min(bytes.len())];
    bundle
        .data_range(m, local)
        .map(|(s, e)| (s as usize, e as usize))
}

/// What the shell does with a bundle among the files of one selection (`given`: the slots of
/// the other files chosen with it): open it, read the small members whole unless given
/// separately, choose it, and stream its logits member in `chunk`-byte pieces.
fn choose_bundle(b: &mut Board, name: &str, bytes: &[u8], given: &[Slot], chunk: usize) {
    assert!(is_bundle(bytes));
    let bundle = match open_bundle(name, bytes) {
        Ok(bundle) => bundle,
        Err(message) => {
            b.apply(Action::Unreadable {
                slot: Some(Slot::Logits),
                message,
            });
            return;
        }
    };
    let logits = bundle.member("logits").expect("open checks it").clone();
    let (start, end) = match data_range(&bundle, bytes, &logits) {
        Ok(r) => r,
        Err(message) => {
            b.apply(Action::Unreadable {
                slot: Some(Slot::Logits),
                message,
            });
            return;
        }
    };
    let prefix = &bytes[start..end.min(start + npz::PEEK_BYTES as usize)];
    // Without a readable logits header the small members are not read: the logits' own read
    // reports the problem.
    let rows = bundle.logits_rows(&logits, prefix).ok();
    let mut failed = Vec::new();
    let mut whole = |slot: Slot, key: &str| {
        let rows = rows?;
        let m = bundle.member(key).filter(|_| !given.contains(&slot))?;
        let read =
            data_range(&bundle, bytes, m).and_then(|(s, e)| bundle.inflate(m, &bytes[s..e], rows));
        match read {
            Ok(v) => Some(Rc::new(v)),
            Err(message) => {
                failed.push((slot, message));
                None
            }
        }
    };
    let labels = whole(Slot::Labels, "labels");
    let objectness = whole(Slot::Objectness, "objectness");
    b.apply(Action::BundleChosen {
        name: name.into(),
        total: (end - start) as u64,
        keys: bundle.keys(),
        labels,
        objectness,
    });
    for (slot, message) in failed {
        b.apply(Action::Unreadable {
            slot: Some(slot),
            message,
        });
    }
    pump_feed(b, &bytes[start..end], chunk, |tax, temps| {
        LogitsFeed::member(name, &logits, tax, temps)
    });
}

/// The same arrays as separate files (numpy's own, from the same script).
fn separate(objectness: bool) -> Board {
    let mut b = Board::new();
    tree(&mut b);
    let logits = fixture("logits-f64.npy");
    b.apply(Action::LogitsChosen {
        name: "logits-f64.npy".into(),
        total: logits.len() as u64,
    });
    pump_feed(&mut b, &logits, 100, |tax, temps| {
        Ok(LogitsFeed::npy("logits-f64.npy", tax, temps))
    });
    b.apply(Action::File {
        name: "labels-int64.npy".into(),
        bytes: Rc::new(fixture("labels-int64.npy")),
    });
    if objectness {
        b.apply(Action::File {
            name: "objectness.npy".into(),
            bytes: Rc::new(fixture("objectness.npy")),
        });
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
        assert_eq!(recognise(name, &bytes[..64]), Ok(Slot::Logits));
        for chunk in [7, 1 << 20] {
            let mut b = Board::new();
            tree(&mut b);
            choose_bundle(&mut b, name, &bytes, &[], chunk);
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
            assert!(
                b.notes[&Slot::Labels]
                    .starts_with(&format!("{name}:labels: 12 rows, 2 background")),
                "{}",
                b.notes[&Slot::Labels]
            );
            same_numbers(&mut b, &mut separate(true));
        }
    }
}

#[test]
fn progress_counts_the_compressed_bytes_of_the_logits_member() {
    let bytes = fixture("bundle-compressed.npz");
    let mut b = Board::new();
    tree(&mut b);
    let bundle = open_bundle("bundle-compressed.npz", &bytes).expect("bundle");
    let m = bundle.member("logits").expect("logits");
    assert_eq!((m.method, m.compressed, m.size), (8, 776, 800));
    b.apply(Action::BundleChosen {
        name: "bundle-compressed.npz".into(),
        total: m.compressed,
        keys: bundle.keys(),
        labels: None,
        objectness: None,
    });
    assert!(
        b.wanted_ingest().is_some(),
        "the bundle's logits are to be streamed"
    );
    b.apply(Action::LogitsProgress { done: 300 });
    let p = b.progress.clone().expect("progress");
    assert_eq!(
        (p.name.as_str(), p.done, p.total),
        ("bundle-compressed.npz", 300, 776)
    );
}

#[test]
fn a_bundle_after_the_demo_fills_labels_and_objectness_and_separate_files_win() {
    // The page starts with the demo; a bundle and its taxonomy replace the whole batch.
    let mut b = loaded();
    tree(&mut b);
    choose_bundle(&mut b, "bundle.npz", &fixture("bundle.npz"), &[], 1 << 20);
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    same_numbers(&mut b, &mut separate(true));

    // Labels chosen alongside the bundle are used instead of the bundle's (as --labels is).
    let mut b = loaded();
    tree(&mut b);
    choose_bundle(
        &mut b,
        "bundle.npz",
        &fixture("bundle.npz"),
        &[Slot::Labels],
        1 << 20,
    );
    assert_eq!(
        b.labels.as_ref().map(|(n, _)| n.as_str()),
        Some("labels.csv"),
        "kept for now"
    );
    b.apply(Action::File {
        name: "labels-str.npy".into(),
        bytes: Rc::new(fixture("labels-str.npy")),
    });
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
fn a_bundle_without_objectness_leaves_none_staged() {
    let bytes = renamed(
        "bundle-compressed.npz",
        b"objectness.npy",
        b"confidence.npy",
    );
    let mut b = loaded();
    tree(&mut b);
    choose_bundle(&mut b, "b.npz", &bytes, &[], 64);
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    assert_eq!(
        b.notes[&Slot::Objectness],
        "none: b.npz holds no objectness"
    );
    let a = b.active.as_ref().expect("active without objectness");
    assert!(!a.batch.has_objectness());
    assert!(!a.names.contains_key(&Slot::Objectness));
    same_numbers(&mut b, &mut separate(false));
}

#[test]
fn bundle_errors_show_beside_the_logits_in_the_engines_words_and_keep_the_batch() {
    let mut b = loaded();
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
    choose_bundle(&mut b, "scores.npz", &bytes, &[], 1 << 20);
    check(&b, "scores.npz: expected a `logits` array in the bundle, found `scores`, `labels`, `objectness`");
    assert_eq!(
        b.logits.as_deref(),
        Some("logits.npy"),
        "the logits in use stay staged"
    );

    // Not a whole zip archive.
    let bytes = fixture("bundle.npz");
    choose_bundle(&mut b, "cut.npz", &bytes[..bytes.len() - 30], &[], 1 << 20);
    check(&b, "cut.npz: zip bundle: expected an archive as np.savez writes it, found `no end-of-directory record");

    // A compression np.savez does not write (bzip2 = 12) on the logits member.
    let mut bytes = fixture("bundle-compressed.npz");
    let dir = (0..bytes.len() - 4)
        .find(|&i| bytes[i..i + 4] == *b"PK\x01\x02")
        .expect("the first directory entry (logits)");
    bytes[dir + 10] = 12;
    choose_bundle(&mut b, "bzip.npz", &bytes, &[], 1 << 20);
    check(&b, "bzip.npz:logits: bundle member `logits.npy`: expected stored or deflated (np.savez / np.savez_compressed), found `compression method 12`");

    // Deflate data that is not: found while streaming.
    let mut bytes = fixture("bundle-compressed.npz");
    let bundle = open_bundle("x", &bytes).expect("bundle");
    let (start, _) =
        data_range(&bundle, &bytes, bundle.member("logits").expect("logits")).expect("range");
    bytes[start] = 0xff; // block type 3: reserved
    tree(&mut b);
    choose_bundle(&mut b, "bad-deflate.npz", &bytes, &[], 1 << 20);
    check(
        &b,
        "bad-deflate.npz:logits: bundle member `logits.npy`: expected valid deflate data",
    );
    assert_eq!(b.wanted_ingest(), None, "a failed read is not retried");

    // Named .npz but not a zip archive.
    assert_eq!(
        recognise("text.npz", b"id,parent\n"),
        Err("text.npz: zip bundle: expected an archive as np.savez writes it, found `the first bytes \\x69\\x64\\x2c\\x70 (a zip archive starts with PK\\x03\\x04)`".to_string())
    );
}

#[test]
fn cancelling_a_bundle_puts_back_the_labels_and_objectness_and_starts_no_read() {
    let mut b = loaded();
    // The bundle comes with its taxonomy, so the files staged no longer fit the batch in use
    // (the demo's labels are not ids of the new taxonomy: an error beside them).
    tree(&mut b);
    let before = (
        b.labels.as_ref().map(|(n, _)| n.clone()),
        b.objectness.as_ref().map(|(n, _)| n.clone()),
        b.notes.clone(),
        b.metrics.clone(),
        b.errors.clone(),
    );
    assert!(before.4.contains_key(&Slot::Labels));
    let bytes = fixture("bundle-compressed.npz");
    let bundle = open_bundle("bundle-compressed.npz", &bytes).expect("bundle");
    let labels = bundle.member("labels").expect("labels");
    let (s, e) = data_range(&bundle, &bytes, labels).expect("range");
    let logits = bundle.member("logits").expect("logits");
    let (ls, _) = data_range(&bundle, &bytes, logits).expect("range");
    let rows = bundle
        .logits_rows(logits, &bytes[ls..])
        .expect("logits rows");
    b.apply(Action::BundleChosen {
        name: "bundle-compressed.npz".into(),
        total: 776,
        keys: bundle.keys(),
        labels: Some(Rc::new(
            bundle.inflate(labels, &bytes[s..e], rows).expect("labels"),
        )),
        objectness: None,
    });
    assert_eq!(
        b.labels.as_ref().map(|(n, _)| n.as_str()),
        Some("bundle-compressed.npz:labels")
    );
    assert!(b.wanted_ingest().is_some());
    b.apply(Action::LogitsProgress { done: 100 });
    b.apply(Action::LogitsCancelled);
    assert!(b.progress.is_none());
    assert_eq!(b.logits.as_deref(), Some("logits.npy"));
    assert_eq!(b.bundle, None);
    assert_eq!(b.labels.as_ref().map(|(n, _)| n.clone()), before.0);
    assert_eq!(b.objectness.as_ref().map(|(n, _)| n.clone()), before.1);
    assert_eq!(b.notes[&Slot::Labels], before.2[&Slot::Labels]);
    assert_eq!(b.metrics, before.3, "the batch in use is kept");
    assert_eq!(
        b.errors, before.4,
        "the errors of the slots put back, and no other"
    );
    // The demo's logits under the new taxonomy would fail: no read starts by itself.
    assert_eq!(b.wanted_ingest(), None, "no read after a cancel");
    // Choosing the bundle again reads it.
    choose_bundle(&mut b, "bundle-compressed.npz", &bytes, &[], 1 << 20);
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    same_numbers(&mut b, &mut separate(true));
}

#[test]
fn a_temperature_change_streams_the_bundles_logits_again() {
    let bytes = fixture("bundle-compressed.npz");
    let mut b = Board::new();
    tree(&mut b);
    choose_bundle(&mut b, "bundle-compressed.npz", &bytes, &[], 100);
    let mut plain = separate(true);
    let bundle = open_bundle("bundle-compressed.npz", &bytes).expect("bundle");
    let logits = bundle.member("logits").expect("logits").clone();
    let (start, end) = data_range(&bundle, &bytes, &logits).expect("range");
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
    pump_feed(&mut b, &bytes[start..end], 100, |tax, temps| {
        LogitsFeed::member("bundle-compressed.npz", &logits, tax, temps)
    });
    let npy = fixture("logits-f64.npy");
    pump_feed(&mut plain, &npy, 100, |tax, temps| {
        Ok(LogitsFeed::npy("logits-f64.npy", tax, temps))
    });
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    assert_eq!(
        b.active.as_ref().map(|a| a.batch.temperatures().0.clone()),
        Some(vec![1.0, 2.5, 1.0])
    );
    same_numbers(&mut b, &mut plain);
}
