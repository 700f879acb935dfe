//! The catalogue of bad input (`tests/bad-input/<case>/`), read by the command-line test and by
//! the page's intake test alike: one folder per case, holding the files that differ from
//! `tests/bad-input/base/` and a `case.json` saying which slot each file goes to, any extra
//! command-line flags and the message fragments each interface must show.

// Each test binary reads the parts for its interface (the page has no flags, the command line
// no page slot).
#![allow(dead_code)]

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::Deserialize;

/// One case's `case.json`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Case {
    /// What is wrong, in words.
    pub about: String,
    /// Slot (`taxonomy`, `logits`, `labels`, `objectness`, `profile`) → a file in the case's
    /// folder; the other slots take the base batch's files.
    #[serde(default)]
    pub files: BTreeMap<String, String>,
    /// Slots the base batch does not fill for this case (so a bundle's member is read).
    #[serde(default)]
    pub omit: Vec<String>,
    /// Extra command-line flags (the page has no such input: see `page`).
    #[serde(default)]
    pub flags: Vec<String>,
    /// Fragments both interfaces must show: the command line on standard error, the page
    /// beside the slot.
    #[serde(default)]
    pub expect: Vec<String>,
    /// Fragments only the command line must show.
    #[serde(default)]
    pub cli: Vec<String>,
    /// How the page sees the case; absent: like the command line, beside the bad file's slot.
    #[serde(default)]
    pub page: Option<Page>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Page {
    /// Why the page differs (required, so every difference is explained).
    pub why: String,
    /// The slot the message is shown beside (`other` for a file not recognised), when it is
    /// not the bad file's.
    #[serde(default)]
    pub slot: Option<String>,
    /// Fragments only the page must show.
    #[serde(default)]
    pub expect: Vec<String>,
    /// The case does not reach the page (a command-line flag).
    #[serde(default)]
    pub skip: bool,
}

/// A case, its folder and name.
pub struct Entry {
    pub name: String,
    pub dir: PathBuf,
    pub case: Case,
}

impl Entry {
    /// The file for a slot: the case's own, or the base batch's.
    pub fn file(&self, slot: &str) -> Option<(String, Vec<u8>)> {
        let (dir, name) = match self.case.files.get(slot) {
            Some(name) => (self.dir.clone(), name.clone()),
            None if self.case.omit.iter().any(|s| s == slot) => return None,
            None => (root().join("base"), base_name(slot)?.to_string()),
        };
        let bytes =
            std::fs::read(dir.join(&name)).unwrap_or_else(|e| panic!("{}: {name}: {e}", self.name));
        Some((name, bytes))
    }

    /// The case's own files, by slot.
    pub fn own_files(&self) -> Vec<(String, String, Vec<u8>)> {
        self.case
            .files
            .iter()
            .map(|(slot, name)| {
                let bytes = std::fs::read(self.dir.join(name))
                    .unwrap_or_else(|e| panic!("{}: {name}: {e}", self.name));
                (slot.clone(), name.clone(), bytes)
            })
            .collect()
    }
}

/// The base batch's file names by slot: a 3-node tree (x with children y, z) and 4 rows.
pub fn base_name(slot: &str) -> Option<&'static str> {
    match slot {
        "taxonomy" => Some("t.csv"),
        "logits" => Some("l.npy"),
        "labels" => Some("y.csv"),
        _ => None,
    }
}

pub fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../tests/bad-input")
}

/// Every case, in name order.
pub fn cases() -> Vec<Entry> {
    let mut out = Vec::new();
    for entry in std::fs::read_dir(root()).expect("tests/bad-input") {
        let dir = entry.expect("entry").path();
        let json = dir.join("case.json");
        if !json.exists() {
            continue;
        }
        let name = dir
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        let text = std::fs::read_to_string(&json).expect("case.json");
        let case: Case =
            serde_json::from_str(&text).unwrap_or_else(|e| panic!("{name}/case.json: {e}"));
        for slot in case.files.keys() {
            assert!(
                ["taxonomy", "logits", "labels", "objectness", "profile"].contains(&slot.as_str()),
                "{name}: unknown slot {slot}"
            );
        }
        out.push(Entry { name, dir, case });
    }
    out.sort_by(|a, b| a.name.cmp(&b.name));
    out
}
