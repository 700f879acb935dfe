//! The runner-up sibling at each step of one row's greedy path, from that row's logits alone:
//! the page's inspector reads just the bytes of the row it opens ([`row_range`]) instead of
//! keeping the logits. The softmax is the ingest's own (`paths::group_exps`), so the chosen
//! child's conditional equals the stored path's bit for bit.

use std::fmt;

use crate::error::ErrorKind;
use crate::npy::{Dtype, Header};
use crate::npz;
use crate::paths::group_exps;
use crate::settings::Temperatures;
use crate::taxonomy::Taxonomy;

/// A child of a sibling group with p(child | parent), rounded to f32 as the paths store it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Pick {
    pub node: u32,
    pub conditional: f32,
}

/// One step of the greedy path (depth 1 first): the child taken and the most probable other
/// child of the same parent (`None` when the parent has one child).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Choice {
    pub depth: usize,
    pub chosen: Pick,
    pub runner_up: Option<Pick>,
}

/// The greedy path of one row with the runner-up at each step. `logits` are the row's M values
/// (one per taxonomy column); `temps` as the batch was read with. The chosen child is the one
/// the ingest takes (highest conditional, ties: the lowest column); the runner-up is the
/// highest of the others (ties: the lowest column).
pub fn runner_ups(
    tax: &Taxonomy,
    temps: &Temperatures,
    logits: &[f64],
) -> Result<Vec<Choice>, ErrorKind> {
    if logits.len() != tax.len() {
        return Err(ErrorKind::ColumnCount {
            found: logits.len() as u64,
            expected: tax.len() as u64,
        });
    }
    if let Some(v) = logits.iter().find(|v| !v.is_finite()) {
        return Err(ErrorKind::NonFinite {
            found: v.to_string(),
        });
    }
    let temps = temps.expand(tax.max_depth());
    let mut exps = Vec::new();
    let mut out = Vec::new();
    let mut v = tax.root();
    loop {
        let children = tax.children(v);
        let depth = out.len() + 1;
        let choice = match children {
            [] => return Ok(out),
            [only] => Choice {
                depth,
                chosen: Pick {
                    node: *only,
                    conditional: 1.0,
                },
                runner_up: None,
            },
            _ => {
                let t = temps.get(depth - 1).copied().unwrap_or(1.0);
                let sum = group_exps(children, t, |c| logits[c], &mut exps);
                let p = |i: usize| exps[i] / sum;
                // The same comparisons as `paths::descend_with` (strictly greater wins, so the
                // lowest column keeps a tie), then the same over the others.
                let mut best = (0, f64::NEG_INFINITY);
                for i in 0..exps.len() {
                    if p(i) > best.1 {
                        best = (i, p(i));
                    }
                }
                let mut second: Option<(usize, f64)> = None;
                for i in (0..exps.len()).filter(|&i| i != best.0) {
                    if second.is_none_or(|s| p(i) > s.1) {
                        second = Some((i, p(i)));
                    }
                }
                let pick = |(i, p): (usize, f64)| Pick {
                    node: children[i],
                    conditional: p as f32,
                };
                Choice {
                    depth,
                    chosen: pick(best),
                    runner_up: second.map(pick),
                }
            }
        };
        v = choice.chosen.node;
        out.push(choice);
    }
}

/// [`runner_ups`] from the row's bytes as the file stores them (`row`: M values in `dtype`),
/// decoded by the `.npy` reader's own decoder.
pub fn row_runner_ups(
    tax: &Taxonomy,
    temps: &Temperatures,
    dtype: Dtype,
    row: &[u8],
) -> Result<Vec<Choice>, ErrorKind> {
    if !dtype.scalar.is_float() {
        return Err(ErrorKind::Dtype {
            found: dtype.name().into(),
            expected: "float16, float32 or float64 logits",
        });
    }
    let want = tax.len() as u64 * dtype.scalar.size() as u64;
    if row.len() as u64 != want {
        return Err(ErrorKind::Truncated {
            expected: want,
            found: row.len() as u64,
        });
    }
    let mut values = Vec::with_capacity(tax.len());
    dtype.decode_into(row, &mut values);
    runner_ups(tax, temps, &values)
}

/// Why one row's bytes cannot be read on their own.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum NoRowRange {
    /// Column-major data: a row's values are spread over the whole file.
    Fortran,
    /// A deflated bundle member: no byte of it sits at a fixed offset.
    Compressed,
    /// The row is past the array's end.
    PastEnd { row: u64, rows: u64 },
}

impl fmt::Display for NoRowRange {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        const NEED: &str =
            "runner-ups need the logits as a C-order .npy or an uncompressed .npz member (np.savez)";
        match self {
            NoRowRange::Fortran => write!(f, "{NEED}; these are in Fortran order"),
            NoRowRange::Compressed => {
                write!(f, "{NEED}; these are compressed (np.savez_compressed)")
            }
            NoRowRange::PastEnd { row, rows } => {
                write!(f, "row {row} is past the logits' {rows} rows")
            }
        }
    }
}

/// The bytes (`start..end`, in the file) that hold row `r` of a logits array whose `.npy`
/// begins at byte `npy_start` of the file (0 for a `.npy`; a bundle member's data start, with
/// `member` given, for an `.npz`).
pub fn row_range(
    header: &Header,
    npy_start: u64,
    member: Option<&npz::Member>,
    r: u64,
) -> Result<(u64, u64), NoRowRange> {
    if member.is_some_and(|m| m.method != 0) {
        return Err(NoRowRange::Compressed);
    }
    if header.fortran_order {
        return Err(NoRowRange::Fortran);
    }
    let rows = header.shape.first().copied().unwrap_or(0);
    if r >= rows {
        return Err(NoRowRange::PastEnd { row: r, rows });
    }
    // The header was checked against the file's length when it was read; checked arithmetic
    // all the same, so a header's claim can never wrap around.
    let row_bytes = header
        .shape
        .get(1)
        .copied()
        .unwrap_or(1)
        .checked_mul(header.dtype.scalar.size() as u64);
    let start = row_bytes.and_then(|b| {
        npy_start
            .checked_add(header.data_offset as u64)?
            .checked_add(r.checked_mul(b)?)
    });
    match (start, row_bytes) {
        (Some(start), Some(b)) if start.checked_add(b).is_some() => Ok((start, start + b)),
        _ => Err(NoRowRange::PastEnd { row: r, rows }),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tax() -> Taxonomy {
        // Root → a, b, c (a → d, e; b → f).
        Taxonomy::parse(b"id,parent\na,\nb,\nc,\nd,a\ne,a\nf,b\n", "t.csv").expect("taxonomy")
    }

    #[test]
    fn ties_keep_the_lowest_column_for_both_places() {
        let t = tax();
        let got = runner_ups(
            &t,
            &Temperatures::default(),
            &[1.0, 1.0, 1.0, 0.0, 2.0, 5.0],
        )
        .expect("runner-ups");
        assert_eq!(got.len(), 2);
        assert_eq!(got[0].chosen.node, 0);
        assert_eq!(got[0].runner_up.map(|p| p.node), Some(1));
        assert_eq!(got[1].chosen.node, 4);
        assert_eq!(got[1].runner_up.map(|p| p.node), Some(3));
    }

    #[test]
    fn a_single_child_has_no_runner_up() {
        let t = tax();
        let got = runner_ups(
            &t,
            &Temperatures::default(),
            &[0.0, 3.0, 1.0, 0.0, 0.0, -4.0],
        )
        .expect("runner-ups");
        assert_eq!(got[0].chosen.node, 1);
        assert_eq!(got[0].runner_up.map(|p| p.node), Some(2));
        assert_eq!(
            got[1],
            Choice {
                depth: 2,
                chosen: Pick {
                    node: 5,
                    conditional: 1.0
                },
                runner_up: None
            }
        );
    }

    #[test]
    fn a_row_range_is_fixed_only_for_c_order_stored_data() {
        let h = crate::npy::parse_header(&crate::npy::header_bytes("<f2", &[10, 6], false))
            .expect("header")
            .expect("whole");
        let o = h.data_offset as u64;
        assert_eq!(row_range(&h, 0, None, 3), Ok((o + 36, o + 48)));
        assert_eq!(row_range(&h, 100, None, 0), Ok((100 + o, 100 + o + 12)));
        assert_eq!(
            row_range(&h, 0, None, 10),
            Err(NoRowRange::PastEnd { row: 10, rows: 10 })
        );
        let mut member = npz::Member {
            name: "logits.npy".into(),
            method: 8,
            compressed: 1,
            size: 1,
            local_header: 0,
        };
        assert_eq!(
            row_range(&h, 0, Some(&member), 0),
            Err(NoRowRange::Compressed)
        );
        member.method = 0;
        assert!(row_range(&h, 0, Some(&member), 0).is_ok());
        let f = crate::npy::parse_header(&crate::npy::header_bytes("<f2", &[10, 6], true))
            .expect("header")
            .expect("whole");
        assert_eq!(row_range(&f, 0, None, 0), Err(NoRowRange::Fortran));
        assert!(NoRowRange::Compressed
            .to_string()
            .starts_with("runner-ups need the logits as a C-order .npy"));
    }
}
