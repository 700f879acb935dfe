//! Rows of a numpy logits array turned into greedy paths and decisions, read in place (C or
//! Fortran order, through the array's strides) and optionally spread over threads.

use hedgerow_core::paths::{descend_with, PAD};
use hedgerow_core::{Decoder, Error, ErrorKind, Location, Paths, Taxonomy};
use numpy::ndarray::{ArrayView1, ArrayView2, Axis};

/// A float type logits may come in.
pub trait Logit: numpy::Element + Copy + Send + Sync {
    fn value(self) -> f64;
    /// Whether every value is finite, checked on the raw bits (exponent not all ones): a
    /// row is checked whole, and this loop is most of the time a row takes, so it is kept
    /// free of conversions and branches for the compiler to vectorise.
    fn all_finite(row: &[Self]) -> bool;
}

/// `$mask` is the exponent field of the float: adding its lowest bit to the exponent carries
/// into the bit above it exactly when every exponent bit is set (±inf or NaN). One and, one
/// add and one or per value, which vectorise on any x86-64 (no compare and pack).
macro_rules! finite_bits {
    ($row:expr, $to_bits:expr, $mask:expr, $low:expr) => {
        $row.iter()
            .fold(0, |acc, &v| acc | (($to_bits(v) & $mask) + $low))
            & ($mask + $low)
            != ($mask + $low)
    };
}

impl Logit for f32 {
    #[inline]
    fn value(self) -> f64 {
        self as f64
    }
    fn all_finite(row: &[Self]) -> bool {
        finite_bits!(row, f32::to_bits, 0x7F80_0000u32, 0x0080_0000u32)
    }
}

impl Logit for f64 {
    #[inline]
    fn value(self) -> f64 {
        self
    }
    fn all_finite(row: &[Self]) -> bool {
        finite_bits!(
            row,
            f64::to_bits,
            0x7FF0_0000_0000_0000u64,
            0x0010_0000_0000_0000u64
        )
    }
}

impl Logit for half::f16 {
    #[inline]
    fn value(self) -> f64 {
        self.to_f64()
    }
    fn all_finite(row: &[Self]) -> bool {
        finite_bits!(row, half::f16::to_bits, 0x7C00u16, 0x0400u16)
    }
}

/// A value that is not finite, where the first one was found.
#[derive(Debug, Clone)]
pub struct NotFinite {
    pub row: usize,
    pub column: usize,
    pub value: f64,
}

impl NotFinite {
    /// The message the command line prints for the same value in a `.npy` file.
    pub fn error(&self, file: &str, tax: &Taxonomy) -> Error {
        let at = Location::row(self.row as u64).column(format!(
            "{} (`{}`)",
            self.column,
            tax.id(self.column as u32)
        ));
        Error::new(
            file,
            at,
            ErrorKind::NonFinite {
                found: self.value.to_string(),
            },
        )
    }
}

/// What the rows are decoded with.
pub struct Walk<'a> {
    pub tax: &'a Taxonomy,
    /// One temperature per depth.
    pub temps: &'a [f64],
}

/// Rows checked, then decoded, per block: the check streams the block's bytes from memory at
/// full speed into the cache, where the descents (which touch a few values per group and spend
/// their time in `exp`) then find them. Row by row, every row's bytes would arrive while the
/// CPU waits. 64 rows of 526 float64 logits are 270 KB, well within a core's L2 cache.
const BLOCK: usize = 64;

/// The first value of `row` (row index `r`) that is not finite, if any; the whole row is
/// checked, as the command line does.
#[inline]
fn check_row<T: Logit>(r: usize, row: ArrayView1<T>) -> Result<(), NotFinite> {
    let finite = match row.as_slice() {
        Some(s) => T::all_finite(s),
        None => row.iter().all(|v| v.value().is_finite()),
    };
    if finite {
        return Ok(());
    }
    let (column, value) = row
        .iter()
        .map(|v| v.value())
        .enumerate()
        .find(|(_, v)| !v.is_finite())
        .unwrap_or((0, f64::NAN));
    Err(NotFinite {
        row: r,
        column,
        value,
    })
}

impl Walk<'_> {
    /// Row `row`'s leaf, its conditionals written into `cond` (padded with [`PAD`]). The row
    /// has been checked finite.
    #[inline]
    fn path<T: Logit>(&self, row: ArrayView1<T>, cond: &mut [f32], scratch: &mut Vec<f64>) -> u32 {
        cond.fill(PAD);
        match row.as_slice() {
            Some(s) => descend_with(self.tax, self.temps, |c| s[c].value(), cond, scratch),
            None => descend_with(self.tax, self.temps, |c| row[c].value(), cond, scratch),
        }
    }

    /// `each(r, leaf, cond)` for every row of `view` (row indices from `first`), block by
    /// block: every row of a block is checked before any is decoded.
    fn walk<T: Logit>(
        &self,
        first: usize,
        view: ArrayView2<T>,
        mut each: impl FnMut(usize, u32, &[f32]),
    ) -> Result<(), NotFinite> {
        let mut cond = vec![PAD; self.tax.max_depth()];
        let mut scratch = Vec::new();
        for (b, block) in view.axis_chunks_iter(Axis(0), BLOCK).enumerate() {
            let start = first + b * BLOCK;
            for (i, row) in block.axis_iter(Axis(0)).enumerate() {
                check_row(start + i, row)?;
            }
            for (i, row) in block.axis_iter(Axis(0)).enumerate() {
                let leaf = self.path(row, &mut cond, &mut scratch);
                each(start + i, leaf, &cond);
            }
        }
        Ok(())
    }

    /// The greedy paths of every row of `view` (row indices from `first`).
    pub fn paths<T: Logit>(&self, first: usize, view: ArrayView2<T>) -> Result<Paths, NotFinite> {
        let mut paths = Paths::new(self.tax.max_depth());
        self.walk(first, view, |_, leaf, cond| paths.push(leaf, cond))?;
        Ok(paths)
    }

    /// Every row of `view` decided by `decoder`, P(root) from `objectness` (indexed from
    /// `first`) or 1.
    pub fn decide<T: Logit>(
        &self,
        decoder: &Decoder,
        objectness: Option<&[f32]>,
        first: usize,
        view: ArrayView2<T>,
    ) -> Result<Decided, NotFinite> {
        let n = view.nrows();
        let root = self.tax.root();
        let mut out = Decided {
            column: Vec::with_capacity(n),
            depth: Vec::with_capacity(n),
            probability: Vec::with_capacity(n),
        };
        let mut steps = Vec::new();
        self.walk(first, view, |r, leaf, cond| {
            let p_root = objectness.and_then(|o| o.get(r)).map_or(1.0, |&v| v as f64);
            let d = decoder.decide(p_root, leaf, cond, &mut steps);
            out.column.push(match d.predicted {
                None => ABSTAINED,
                Some(v) if v == root => ROOT,
                Some(v) => v as i64,
            });
            out.depth.push(d.depth as i32);
            out.probability.push(d.probability);
        })?;
        Ok(out)
    }
}

/// `column` for a row that stopped at the root.
pub const ROOT: i64 = -1;
/// `column` for a row that abstained.
pub const ABSTAINED: i64 = -2;

/// The decisions of consecutive rows.
#[derive(Debug, Default)]
pub struct Decided {
    pub column: Vec<i64>,
    pub depth: Vec<i32>,
    pub probability: Vec<f64>,
}

impl Decided {
    fn append(&mut self, mut other: Decided) {
        self.column.append(&mut other.column);
        self.depth.append(&mut other.depth);
        self.probability.append(&mut other.probability);
    }
}

/// `work` over `threads` contiguous blocks of rows (in order), each given its first row's
/// index; the error of the lowest row wins, so the message does not depend on the threads.
fn blocks<T: Logit, O: Send>(
    view: ArrayView2<T>,
    threads: usize,
    work: impl Fn(usize, ArrayView2<T>) -> Result<O, NotFinite> + Sync,
) -> Result<Vec<O>, NotFinite> {
    let n = view.nrows();
    let threads = threads.clamp(1, n.max(1));
    if threads == 1 {
        return work(0, view).map(|o| vec![o]);
    }
    let per = n.div_ceil(threads);
    let parts: Vec<(usize, ArrayView2<T>)> = (0..threads)
        .map(|t| {
            let a = (t * per).min(n);
            let b = ((t + 1) * per).min(n);
            (a, view.slice_axis(Axis(0), (a..b).into()))
        })
        .collect();
    let results: Vec<Result<O, NotFinite>> = std::thread::scope(|s| {
        let handles: Vec<_> = parts
            .into_iter()
            .map(|(a, part)| {
                let work = &work;
                s.spawn(move || work(a, part))
            })
            .collect();
        handles
            .into_iter()
            .map(|h| match h.join() {
                Ok(r) => r,
                Err(panic) => std::panic::resume_unwind(panic),
            })
            .collect()
    });
    results.into_iter().collect()
}

/// Every row's decision, over `threads` threads.
pub fn decide_all<T: Logit>(
    walk: &Walk,
    decoder: &Decoder,
    objectness: Option<&[f32]>,
    view: ArrayView2<T>,
    threads: usize,
) -> Result<Decided, NotFinite> {
    let parts = blocks(view, threads, |first, part| {
        walk.decide(decoder, objectness, first, part)
    })?;
    let mut all = Decided::default();
    for p in parts {
        all.append(p);
    }
    Ok(all)
}

/// Every row's greedy path, over `threads` threads.
pub fn paths_all<T: Logit>(
    walk: &Walk,
    view: ArrayView2<T>,
    threads: usize,
) -> Result<Paths, NotFinite> {
    let mut parts = blocks(view, threads, |first, part| walk.paths(first, part))?;
    if parts.len() == 1 {
        if let Some(only) = parts.pop() {
            return Ok(only);
        }
    }
    let mut all = Paths::new(walk.tax.max_depth());
    for p in &parts {
        for i in 0..p.len() {
            all.push(p.leaf(i), p.cond(i));
        }
    }
    Ok(all)
}
