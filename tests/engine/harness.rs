//! Builders for small in-memory inputs: taxonomies from CSV text, logits as .npy bytes.

use hedgerow_core::{
    paths, Batch, Labels, Objectness, Settings, Taxonomy, Temperatures, Thresholds,
};

pub fn taxonomy(csv: &str) -> Taxonomy {
    Taxonomy::parse(csv.as_bytes(), "taxonomy.csv").unwrap_or_else(|e| panic!("taxonomy: {e}"))
}

/// A `.npy` (format 1.0, `<f8`) holding `rows`.
pub fn npy_f64(rows: &[Vec<f64>]) -> Vec<u8> {
    let cols = rows.first().map_or(0, Vec::len);
    let mut out = npy_header("<f8", &format!("({}, {})", rows.len(), cols));
    for row in rows {
        for v in row {
            out.extend(v.to_le_bytes());
        }
    }
    out
}

/// A `.npy` header as numpy writes it, for a shape written like Python's tuple repr.
pub fn npy_header(descr: &str, shape: &str) -> Vec<u8> {
    let dims: Vec<u64> = shape
        .trim_matches(|c| c == '(' || c == ')')
        .split(',')
        .filter(|d| !d.trim().is_empty())
        .map(|d| d.trim().parse().expect("shape"))
        .collect();
    hedgerow_core::npy::header_bytes(descr, &dims, false)
}

pub fn npy_f32_column(values: &[f32]) -> Vec<u8> {
    let mut out = npy_header("<f4", &format!("({},)", values.len()));
    for v in values {
        out.extend(v.to_le_bytes());
    }
    out
}

/// Logits row with the given (column, value) entries and 0 elsewhere.
pub fn row(tax: &Taxonomy, entries: &[(&str, f64)]) -> Vec<f64> {
    let mut r = vec![0.0; tax.len()];
    for (id, v) in entries {
        r[tax.lookup(id).unwrap_or_else(|| panic!("no node {id}")) as usize] = *v;
    }
    r
}

/// A batch from rows of logits, label ids ("" = background) and optional objectness.
pub fn batch(
    tax: &Taxonomy,
    rows: &[Vec<f64>],
    labels: &[&str],
    objectness: Option<&[f32]>,
    temps: &[f64],
) -> Batch {
    let temps = Temperatures(temps.to_vec());
    let ingested = paths::ingest_bytes("logits.npy", tax, &temps, &npy_f64(rows))
        .unwrap_or_else(|e| panic!("logits: {e}"));
    let mut csv = String::from("label\n");
    for l in labels {
        csv.push_str(l);
        csv.push('\n');
    }
    let labels =
        Labels::parse(csv.as_bytes(), "labels.csv", tax).unwrap_or_else(|e| panic!("labels: {e}"));
    let objectness = objectness.map(|o| {
        Objectness::parse(&npy_f32_column(o), "objectness.npy")
            .unwrap_or_else(|e| panic!("objectness: {e}"))
    });
    Batch::new(tax, "logits.npy", ingested, temps, labels, objectness)
        .unwrap_or_else(|e| panic!("batch: {e}"))
}

pub fn settings(
    rule: hedgerow_core::Rule,
    depths: &[f64],
    object: f64,
    policy: hedgerow_core::Policy,
) -> Settings {
    Settings {
        rule,
        thresholds: Thresholds {
            object,
            depths: depths.to_vec(),
            nodes: Vec::new(),
        },
        policy,
    }
}

/// The small tree used across tests, rows deliberately out of order (a child before its
/// parent) and with a single-child node:
///
/// ```text
/// root ─ a ─ b ─ f
///        │   └── g
///        └── c
///      ─ d ─ e          (d has one child)
/// ```
/// Columns: b=0, a=1, c=2, d=3, e=4, f=5, g=6. Leaves: c, e, f, g (4).
pub const TREE: &str = "id,parent,name\nb,a,B\na,,A\nc,a,C\nd,,D\ne,d,E\nf,b,F\ng,b,G\n";

pub fn close(a: Option<f64>, b: f64) -> bool {
    a.is_some_and(|a| (a - b).abs() < 1e-9)
}
