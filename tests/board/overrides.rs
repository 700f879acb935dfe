//! Per-node overrides on the board: listed from a profile, stored by node id so that a reload
//! brings them back on the same taxonomy and another taxonomy drops them, cleared by Reset.

use std::collections::BTreeMap;
use std::rc::Rc;

use hedgerow_board::overrides::NodeOverride;
use hedgerow_board::state::{Action, Board, Origin, Stored};
use hedgerow_board::wording::LocalTime;
use hedgerow_core::{Rule, Taxonomy};

use super::shell::Shell;
use super::{check_against_engine, demo, demo_board, fixture, loaded, TREE};

fn ids(nodes: &[(&str, f64)]) -> BTreeMap<String, f64> {
    nodes.iter().map(|&(id, t)| (id.to_string(), t)).collect()
}

/// A profile of `b`'s settings with these per-node thresholds (the CLI has no flag for them;
/// the page and the CLI read them from the profile's `node_thresholds`).
fn give_profile_with(b: &mut Board, nodes: &[(&str, f64)]) {
    let mut p = b.profile().expect("a profile of the batch in use");
    p.node_thresholds = ids(nodes);
    b.apply(Action::File {
        name: "nodes.json".into(),
        bytes: Rc::new(p.to_json().into_bytes()),
        origin: Origin::User,
    });
    assert!(b.errors.is_empty(), "{:?}", b.errors);
}

fn with_overrides() -> Board {
    let mut b = loaded();
    give_profile_with(&mut b, &[("pet-bottle", 0.8), ("glass", 0.95)]);
    assert_eq!(b.settings.thresholds.nodes.len(), 2);
    check_against_engine(&b);
    b
}

/// The demo's files into a board that may have settings restored already.
fn load_demo(b: &mut Board) {
    let files =
        ["taxonomy.csv", "logits.npy", "labels.csv", "objectness.npy"].map(|n| (n, demo(n)));
    let given: Vec<(&str, &[u8])> = files.iter().map(|(n, v)| (*n, v.as_slice())).collect();
    Shell::new().give_from(b, &given, Origin::Demo);
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    assert!(b.active.is_some());
}

/// The 7-node tree's batch (numpy's own fixtures) into `b`, replacing the batch in use.
fn load_tree(b: &mut Board) {
    let logits = fixture("logits-f64.npy");
    let labels = fixture("labels-int64.npy");
    Shell::new().give(
        b,
        &[
            ("tree.csv", TREE.as_bytes()),
            ("logits-f64.npy", &logits),
            ("labels-int64.npy", &labels),
        ],
    );
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    assert_eq!(b.depth(), 3, "the tree's batch is in use");
}

#[test]
fn overrides_from_a_profile_are_listed_with_id_name_and_depth() {
    let b = with_overrides();
    assert_eq!(
        b.node_overrides(),
        vec![
            NodeOverride {
                id: "glass".into(),
                name: "Glass".into(),
                depth: 1,
                threshold: 0.95,
            },
            NodeOverride {
                id: "pet-bottle".into(),
                name: "PET bottles".into(),
                depth: 3,
                threshold: 0.8,
            },
        ]
    );
}

#[test]
fn reset_restores_the_defaults_clears_the_overrides_and_keeps_the_batch() {
    let fresh = loaded();
    let mut b = with_overrides();
    b.apply(Action::SetDepth {
        depth: 2,
        value: 0.7,
    });
    b.apply(Action::SetRule(Rule::Conditional));
    assert_ne!(b.metrics, fresh.metrics);
    let generation = b.generation;
    b.apply(Action::Reset);
    assert!(b.settings.thresholds.nodes.is_empty(), "overrides cleared");
    assert!(b.node_overrides().is_empty());
    assert_eq!(b.settings, fresh.settings, "the defaults");
    assert_eq!(b.generation, generation, "the batch is kept");
    assert!(b.active.is_some());
    assert_eq!(b.metrics, fresh.metrics);
    assert_eq!(
        b.stored(),
        Stored {
            thresholds: vec![0.5; 5],
            ..Stored::default()
        }
    );
}

#[test]
fn stored_overrides_round_trip_by_id_and_come_back_after_a_reload() {
    let b = with_overrides();
    let stored = b.stored();
    assert_eq!(stored.nodes, ids(&[("glass", 0.95), ("pet-bottle", 0.8)]));
    let text = serde_json::to_string(&stored).expect("json");
    assert!(
        text.contains(r#""nodes":{"glass":0.95,"pet-bottle":0.8}"#),
        "{text}"
    );
    let back: Stored = serde_json::from_str(&text).expect("back");
    assert_eq!(back, stored);
    // A new page: the settings are restored before anything is loaded, and kept as they are
    // (stored again) until a taxonomy arrives to place them on.
    let mut page = Board::new();
    page.apply(Action::Restore(back));
    assert!(page.node_overrides().is_empty(), "no taxonomy yet");
    assert_eq!(page.stored().nodes, stored.nodes, "waiting, not lost");
    load_demo(&mut page);
    assert_eq!(page.node_overrides(), b.node_overrides());
    assert_eq!(page.stored(), stored);
    assert_eq!(page.metrics, b.metrics);
    check_against_engine(&page);
}

#[test]
fn stored_overrides_are_dropped_for_another_taxonomy() {
    // The 7-node tree has a node `b` but no `pet-bottle`.
    let mut page = Board::new();
    page.apply(Action::Restore(Stored {
        nodes: ids(&[("pet-bottle", 0.8), ("b", 0.7)]),
        ..Stored::default()
    }));
    load_tree(&mut page);
    let tree = Taxonomy::parse(TREE.as_bytes(), "tree.csv").expect("tree");
    assert_eq!(
        page.settings.thresholds.nodes,
        vec![(tree.lookup("b").expect("b"), 0.7)]
    );
    assert_eq!(page.stored().nodes, ids(&[("b", 0.7)]));
    check_against_engine(&page);
    // Values a hand-edited store holds outside [0, 1] are dropped too.
    let mut page = Board::new();
    page.apply(Action::Restore(Stored {
        nodes: ids(&[("pet-bottle", 7.0), ("glass", f64::NAN)]),
        ..Stored::default()
    }));
    load_demo(&mut page);
    assert!(page.settings.thresholds.nodes.is_empty());
    check_against_engine(&page);
}

#[test]
fn a_new_batch_keeps_the_overrides_of_the_nodes_its_taxonomy_has_wherever_their_columns_are() {
    let (mut b, mut shell) = demo_board();
    give_profile_with(&mut b, &[("pet-bottle", 0.8), ("glass", 0.95)]);
    let before = b.node_overrides();
    assert_eq!(before.len(), 2);
    // The demo taxonomy with its rows in reverse order: the same ids in other columns.
    let text = String::from_utf8(demo("taxonomy.csv")).expect("utf-8");
    let mut lines: Vec<&str> = text.lines().collect();
    lines[1..].reverse();
    let reversed = lines.join("\n") + "\n";
    let tax = Taxonomy::parse(reversed.as_bytes(), "reversed.csv").expect("reversed");
    // The demo's logits are read again for it (the shell that gave them reads them).
    shell.give(&mut b, &[("reversed.csv", reversed.as_bytes())]);
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    assert_eq!(
        b.active.as_ref().map(|a| a.taxonomy.fingerprint()),
        Some(tax.fingerprint()),
        "the reversed taxonomy's batch is in use"
    );
    assert_eq!(b.node_overrides(), before);
    let column = tax.lookup("pet-bottle").expect("pet-bottle");
    assert!(b.settings.thresholds.nodes.contains(&(column, 0.8)));
    check_against_engine(&b);
    // Another batch whose taxonomy has none of those nodes: they go, and stay gone.
    load_tree(&mut b);
    assert!(b.settings.thresholds.nodes.is_empty());
    assert!(b.node_overrides().is_empty());
    assert!(b.stored().nodes.is_empty());
    check_against_engine(&b);
    load_demo(&mut b);
    assert!(b.settings.thresholds.nodes.is_empty(), "not brought back");
    // While a new batch is staged but not read, the overrides stay on the batch in use.
    give_profile_with(&mut b, &[("pet-bottle", 0.8)]);
    let mut shell = Shell::new();
    shell.stage(
        &mut b,
        &[
            ("tree.csv", TREE.as_bytes()),
            ("logits-f64.npy", &fixture("logits-f64.npy")),
            ("labels-int64.npy", &fixture("labels-int64.npy")),
        ],
        Origin::User,
    );
    assert_eq!(b.node_overrides().len(), 1);
    assert_eq!(b.stored().nodes, ids(&[("pet-bottle", 0.8)]));
    shell.pump(&mut b);
    assert!(b.node_overrides().is_empty(), "the tree has no pet-bottle");
}

#[test]
fn settings_stored_before_overrides_were_kept_still_load() {
    let old = r#"{"rule":"conditional","object_threshold":0.25,"thresholds":[0.9,0.7],"temperatures":[],"unverifiable":"exclude"}"#;
    let stored: Stored = serde_json::from_str(old).expect("old settings");
    assert!(stored.nodes.is_empty());
    let mut b = loaded();
    b.apply(Action::Restore(stored));
    assert_eq!(b.settings.thresholds.depths, vec![0.9, 0.7, 0.7, 0.7, 0.7]);
    check_against_engine(&b);
    // And settings without overrides are stored as before (no `nodes` key).
    let text = serde_json::to_string(&b.stored()).expect("json");
    assert!(!text.contains("nodes"), "{text}");
}

#[test]
fn the_profile_file_is_named_after_the_taxonomy_in_use() {
    let at = LocalTime {
        year: 2026,
        month: 12,
        day: 2,
        hour: 9,
        minute: 15,
    };
    let (mut b, _) = demo_board();
    assert_eq!(
        b.profile_file_name(at),
        "taxonomy-profile-2026-12-02T0915.json"
    );
    load_tree(&mut b);
    assert_eq!(b.profile_file_name(at), "tree-profile-2026-12-02T0915.json");
}
