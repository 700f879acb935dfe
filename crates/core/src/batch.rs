//! A batch ready to evaluate: greedy paths plus labels and optional objectness, with the
//! per-row facts every evaluation needs precomputed once (label depth, agreement depth).

use crate::error::{Collector, Error, ErrorKind, Errors, Location, Result};
use crate::npy;
use crate::npz;
use crate::paths::{Ingested, Paths};
use crate::settings::Temperatures;
use crate::taxonomy::{Taxonomy, NONE};

/// One label per row: a node index, or [`NONE`] for a background row.
#[derive(Debug, Clone, Default)]
pub struct Labels {
    pub file: String,
    pub nodes: Vec<u32>,
}

impl Labels {
    /// Parse a labels file: `.npy` of integers (column index, −1 = background) if it starts
    /// with the npy magic, else CSV with a `label` column holding node ids (empty = background).
    pub fn parse(bytes: &[u8], file: &str, tax: &Taxonomy) -> Result<Self> {
        if bytes.starts_with(b"\x93NUMPY") {
            Self::from_npy(bytes, file, tax)
        } else {
            Self::from_csv(bytes, file, tax)
        }
    }

    pub fn from_csv(bytes: &[u8], file: &str, tax: &Taxonomy) -> Result<Self> {
        let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
        let single = quote_blank_lines(bytes);
        let bytes = single.as_deref().unwrap_or(bytes);
        let mut reader = csv::ReaderBuilder::new()
            .has_headers(true)
            .from_reader(bytes);
        let headers = reader
            .headers()
            .map_err(|e| Error::new(file, Location::line(1), ErrorKind::Csv(e.to_string())))?
            .clone();
        let Some(col) = headers
            .iter()
            .position(|h| h.trim().eq_ignore_ascii_case("label"))
        else {
            let found = headers
                .iter()
                .map(|h| format!("`{h}`"))
                .collect::<Vec<_>>()
                .join(", ");
            return Err(Error::new(
                file,
                Location::line(1),
                ErrorKind::MissingColumn {
                    expected: "label",
                    found,
                },
            )
            .into());
        };
        let mut errors = Collector::default();
        let mut nodes = Vec::new();
        for record in reader.records() {
            match record {
                Ok(rec) => {
                    let line = rec.position().map(|p| p.line()).unwrap_or(0);
                    let value = rec.get(col).unwrap_or("");
                    if value.is_empty() {
                        nodes.push(NONE);
                    } else if let Some(v) = tax.lookup(value) {
                        nodes.push(v);
                    } else {
                        errors.push(Error::new(
                            file,
                            Location::line(line).column("label"),
                            ErrorKind::UnknownLabel {
                                found: value.to_string(),
                            },
                        ));
                        nodes.push(NONE);
                    }
                }
                Err(e) => {
                    let line = e.position().map(|p| p.line()).unwrap_or(0);
                    errors.push(Error::new(
                        file,
                        Location::line(line),
                        ErrorKind::Csv(e.to_string()),
                    ));
                }
            }
        }
        errors.finish(file)?;
        Ok(Labels {
            file: file.to_string(),
            nodes,
        })
    }

    pub fn from_npy(bytes: &[u8], file: &str, tax: &Taxonomy) -> Result<Self> {
        let array = npy::read_array(bytes).map_err(|k| Error::new(file, Location::default(), k))?;
        let h = &array.header;
        if let npy::Scalar::Str(_) = h.dtype.scalar {
            check_column_shape(file, &h.shape)?;
            return Self::from_ids(file, h.dtype.decode_strings(array.data), tax);
        }
        if !h.dtype.scalar.is_integer() {
            return Err(Error::new(
                file,
                Location::default(),
                ErrorKind::Dtype {
                    found: h.dtype.name().into(),
                    expected: "integers (column index, -1 for background) or strings (node ids, empty for background)",
                },
            )
            .into());
        }
        check_column_shape(file, &h.shape)?;
        Self::from_indices(file, h.dtype.decode_ints(array.data), tax)
    }

    /// Labels from node ids, one per row (empty = background), as an array of strings holds
    /// them; an unknown id is named by its row.
    pub fn from_ids(file: &str, ids: Vec<String>, tax: &Taxonomy) -> Result<Self> {
        let mut errors = Collector::default();
        let nodes = ids
            .into_iter()
            .enumerate()
            .map(|(r, id)| {
                if id.is_empty() {
                    NONE
                } else if let Some(v) = tax.lookup(&id) {
                    v
                } else {
                    errors.push(Error::new(
                        file,
                        Location::row(r as u64),
                        ErrorKind::UnknownLabel { found: id },
                    ));
                    NONE
                }
            })
            .collect();
        errors.finish(file)?;
        Ok(Labels {
            file: file.to_string(),
            nodes,
        })
    }

    /// Labels from column indices, one per row (−1 = background), as an integer array holds
    /// them; an index out of range is named by its row.
    pub fn from_indices(
        file: &str,
        indices: impl IntoIterator<Item = i128>,
        tax: &Taxonomy,
    ) -> Result<Self> {
        let m = tax.len() as i128;
        let mut errors = Collector::default();
        let nodes = indices
            .into_iter()
            .enumerate()
            .map(|(r, v)| match v {
                -1 => NONE,
                v if (0..m).contains(&v) => v as u32,
                v => {
                    errors.push(Error::new(
                        file,
                        Location::row(r as u64),
                        ErrorKind::LabelIndex {
                            found: v,
                            nodes: m as u64,
                        },
                    ));
                    NONE
                }
            })
            .collect();
        errors.finish(file)?;
        Ok(Labels {
            file: file.to_string(),
            nodes,
        })
    }
}

impl Labels {
    /// Bytes per row a bundle's labels array may hold: an integer, or a node id of up to 256
    /// characters (`<U256`, four bytes a character).
    pub const NPY_BYTES_PER_ROW: u64 = 1024;

    /// The most `.npy` data a labels array for `rows` rows (those of `other`) may hold. A
    /// bundle's `labels` member is refused past it before it is inflated.
    pub fn npy_limit(rows: u64, other: &str) -> npz::Limit {
        npz::Limit {
            bytes: rows.saturating_mul(Self::NPY_BYTES_PER_ROW),
            rows,
            other: other.to_string(),
        }
    }
}

/// A one-column CSV writes a background row as an empty line, which CSV readers skip. When the
/// header has a single column, turn each empty line (outside quotes) into `""`
/// so every row is kept and line numbers stay as they are.
fn quote_blank_lines(bytes: &[u8]) -> Option<Vec<u8>> {
    let header_end = bytes
        .iter()
        .position(|&b| b == b'\n')
        .unwrap_or(bytes.len());
    if bytes[..header_end].contains(&b',') {
        return None;
    }
    let mut out = Vec::with_capacity(bytes.len() + 64);
    let mut in_quotes = false;
    let mut line_start = true;
    for (i, &b) in bytes.iter().enumerate() {
        if line_start && !in_quotes && i > header_end {
            let blank = b == b'\n' || (b == b'\r' && bytes.get(i + 1) == Some(&b'\n'));
            if blank {
                out.extend_from_slice(b"\"\"");
            }
        }
        if b == b'"' {
            in_quotes = !in_quotes;
        }
        line_start = b == b'\n';
        out.push(b);
    }
    Some(out)
}

/// Accept `(N,)` or `(N, 1)`.
fn check_column_shape(file: &str, shape: &[u64]) -> Result<()> {
    match shape {
        [_] | [_, 1] => Ok(()),
        _ => Err(Error::new(
            file,
            Location::default(),
            ErrorKind::Shape {
                found: npy::shape_text(shape),
                expected: "(rows,) with one value per row".into(),
            },
        )
        .into()),
    }
}

/// P(root) per row, read from a float `.npy` of shape (N,) and stored as f32.
#[derive(Debug, Clone, Default)]
pub struct Objectness {
    pub file: String,
    pub values: Vec<f32>,
}

impl Objectness {
    /// The most `.npy` data objectness for `rows` rows (those of `other`) can need: a float64
    /// per row.
    pub fn npy_limit(rows: u64, other: &str) -> npz::Limit {
        npz::Limit {
            bytes: rows.saturating_mul(8),
            rows,
            other: other.to_string(),
        }
    }

    pub fn parse(bytes: &[u8], file: &str) -> Result<Self> {
        let array = npy::read_array(bytes).map_err(|k| Error::new(file, Location::default(), k))?;
        let h = &array.header;
        if !h.dtype.scalar.is_float() {
            return Err(Error::new(
                file,
                Location::default(),
                ErrorKind::Dtype {
                    found: h.dtype.name().into(),
                    expected: "float16, float32 or float64 probabilities",
                },
            )
            .into());
        }
        check_column_shape(file, &h.shape)?;
        let mut raw = Vec::new();
        h.dtype.decode_into(array.data, &mut raw);
        Self::from_values(file, &raw)
    }

    /// Objectness from one value per row (stored as f32); a value outside [0, 1] is named by
    /// its row.
    pub fn from_values(file: &str, raw: &[f64]) -> Result<Self> {
        let mut errors = Collector::default();
        let values = raw
            .iter()
            .enumerate()
            .map(|(r, &v)| {
                let v32 = v as f32;
                if !(0.0..=1.0).contains(&v32) {
                    errors.push(Error::new(
                        file,
                        Location::row(r as u64),
                        ErrorKind::NotProbability {
                            // As the file holds it: 1.2 in float32, not its f64 widening
                            // (a value float32 holds exactly is shown as float32's).
                            found: if f64::from(v32) == v {
                                v32.to_string()
                            } else {
                                v.to_string()
                            },
                        },
                    ));
                }
                v32
            })
            .collect();
        errors.finish(file)?;
        Ok(Objectness {
            file: file.to_string(),
            values,
        })
    }
}

/// Refuse paths whose softmax overflowed: a conditional on the path that is not a number in
/// [0, 1]. Logits are finite, but a float64 logit near the largest double divided by a
/// temperature below 1 is ±inf, and the softmax of a group holding it is NaN (the reader then
/// stores −inf). Named by row and the sibling group (its parent), since no later step can tell
/// such a row from a real one.
fn overflowed_softmax(
    tax: &Taxonomy,
    file: &str,
    paths: &Paths,
    temperatures: &Temperatures,
) -> Result<()> {
    let mut errors = Collector::default();
    for r in 0..paths.len() {
        let leaf = paths.leaf(r);
        let cond = paths.cond(r);
        let depth = tax.depth(leaf).min(cond.len());
        if let Some(d) = (1..=depth).find(|&d| !(0.0..=1.0).contains(&cond[d - 1])) {
            let parent = tax.ancestor(leaf, d - 1);
            let group = if parent == tax.root() {
                "the top-level nodes".to_string()
            } else {
                format!("the children of `{}`", tax.id(parent))
            };
            errors.push(Error::new(
                file,
                Location::row(r as u64),
                ErrorKind::Invalid {
                    what: format!("softmax over {group} (depth {d})"),
                    expected: "finite logits / temperature".into(),
                    found: format!(
                        "an overflow with temperature {}: logits this large need a temperature of at least 1",
                        temperatures.at_depth(d)
                    ),
                },
            ));
        }
    }
    errors.finish(file)
}

/// Everything one evaluation reads. Built once per (files, temperatures); thresholds and rules
/// change nothing here.
#[derive(Debug, Clone)]
pub struct Batch {
    paths: std::sync::Arc<Paths>,
    labels: Vec<u32>,
    objectness: Option<Vec<f32>>,
    /// Depth of the lowest common ancestor of the row's path leaf and its label (0 for
    /// background rows).
    agree: Vec<u8>,
    label_depth: Vec<u8>,
    temperatures: Temperatures,
    fingerprint: String,
}

impl Batch {
    /// Join paths, labels and objectness, checking they describe the same rows.
    pub fn new(
        tax: &Taxonomy,
        logits_file: &str,
        ingested: Ingested,
        temperatures: Temperatures,
        labels: Labels,
        objectness: Option<Objectness>,
    ) -> Result<Self> {
        let n = ingested.paths.len() as u64;
        let mut others = vec![(labels.file.as_str(), labels.nodes.len() as u64)];
        if let Some(o) = &objectness {
            others.push((o.file.as_str(), o.values.len() as u64));
        }
        let errors = crate::intake::row_errors(logits_file, n, &others);
        if !errors.is_empty() {
            return Err(Errors(errors));
        }
        overflowed_softmax(tax, logits_file, &ingested.paths, &temperatures)?;
        let mut h = blake3::Hasher::new();
        h.update(b"hedgerow data v1\0");
        h.update(ingested.digest.as_bytes());
        for &l in &labels.nodes {
            h.update(&l.to_le_bytes());
        }
        if let Some(o) = &objectness {
            h.update(b"objectness");
            for v in &o.values {
                h.update(&v.to_le_bytes());
            }
        }
        let fingerprint = h.finalize().to_hex().to_string();
        Ok(Self::from_parts(
            tax,
            ingested.paths,
            labels.nodes,
            objectness.map(|o| o.values),
            temperatures,
            fingerprint,
        ))
    }

    /// Assemble from already validated parts (lengths must agree).
    pub fn from_parts(
        tax: &Taxonomy,
        paths: impl Into<std::sync::Arc<Paths>>,
        labels: Vec<u32>,
        objectness: Option<Vec<f32>>,
        temperatures: Temperatures,
        fingerprint: String,
    ) -> Self {
        let paths = paths.into();
        let (agree, label_depth) = labels
            .iter()
            .zip(paths.leaves())
            .map(|(&g, &leaf)| {
                if g == NONE {
                    (0, 0)
                } else {
                    (tax.lca_depth(leaf, g) as u8, tax.depth(g) as u8)
                }
            })
            .unzip();
        Batch {
            paths,
            labels,
            objectness,
            agree,
            label_depth,
            temperatures,
            fingerprint,
        }
    }

    /// The rows `rows` (indices into this batch, each < `len()`) as a batch of their own, in
    /// the order given: how the threshold suggestion splits tuning rows into parts. Its
    /// fingerprint is derived from this batch's and the rows taken.
    pub fn subset(&self, tax: &Taxonomy, rows: &[u32]) -> Batch {
        let mut paths = Paths::new(self.paths.width());
        let mut labels = Vec::with_capacity(rows.len());
        let mut h = blake3::Hasher::new();
        h.update(b"hedgerow subset v1\0");
        h.update(self.fingerprint.as_bytes());
        for &r in rows {
            let r = r as usize;
            paths.push(self.paths.leaf(r), self.paths.cond(r));
            labels.push(self.labels[r]);
            h.update(&(r as u64).to_le_bytes());
        }
        let objectness = self
            .objectness
            .as_ref()
            .map(|o| rows.iter().map(|&r| o[r as usize]).collect());
        Batch::from_parts(
            tax,
            paths,
            labels,
            objectness,
            self.temperatures.clone(),
            h.finalize().to_hex().to_string(),
        )
    }

    pub fn len(&self) -> usize {
        self.paths.len()
    }
    pub fn is_empty(&self) -> bool {
        self.paths.is_empty()
    }
    pub fn paths(&self) -> &Paths {
        &self.paths
    }
    pub fn label(&self, r: usize) -> u32 {
        self.labels[r]
    }
    pub fn labels(&self) -> &[u32] {
        &self.labels
    }
    pub fn has_objectness(&self) -> bool {
        self.objectness.is_some()
    }
    /// P(root) of row `r`: its objectness, or 1.
    pub fn root_probability(&self, r: usize) -> f64 {
        self.objectness.as_ref().map_or(1.0, |o| o[r] as f64)
    }
    pub(crate) fn agree_all(&self) -> &[u8] {
        &self.agree
    }
    pub(crate) fn label_depth_all(&self) -> &[u8] {
        &self.label_depth
    }
    /// Rows with a (non-background) label.
    pub fn labelled_rows(&self) -> u64 {
        self.label_depth.iter().filter(|&&d| d > 0).count() as u64
    }
    /// Σ depth(label) over labelled rows: the denominator of hierarchical recall.
    pub fn label_depth_sum(&self) -> u64 {
        self.label_depth.iter().map(|&d| d as u64).sum()
    }
    pub(crate) fn agree(&self, r: usize) -> usize {
        self.agree[r] as usize
    }
    pub(crate) fn label_depth(&self, r: usize) -> usize {
        self.label_depth[r] as usize
    }
    pub fn temperatures(&self) -> &Temperatures {
        &self.temperatures
    }
    /// blake3 over the logits file, labels and objectness.
    pub fn fingerprint(&self) -> &str {
        &self.fingerprint
    }
    /// Share of labelled rows whose label is an internal node.
    pub fn coarse_share(&self, tax: &Taxonomy) -> Option<f64> {
        let labelled = self.labels.iter().filter(|&&g| g != NONE).count();
        let coarse = self
            .labels
            .iter()
            .filter(|&&g| g != NONE && !tax.is_leaf(g))
            .count();
        (labelled > 0).then(|| coarse as f64 / labelled as f64)
    }
    pub fn background_rows(&self) -> usize {
        self.labels.iter().filter(|&&g| g == NONE).count()
    }
}
