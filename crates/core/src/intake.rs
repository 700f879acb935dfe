//! The intake: which file is what, how an `.npz` bundle is read, which given file wins over a
//! bundle member, and whether staged files make one batch. Pure: the command line seeks a file
//! and the page slices a `Blob`, and both drive the steps here with the bytes they read.
//!
//! The rules in one place:
//! - **What a file is** comes from its first bytes ([`recognise`]), never from its name alone:
//!   a zip archive is a bundle, a `.npy` is told by its shape and dtype, text by its first line.
//! - **A bundle** is read in steps ([`Bundle`]): its tail, its directory, then per member the
//!   fixed part of the local header and the compressed data. The `logits` member streams
//!   through a [`LogitsFeed`]; `labels` and `objectness` are small and inflated whole.
//! - **A file given alongside a bundle wins** over the bundle's member of the same kind
//!   ([`Bundle::members_wanted`]).
//! - **One batch**: the taxonomy's node count equals the logits' columns, and the labels' and
//!   objectness' rows equal the logits' rows ([`mismatches`]). The command line reports a
//!   mismatch as an error; the page sets the older file aside ([`Part::seq`]).

// One located error per refusal: these run once per file, not per row, so its size is no cost.
#![allow(clippy::result_large_err)]

use crate::batch::{Labels, Objectness};
use crate::error::{Error, ErrorKind, Errors, Location};
use crate::npy::{self, Header};
use crate::npz;
use crate::paths::{Ingested, LogitsReader};
use crate::settings::Temperatures;
use crate::taxonomy::Taxonomy;

/// What a file holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Kind {
    Taxonomy,
    /// A `.npy` of logits, or an `.npz` bundle holding `logits`.
    Logits,
    Labels,
    Objectness,
    Profile,
}

impl Kind {
    pub const ALL: [Kind; 5] = [
        Kind::Taxonomy,
        Kind::Logits,
        Kind::Labels,
        Kind::Objectness,
        Kind::Profile,
    ];

    pub fn title(self) -> &'static str {
        match self {
            Kind::Taxonomy => "taxonomy",
            Kind::Logits => "logits",
            Kind::Labels => "labels",
            Kind::Objectness => "objectness",
            Kind::Profile => "profile",
        }
    }

    /// Whether the kind's name takes a plural verb ("the logits have").
    pub fn is_plural(self) -> bool {
        matches!(self, Kind::Logits | Kind::Labels)
    }

    /// The key a bundle stores this kind under (`np.savez(logits=…, labels=…)`).
    pub fn member_key(self) -> Option<&'static str> {
        match self {
            Kind::Logits => Some("logits"),
            Kind::Labels => Some("labels"),
            Kind::Objectness => Some("objectness"),
            _ => None,
        }
    }
}

/// What [`recognise`] found.
#[derive(Debug, Clone, PartialEq)]
pub struct Recognised {
    pub kind: Kind,
    /// The file is a zip archive (an `.npz` bundle; `kind` is [`Kind::Logits`]).
    pub bundle: bool,
    /// The `.npy` header, for a `.npy` file.
    pub header: Option<Header>,
}

/// Bytes of a file's start that [`recognise`] needs: any `.npy` header, or a text file's first
/// line.
pub const HEAD_BYTES: u64 = 64 << 10;

/// Whether a file's first bytes are a zip archive's: `np.savez` and `np.savez_compressed`
/// write a local file header first.
pub fn is_bundle(head: &[u8]) -> bool {
    head.starts_with(b"PK\x03\x04")
}

fn not_recognised(file: &str, expected: &str, found: String) -> Error {
    Error::new(
        file,
        Location::default(),
        ErrorKind::Invalid {
            what: "not recognised".into(),
            expected: expected.into(),
            found,
        },
    )
}

/// Decide what a file is from its name and first bytes (at least [`HEAD_BYTES`] of them, or the
/// whole file when shorter).
pub fn recognise(name: &str, head: &[u8]) -> Result<Recognised, Error> {
    let found = |kind| Recognised {
        kind,
        bundle: false,
        header: None,
    };
    if is_bundle(head) {
        return Ok(Recognised {
            kind: Kind::Logits,
            bundle: true,
            header: None,
        });
    }
    if head.starts_with(b"\x93NUMPY") {
        let header = match npy::parse_header(head) {
            Ok(Some(h)) => h,
            Ok(None) => {
                return Err(Error::new(
                    name,
                    Location::byte(0),
                    ErrorKind::NpyHeader(format!(
                    "the header is longer than the {} bytes read; expected a header under 64 KiB",
                    head.len()
                )),
                ))
            }
            Err(k) => return Err(Error::new(name, Location::byte(0), k)),
        };
        let column = matches!(header.shape[..], [_] | [_, 1]);
        let kind = match (header.shape.len(), header.dtype.scalar.is_float()) {
            (2, true) if !column => Kind::Logits,
            (_, true) if column => Kind::Objectness,
            (_, false) if column => Kind::Labels,
            _ => {
                return Err(not_recognised(
                    name,
                    "logits (rows, nodes) of floats, objectness (rows,) of floats or labels (rows,) of integers or strings",
                    format!(
                        "a {} array of shape {}",
                        header.dtype.name(),
                        header.shape_text()
                    ),
                ))
            }
        };
        return Ok(Recognised {
            kind,
            bundle: false,
            header: Some(header),
        });
    }
    if name.to_ascii_lowercase().ends_with(".npz") {
        let first: String = head.iter().take(4).map(|b| format!("\\x{b:02x}")).collect();
        return Err(Error::new(
            name,
            Location::byte(0),
            ErrorKind::Invalid {
                what: "zip bundle".into(),
                expected: "an archive as np.savez writes it".into(),
                found: format!("the first bytes {first} (a zip archive starts with PK\\x03\\x04)"),
            },
        ));
    }
    let text = String::from_utf8_lossy(head);
    let text = text.trim_start_matches('\u{feff}').trim_start();
    if text.starts_with('[') {
        return Ok(found(Kind::Taxonomy));
    }
    if text.starts_with('{') {
        return Ok(found(Kind::Profile));
    }
    let first = text.lines().next().unwrap_or("");
    let header: Vec<String> = first
        .split(',')
        .map(|h| h.trim().trim_matches('"').to_ascii_lowercase())
        .collect();
    let has = |c: &str| header.iter().any(|h| h == c);
    if has("id") && has("parent") {
        Ok(found(Kind::Taxonomy))
    } else if has("label") {
        Ok(found(Kind::Labels))
    } else {
        Err(not_recognised(
            name,
            "a .npy array, an .npz bundle, a taxonomy (CSV with id,parent columns or a JSON array), labels (CSV with a label column) or a profile (JSON object)",
            format!(
                "the first line \"{}\"",
                first.chars().take(80).collect::<String>()
            ),
        ))
    }
}

/// Check a file given as `expected` (a command-line flag, say): an error only when its first
/// bytes show it is another kind of file (`labels.csv` given as the taxonomy). A file that is
/// not recognised at all is left to the parser of `expected`, whose message is more precise.
pub fn given_as(name: &str, head: &[u8], expected: Kind) -> Result<Option<Recognised>, Error> {
    let Ok(r) = recognise(name, head) else {
        return Ok(None);
    };
    if r.kind == expected {
        return Ok(Some(r));
    }
    let what = if r.bundle {
        "an .npz bundle".to_string()
    } else {
        format!("a {} file", r.kind.title())
    };
    Err(not_recognised(
        name,
        &format!("a {} file", expected.title()),
        what,
    ))
}

fn zip_error(file: &str, found: &str) -> Error {
    Error::new(
        file,
        Location::default(),
        ErrorKind::Invalid {
            what: "zip bundle".into(),
            expected: "an archive as np.savez writes it".into(),
            found: found.into(),
        },
    )
}

/// An `.npz` bundle, read in the steps a caller takes with its own I/O (it never needs the
/// whole file): the bytes [`Bundle::tail`] of the file, then the directory at
/// [`Bundle::directory`], then [`Bundle::open`]; for each member wanted, the
/// [`npz::LOCAL_HEADER_BYTES`] at its `local_header`, whose [`Bundle::data_range`] is the
/// member's compressed data. Errors name the bundle (or `bundle.npz:member`).
#[derive(Debug, Clone, PartialEq)]
pub struct Bundle {
    pub name: String,
    /// The whole file's length.
    pub len: u64,
    pub members: Vec<npz::Member>,
}

impl Bundle {
    /// The byte range to read first: the end of the file, which holds the directory's end
    /// records.
    pub fn tail(len: u64) -> (u64, u64) {
        (len.saturating_sub(npz::TAIL_BYTES), len)
    }

    /// Where the directory lies (`start..end`), found in the tail's bytes.
    pub fn directory(name: &str, tail: &[u8], len: u64) -> Result<(u64, u64), Error> {
        let (offset, size) = npz::directory_range(tail, len)
            .map_err(|k| Error::new(name, Location::default(), k))?;
        match offset.checked_add(size) {
            Some(end) if end <= len => Ok((offset, end)),
            _ => Err(zip_error(
                name,
                &format!(
                    "a directory of {size} bytes at byte {offset}, past the end of the {len}-byte file"
                ),
            )),
        }
    }

    /// Read the directory. A bundle without a `logits` array, or whose `logits` are compressed
    /// in a way `np.savez` does not write, is refused here, before anything else is read.
    pub fn open(name: &str, len: u64, directory: &[u8]) -> Result<Bundle, Error> {
        let members = npz::parse_directory(directory)
            .map_err(|k| Error::new(name, Location::default(), k))?;
        let bundle = Bundle {
            name: name.to_string(),
            len,
            members,
        };
        let Some(logits) = bundle.member("logits") else {
            return Err(Error::new(
                name,
                Location::default(),
                ErrorKind::NoLogitsMember {
                    found: bundle.keys_text(),
                },
            ));
        };
        npz::Inflow::new(logits)
            .map_err(|k| Error::new(bundle.member_name("logits"), Location::default(), k))?;
        Ok(bundle)
    }

    /// The member `np.load` would give as `key`.
    pub fn member(&self, key: &str) -> Option<&npz::Member> {
        self.members.iter().find(|m| m.key() == key)
    }

    /// The arrays' names, in the archive's order.
    pub fn keys(&self) -> Vec<String> {
        self.members.iter().map(|m| m.key().to_string()).collect()
    }

    /// The arrays' names as messages quote them: `` `logits`, `labels` ``.
    pub fn keys_text(&self) -> String {
        if self.members.is_empty() {
            return "no arrays".into();
        }
        quoted(&self.keys())
    }

    /// How a member is named in messages and slots: `bundle.npz:labels`.
    pub fn member_name(&self, key: &str) -> String {
        format!("{}:{key}", self.name)
    }

    /// The small members to read from the bundle: `labels` and `objectness` when present,
    /// unless a file of that kind was given alongside (`given`), which wins.
    pub fn members_wanted(&self, given: &[Kind]) -> Vec<(Kind, npz::Member)> {
        [Kind::Labels, Kind::Objectness]
            .into_iter()
            .filter(|k| !given.contains(k))
            .filter_map(|k| Some((k, self.member(k.member_key()?)?.clone())))
            .collect()
    }

    /// Where a member's compressed data lies (`start..end`), from the first
    /// [`npz::LOCAL_HEADER_BYTES`] of its local header.
    pub fn data_range(&self, member: &npz::Member, local: &[u8]) -> Result<(u64, u64), Error> {
        let start = npz::data_offset(member, local)
            .map_err(|k| Error::new(&self.name, Location::default(), k))?;
        match start.checked_add(member.compressed) {
            Some(end) if end <= self.len => Ok((start, end)),
            _ => Err(zip_error(
                &self.name,
                &format!("member `{}` runs past the end of the file", member.name),
            )),
        }
    }

    /// The row count of the `logits` member, from the first (at most [`npz::PEEK_BYTES`])
    /// bytes of its compressed data: what caps the small members ([`Bundle::inflate`]).
    pub fn logits_rows(&self, member: &npz::Member, prefix: &[u8]) -> Result<u64, Error> {
        let header = npz::peek_header(member, prefix)
            .map_err(|k| Error::new(self.member_name(member.key()), Location::default(), k))?;
        Ok(header.shape.first().copied().unwrap_or(1))
    }

    /// A small member inflated whole from its compressed data (`data_range`'s bytes), refused
    /// before its data is inflated when its header holds more than one value for each of the
    /// logits' `rows` ([`Bundle::logits_rows`]; `Labels::npy_limit`, `Objectness::npy_limit`).
    pub fn inflate(&self, member: &npz::Member, data: &[u8], rows: u64) -> Result<Vec<u8>, Error> {
        let name = self.member_name(member.key());
        let fail = |k| Error::new(&name, Location::default(), k);
        let logits = self.member_name("logits");
        let limit = match member.key() {
            "objectness" => Objectness::npy_limit(rows, &logits),
            _ => Labels::npy_limit(rows, &logits),
        };
        npz::Inflow::new(member)
            .map_err(fail)?
            .limit(limit)
            .inflate_whole(data)
            .map_err(fail)
    }
}

/// What a logits file's bytes are pushed through, chunk by chunk: a `.npy` straight into the
/// engine's [`LogitsReader`], a bundle's `logits` member through its inflater first. The
/// decompressed array is never held: each chunk becomes greedy paths as it arrives.
pub struct LogitsFeed {
    reader: LogitsReader,
    /// The member's name (`bundle.npz:logits`, for errors) and its inflater.
    inflow: Option<(String, npz::Inflow)>,
}

impl LogitsFeed {
    /// A plain `.npy` file.
    pub fn npy(name: &str, tax: &Taxonomy, temps: &Temperatures) -> Self {
        LogitsFeed {
            reader: LogitsReader::new(name, tax, temps),
            inflow: None,
        }
    }

    /// A bundle's member (its compressed data is what `feed` takes).
    pub fn member(
        bundle: &Bundle,
        member: &npz::Member,
        tax: &Taxonomy,
        temps: &Temperatures,
    ) -> Result<Self, Errors> {
        let name = bundle.member_name(member.key());
        let inflow = npz::Inflow::new(member)
            .map_err(|k| Errors::from(Error::new(&name, Location::default(), k)))?;
        Ok(LogitsFeed {
            reader: LogitsReader::new(&name, tax, temps),
            inflow: Some((name, inflow)),
        })
    }

    /// Feed the next bytes (of the file, or of the member's compressed data).
    pub fn feed(&mut self, tax: &Taxonomy, chunk: &[u8]) -> Result<(), Errors> {
        let reader = &mut self.reader;
        match &mut self.inflow {
            None => reader.feed(tax, chunk),
            Some((name, inflow)) => {
                inflow.feed(chunk, &mut |out: &[u8]| reader.feed(tax, out), |k| {
                    Errors::from(Error::new(name.as_str(), Location::default(), k))
                })
            }
        }
    }

    /// The reader, for callers that drain decoded rows as they go.
    pub fn reader_mut(&mut self) -> &mut LogitsReader {
        &mut self.reader
    }

    /// Check that everything arrived and return the paths.
    pub fn finish(self, tax: &Taxonomy) -> Result<Ingested, Errors> {
        // The reader first: a cut member is best told by the row where the array stops.
        let ingested = self.reader.finish(tax)?;
        if let Some((name, inflow)) = &self.inflow {
            inflow
                .finish()
                .map_err(|k| Errors::from(Error::new(name.as_str(), Location::default(), k)))?;
        }
        Ok(ingested)
    }
}

/// One staged file as far as batch membership goes: what it is, its name in messages, how
/// many rows (or, for a taxonomy, nodes) it holds when known, and when it was given.
#[derive(Debug, Clone, PartialEq)]
pub struct Part {
    pub kind: Kind,
    /// How messages name it: `labels.csv`, or `demo objectness`.
    pub label: String,
    /// Rows (labels, objectness, logits) or nodes (taxonomy), once known.
    pub count: Option<u64>,
    /// Logits only: the columns, once known.
    pub columns: Option<u64>,
    /// Larger is newer: of two files that do not fit together, the older one gives way.
    pub seq: u64,
}

/// Two staged files that cannot be one batch.
#[derive(Debug, Clone, PartialEq)]
pub struct Mismatch {
    pub older: Kind,
    pub newer: Kind,
    /// In the older file's words: `demo objectness: 20,000 rows, the new logits have 550 rows`.
    pub reason: String,
    /// In the newer file's words: `labels.csv: 540 rows, but the logits have 550 rows`.
    pub refusal: String,
}

impl Mismatch {
    /// Which file leaves: a new taxonomy or new logits start a new batch, so the older file
    /// of the pair is set aside; new labels or objectness that do not fit are refused, and the
    /// batch they were meant for is kept.
    pub fn gives_way(&self) -> Kind {
        if matches!(self.newer, Kind::Taxonomy | Kind::Logits) {
            self.older
        } else {
            self.newer
        }
    }
}

/// Whether staged files make one batch: the taxonomy's nodes equal the logits' columns, and
/// labels, objectness and logits have as many rows (labels and objectness are compared with
/// each other when no logits are staged; with logits of rows not yet known, nothing is). Each mismatch names the older file of the pair.
pub fn mismatches(parts: &[Part]) -> Vec<Mismatch> {
    let get = |k: Kind| parts.iter().find(|p| p.kind == k);
    let mut out = Vec::new();
    let mut pair = |a: &Part, a_n: u64, b: &Part, b_n: u64, unit_a: &str, unit_b: &str| {
        if a_n == b_n {
            return;
        }
        let (older, newer, older_n, newer_n, ou, nu) = if a.seq <= b.seq {
            (a, b, a_n, b_n, unit_a, unit_b)
        } else {
            (b, a, b_n, a_n, unit_b, unit_a)
        };
        out.push(Mismatch {
            older: older.kind,
            newer: newer.kind,
            reason: format!(
                "{}: {} {ou}, the new {} {} {} {nu}",
                older.label,
                thousands(older_n),
                newer.kind.title(),
                if newer.kind.is_plural() {
                    "have"
                } else {
                    "has"
                },
                thousands(newer_n),
            ),
            refusal: format!(
                "{}: {} {nu}, but the {} {} {} {ou}",
                newer.label,
                thousands(newer_n),
                older.kind.title(),
                if older.kind.is_plural() {
                    "have"
                } else {
                    "has"
                },
                thousands(older_n),
            ),
        });
    };
    let logits = get(Kind::Logits);
    if let (Some(t), Some(l)) = (get(Kind::Taxonomy), logits) {
        if let (Some(n), Some(c)) = (t.count, l.columns) {
            pair(t, n, l, c, "nodes", "columns");
        }
    }
    match (logits, rows_of(logits)) {
        (_, Some((l, n))) => {
            for k in [Kind::Labels, Kind::Objectness] {
                if let Some((p, m)) = rows_of(get(k)) {
                    pair(p, m, l, n, "rows", "rows");
                }
            }
        }
        // Logits whose rows are not known yet (a bundle before its read): wait for them.
        (Some(_), None) => {}
        (None, None) => {
            if let (Some((a, n)), Some((b, m))) =
                (rows_of(get(Kind::Labels)), rows_of(get(Kind::Objectness)))
            {
                pair(a, n, b, m, "rows", "rows");
            }
        }
    }
    out
}

fn rows_of(p: Option<&Part>) -> Option<(&Part, u64)> {
    p.and_then(|p| Some((p, p.count?)))
}

/// The row-count check of a batch being joined, as located errors: `labels.csv: 540 rows, but
/// logits.npy has 550 rows`. The same comparison as [`mismatches`], worded for a refusal.
pub fn row_errors(logits: &str, rows: u64, others: &[(&str, u64)]) -> Vec<Error> {
    others
        .iter()
        .filter(|(_, n)| *n != rows)
        .map(|(file, n)| {
            Error::new(
                *file,
                Location::default(),
                ErrorKind::RowCount {
                    found: *n,
                    other: logits.to_string(),
                    expected: rows,
                },
            )
        })
        .collect()
}

/// `20000` as `20,000`.
pub fn thousands(n: u64) -> String {
    let digits = n.to_string();
    let mut out = String::new();
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            out.push(',');
        }
        out.push(c);
    }
    out
}

/// Names as messages quote them: `` `logits`, `labels` ``.
pub fn quoted(names: &[String]) -> String {
    names
        .iter()
        .map(|n| format!("`{n}`"))
        .collect::<Vec<_>>()
        .join(", ")
}

#[cfg(test)]
mod tests {
    use super::*;

    fn part(kind: Kind, label: &str, count: u64, seq: u64) -> Part {
        Part {
            kind,
            label: label.into(),
            count: Some(count),
            columns: None,
            seq,
        }
    }

    #[test]
    fn the_older_file_of_a_mismatched_pair_gives_way() {
        let mut logits = part(Kind::Logits, "logits.npy", 550, 5);
        logits.columns = Some(526);
        let parts = [
            part(Kind::Taxonomy, "taxonomy.csv", 526, 4),
            logits,
            part(Kind::Labels, "labels.csv", 550, 6),
            part(Kind::Objectness, "demo objectness", 20_000, 1),
        ];
        let m = mismatches(&parts);
        assert_eq!(m.len(), 1, "{m:?}");
        assert_eq!(m[0].older, Kind::Objectness);
        assert_eq!(
            m[0].gives_way(),
            Kind::Objectness,
            "new logits set the old file aside"
        );
        assert_eq!(
            m[0].reason,
            "demo objectness: 20,000 rows, the new logits have 550 rows"
        );
    }

    #[test]
    fn a_new_taxonomy_sets_older_logits_aside() {
        let mut logits = part(Kind::Logits, "demo logits", 20_000, 1);
        logits.columns = Some(173);
        let m = mismatches(&[logits, part(Kind::Taxonomy, "t.csv", 526, 9)]);
        assert_eq!(m[0].older, Kind::Logits);
        assert_eq!(
            m[0].reason,
            "demo logits: 173 columns, the new taxonomy has 526 nodes"
        );
    }

    #[test]
    fn without_logits_labels_and_objectness_are_compared() {
        let m = mismatches(&[
            part(Kind::Labels, "a", 3, 2),
            part(Kind::Objectness, "b", 4, 1),
        ]);
        assert_eq!(m[0].older, Kind::Objectness);
        assert_eq!(
            m[0].gives_way(),
            Kind::Labels,
            "new labels that do not fit are refused"
        );
        assert_eq!(m[0].refusal, "a: 3 rows, but the objectness has 4 rows");
        assert!(mismatches(&[
            part(Kind::Labels, "a", 3, 2),
            part(Kind::Objectness, "b", 3, 1)
        ])
        .is_empty());
    }

    #[test]
    fn recognition_by_content() {
        let r = |name: &str, b: &[u8]| recognise(name, b).map(|r| (r.kind, r.bundle));
        assert_eq!(r("x", b"id,parent,name\n"), Ok((Kind::Taxonomy, false)));
        assert_eq!(r("x.txt", b"label\nglass\n"), Ok((Kind::Labels, false)));
        assert_eq!(r("x", b"{\"kind\":1}"), Ok((Kind::Profile, false)));
        assert_eq!(r("x", b"  [ {\"id\":\"a\"} ]"), Ok((Kind::Taxonomy, false)));
        assert_eq!(r("x.bin", b"PK\x03\x04rest"), Ok((Kind::Logits, true)));
        let logits = npy::header_bytes("<f4", &[3, 5], false);
        assert_eq!(r("l", &logits), Ok((Kind::Logits, false)));
        let obj = npy::header_bytes("<f4", &[3], false);
        assert_eq!(r("o", &obj), Ok((Kind::Objectness, false)));
        let lab = npy::header_bytes("<i8", &[3], false);
        assert_eq!(r("y", &lab), Ok((Kind::Labels, false)));
        assert!(r("x.npz", b"nope").is_err());
        assert!(r("x.csv", b"a,b\n").is_err());
    }

    #[test]
    fn a_file_given_for_the_wrong_flag_is_named() {
        let e = given_as("t.csv", b"id,parent\n", Kind::Labels).err();
        assert_eq!(
            e.map(|e| e.to_string()).as_deref(),
            Some("t.csv: not recognised: expected a labels file, found `a taxonomy file`")
        );
        assert_eq!(given_as("t.csv", b"what,ever\n", Kind::Labels), Ok(None));
        assert!(given_as("l.csv", b"label\n", Kind::Labels).is_ok_and(|r| r.is_some()));
    }

    #[test]
    fn given_files_win_over_bundle_members() {
        let m = |name: &str| npz::Member {
            name: name.into(),
            method: 0,
            compressed: 1,
            size: 1,
            local_header: 0,
        };
        let b = Bundle {
            name: "b.npz".into(),
            len: 10,
            members: vec![m("logits.npy"), m("labels.npy"), m("objectness.npy")],
        };
        let kinds = |given: &[Kind]| {
            b.members_wanted(given)
                .into_iter()
                .map(|(k, _)| k)
                .collect::<Vec<_>>()
        };
        assert_eq!(kinds(&[]), vec![Kind::Labels, Kind::Objectness]);
        assert_eq!(kinds(&[Kind::Labels]), vec![Kind::Objectness]);
        assert_eq!(thousands(1_234_567), "1,234,567");
        assert_eq!(thousands(550), "550");
    }
}
