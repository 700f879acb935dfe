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

use crate::error::{Error, ErrorKind, Location};
use crate::npy::{self, Header};

mod batch;
mod bundle;

pub use batch::{mismatches, quoted, row_errors, thousands, Mismatch, Part};
pub use bundle::{Bundle, LogitsFeed};

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
    // A name that says `.npy` over bytes that are not one: the `.npy` reader's own message
    // (the command line gives the same), rather than "not recognised".
    if name.to_ascii_lowercase().ends_with(".npy") {
        if let Err(k) = npy::check_magic(head) {
            return Err(Error::new(name, Location::byte(0), k));
        }
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
    let r = match recognise(name, head) {
        Ok(r) => r,
        // A file named `.npz` that is no zip archive: the bundle's message, as the page gives
        // it, rather than the `.npy` parser's.
        Err(e) if expected == Kind::Logits && name.to_ascii_lowercase().ends_with(".npz") => {
            return Err(e)
        }
        Err(_) => return Ok(None),
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

#[cfg(test)]
mod tests {
    use super::*;

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
}
