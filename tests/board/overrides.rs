//! Per-node overrides on the board: listed from a profile, stored by node id so that a reload
//! brings them back on the same taxonomy and another taxonomy drops them, cleared by Reset.

use std::collections::BTreeMap;
use std::rc::Rc;

use hedgerow_board::overrides::NodeOverride;
use hedgerow_board::state::{Action, Board, Stored};
use hedgerow_core::Taxonomy;

use super::{check_against_engine, demo, load_demo, loaded, TREE};

/// A profile of `b`'s settings with these per-node thresholds (the CLI has no flag for them;
/// the page and the CLI read them from the profile's `node_thresholds`).
fn profile_with(b: &Board, nodes: &[(&str, f64)]) -> Rc<Vec<u8>> {
    let mut p = b.profile().expect("a profile of the loaded batch");
    p.node_thresholds = ids(nodes);
    Rc::new(p.to_json().into_bytes())
}

fn ids(nodes: &[(&str, f64)]) -> BTreeMap<String, f64> {
    nodes.iter().map(|&(id, t)| (id.to_string(), t)).collect()
}

fn with_overrides() -> Board {
    let mut b = loaded();
    let profile = profile_with(&b, &[("pet-bottle", 0.8), ("glass", 0.95)]);
    b.apply(Action::File {
        name: "nodes.json".into(),
        bytes: profile,
    });
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    assert_eq!(b.settings.thresholds.nodes.len(), 2);
    check_against_engine(&b);
    b
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
    b.apply(Action::SetRule(hedgerow_core::Rule::Conditional));
    assert_ne!(b.metrics, fresh.metrics);
    let generation = b.generation;
    b.apply(Action::Reset);
    assert!(b.settings.thresholds.nodes.is_empty(), "overrides cleared");
    assert!(b.node_overrides().is_empty());
    assert_eq!(b.settings, fresh.settings, "the defaults");
    assert_eq!(b.stored(), fresh.stored());
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
    let mut stored = Stored {
        nodes: ids(&[("pet-bottle", 0.8), ("b", 0.7)]),
        ..Stored::default()
    };
    let mut page = Board::new();
    page.apply(Action::Restore(stored.clone()));
    page.apply(Action::File {
        name: "tree.csv".into(),
        bytes: Rc::new(TREE.as_bytes().to_vec()),
    });
    // The 7-node tree has a node `b` (column 0) but no `pet-bottle`.
    let tree = Taxonomy::parse(TREE.as_bytes(), "tree.csv").expect("tree");
    assert_eq!(
        page.settings.thresholds.nodes,
        vec![(tree.lookup("b").expect("b"), 0.7)]
    );
    stored.nodes = ids(&[("b", 0.7)]);
    assert_eq!(page.stored().nodes, stored.nodes);
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
fn a_new_taxonomy_keeps_the_overrides_of_the_nodes_it_has_wherever_their_columns_are() {
    let mut b = with_overrides();
    // The demo taxonomy with its rows in reverse order: the same ids in other columns.
    let text = String::from_utf8(demo("taxonomy.csv").to_vec()).expect("utf-8");
    let mut lines: Vec<&str> = text.lines().collect();
    lines[1..].reverse();
    let reversed = lines.join("\n") + "\n";
    let tax = Taxonomy::parse(reversed.as_bytes(), "reversed.csv").expect("reversed");
    let before = b.node_overrides();
    b.apply(Action::File {
        name: "reversed.csv".into(),
        bytes: Rc::new(reversed.into_bytes()),
    });
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    assert_eq!(b.node_overrides(), before);
    let column = tax.lookup("pet-bottle").expect("pet-bottle");
    assert!(b.settings.thresholds.nodes.contains(&(column, 0.8)));
    // Another taxonomy altogether: none of its nodes has an override.
    b.apply(Action::File {
        name: "tree.csv".into(),
        bytes: Rc::new(TREE.as_bytes().to_vec()),
    });
    assert!(b.settings.thresholds.nodes.is_empty());
    assert!(b.stored().nodes.is_empty());
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
fn the_profile_file_is_named_after_the_active_taxonomy() {
    use hedgerow_board::text::LocalTime;
    let b = loaded();
    let at = LocalTime {
        year: 2026,
        month: 12,
        day: 2,
        hour: 9,
        minute: 15,
    };
    assert_eq!(
        b.profile_file_name(at),
        "taxonomy-profile-2026-12-02T0915.json"
    );
}
