//! Streaming ingestion of logits: each row is turned into its greedy path as soon as it is
//! read, so the N×M matrix is never held. What is kept per row is the path's leaf and the
//! conditional probability at each depth (struct of arrays).

use crate::error::{Collector, Error, ErrorKind, Errors, Location, Result};
use crate::npy::{self, Dtype, Header, Scalar};
use crate::settings::Temperatures;
use crate::taxonomy::Taxonomy;

/// Stored beyond a path's leaf: negative, so no threshold in [0, 1] lets descent pass it.
pub const PAD: f32 = -1.0;

/// The greedy paths of a batch: row `r` descends root → `ancestor(leaf[r], 1)` → … → `leaf[r]`,
/// and `cond[r * width + d - 1]` is p(node at depth d | its parent), rounded to f32.
#[derive(Debug, Clone, Default)]
pub struct Paths {
    width: usize,
    leaf: Vec<u32>,
    cond: Vec<f32>,
}

impl Paths {
    pub fn new(width: usize) -> Self {
        Paths {
            width,
            leaf: Vec::new(),
            cond: Vec::new(),
        }
    }
    pub fn len(&self) -> usize {
        self.leaf.len()
    }
    pub fn is_empty(&self) -> bool {
        self.leaf.is_empty()
    }
    /// Depth D of the taxonomy the paths were built for.
    pub fn width(&self) -> usize {
        self.width
    }
    pub fn leaf(&self, r: usize) -> u32 {
        self.leaf[r]
    }
    /// Conditional probabilities along row `r`'s path, depth 1 first (padded to `width` with [`PAD`]).
    pub fn cond(&self, r: usize) -> &[f32] {
        &self.cond[r * self.width..(r + 1) * self.width]
    }
    /// All conditionals, row-major (`width` per row).
    pub fn cond_all(&self) -> &[f32] {
        &self.cond
    }
    pub fn leaves(&self) -> &[u32] {
        &self.leaf
    }
    /// Bytes held per row.
    pub fn bytes_per_row(&self) -> usize {
        4 + 4 * self.width
    }
    /// Append one row's path (tests and generators build paths directly).
    pub fn push(&mut self, leaf: u32, cond: &[f32]) {
        self.leaf.push(leaf);
        let start = self.cond.len();
        self.cond.resize(start + self.width, PAD);
        let n = cond.len().min(self.width);
        self.cond[start..start + n].copy_from_slice(&cond[..n]);
    }
}

/// Softmax over each sibling group along the greedy descent of one row of logits.
/// Writes the conditionals into `cond` (depth 1 first) and returns the leaf.
///
/// Conditionals are computed in f64 as exp(z − max z) / Σ exp(z − max z) with z = logit / T_d,
/// the child with the highest probability is taken (ties: the lowest column), and the value is
/// stored as f32.
pub fn descend(
    tax: &Taxonomy,
    temps: &[f64],
    logits: &[f64],
    cond: &mut [f32],
    scratch: &mut Vec<f64>,
) -> u32 {
    descend_with(tax, temps, |c| logits[c], cond, scratch)
}

/// [`descend`] reading each logit through `logit(column)`, so a row can stay in its file
/// encoding and only the values on the path's sibling groups are decoded.
#[inline]
pub fn descend_with(
    tax: &Taxonomy,
    temps: &[f64],
    logit: impl Fn(usize) -> f64,
    cond: &mut [f32],
    scratch: &mut Vec<f64>,
) -> u32 {
    let mut v = tax.root();
    let mut d = 0;
    loop {
        let children = tax.children(v);
        if children.is_empty() {
            return v;
        }
        d += 1;
        let (best, p) = if let [only] = children {
            (*only, 1.0)
        } else {
            let t = temps.get(d - 1).copied().unwrap_or(1.0);
            let sum = group_exps(children, t, &logit, scratch);
            let mut best = 0;
            let mut best_p = f64::NEG_INFINITY;
            for (i, e) in scratch.iter().enumerate() {
                let p = e / sum;
                if p > best_p {
                    best_p = p;
                    best = i;
                }
            }
            (children[best], best_p)
        };
        if let Some(slot) = cond.get_mut(d - 1) {
            *slot = p as f32;
        }
        v = best;
    }
}

/// The softmax of one sibling group, shared by the greedy descent and the inspector's
/// runner-ups (`crate::siblings`) so both give the same bits: fills `exps` with
/// exp(z − max z) per child (z = logit / `t`, children in column order) and returns their sum;
/// child i's probability is `exps[i] / sum`.
#[inline]
pub(crate) fn group_exps(
    children: &[u32],
    t: f64,
    logit: impl Fn(usize) -> f64,
    exps: &mut Vec<f64>,
) -> f64 {
    exps.clear();
    exps.extend(children.iter().map(|&c| logit(c as usize) / t));
    let max = exps.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let mut sum = 0.0;
    for z in exps.iter_mut() {
        // libm's exp, not the platform's (glibc natively, libm in wasm): the same bits in the
        // page and the command line.
        *z = libm::exp(*z - max);
        sum += *z;
    }
    sum
}

/// Whether every float in `row` is finite, checked on the raw bits (exponent not all ones).
fn all_finite(dtype: Dtype, row: &[u8]) -> bool {
    macro_rules! scan {
        ($n:literal, $ty:ty, $mask:expr) => {{
            let mut bad = false;
            for c in row.chunks_exact($n) {
                let mut a = [0u8; $n];
                a.copy_from_slice(c);
                let bits = if dtype.big_endian {
                    <$ty>::from_be_bytes(a)
                } else {
                    <$ty>::from_le_bytes(a)
                };
                bad |= bits & $mask == $mask;
            }
            !bad
        }};
    }
    match dtype.scalar {
        Scalar::F16 => scan!(2, u16, 0x7C00u16),
        Scalar::F32 => scan!(4, u32, 0x7F80_0000u32),
        _ => scan!(8, u64, 0x7FF0_0000_0000_0000u64),
    }
}

/// The result of reading a logits file.
#[derive(Debug, Clone)]
pub struct Ingested {
    /// Shared, so a batch built from it (and rebuilt when labels change) holds no second copy.
    pub paths: std::sync::Arc<Paths>,
    /// blake3 of the file's bytes.
    pub digest: String,
    pub header: Header,
}

/// Push-based `.npy` logits reader: feed it the file in chunks of any size (a native reader,
/// or `Blob.slice` in the page), then `finish`.
pub struct LogitsReader {
    file: String,
    temps: Vec<f64>,
    head: Vec<u8>,
    header: Option<Header>,
    carry: Vec<u8>,
    row_bytes: usize,
    rows_done: u64,
    /// Rows already handed out by [`LogitsReader::take_paths`].
    rows_taken: u64,
    data_seen: u64,
    values: Vec<f64>,
    scratch: Vec<f64>,
    paths: Paths,
    hasher: blake3::Hasher,
    errors: Collector,
    /// Fortran-order arrays cannot be streamed by row: their data is kept until `finish`.
    fortran: Option<Vec<u8>>,
}

impl LogitsReader {
    pub fn new(file: &str, tax: &Taxonomy, temps: &Temperatures) -> Self {
        LogitsReader {
            file: file.to_string(),
            temps: temps.expand(tax.max_depth()),
            head: Vec::new(),
            header: None,
            carry: Vec::new(),
            row_bytes: 0,
            rows_done: 0,
            rows_taken: 0,
            data_seen: 0,
            values: Vec::new(),
            scratch: Vec::new(),
            paths: Paths::new(tax.max_depth()),
            hasher: blake3::Hasher::new(),
            errors: Collector::default(),
            fortran: None,
        }
    }

    /// The header, once enough bytes have been fed.
    pub fn header(&self) -> Option<&Header> {
        self.header.as_ref()
    }

    /// Rows decoded so far.
    pub fn rows_done(&self) -> u64 {
        self.rows_done
    }

    /// The paths of the rows decoded since the last call, and the index of the first of them,
    /// so a caller can consume rows as they stream in and hold only one chunk's worth. Rows
    /// taken here are not in what [`finish`](Self::finish) returns (which still checks the
    /// whole file). Fortran-order arrays give no rows before `finish`.
    pub fn take_paths(&mut self) -> (u64, Paths) {
        let first = self.rows_taken;
        let fresh = Paths::new(self.paths.width);
        let paths = std::mem::replace(&mut self.paths, fresh);
        self.rows_taken += paths.len() as u64;
        (first, paths)
    }

    /// Whether a per-value problem (NaN, ±inf) has been found so far; `finish` reports them.
    pub fn has_errors(&self) -> bool {
        !self.errors.is_empty()
    }

    fn fail(&self, at: Location, kind: ErrorKind) -> Errors {
        Error::new(&self.file, at, kind).into()
    }

    /// Feed the next bytes of the file. A fatal problem (bad header, wrong shape or dtype) is
    /// returned at once; per-value problems (NaN, ±inf) are collected and returned by `finish`.
    pub fn feed(&mut self, tax: &Taxonomy, chunk: &[u8]) -> Result<()> {
        self.hasher.update(chunk);
        let mut data = chunk;
        if self.header.is_none() {
            self.head.extend_from_slice(chunk);
            let Some(header) =
                npy::parse_header(&self.head).map_err(|k| self.fail(Location::byte(0), k))?
            else {
                return Ok(());
            };
            self.check_header(tax, &header)?;
            let rest = self.head.split_off(header.data_offset);
            self.head = Vec::new();
            self.row_bytes = header.shape[1] as usize * header.dtype.scalar.size();
            // The header's row count is a claim: room is made as the rows arrive (see `room`),
            // never past the claim, so a header announcing 10^9 rows over a few bytes costs
            // nothing. Fortran-order data is held whole, growing the same way.
            if header.fortran_order {
                self.fortran = Some(Vec::new());
            }
            self.header = Some(header);
            self.carry = rest;
            let carried = std::mem::take(&mut self.carry);
            return self.take_data(tax, &carried);
        }
        self.take_data(tax, data)?;
        data = &[];
        let _ = data;
        Ok(())
    }

    /// Make room in `v` for `more` items, never past `cap` items in all: geometric growth, so
    /// what is held is at most twice what the data delivered, and exactly `cap` once all of it
    /// has arrived. `Err` if the allocator refuses.
    fn room<T>(v: &mut Vec<T>, more: usize, cap: u64) -> std::result::Result<(), ()> {
        let need = v.len().saturating_add(more);
        if need <= v.capacity() {
            return Ok(());
        }
        let cap = usize::try_from(cap).unwrap_or(usize::MAX);
        let target = need.max(v.capacity().saturating_mul(2)).min(cap.max(need));
        v.try_reserve_exact(target - v.len()).map_err(|_| ())
    }

    fn too_large(&self, what: &str, bytes: u64) -> Errors {
        let expected = if self.fortran.is_some() {
            "an array that fits in memory (Fortran order is read whole; save with np.ascontiguousarray to stream it)"
        } else {
            "paths that fit in memory"
        };
        self.fail(
            Location::default(),
            ErrorKind::Invalid {
                what: what.into(),
                expected: expected.into(),
                found: format!("{bytes} bytes"),
            },
        )
    }

    fn check_header(&self, tax: &Taxonomy, h: &Header) -> Result<()> {
        if !h.dtype.scalar.is_float() {
            return Err(self.fail(
                Location::default(),
                ErrorKind::Dtype {
                    found: h.dtype.name().into(),
                    expected: "float16, float32 or float64 logits",
                },
            ));
        }
        if h.shape.len() != 2 {
            return Err(self.fail(
                Location::default(),
                ErrorKind::Shape {
                    found: h.shape_text(),
                    expected: format!("(rows, {}) with one column per taxonomy node", tax.len()),
                },
            ));
        }
        if h.shape[1] != tax.len() as u64 {
            return Err(self.fail(
                Location::default(),
                ErrorKind::ColumnCount {
                    found: h.shape[1],
                    expected: tax.len() as u64,
                },
            ));
        }
        Ok(())
    }

    fn take_data(&mut self, tax: &Taxonomy, mut data: &[u8]) -> Result<()> {
        let Some(header) = self.header.as_ref() else {
            return Ok(());
        };
        let expected = header.data_len();
        self.data_seen += data.len() as u64;
        if let Some(buf) = self.fortran.as_mut() {
            let room = expected.saturating_sub(buf.len() as u64);
            let take = data.len().min(usize::try_from(room).unwrap_or(usize::MAX));
            if Self::room(buf, take, expected).is_err() {
                return Err(self.too_large("Fortran-order array", expected));
            }
            buf.extend_from_slice(&data[..take]);
            return Ok(());
        }
        let rows_total = header.shape[0];
        let dtype = header.dtype;
        let rb = self.row_bytes;
        if rb == 0 {
            return Ok(());
        }
        // Room for the rows this chunk completes (and no more than the header announces).
        let rows_here = ((self.carry.len() + data.len()) / rb) as u64;
        let rows_here = rows_here.min(rows_total.saturating_sub(self.rows_done)) as usize;
        let width = self.paths.width as u64;
        let grown = Self::room(&mut self.paths.leaf, rows_here, rows_total).and_then(|_| {
            Self::room(
                &mut self.paths.cond,
                rows_here.saturating_mul(self.paths.width),
                rows_total.saturating_mul(width),
            )
        });
        if grown.is_err() {
            let bytes = rows_total.saturating_mul(4 + 4 * width);
            return Err(self.too_large("paths of the logits", bytes));
        }
        if !self.carry.is_empty() {
            let need = rb - self.carry.len();
            let take = need.min(data.len());
            self.carry.extend_from_slice(&data[..take]);
            data = &data[take..];
            if self.carry.len() < rb {
                return Ok(());
            }
            let row = std::mem::take(&mut self.carry);
            if self.rows_done < rows_total {
                self.push_row(tax, dtype, &row);
            }
        }
        let mut rows = data.chunks_exact(rb);
        for row in &mut rows {
            if self.rows_done >= rows_total {
                break;
            }
            self.push_row(tax, dtype, row);
        }
        if self.rows_done < rows_total {
            self.carry.extend_from_slice(rows.remainder());
        }
        Ok(())
    }

    /// Turn one row, still in its file encoding, into its path.
    fn push_row(&mut self, tax: &Taxonomy, dtype: Dtype, row: &[u8]) {
        let r = self.rows_done;
        self.rows_done += 1;
        if !all_finite(dtype, row) {
            dtype.decode_into(row, &mut self.values);
            for (c, v) in self.values.iter().enumerate() {
                if !v.is_finite() {
                    let at = Location::row(r).column(format!("{c} (`{}`)", tax.id(c as u32)));
                    self.errors.push(Error::new(
                        &self.file,
                        at,
                        ErrorKind::NonFinite {
                            found: v.to_string(),
                        },
                    ));
                }
            }
            self.paths.leaf.push(tax.root());
            self.paths
                .cond
                .resize(self.paths.cond.len() + self.paths.width, PAD);
            return;
        }
        let start = self.paths.cond.len();
        self.paths.cond.resize(start + self.paths.width, PAD);
        let cond = &mut self.paths.cond[start..];
        let scratch = &mut self.scratch;
        let temps = &self.temps;
        macro_rules! go {
            ($n:literal, $conv:expr) => {{
                let conv = $conv;
                let big = dtype.big_endian;
                descend_with(
                    tax,
                    temps,
                    |c| {
                        let mut a = [0u8; $n];
                        a.copy_from_slice(&row[c * $n..c * $n + $n]);
                        if big {
                            a.reverse();
                        }
                        conv(a)
                    },
                    cond,
                    scratch,
                )
            }};
        }
        let leaf = match dtype.scalar {
            Scalar::F16 => go!(2, |a: [u8; 2]| half::f16::from_le_bytes(a).to_f64()),
            Scalar::F32 => go!(4, |a: [u8; 4]| f32::from_le_bytes(a) as f64),
            _ => go!(8, f64::from_le_bytes),
        };
        self.paths.leaf.push(leaf);
    }

    /// Check that the data was complete and return the paths.
    pub fn finish(mut self, tax: &Taxonomy) -> Result<Ingested> {
        let Some(header) = self.header.clone() else {
            let kind = match npy::check_magic(&self.head) {
                Err(kind) => kind,
                Ok(()) => ErrorKind::NpyHeader(format!(
                    "the file ends inside the header ({} bytes)",
                    self.head.len()
                )),
            };
            return Err(self.fail(Location::default(), kind));
        };
        let expected = header.data_len();
        if self.data_seen < expected {
            let rows = self.rows_done;
            return Err(self.fail(
                Location::row(rows),
                ErrorKind::Truncated {
                    expected,
                    found: self.data_seen,
                },
            ));
        }
        if self.data_seen > expected {
            return Err(self.fail(
                Location::byte(header.data_offset as u64 + expected),
                ErrorKind::TrailingBytes {
                    found: self.data_seen - expected,
                },
            ));
        }
        if let Some(buf) = self.fortran.take() {
            // Column-major: element (r, c) sits at (c * rows + r) * size.
            let (rows, cols) = (header.shape[0] as usize, header.shape[1] as usize);
            let size = header.dtype.scalar.size();
            let mut row = vec![0u8; cols * size];
            // All the data is here, so the header's row count is a fact now.
            let width = self.paths.width;
            let grown = Self::room(&mut self.paths.leaf, rows, rows as u64).and_then(|_| {
                Self::room(
                    &mut self.paths.cond,
                    rows.saturating_mul(width),
                    (rows as u64).saturating_mul(width as u64),
                )
            });
            if grown.is_err() {
                let bytes = (rows as u64).saturating_mul(4 + 4 * width as u64);
                return Err(self.too_large("paths of the logits", bytes));
            }
            for r in 0..rows {
                for c in 0..cols {
                    let at = (c * rows + r) * size;
                    if let Some(value) = buf.get(at..at + size) {
                        row[c * size..(c + 1) * size].copy_from_slice(value);
                    }
                }
                self.push_row(tax, header.dtype, &row);
            }
        }
        let file = self.file.clone();
        self.errors.finish(&file)?;
        Ok(Ingested {
            paths: std::sync::Arc::new(self.paths),
            digest: self.hasher.finalize().to_hex().to_string(),
            header,
        })
    }
}

/// Read a whole logits file held in memory (tests, small files).
pub fn ingest_bytes(
    file: &str,
    tax: &Taxonomy,
    temps: &Temperatures,
    bytes: &[u8],
) -> Result<Ingested> {
    let mut reader = LogitsReader::new(file, tax, temps);
    reader.feed(tax, bytes)?;
    reader.finish(tax)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn taking_paths_while_feeding_gives_every_row_once_in_order() {
        let tax = Taxonomy::parse(b"id,parent\nx,\ny,x\nz,x\nw,\n", "t.csv").expect("taxonomy");
        let rows = 37u64;
        let mut bytes = npy::header_bytes("<f4", &[rows, 4], false);
        for i in 0..rows * 4 {
            bytes.extend(((i * 7 % 11) as f32 - 5.0).to_le_bytes());
        }
        let temps = Temperatures::default();
        let whole = ingest_bytes("l.npy", &tax, &temps, &bytes).expect("whole");
        let mut reader = LogitsReader::new("l.npy", &tax, &temps);
        let mut leaves = Vec::new();
        let mut cond = Vec::new();
        // 13-byte pieces: rows and the header are split across feeds.
        for piece in bytes.chunks(13) {
            reader.feed(&tax, piece).expect("feed");
            let (first, paths) = reader.take_paths();
            assert_eq!(first, leaves.len() as u64);
            leaves.extend_from_slice(paths.leaves());
            cond.extend_from_slice(paths.cond_all());
        }
        assert!(!reader.has_errors());
        let rest = reader.finish(&tax).expect("finish");
        assert!(rest.paths.is_empty());
        assert_eq!(rest.digest, whole.digest);
        assert_eq!(leaves, whole.paths.leaves());
        assert_eq!(cond, whole.paths.cond_all());
    }
}
