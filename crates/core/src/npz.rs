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

/// Decompresses one member as its compressed bytes arrive.
pub struct Inflow {
    state: Option<Box<InflateState>>,
    name: String,
    out: Vec<u8>,
    produced: u64,
    expected: u64,
    done: bool,
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
        })
    }

    /// Feed compressed bytes; `sink` receives the decompressed bytes in order.
    pub fn feed<E>(
        &mut self,
        mut input: &[u8],
        sink: &mut impl FnMut(&[u8]) -> Result<(), E>,
        wrap: impl Fn(ErrorKind) -> E,
    ) -> Result<(), E> {
        let Some(state) = self.state.as_mut() else {
            self.produced += input.len() as u64;
            return sink(input);
        };
        while !input.is_empty() && !self.done {
            let r = inflate(state, input, &mut self.out, MZFlush::None);
            input = &input[r.bytes_consumed..];
            if r.bytes_written > 0 {
                self.produced += r.bytes_written as u64;
                sink(&self.out[..r.bytes_written])?;
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
            let r = inflate(state, &[], &mut self.out, MZFlush::None);
            if r.bytes_written == 0 {
                if let Ok(MZStatus::StreamEnd) = r.status {
                    self.done = true;
                }
                break;
            }
            self.produced += r.bytes_written as u64;
            sink(&self.out[..r.bytes_written])?;
            if let Ok(MZStatus::StreamEnd) = r.status {
                self.done = true;
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
    // The directory's size is a claim, not a fact: reserve at most what the data could hold.
    let mut out = Vec::new();
    let _ = out.try_reserve(member.size.min(data.len() as u64 * 1032) as usize);
    let mut flow = Inflow::new(member)?;
    flow.feed(
        data,
        &mut |chunk: &[u8]| -> Result<(), ErrorKind> {
            out.extend_from_slice(chunk);
            Ok(())
        },
        |k| k,
    )?;
    flow.finish()?;
    Ok(out)
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
