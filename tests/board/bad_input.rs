//! The bad-input catalogue (`tests/bad-input/`, the same cases the command-line test runs)
//! through the page's intake: the demo loaded, then the catalogue's base batch (a user batch),
//! then the case's bad files as one selection through the page's own loading steps. The
//! message must stand beside the slot (as the files panel shows it: the slot's errors or its
//! set-aside line) and the batch in use must be the one it was, untouched.

use std::rc::Rc;

use hedgerow_board::state::{Origin, Slot};

use crate::catalogue::{self, Entry};
use crate::demo_board;

fn slot(name: &str) -> Slot {
    match name {
        "taxonomy" => Slot::Taxonomy,
        "logits" => Slot::Logits,
        "labels" => Slot::Labels,
        "objectness" => Slot::Objectness,
        "profile" => Slot::Profile,
        "other" => Slot::Other,
        _ => panic!("unknown slot {name}"),
    }
}

/// What the page shows beside `slot` after the case's files, or why the case failed.
fn run(entry: &Entry) -> Result<Vec<String>, String> {
    let (mut b, mut shell) = demo_board();
    let base: Vec<(String, Vec<u8>)> = ["taxonomy", "logits", "labels"]
        .iter()
        .filter_map(|s| catalogue::base_name(s))
        .map(|n| {
            let p = catalogue::root().join("base").join(n);
            (n.to_string(), std::fs::read(p).expect("base file"))
        })
        .collect();
    let given: Vec<(&str, &[u8])> = base
        .iter()
        .map(|(n, v)| (n.as_str(), v.as_slice()))
        .collect();
    shell.give(&mut b, &given);
    let before = b.active.clone().ok_or("the base batch is not in use")?;
    if before.origin != Origin::User || !b.errors.is_empty() {
        return Err(format!("the base batch did not load: {:?}", b.errors));
    }
    let metrics = b.metrics.clone();

    let own = entry.own_files();
    let given: Vec<(&str, &[u8])> = own
        .iter()
        .map(|(_, n, v)| (n.as_str(), v.as_slice()))
        .collect();
    shell.give(&mut b, &given);

    let page = entry.case.page.as_ref();
    let at = match page.and_then(|p| p.slot.as_deref()) {
        Some(s) => slot(s),
        None => slot(&own.first().ok_or("a case with no files")?.0),
    };
    let mut shown: Vec<String> = b.errors.get(&at).cloned().unwrap_or_default();
    shown.extend(b.set_aside.get(&at).cloned());
    let mut problems = Vec::new();
    for want in entry
        .case
        .expect
        .iter()
        .chain(page.iter().flat_map(|p| &p.expect))
    {
        if !shown.iter().any(|line| line.contains(want.as_str())) {
            problems.push(format!("lacks «{want}» beside {}", at.title()));
        }
    }
    match &b.active {
        Some(a)
            if Rc::ptr_eq(&a.batch, &before.batch)
                && Rc::ptr_eq(&a.taxonomy, &before.taxonomy)
                && a.names == before.names => {}
        _ => problems.push("the batch in use changed".into()),
    }
    if b.metrics != metrics {
        problems.push("the scores changed".into());
    }
    if problems.is_empty() {
        Ok(shown)
    } else {
        Err(format!(
            "{}; shown beside {}: {shown:?}; all errors: {:?}; set aside: {:?}",
            problems.join("; "),
            at.title(),
            b.errors,
            b.set_aside
        ))
    }
}

#[test]
fn every_bad_file_is_shown_beside_its_slot_and_the_batch_in_use_kept() {
    let cases = catalogue::cases();
    let mut failures = Vec::new();
    let mut through_page = 0;
    for entry in &cases {
        if entry.case.page.as_ref().is_some_and(|p| p.skip) {
            continue;
        }
        through_page += 1;
        if let Err(e) = run(entry) {
            failures.push(format!("{} ({}): {e}", entry.name, entry.case.about));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
    assert!(through_page >= 30, "{through_page} cases through the page");
}
