//! Random batches from a seed, scored by the engine into one digest of the bit patterns of
//! every number it returns: the same inputs the property tests draw (random trees of depth
//! 1–14 and fan-out 1–8 with chains and leaves at every depth, logits with ties and extremes,
//! objectness with 0, −0.0 and 1, thresholds with 0 and 1, both rules, every policy, per-node
//! overrides), each batch built from bytes as a user's files are (taxonomy CSV, `.npy` logits
//! fed in random chunks, labels CSV, `.npy` objectness). The native build and the wasm build
//! (`crates/bench-wasm`'s `agree`, run in Chromium by `cargo xtask e2e`) must give the same
//! digest.
//!
//! Per batch it scores `evaluate` (the branch-free kernel without overrides, the general loop
//! with them), the exact curve with the batch's overrides, and `DepthDrag` moved to a few
//! thresholds. Every float goes into the digest as `f64::to_bits`, every count as its value.

use hedgerow_core::{
    evaluate, exact_curve_for, npy, Batch, DepthDrag, Labels, LogitsReader, Objectness, Policy,
    Rule, Settings, Taxonomy, Temperatures, Thresholds,
};
use serde_json::Value;

/// SplitMix64: small, fast and the same on every target.
pub struct Rng(u64);

impl Rng {
    pub fn new(seed: u64) -> Self {
        Rng(seed)
    }
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in `0..n` (`n` ≥ 1).
    pub fn below(&mut self, n: usize) -> usize {
        (self.next_u64() % n.max(1) as u64) as usize
    }
    /// Uniform in [0, 1).
    pub fn unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    fn pick<T: Copy>(&mut self, from: &[T]) -> T {
        from[self.below(from.len())]
    }
    fn chance(&mut self, p: f64) -> bool {
        self.unit() < p
    }
}

/// What one run scored.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Digest {
    /// blake3 of every number, hex.
    pub digest: String,
    pub batches: u64,
    pub rows: u64,
    /// Metrics compared (evaluations, drag positions and curve points).
    pub results: u64,
}

impl Digest {
    pub fn to_json(&self) -> String {
        serde_json::json!({
            "digest": self.digest,
            "batches": self.batches,
            "rows": self.rows,
            "results": self.results,
        })
        .to_string()
    }
}

/// A parent per node: a chain down to `depth` (so it is reached), then nodes hung under random
/// nodes with room, then the order shuffled.
fn tree(r: &mut Rng) -> Vec<Option<usize>> {
    let depth = 1 + r.below(14);
    let fanout = 1 + r.below(8);
    let mut parent: Vec<Option<usize>> = Vec::new();
    let mut node_depth = Vec::new();
    let mut kids = Vec::new();
    let mut root_kids = 0;
    for d in 1..=depth {
        let p = (d > 1).then(|| d - 2);
        match p {
            None => root_kids += 1,
            Some(p) => kids[p] += 1,
        }
        parent.push(p);
        node_depth.push(d);
        kids.push(0usize);
    }
    for _ in 0..r.below(40) {
        let mut candidates: Vec<Option<usize>> = Vec::new();
        if root_kids < fanout {
            candidates.push(None);
        }
        candidates.extend(
            (0..parent.len())
                .filter(|&v| node_depth[v] < depth && kids[v] < fanout)
                .map(Some),
        );
        if candidates.is_empty() {
            break;
        }
        let p = candidates[r.below(candidates.len())];
        let d = match p {
            None => {
                root_kids += 1;
                1
            }
            Some(p) => {
                kids[p] += 1;
                node_depth[p] + 1
            }
        };
        parent.push(p);
        node_depth.push(d);
        kids.push(0);
    }
    let m = parent.len();
    let mut order: Vec<usize> = (0..m).collect();
    for i in (1..m).rev() {
        order.swap(i, r.below(i + 1));
    }
    let mut new_of = vec![0; m];
    for (new, &old) in order.iter().enumerate() {
        new_of[old] = new;
    }
    let mut out = vec![None; m];
    for (old, p) in parent.iter().enumerate() {
        out[new_of[old]] = p.map(|p| new_of[p]);
    }
    out
}

fn logit(r: &mut Rng) -> f32 {
    match r.below(8) {
        0..=3 => r.pick(&[0.0f32, 1.0, -1.0, 0.5, 2.0, 20.0, -20.0]),
        4 => r.pick(&[1e4f32, -1e4, f32::MAX, f32::MIN, 1e-30, -0.0, 1e-45]),
        _ => (r.unit() * 12.0 - 6.0) as f32,
    }
}

fn probability(r: &mut Rng) -> f32 {
    if r.chance(0.4) {
        r.pick(&[0.0f32, -0.0, 1.0, 0.5, 1e-45, 1.0 - f32::EPSILON / 2.0])
    } else {
        r.unit() as f32
    }
}

fn threshold(r: &mut Rng) -> f64 {
    if r.chance(0.5) {
        r.pick(&[0.0, 1.0, 0.5, -0.0, 1e-300])
    } else {
        r.unit()
    }
}

fn npy_f32(shape: &[u64], values: &[f32]) -> Vec<u8> {
    let mut out = npy::header_bytes("<f4", shape, false);
    for v in values {
        out.extend(v.to_le_bytes());
    }
    out
}

/// Feeds numbers into the digest (and, when `dump` is on, keeps the results themselves).
struct Sink {
    hasher: blake3::Hasher,
    results: u64,
    dump: Option<Vec<Value>>,
}

impl Sink {
    /// Every number of a serialised result (metrics or curve point): floats by their bits,
    /// integers by value, `null` (an undefined ratio) as its own marker, in field order.
    fn value(&mut self, v: &Value) {
        match v {
            Value::Null => {
                self.hasher.update(b"n");
            }
            Value::Bool(b) => {
                self.hasher.update(&[u8::from(*b)]);
            }
            Value::Number(n) => {
                if let Some(u) = n.as_u64() {
                    self.hasher.update(b"u");
                    self.hasher.update(&u.to_le_bytes());
                } else if let Some(i) = n.as_i64() {
                    self.hasher.update(b"i");
                    self.hasher.update(&i.to_le_bytes());
                } else if let Some(f) = n.as_f64() {
                    self.hasher.update(b"f");
                    self.hasher.update(&f.to_bits().to_le_bytes());
                }
            }
            Value::String(s) => {
                self.hasher.update(s.as_bytes());
            }
            Value::Array(a) => {
                self.hasher.update(&(a.len() as u64).to_le_bytes());
                a.iter().for_each(|x| self.value(x));
            }
            Value::Object(o) => {
                for (k, x) in o {
                    self.hasher.update(k.as_bytes());
                    self.value(x);
                }
            }
        }
    }
    fn result(&mut self, v: impl serde::Serialize) {
        // serde_json's `Value` keeps a float's bits (float_roundtrip); -0.0 stays -0.0.
        let v = serde_json::to_value(v).unwrap_or(Value::Null);
        self.value(&v);
        self.results += 1;
        if let Some(d) = &mut self.dump {
            d.push(v);
        }
    }
    fn float(&mut self, f: f64) {
        self.hasher.update(&f.to_bits().to_le_bytes());
        if let Some(d) = &mut self.dump {
            d.push(serde_json::json!(f));
        }
    }
}

/// One random batch and its settings, scored into `sink`; the rows it had.
fn one(r: &mut Rng, sink: &mut Sink) -> Result<u64, String> {
    let parents = tree(r);
    let m = parents.len();
    let mut csv = String::from("id,parent\n");
    for (k, p) in parents.iter().enumerate() {
        let p = p.map(|p| format!("n{p}")).unwrap_or_default();
        csv.push_str(&format!("n{k},{p}\n"));
    }
    let tax = Taxonomy::parse(csv.as_bytes(), "t.csv").map_err(|e| e.to_string())?;
    let rows = 1 + r.below(48);
    let logits: Vec<f32> = (0..rows * m).map(|_| logit(r)).collect();
    let temps: Vec<f64> = (0..r.below(3))
        .map(|_| r.pick(&[1.0, 1.0, 0.5, 2.0, 0.1, 1e-4]))
        .collect();
    let temps = Temperatures(temps);
    let bytes = npy_f32(&[rows as u64, m as u64], &logits);
    let mut reader = LogitsReader::new("l.npy", &tax, &temps);
    let mut at = 0;
    while at < bytes.len() {
        let n = 1 + r.below(97);
        let end = (at + n).min(bytes.len());
        reader
            .feed(&tax, &bytes[at..end])
            .map_err(|e| e.to_string())?;
        at = end;
    }
    let ingested = reader.finish(&tax).map_err(|e| e.to_string())?;
    let mut labels = String::from("label\n");
    for _ in 0..rows {
        if !r.chance(0.2) {
            labels.push_str(&format!("n{}", r.below(m)));
        }
        labels.push('\n');
    }
    let labels = Labels::parse(labels.as_bytes(), "y.csv", &tax).map_err(|e| e.to_string())?;
    let objectness = if r.chance(0.75) {
        let o: Vec<f32> = (0..rows).map(|_| probability(r)).collect();
        Some(Objectness::parse(&npy_f32(&[rows as u64], &o), "o.npy").map_err(|e| e.to_string())?)
    } else {
        None
    };
    let batch = Batch::new(&tax, "l.npy", ingested, temps, labels, objectness)
        .map_err(|e| e.to_string())?;
    let depth = tax.max_depth().max(1);
    let nodes = (0..r.below(4))
        .map(|_| (r.below(m) as u32, threshold(r)))
        .collect();
    let settings = Settings {
        rule: if r.chance(0.5) {
            Rule::Cumulative
        } else {
            Rule::Conditional
        },
        thresholds: Thresholds {
            object: threshold(r),
            depths: (0..1 + r.below(depth + 2)).map(|_| threshold(r)).collect(),
            nodes,
        },
        policy: r.pick(&[Policy::Credit, Policy::Penalize, Policy::Exclude]),
    };
    sink.result(evaluate(&tax, &batch, &settings));
    // The same settings without overrides: the branch-free kernel.
    let plain = Settings {
        thresholds: Thresholds {
            nodes: Vec::new(),
            ..settings.thresholds.clone()
        },
        ..settings.clone()
    };
    sink.result(evaluate(&tax, &batch, &plain));
    for p in exact_curve_for(&tax, &batch, &settings) {
        sink.result(p);
    }
    let mut drag = DepthDrag::new(&tax, &batch, &plain, 1 + r.below(depth));
    for _ in 0..3 {
        let t = threshold(r);
        sink.float(t);
        sink.result(drag.set(&tax, &batch, t));
    }
    Ok(rows as u64)
}

fn sink(dump: bool) -> Sink {
    Sink {
        hasher: blake3::Hasher::new(),
        results: 0,
        dump: dump.then(Vec::new),
    }
}

/// `batches` random batches from `seed`, scored into one digest.
pub fn run(seed: u64, batches: u64) -> Result<Digest, String> {
    let mut r = Rng::new(seed);
    let mut sink = sink(false);
    let mut rows = 0;
    for i in 0..batches {
        rows += one(&mut r, &mut sink).map_err(|e| format!("batch {i}: {e}"))?;
    }
    Ok(Digest {
        digest: sink.hasher.finalize().to_hex().to_string(),
        batches,
        rows,
        results: sink.results,
    })
}

/// For a digest that differs: each batch's own digest (16 hex digits), to find the first that
/// differs, and with [`dump`] what it scored.
pub fn per_batch(seed: u64, batches: u64) -> Result<Vec<String>, String> {
    let mut r = Rng::new(seed);
    (0..batches)
        .map(|i| {
            let mut s = sink(false);
            one(&mut r, &mut s).map_err(|e| format!("batch {i}: {e}"))?;
            Ok(s.hasher.finalize().to_hex()[..16].to_string())
        })
        .collect()
}

/// Every result batch `index` of `seed` scored, as JSON (floats printed exactly).
pub fn dump(seed: u64, index: u64) -> Result<String, String> {
    let mut r = Rng::new(seed);
    for i in 0..=index {
        let mut s = sink(i == index);
        one(&mut r, &mut s).map_err(|e| format!("batch {i}: {e}"))?;
        if i == index {
            return Ok(Value::Array(s.dump.unwrap_or_default()).to_string());
        }
    }
    Ok(String::new())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_seed_gives_one_digest_and_seeds_differ() {
        let a = run(7, 200).expect("valid batches");
        assert_eq!(a, run(7, 200).expect("valid batches"));
        assert_ne!(a.digest, run(8, 200).expect("valid batches").digest);
        assert_eq!(a.batches, 200);
        assert!(a.rows >= 200 && a.results > 4 * 200, "{a:?}");
    }
}
