//! `cargo xtask gen-batch`: a large deterministic synthetic batch for benchmarks.
//!
//! Writes `taxonomy.csv` (a roughly balanced random tree with exactly `--nodes` nodes and
//! maximum depth `--depth`), `logits.npy` (`(rows, nodes)`, float16 or float32, written row by
//! row through a `BufWriter`: the matrix is never held, so the file may be larger than memory),
//! `labels.csv` (`row,label`; ~10 % background rows, ~15 % of the others labelled coarsely) and,
//! with `--objectness`, `objectness.npy` (float32 `(rows,)`). Also `batch.json`: the spec and
//! what was written, so `cargo xtask bench` can reuse a batch it already generated.
//!
//! Everything derives from `--seed` through the xoshiro256** generator below (seeded per row by
//! splitmix64, so a row does not depend on the rows before it). Numbers come from bits with
//! `+ - * /` only (no libm), so the same seed gives the same bytes on every platform.
//!
//! The rows have the structure real detector logits have: a true leaf per row (uniform over the
//! leaves), a margin for the true child of every group on its path that shrinks with depth,
//! look-alike siblings that get a true-sized margin too (more often deeper down), a per-row
//! clarity shared by the whole path (a blurry item is hard at every depth), occluded items,
//! a non-zero offset per sibling group, and Gaussian-like noise everywhere.

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};
use std::time::Instant;

use crate::args::Flags;
use crate::rng::Rng;
use anyhow::{bail, ensure, Context};
use half::f16;

const USAGE: &str = "usage: cargo xtask gen-batch --rows N --nodes M --depth D --out DIR \
[--seed S] [--dtype f16|f32] [--objectness]

  --rows N        rows of logits (the file is N x M x 2 bytes in f16)
  --nodes M       taxonomy nodes (exactly; M >= 2 * D)
  --depth D       maximum depth of the taxonomy (exactly; 1..=64)
  --out DIR       where to write taxonomy.csv, logits.npy, labels.csv [, objectness.npy]
  --seed S        generator seed (default 1; decimal or 0x hex)
  --dtype T       f16 (default) or f32 logits
  --objectness    also write objectness.npy (float32, one P(object) per row)";

/// Share of rows where the detector fired on nothing.
const BACKGROUND_RATE: f64 = 0.10;
/// Share of foreground rows labelled with a strict ancestor of the true leaf.
const COARSE_RATE: f64 = 0.15;
/// Partly hidden items: lower objectness and weaker evidence.
const OCCLUDED_RATE: f64 = 0.10;
/// Background detections that still look like objects (objectness 0.45–0.75).
const BACKGROUND_FALSE_ALARM: f64 = 0.07;
/// Margin of the true child at depth 1, and its shrink factor per level below.
const MARGIN_TOP: f64 = 5.5;
const MARGIN_SHRINK: f64 = 0.82;
const MARGIN_FLOOR: f64 = 1.3;
const MARGIN_JITTER: f64 = 0.8;
/// Chance that a look-alike sibling gets a margin too: `CONFUSE_TOP + CONFUSE_STEP * (d - 1)`.
const CONFUSE_TOP: f64 = 0.01;
const CONFUSE_STEP: f64 = 0.015;
const CONFUSE_MAX: f64 = 0.25;
const NOISE_SD: f64 = 1.0;
const BACKGROUND_SD: f64 = 0.7;
const OFFSET_MEAN: f64 = -1.0;
const OFFSET_SD: f64 = 0.7;

/// Element type of the logits file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Dtype {
    F16,
    F32,
}

impl Dtype {
    fn descr(self) -> &'static str {
        match self {
            Dtype::F16 => "<f2",
            Dtype::F32 => "<f4",
        }
    }
    fn size(self) -> usize {
        match self {
            Dtype::F16 => 2,
            Dtype::F32 => 4,
        }
    }
    pub fn name(self) -> &'static str {
        match self {
            Dtype::F16 => "f16",
            Dtype::F32 => "f32",
        }
    }
}

/// What to generate.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Spec {
    pub rows: u64,
    pub nodes: usize,
    pub depth: usize,
    pub seed: u64,
    pub dtype: Dtype,
    pub objectness: bool,
}

impl Spec {
    /// The spec as it is recorded in `batch.json` (and compared to reuse a batch).
    pub fn to_json(&self) -> serde_json::Value {
        serde_json::json!({
            "generator": "hedgerow gen-batch v1",
            "rows": self.rows,
            "nodes": self.nodes,
            "depth": self.depth,
            "seed": self.seed,
            "dtype": self.dtype.name(),
            "objectness": self.objectness,
        })
    }
}

/// What was written.
#[derive(Debug, Clone)]
pub struct Summary {
    pub dir: PathBuf,
    pub leaves: usize,
    pub groups: usize,
    pub logits_bytes: u64,
    pub total_bytes: u64,
    pub seconds: f64,
}

/// Parse `gen-batch` arguments.
pub fn parse_args(args: &[String]) -> anyhow::Result<Option<(Spec, PathBuf)>> {
    let (mut rows, mut nodes, mut depth, mut out) = (None, None, None, None);
    let mut spec = Spec {
        rows: 0,
        nodes: 0,
        depth: 0,
        seed: 1,
        dtype: Dtype::F16,
        objectness: false,
    };
    let mut flags = Flags::new(args);
    while let Some(flag) = flags.next() {
        match flag {
            "--rows" => rows = Some(flags.number()?),
            "--nodes" => nodes = Some(flags.number()? as usize),
            "--depth" => depth = Some(flags.number()? as usize),
            "--seed" => spec.seed = flags.number()?,
            "--out" => out = Some(PathBuf::from(flags.value()?)),
            "--dtype" => {
                spec.dtype = match flags.value()?.as_str() {
                    "f16" | "float16" => Dtype::F16,
                    "f32" | "float32" => Dtype::F32,
                    other => bail!("--dtype: expected f16 or f32, found {other:?}"),
                }
            }
            "--objectness" => spec.objectness = true,
            "-h" | "--help" => {
                println!("{USAGE}");
                return Ok(None);
            }
            other => bail!("gen-batch: unknown argument {other:?}\n{USAGE}"),
        }
    }
    let (Some(r), Some(m), Some(d), Some(out)) = (rows, nodes, depth, out) else {
        bail!("gen-batch: --rows, --nodes, --depth and --out are required\n{USAGE}");
    };
    spec.rows = r;
    spec.nodes = m;
    spec.depth = d;
    Ok(Some((spec, out)))
}

/// `cargo xtask gen-batch …`
pub fn run(args: &[String]) -> anyhow::Result<()> {
    let Some((spec, out)) = parse_args(args)? else {
        return Ok(());
    };
    let s = generate(&spec, &out)?;
    println!(
        "gen-batch: {} rows, {} nodes ({} leaves, {} sibling groups), depth {}, {} logits, \
         seed {:#x}",
        spec.rows,
        spec.nodes,
        s.leaves,
        s.groups,
        spec.depth,
        spec.dtype.name(),
        spec.seed
    );
    println!(
        "gen-batch: wrote {} ({} bytes of logits, {} bytes in all) in {:.1} s ({:.0} MB/s)",
        s.dir.display(),
        s.logits_bytes,
        s.total_bytes,
        s.seconds,
        s.logits_bytes as f64 / 1e6 / s.seconds.max(1e-9)
    );
    Ok(())
}

// ------------------------------------------------------------------------------------------
// Taxonomy

/// The generated tree, columns in breadth-first order with every sibling group contiguous.
struct Tree {
    /// Parent column of each node, `None` at depth 1.
    parent: Vec<Option<usize>>,
    depth: Vec<usize>,
    /// Sibling groups: `groups[0]` is the root's children.
    groups: Vec<Vec<usize>>,
    /// Group holding each node.
    group_of: Vec<usize>,
    leaves: Vec<usize>,
}

impl Tree {
    fn id(&self, v: usize) -> String {
        format!("d{}-{v}", self.depth[v])
    }
    /// Columns from depth 1 down to `v`.
    fn path(&self, v: usize) -> Vec<usize> {
        let mut p = vec![v];
        let mut u = v;
        while let Some(q) = self.parent[u] {
            p.push(q);
            u = q;
        }
        p.reverse();
        p
    }
}

/// Nodes per level: a few top-level nodes, then geometric growth so that the total is exactly
/// `nodes` and every level has at least two.
fn level_sizes(nodes: usize, depth: usize) -> Vec<usize> {
    let top = (nodes / (4 * depth)).clamp(2, 8);
    if depth == 1 {
        return vec![nodes];
    }
    let rest = (nodes - top) as f64;
    let sum = |g: f64| {
        (1..depth)
            .map(|d| top as f64 * g.powi(d as i32))
            .sum::<f64>()
    };
    let (mut lo, mut hi) = (1e-6f64, nodes as f64);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if sum(mid) < rest {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let ideal: Vec<f64> = (0..depth).map(|d| top as f64 * lo.powi(d as i32)).collect();
    let mut n: Vec<usize> = ideal.iter().map(|&x| (x.floor() as usize).max(2)).collect();
    n[0] = top;
    let mut total: usize = n.iter().sum();
    while total < nodes {
        // Grow the level furthest below its ideal size (never level 1).
        let d = (1..depth)
            .max_by(|&a, &b| (ideal[a] - n[a] as f64).total_cmp(&(ideal[b] - n[b] as f64)))
            .unwrap_or(depth - 1);
        n[d] += 1;
        total += 1;
    }
    while total > nodes {
        let Some(d) = (1..depth)
            .filter(|&d| n[d] > 2)
            .max_by(|&a, &b| (n[a] as f64 - ideal[a]).total_cmp(&(n[b] as f64 - ideal[b])))
        else {
            break;
        };
        n[d] -= 1;
        total -= 1;
    }
    n
}

fn build_tree(nodes: usize, depth: usize, seed: u64) -> anyhow::Result<Tree> {
    ensure!(
        (1..=64).contains(&depth),
        "--depth must be in 1..=64, found {depth}"
    );
    ensure!(
        nodes >= 2 * depth,
        "--nodes must be at least 2 × depth = {} (two nodes per level), found {nodes}",
        2 * depth
    );
    ensure!(
        nodes <= u32::MAX as usize / 2,
        "--nodes {nodes} is too large"
    );
    let sizes = level_sizes(nodes, depth);
    debug_assert_eq!(sizes.iter().sum::<usize>(), nodes);
    let mut rng = Rng::new(seed, u64::MAX);
    let mut parent = Vec::with_capacity(nodes);
    let mut depth_of = Vec::with_capacity(nodes);
    let mut groups: Vec<Vec<usize>> = vec![(0..sizes[0]).collect()];
    let mut child_group = vec![None; nodes];
    for _ in 0..sizes[0] {
        parent.push(None);
        depth_of.push(1);
    }
    let mut level: Vec<usize> = (0..sizes[0]).collect();
    for (d, &n) in sizes.iter().enumerate().skip(1) {
        // About four children per parent; each chosen parent gets at least two.
        let p = (n / 4).clamp(1, level.len()).min(n / 2).max(1);
        let mut pool = level.clone();
        for i in 0..p {
            let j = i + rng.below((pool.len() - i) as u64) as usize;
            pool.swap(i, j);
        }
        let mut chosen = pool[..p].to_vec();
        chosen.sort_unstable();
        let mut counts = vec![2; p];
        let mut left = n - counts.iter().sum::<usize>();
        while left > 0 {
            counts[rng.below(p as u64) as usize] += 1;
            left -= 1;
        }
        let mut next = Vec::with_capacity(n);
        for (&q, &k) in chosen.iter().zip(&counts) {
            let start = parent.len();
            for _ in 0..k {
                parent.push(Some(q));
                depth_of.push(d + 1);
            }
            child_group[q] = Some(groups.len());
            groups.push((start..start + k).collect());
            next.extend(start..start + k);
        }
        level = next;
    }
    ensure!(
        parent.len() == nodes,
        "internal: built {} nodes",
        parent.len()
    );
    let mut group_of = vec![0; nodes];
    for (g, kids) in groups.iter().enumerate() {
        for &c in kids {
            group_of[c] = g;
        }
    }
    let leaves = (0..nodes).filter(|&v| child_group[v].is_none()).collect();
    Ok(Tree {
        parent,
        depth: depth_of,
        groups,
        group_of,
        leaves,
    })
}

fn taxonomy_csv(tree: &Tree) -> String {
    let mut s = String::from("id,parent,name\n");
    for v in 0..tree.parent.len() {
        let parent = tree.parent[v].map(|p| tree.id(p)).unwrap_or_default();
        s.push_str(&format!(
            "{},{parent},Level {} class {v}\n",
            tree.id(v),
            tree.depth[v]
        ));
    }
    s
}

// ------------------------------------------------------------------------------------------
// Rows

struct RowTruth {
    label: Option<usize>,
    objectness: f64,
}

/// Fill one row of logits (one value per column).
fn simulate_row(tree: &Tree, offsets: &[f64], seed: u64, row: u64, logits: &mut [f64]) -> RowTruth {
    let mut rng = Rng::new(seed, row);
    if rng.uniform() < BACKGROUND_RATE {
        for (v, z) in logits.iter_mut().enumerate() {
            *z = offsets[tree.group_of[v]] + BACKGROUND_SD * rng.normal_fast();
        }
        let objectness = if rng.uniform() < BACKGROUND_FALSE_ALARM {
            0.45 + 0.30 * rng.uniform()
        } else {
            0.02 + 0.43 * 0.5 * (rng.uniform() + rng.uniform())
        };
        return RowTruth {
            label: None,
            objectness,
        };
    }
    let leaf = tree.leaves[rng.below(tree.leaves.len() as u64) as usize];
    let occluded = rng.uniform() < OCCLUDED_RATE;
    let objectness = if occluded {
        0.15 + 0.40 * rng.uniform()
    } else {
        1.0 - 0.45 * rng.uniform() * rng.uniform()
    };
    let clarity = (0.6 + 0.8 * rng.uniform()) * if occluded { 0.65 } else { 1.0 };
    for (v, z) in logits.iter_mut().enumerate() {
        *z = offsets[tree.group_of[v]] + NOISE_SD * rng.normal_fast();
    }
    let path = tree.path(leaf);
    let mut margin = MARGIN_TOP;
    for (i, &v) in path.iter().enumerate() {
        let m = margin.max(MARGIN_FLOOR) * clarity;
        logits[v] += m + MARGIN_JITTER * rng.normal_fast();
        let kids = &tree.groups[tree.group_of[v]];
        let confuse = (CONFUSE_TOP + CONFUSE_STEP * i as f64).min(CONFUSE_MAX);
        if kids.len() > 1 && rng.uniform() < confuse {
            let mut other = kids[rng.below(kids.len() as u64 - 1) as usize];
            if other == v {
                other = kids[kids.len() - 1];
            }
            logits[other] += m + MARGIN_JITTER * rng.normal_fast();
        }
        margin *= MARGIN_SHRINK;
    }
    let label = if path.len() >= 2 && rng.uniform() < COARSE_RATE {
        path[rng.below(path.len() as u64 - 1) as usize]
    } else {
        leaf
    };
    RowTruth {
        label: Some(label),
        objectness,
    }
}

fn create(path: &Path) -> anyhow::Result<BufWriter<File>> {
    let f = File::create(path).with_context(|| format!("creating {}", path.display()))?;
    Ok(BufWriter::with_capacity(8 << 20, f))
}

/// Write the batch into `out` (created if needed).
pub fn generate(spec: &Spec, out: &Path) -> anyhow::Result<Summary> {
    let started = Instant::now();
    let tree = build_tree(spec.nodes, spec.depth, spec.seed)?;
    let m = spec.nodes;
    std::fs::create_dir_all(out).with_context(|| format!("creating {}", out.display()))?;
    // A half-written batch must not look finished.
    let stamp = out.join("batch.json");
    if stamp.exists() {
        std::fs::remove_file(&stamp).with_context(|| format!("removing {}", stamp.display()))?;
    }
    let tax = taxonomy_csv(&tree);
    std::fs::write(out.join("taxonomy.csv"), &tax)?;

    let mut off_rng = Rng::new(spec.seed, u64::MAX - 1);
    let offsets: Vec<f64> = (0..tree.groups.len())
        .map(|_| OFFSET_MEAN + OFFSET_SD * off_rng.normal_fast())
        .collect();

    let logits_path = out.join("logits.npy");
    let mut logits = create(&logits_path)?;
    let header =
        hedgerow_core::npy::header_bytes(spec.dtype.descr(), &[spec.rows, m as u64], false);
    logits.write_all(&header)?;
    let mut labels = create(&out.join("labels.csv"))?;
    labels.write_all(b"row,label\n")?;
    let mut objectness = if spec.objectness {
        let mut w = create(&out.join("objectness.npy"))?;
        w.write_all(&hedgerow_core::npy::header_bytes(
            "<f4",
            &[spec.rows],
            false,
        ))?;
        Some(w)
    } else {
        None
    };

    let ids: Vec<String> = (0..m).map(|v| tree.id(v)).collect();
    let mut values = vec![0f64; m];
    let mut bytes = vec![0u8; m * spec.dtype.size()];
    for r in 0..spec.rows {
        let truth = simulate_row(&tree, &offsets, spec.seed, r, &mut values);
        match spec.dtype {
            Dtype::F16 => {
                for (b, &z) in bytes.chunks_exact_mut(2).zip(&values) {
                    b.copy_from_slice(&f16::from_f64(z).to_le_bytes());
                }
            }
            Dtype::F32 => {
                for (b, &z) in bytes.chunks_exact_mut(4).zip(&values) {
                    b.copy_from_slice(&(z as f32).to_le_bytes());
                }
            }
        }
        logits.write_all(&bytes)?;
        let label = truth.label.map(|v| ids[v].as_str()).unwrap_or("");
        writeln!(labels, "{r},{label}")?;
        if let Some(w) = objectness.as_mut() {
            w.write_all(&(truth.objectness as f32).to_le_bytes())?;
        }
    }
    logits.flush()?;
    labels.flush()?;
    if let Some(w) = objectness.as_mut() {
        w.flush()?;
    }
    drop((logits, labels, objectness));

    let mut total_bytes = 0;
    for name in ["taxonomy.csv", "logits.npy", "labels.csv", "objectness.npy"] {
        if let Ok(meta) = std::fs::metadata(out.join(name)) {
            total_bytes += meta.len();
        }
    }
    let logits_bytes = std::fs::metadata(&logits_path)?.len();
    let seconds = started.elapsed().as_secs_f64();
    let mut record = spec.to_json();
    record["leaves"] = tree.leaves.len().into();
    record["groups"] = tree.groups.len().into();
    record["logits_bytes"] = logits_bytes.into();
    record["seconds"] = seconds.into();
    std::fs::write(&stamp, serde_json::to_string_pretty(&record)? + "\n")?;
    Ok(Summary {
        dir: out.to_path_buf(),
        leaves: tree.leaves.len(),
        groups: tree.groups.len(),
        logits_bytes,
        total_bytes,
        seconds,
    })
}

/// Whether `out` holds a complete batch generated from `spec` (its `batch.json` matches).
pub fn is_current(spec: &Spec, out: &Path) -> bool {
    let Ok(text) = std::fs::read_to_string(out.join("batch.json")) else {
        return false;
    };
    let Ok(record) = serde_json::from_str::<serde_json::Value>(&text) else {
        return false;
    };
    let want = spec.to_json();
    let same = want
        .as_object()
        .is_some_and(|w| w.iter().all(|(k, v)| record.get(k) == Some(v)));
    let expected = (spec.nodes * spec.dtype.size()) as u64 * spec.rows;
    let size_ok = std::fs::metadata(out.join("logits.npy"))
        .is_ok_and(|m| m.len() >= expected && m.len() < expected + 4096);
    same && size_ok
}

#[cfg(test)]
mod tests {
    use super::*;
    use hedgerow_core::{
        evaluate, npy, paths, Batch, Labels, Objectness, Settings, Taxonomy, Temperatures,
    };

    fn temp_dir(tag: &str) -> PathBuf {
        let dir =
            std::env::temp_dir().join(format!("hedgerow-gen-batch-{tag}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        dir
    }

    #[test]
    fn level_sizes_are_exact() {
        for (m, d) in [
            (24, 12),
            (40, 5),
            (500, 6),
            (2000, 12),
            (175, 5),
            (7, 1),
            (10, 5),
        ] {
            let n = level_sizes(m, d);
            assert_eq!(n.len(), d, "{m} {d}");
            assert_eq!(n.iter().sum::<usize>(), m, "{m} {d}: {n:?}");
            assert!(n.iter().all(|&k| k >= 2), "{m} {d}: {n:?}");
        }
    }

    #[test]
    fn small_batch_is_deterministic_and_loads() -> anyhow::Result<()> {
        let spec = Spec {
            rows: 600,
            nodes: 40,
            depth: 5,
            seed: 9,
            dtype: Dtype::F16,
            objectness: true,
        };
        let (a, b) = (temp_dir("a"), temp_dir("b"));
        generate(&spec, &a)?;
        generate(&spec, &b)?;
        assert!(is_current(&spec, &a));
        assert!(!is_current(
            &Spec {
                seed: 10,
                ..spec.clone()
            },
            &a
        ));
        for name in ["taxonomy.csv", "logits.npy", "labels.csv", "objectness.npy"] {
            assert_eq!(
                std::fs::read(a.join(name))?,
                std::fs::read(b.join(name))?,
                "{name}"
            );
        }

        let tax = Taxonomy::parse(&std::fs::read(a.join("taxonomy.csv"))?, "taxonomy.csv")
            .map_err(|e| anyhow::anyhow!("{e:?}"))?;
        assert_eq!(tax.len(), 40);
        assert_eq!(tax.max_depth(), 5);
        let bytes = std::fs::read(a.join("logits.npy"))?;
        let header = npy::parse_header(&bytes)
            .map_err(|e| anyhow::anyhow!("{e:?}"))?
            .expect("complete header");
        assert_eq!(header.shape, vec![600, 40]);
        assert_eq!(header.dtype.name(), "float16");
        assert!(!header.fortran_order);
        assert_eq!(bytes.len(), header.data_offset + 600 * 40 * 2);

        let ingested = paths::ingest_bytes("logits.npy", &tax, &Temperatures::default(), &bytes)
            .map_err(|e| anyhow::anyhow!("{e:?}"))?;
        let labels = Labels::parse(&std::fs::read(a.join("labels.csv"))?, "labels.csv", &tax)
            .map_err(|e| anyhow::anyhow!("{e:?}"))?;
        let obj = Objectness::parse(&std::fs::read(a.join("objectness.npy"))?, "objectness.npy")
            .map_err(|e| anyhow::anyhow!("{e:?}"))?;
        let batch = Batch::new(
            &tax,
            "logits.npy",
            ingested,
            Temperatures::default(),
            labels,
            Some(obj),
        )
        .map_err(|e| anyhow::anyhow!("{e:?}"))?;
        assert_eq!(batch.len(), 600);
        let background = batch.background_rows();
        assert!(
            (30..=90).contains(&background),
            "{background} background rows"
        );
        let coarse = batch.coarse_share(&tax).unwrap_or(0.0);
        assert!((0.07..0.25).contains(&coarse), "coarse share {coarse}");
        let m = evaluate(&tax, &batch, &Settings::default());
        assert_eq!(m.rows, 600);
        assert!(m.correct > m.wrong, "{m:?}");

        let f32_spec = Spec {
            dtype: Dtype::F32,
            objectness: false,
            ..spec
        };
        generate(&f32_spec, &b)?;
        let bytes = std::fs::read(b.join("logits.npy"))?;
        let ingested = paths::ingest_bytes("logits.npy", &tax, &Temperatures::default(), &bytes)
            .map_err(|e| anyhow::anyhow!("{e:?}"))?;
        assert_eq!(ingested.header.dtype.name(), "float32");
        assert_eq!(ingested.paths.len(), 600);
        let _ = std::fs::remove_dir_all(&a);
        let _ = std::fs::remove_dir_all(&b);
        Ok(())
    }
}
