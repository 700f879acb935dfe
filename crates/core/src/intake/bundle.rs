//! Reading an `.npz` bundle in steps a caller drives with its own I/O, and pushing a logits
//! file (or a bundle's `logits` member) into the engine's reader.

// One located error per refusal: these run once per file, not per row, so its size is no cost.
#![allow(clippy::result_large_err)]

use super::{quoted, Kind};
use crate::batch::{Labels, Objectness};
use crate::error::{Error, ErrorKind, Errors, Location};
use crate::npz;
use crate::paths::{Ingested, LogitsReader};
use crate::settings::Temperatures;
use crate::taxonomy::Taxonomy;

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

#[cfg(test)]
mod tests {
    use super::*;

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
    }
}
