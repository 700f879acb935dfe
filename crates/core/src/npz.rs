//! `.npz` bundles (as `np.savez` and `np.savez_compressed` write them): the zip directory is
//! read from the end of the file, and each member is streamed through [`Inflow`] (stored or
//! deflated), so a bundle's logits reach [`LogitsReader`](crate::LogitsReader) chunk by chunk
//! like a plain `.npy`.
//!
//! The zip records are parsed here rather than by a zip crate because the page reads a bundle
//! as `Blob.slice`s (push-based, no `Read + Seek`); inflating uses `miniz_oxide`. Field layouts
//! follow PKWARE's APPNOTE.TXT (sections 4.3.7, 4.3.12, 4.3.14–4.3.16, 4.5.3), from memory.

use miniz_oxide::inflate::stream::{inflate, InflateState};
use miniz_oxide::{DataFormat, MZError, MZFlush, MZStatus};

use crate::error::ErrorKind;
use crate::npy::{self, Header};

/// Bytes from the end of the file that always hold the end-of-directory records (the record,
/// a comment of at most 64 KiB, and the zip64 locator and record before it).
pub const TAIL_BYTES: u64 = 22 + 65_535 + 20 + 56;

/// One member of the bundle.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Member {
    pub name: String,
    /// 0 = stored, 8 = deflated.
    pub method: u16,
    pub compressed: u64,
    pub size: u64,
    pub local_header: u64,
}

impl Member {
    /// The array name as `np.load` gives it (`logits` for `logits.npy`).
    pub fn key(&self) -> &str {
        self.name.strip_suffix(".npy").unwrap_or(&self.name)
    }
}

fn u16_at(b: &[u8], at: usize) -> Option<u16> {
    Some(u16::from_le_bytes(b.get(at..at + 2)?.try_into().ok()?))
}
fn u32_at(b: &[u8], at: usize) -> Option<u32> {
    Some(u32::from_le_bytes(b.get(at..at + 4)?.try_into().ok()?))
}
fn u64_at(b: &[u8], at: usize) -> Option<u64> {
    Some(u64::from_le_bytes(b.get(at..at + 8)?.try_into().ok()?))
}

fn bad(what: &str) -> ErrorKind {
    ErrorKind::Invalid {
        what: "zip bundle".into(),
        expected: "an archive as np.savez writes it".into(),
        found: what.into(),
    }
}

/// Where the central directory lies: `(offset, size)`. `tail` is the last bytes of the file
/// (ideally [`TAIL_BYTES`] of them); `file_len` the whole length.
pub fn directory_range(tail: &[u8], file_len: u64) -> Result<(u64, u64), ErrorKind> {
    let tail_start = file_len.saturating_sub(tail.len() as u64);
    let eocd = (0..tail.len().saturating_sub(21))
        .rev()
        .find(|&i| u32_at(tail, i) == Some(0x0605_4b50))
        .ok_or_else(|| bad("no end-of-directory record (not a zip file, or truncated)"))?;
    let size = u32_at(tail, eocd + 12).ok_or_else(|| bad("short end record"))? as u64;
    let offset = u32_at(tail, eocd + 16).ok_or_else(|| bad("short end record"))? as u64;
    if size != 0xFFFF_FFFF && offset != 0xFFFF_FFFF {
        return Ok((offset, size));
    }
    // Zip64: the locator sits right before the end record and points at the zip64 record.
    let loc = eocd
        .checked_sub(20)
        .filter(|&i| u32_at(tail, i) == Some(0x0706_4b50))
        .ok_or_else(|| bad("zip64 sizes without a zip64 locator"))?;
    let record = u64_at(tail, loc + 8).ok_or_else(|| bad("short zip64 locator"))?;
    let at = record
        .checked_sub(tail_start)
        .ok_or_else(|| bad("zip64 record outside the bytes read"))? as usize;
    if u32_at(tail, at) != Some(0x0606_4b50) {
        return Err(bad("no zip64 end record where the locator points"));
    }
    let size = u64_at(tail, at + 40).ok_or_else(|| bad("short zip64 record"))?;
    let offset = u64_at(tail, at + 48).ok_or_else(|| bad("short zip64 record"))?;
    Ok((offset, size))
}

/// Parse the central directory's bytes into members.
pub fn parse_directory(dir: &[u8]) -> Result<Vec<Member>, ErrorKind> {
    let mut out = Vec::new();
    let mut i = 0;
    while i + 46 <= dir.len() {
        if u32_at(dir, i) != Some(0x0201_4b50) {
            return Err(bad("a directory entry without its signature"));
        }
        let field = |at: usize| u16_at(dir, i + at).unwrap_or(0) as usize;
        let method = u16_at(dir, i + 10).unwrap_or(0);
        let mut compressed = u32_at(dir, i + 20).unwrap_or(0) as u64;
        let mut size = u32_at(dir, i + 24).unwrap_or(0) as u64;
        let (n, e, c) = (field(28), field(30), field(32));
        let mut local_header = u32_at(dir, i + 42).unwrap_or(0) as u64;
        let name_bytes = dir
            .get(i + 46..i + 46 + n)
            .ok_or_else(|| bad("a name past the directory's end"))?;
        let name = String::from_utf8_lossy(name_bytes).into_owned();
        let extra = dir
            .get(i + 46 + n..i + 46 + n + e)
            .ok_or_else(|| bad("an extra field past the directory's end"))?;
        // The zip64 extra field (id 1) holds, in order, only the values whose 32-bit fields are
        // all ones.
        let mut j = 0;
        while j + 4 <= extra.len() {
            let (id, len) = (
                u16_at(extra, j).unwrap_or(0),
                u16_at(extra, j + 2).unwrap_or(0) as usize,
            );
            if id == 1 {
                let mut k = j + 4;
                for slot in [&mut size, &mut compressed, &mut local_header] {
                    if *slot == 0xFFFF_FFFF {
                        *slot = u64_at(extra, k).ok_or_else(|| bad("a short zip64 extra field"))?;
                        k += 8;
                    }
                }
            }
            j += 4 + len;
        }
        out.push(Member {
            name,
            method,
            compressed,
            size,
            local_header,
        });
        i += 46 + n + e + c;
    }
    Ok(out)
}

/// Bytes of a member's local header needed to find its data (30 + name + extra ≤ 30 + 2·64 KiB).
pub const LOCAL_HEADER_BYTES: u64 = 30;

/// Offset of the member's data, given the 30 fixed bytes of its local header.
pub fn data_offset(member: &Member, local: &[u8]) -> Result<u64, ErrorKind> {
    if u32_at(local, 0) != Some(0x0403_4b50) {
        return Err(bad(&format!(
            "no local header for `{}` at byte {}",
            member.name, member.local_header
        )));
    }
    let n = u16_at(local, 26).unwrap_or(0) as u64;
    let e = u16_at(local, 28).unwrap_or(0) as u64;
    Ok(member.local_header.saturating_add(30 + n + e))
}

/// The largest `.npy` header the inflater looks for at a member's start (numpy writes 128
/// bytes; [`npy::parse_header`] refuses lengths past 16 MiB).
const HEADER_LOOK: usize = (1 << 24) + 12;

/// Decompresses one member as its compressed bytes arrive, and never produces more than the
/// member's declared size (its directory entry): an archive whose directory lies about a
/// member is refused as soon as the output passes the declared size. Once the member's `.npy`
/// header has come out, the declared size is checked against the size the header implies, and
/// (with [`Inflow::limit`]) the data against a cap, before any of the data reaches the sink.
pub struct Inflow {
    state: Option<Box<InflateState>>,
    name: String,
    out: Vec<u8>,
    produced: u64,
    expected: u64,
    done: bool,
    /// The member's first bytes until its `.npy` header is complete (`None` after).
    head: Option<Vec<u8>>,
    header: Option<Header>,
    limit: Option<Limit>,
}

/// A cap on a small member's data: what one value per row of the logits can take.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Limit {
    /// Bytes of data at most (after the header).
    pub bytes: u64,
    /// The rows it is derived from, and the file that has them (for the message).
    pub rows: u64,
    pub other: String,
}

impl Inflow {
    pub fn new(member: &Member) -> Result<Self, ErrorKind> {
        let state = match member.method {
            0 => None,
            8 => Some(InflateState::new_boxed(DataFormat::Raw)),
            m => {
                return Err(ErrorKind::Invalid {
                    what: format!("bundle member `{}`", member.name),
                    expected: "stored or deflated (np.savez / np.savez_compressed)".into(),
                    found: format!("compression method {m}"),
                })
            }
        };
        Ok(Inflow {
            state,
            name: member.name.clone(),
            out: vec![0; 1 << 16],
            produced: 0,
            expected: member.size,
            done: false,
            head: Some(Vec::new()),
            header: None,
            limit: None,
        })
    }

    /// Refuse the member once its header shows more data than `limit` allows.
    pub fn limit(mut self, limit: Limit) -> Self {
        self.limit = Some(limit);
        self
    }

    /// The member's `.npy` header, once it has been inflated.
    pub fn header(&self) -> Option<&Header> {
        self.header.as_ref()
    }

    /// A small member's whole compressed data, inflated into one buffer that grows as the
    /// bytes arrive (the directory's size is a claim, not a fact: the inflater refuses more).
    pub fn inflate_whole(mut self, data: &[u8]) -> Result<Vec<u8>, ErrorKind> {
        let mut out = Vec::new();
        self.feed(
            data,
            &mut |chunk: &[u8]| -> Result<(), ErrorKind> {
                out.extend_from_slice(chunk);
                Ok(())
            },
            |k| k,
        )?;
        self.finish()?;
        Ok(out)
    }

    /// Decompressed bytes so far.
    pub fn produced(&self) -> u64 {
        self.produced
    }

    /// Feed compressed bytes; `sink` receives the decompressed bytes in order.
    pub fn feed<E>(
        &mut self,
        input: &[u8],
        sink: &mut impl FnMut(&[u8]) -> Result<(), E>,
        wrap: impl Fn(ErrorKind) -> E,
    ) -> Result<(), E> {
        let mut out = std::mem::take(&mut self.out);
        let r = self.inflate(input, &mut out, sink, &wrap);
        self.out = out;
        r
    }

    fn inflate<E>(
        &mut self,
        mut input: &[u8],
        out: &mut [u8],
        sink: &mut impl FnMut(&[u8]) -> Result<(), E>,
        wrap: &impl Fn(ErrorKind) -> E,
    ) -> Result<(), E> {
        if self.state.is_none() {
            self.check(input).map_err(wrap)?;
            return sink(input);
        }
        while !input.is_empty() && !self.done {
            let Some(state) = self.state.as_mut() else {
                break;
            };
            let r = inflate(state, input, out, MZFlush::None);
            input = &input[r.bytes_consumed..];
            if r.bytes_written > 0 {
                let chunk = &out[..r.bytes_written];
                self.check(chunk).map_err(wrap)?;
                sink(chunk)?;
            }
            match r.status {
                Ok(MZStatus::StreamEnd) => self.done = true,
                Ok(_) => {}
                Err(MZError::Buf) if r.bytes_consumed == 0 && r.bytes_written == 0 => break,
                Err(e) => {
                    return Err(wrap(ErrorKind::Invalid {
                        what: format!("bundle member `{}`", self.name),
                        expected: "valid deflate data".into(),
                        found: format!("{e:?}"),
                    }))
                }
            }
        }
        // Drain what the decoder still holds once the input is used up.
        while !self.done {
            let Some(state) = self.state.as_mut() else {
                break;
            };
            let r = inflate(state, &[], out, MZFlush::None);
            if r.bytes_written == 0 {
                if let Ok(MZStatus::StreamEnd) = r.status {
                    self.done = true;
                }
                break;
            }
            let chunk = &out[..r.bytes_written];
            self.check(chunk).map_err(wrap)?;
            sink(chunk)?;
            if let Ok(MZStatus::StreamEnd) = r.status {
                self.done = true;
            }
        }
        Ok(())
    }

    /// Account for decompressed bytes before they reach the sink: refuse output past the
    /// declared size, and check the header once it is complete.
    fn check(&mut self, chunk: &[u8]) -> Result<(), ErrorKind> {
        let produced = self.produced.saturating_add(chunk.len() as u64);
        if produced > self.expected {
            return Err(ErrorKind::MemberOverflow {
                declared: self.expected,
            });
        }
        self.produced = produced;
        let Some(head) = self.head.as_mut() else {
            return Ok(());
        };
        let room = HEADER_LOOK.saturating_sub(head.len());
        head.extend_from_slice(&chunk[..chunk.len().min(room)]);
        match npy::parse_header(head) {
            // What the header gets wrong is the reader's to say (with its own location).
            Err(_) => self.head = None,
            Ok(None) if head.len() >= HEADER_LOOK => self.head = None,
            Ok(None) => {}
            Ok(Some(h)) => {
                self.head = None;
                let implied = (h.data_offset as u64).saturating_add(h.data_len());
                if self.expected > implied {
                    return Err(ErrorKind::MemberSize {
                        declared: self.expected,
                        implied,
                    });
                }
                if let Some(limit) = &self.limit {
                    if h.data_len() > limit.bytes {
                        return Err(ErrorKind::MemberTooLarge {
                            shape: h.shape_text(),
                            dtype: h.dtype.name().into(),
                            found: h.data_len(),
                            limit: limit.bytes,
                            rows: limit.rows,
                            other: limit.other.clone(),
                        });
                    }
                }
                self.header = Some(h);
            }
        }
        Ok(())
    }

    /// Check the member decompressed to the size the directory promised.
    pub fn finish(&self) -> Result<(), ErrorKind> {
        if self.produced != self.expected {
            return Err(ErrorKind::Truncated {
                expected: self.expected,
                found: self.produced,
            });
        }
        Ok(())
    }
}

/// Compressed bytes of a member enough to find its `.npy` header ([`peek_header`]): a numpy
/// header is 128 bytes, and deflate holds at least a byte per 1,032.
pub const PEEK_BYTES: u64 = 1 << 16;

/// The `.npy` header at the start of a member, from the first compressed bytes of its data
/// (at most [`PEEK_BYTES`] are needed). Reading a bundle's small members needs the logits'
/// row count first, to cap them ([`Limit`]).
pub fn peek_header(member: &Member, data: &[u8]) -> Result<Header, ErrorKind> {
    let mut flow = Inflow::new(member)?;
    let mut head = Vec::new();
    for piece in data.chunks(1 << 12) {
        flow.feed(
            piece,
            &mut |c: &[u8]| -> Result<(), ErrorKind> {
                if head.len() < HEADER_LOOK {
                    head.extend_from_slice(&c[..c.len().min(HEADER_LOOK - head.len())]);
                }
                Ok(())
            },
            |k| k,
        )?;
        if let Some(h) = flow.header() {
            return Ok(h.clone());
        }
        // A bad header: say what the reader would.
        npy::parse_header(&head)?;
    }
    npy::parse_header(&head)?.ok_or_else(|| {
        ErrorKind::NpyHeader(format!(
            "no complete header in the member's first {} bytes",
            head.len()
        ))
    })
}

/// Read a member whole from a bundle held in memory (small members, tests).
pub fn extract(bytes: &[u8], member: &Member) -> Result<Vec<u8>, ErrorKind> {
    let local = bytes
        .get(usize::try_from(member.local_header).unwrap_or(usize::MAX)..)
        .ok_or_else(|| bad("a member past the end"))?;
    let start = data_offset(member, local)? as usize;
    let end = start
        .checked_add(member.compressed as usize)
        .ok_or_else(|| bad("a member past the end"))?;
    let data = bytes.get(start..end).ok_or_else(|| {
        bad(&format!(
            "member `{}` runs past the end of the file",
            member.name
        ))
    })?;
    Inflow::new(member)?.inflate_whole(data)
}

/// The members of a bundle held in memory.
pub fn members(bytes: &[u8]) -> Result<Vec<Member>, ErrorKind> {
    let len = bytes.len() as u64;
    let tail = &bytes[bytes.len().saturating_sub(TAIL_BYTES as usize)..];
    let (offset, size) = directory_range(tail, len)?;
    let end = offset.saturating_add(size).min(usize::MAX as u64) as usize;
    let dir = bytes
        .get(offset.min(usize::MAX as u64) as usize..end)
        .ok_or_else(|| bad("the directory lies past the end"))?;
    parse_directory(dir)
}
