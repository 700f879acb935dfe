//! `cargo xtask gen-demo`: the deterministic generator of the recycling-line demo data.
//!
//! A camera detector on a sorting line labels each item over a materials taxonomy; we simulate
//! its per-node logits so that a greedy descent with per-depth stopping thresholds has
//! something realistic to chew on. Everything derives from [`SEED`]: the same source always
//! produces the same bytes, and a test checks the committed `demo-data/` against it.

mod taxonomy;

use std::path::{Path, PathBuf};

use anyhow::{bail, Context};
use half::f16;

use crate::npy_write;
use crate::rng::Rng;
use taxonomy::{csv_field, Taxonomy, UNLEARNED};

/// "HEDGEROW" in ASCII.
pub const SEED: u64 = 0x4845_4447_4552_4F57;
pub const ROWS: usize = 20_000;

/// Share of rows where the detector fired on nothing (belt, shadow, glare).
const BACKGROUND_RATE: f64 = 0.10;
/// Share of foreground rows whose annotator gave only an ancestor of the true item.
const COARSE_RATE: f64 = 0.15;
/// Of the coarse labels, the share that name the parent (the rest name the grandparent).
const COARSE_PARENT_SHARE: f64 = 0.65;
/// Foreground items that are partly hidden or dirty: lower objectness, weaker evidence.
const OCCLUDED_RATE: f64 = 0.10;
/// Background detections that still look object-like (objectness 0.45–0.75).
const BACKGROUND_FALSE_ALARM: f64 = 0.07;

/// Mean logit margin of the true child over its siblings, by depth 1..=5. It shrinks with
/// depth because telling PET from HDPE is easier than telling a tray from a punnet.
const MARGIN: [f64; 5] = [6.0, 4.5, 2.8, 1.9, 1.7];
/// Per-row spread of each margin.
const MARGIN_JITTER: f64 = 0.8;
/// Chance, by depth, that a look-alike sibling gets a true-sized margin as well; this is where
/// most sibling errors come from, and why they grow with depth.
const CONFUSE: [f64; 5] = [0.01, 0.03, 0.07, 0.12, 0.14];
/// Logit noise of siblings and of groups off the true path.
const NOISE_SD: f64 = 1.0;
/// Logit noise of every group on a background row: diffuse, no favourite anywhere.
const BACKGROUND_SD: f64 = 0.7;
/// Logit noise below the family of an unlearned item: close to uniform.
const UNLEARNED_SD: f64 = 0.25;
/// Each group gets a common offset, as raw logits are not centred; softmax ignores it.
const OFFSET_MEAN: f64 = -1.0;
const OFFSET_SD: f64 = 0.7;

/// The files `gen-demo` writes, in `demo-data/`.
pub const FILES: [&str; 4] = ["taxonomy.csv", "logits.npy", "objectness.npy", "labels.csv"];

/// `cargo xtask gen-demo [--out DIR]`.
pub fn run(args: &[String]) -> anyhow::Result<()> {
    let mut out = crate::root().join("demo-data");
    let mut it = args.iter();
    while let Some(arg) = it.next() {
        if arg == "--out" {
            out = PathBuf::from(it.next().context("gen-demo: --out needs a directory")?);
        } else if let Some(dir) = arg.strip_prefix("--out=") {
            out = PathBuf::from(dir);
        } else {
            bail!("gen-demo: unknown argument {arg:?}\nusage: cargo xtask gen-demo [--out DIR]");
        }
    }

    let demo = build()?;
    write(&demo, &out)?;
    println!("gen-demo: wrote {}", out.display());
    for (name, bytes) in demo.files() {
        println!("  {name:<15} {:>9} bytes", bytes.len());
    }
    print!("{}", demo.stats.report(&demo.tax));
    Ok(())
}

/// The generated files in memory, plus what only the generator knows (the true items).
pub struct Demo {
    tax: Taxonomy,
    taxonomy_csv: Vec<u8>,
    logits_npy: Vec<u8>,
    objectness_npy: Vec<u8>,
    labels_csv: Vec<u8>,
    stats: Stats,
}

impl Demo {
    fn files(&self) -> [(&'static str, &[u8]); 4] {
        [
            (FILES[0], &self.taxonomy_csv),
            (FILES[1], &self.logits_npy),
            (FILES[2], &self.objectness_npy),
            (FILES[3], &self.labels_csv),
        ]
    }
}

fn write(demo: &Demo, out: &Path) -> anyhow::Result<()> {
    std::fs::create_dir_all(out).with_context(|| format!("creating {}", out.display()))?;
    for (name, bytes) in demo.files() {
        let path = out.join(name);
        std::fs::write(&path, bytes).with_context(|| format!("writing {}", path.display()))?;
    }
    Ok(())
}

/// What a row is, known to the generator only.
struct Truth {
    /// The true item, `None` on a background row.
    leaf: Option<usize>,
    /// What the annotator wrote: the item, one of its ancestors, or nothing.
    label: Option<usize>,
    objectness: f64,
}

/// Leaf sampling table and the per-node "never learned" flags.
struct Sim {
    /// `(leaf, cumulative weight)`, in taxonomy order.
    cumulative: Vec<(usize, u64)>,
    total: u64,
    unlearned: Vec<bool>,
}

impl Sim {
    fn new(tax: &Taxonomy) -> anyhow::Result<Self> {
        let mut cumulative = Vec::new();
        let mut total = 0u64;
        for k in 0..tax.len() {
            if tax.weight[k] > 0 {
                total += u64::from(tax.weight[k]);
                cumulative.push((k, total));
            }
        }
        let mut unlearned = vec![false; tax.len()];
        for id in UNLEARNED {
            let k = tax
                .index_of(id)
                .with_context(|| format!("unlearned item {id:?} is not in the taxonomy"))?;
            if tax.child_group[k].is_some() || tax.depth[k] < 3 {
                bail!("unlearned item {id:?} must be a leaf below the family level");
            }
            unlearned[k] = true;
        }
        Ok(Self {
            cumulative,
            total,
            unlearned,
        })
    }

    fn pick_leaf(&self, rng: &mut Rng) -> usize {
        let x = rng.below(self.total);
        let i = self.cumulative.partition_point(|&(_, cum)| cum <= x);
        self.cumulative[i].0
    }
}

/// Fills `logits` (one row, one value per taxonomy node) and says what the row really is.
fn simulate_row(tax: &Taxonomy, sim: &Sim, row: usize, logits: &mut [f64]) -> Truth {
    let mut rng = Rng::new(SEED, row as u64);

    if rng.uniform() < BACKGROUND_RATE {
        for kids in &tax.groups {
            let offset = OFFSET_MEAN + OFFSET_SD * rng.normal();
            for &c in kids {
                logits[c] = offset + BACKGROUND_SD * rng.normal();
            }
        }
        let objectness = if rng.uniform() < BACKGROUND_FALSE_ALARM {
            0.45 + 0.30 * rng.uniform()
        } else {
            // Triangular on 0.02–0.45, peaking in the middle.
            0.02 + 0.43 * 0.5 * (rng.uniform() + rng.uniform())
        };
        return Truth {
            leaf: None,
            label: None,
            objectness,
        };
    }

    let leaf = sim.pick_leaf(&mut rng);
    let path = tax.path(leaf);
    let occluded = rng.uniform() < OCCLUDED_RATE;
    let objectness = if occluded {
        0.15 + 0.40 * rng.uniform()
    } else {
        // 0.55–1.0, skewed towards 1: the product of two uniforms is mostly small.
        1.0 - 0.45 * rng.uniform() * rng.uniform()
    };
    // How clearly the camera saw this item, shared by all depths: a blurry item is hard
    // throughout, which correlates the errors along a path as real ones are.
    let clarity = (0.6 + 0.8 * rng.uniform()) * if occluded { 0.65 } else { 1.0 };
    let unlearned_family = sim.unlearned[leaf].then_some(path[1]);
    let diffuse = |g: usize| match (unlearned_family, tax.group_parent[g]) {
        (Some(family), Some(p)) => tax.is_ancestor_or_self(family, p),
        _ => false,
    };

    for (g, kids) in tax.groups.iter().enumerate() {
        let sd = if diffuse(g) { UNLEARNED_SD } else { NOISE_SD };
        let offset = OFFSET_MEAN + OFFSET_SD * rng.normal();
        for &c in kids {
            logits[c] = offset + sd * rng.normal();
        }
    }

    // Walk the true path; `g` is the sibling group that holds `path[d]`.
    let mut g = 0;
    for (d, &child) in path.iter().enumerate() {
        if !diffuse(g) {
            let kids = &tax.groups[g];
            logits[child] += MARGIN[d] * clarity + MARGIN_JITTER * rng.normal();
            if kids.len() > 1 && rng.uniform() < CONFUSE[d] {
                let others: Vec<usize> = kids.iter().copied().filter(|&k| k != child).collect();
                let lookalike = others[rng.below(others.len() as u64) as usize];
                logits[lookalike] += MARGIN[d] * clarity + MARGIN_JITTER * rng.normal();
            }
        }
        if let Some(next) = tax.child_group[child] {
            g = next;
        }
    }

    let label = if rng.uniform() < COARSE_RATE {
        let up = if rng.uniform() < COARSE_PARENT_SHARE {
            1
        } else {
            2
        };
        path[path.len() - 1 - up]
    } else {
        leaf
    };
    Truth {
        leaf: Some(leaf),
        label: Some(label),
        objectness,
    }
}

/// Generates everything in memory.
pub fn build() -> anyhow::Result<Demo> {
    let tax = Taxonomy::build()?;
    let sim = Sim::new(&tax)?;
    let m = tax.len();
    if tax.depth.iter().any(|&d| d > MARGIN.len()) {
        bail!(
            "taxonomy is deeper than the {} depths simulated",
            MARGIN.len()
        );
    }

    let mut logits = Vec::with_capacity(ROWS * m);
    let mut objectness = Vec::with_capacity(ROWS);
    let mut truths = Vec::with_capacity(ROWS);
    let mut row_buf = vec![0.0f64; m];
    for row in 0..ROWS {
        let truth = simulate_row(&tax, &sim, row, &mut row_buf);
        logits.extend(row_buf.iter().map(|&x| f16::from_f64(x)));
        objectness.push(truth.objectness.clamp(0.0, 1.0) as f32);
        truths.push(truth);
    }

    let mut labels_csv = String::from("row,label\n");
    for (row, t) in truths.iter().enumerate() {
        let label = t.label.map_or("", |k| tax.ids[k]);
        labels_csv.push_str(&format!("{row},{}\n", csv_field(label)));
    }

    let stats = Stats::measure(&tax, &sim, &logits, &truths);
    Ok(Demo {
        taxonomy_csv: tax.to_csv().into_bytes(),
        logits_npy: npy_write::encode(&[ROWS, m], &logits)?,
        objectness_npy: npy_write::encode(&[ROWS], &objectness)?,
        labels_csv: labels_csv.into_bytes(),
        tax,
        stats,
    })
}

/// Greedy descent on one row: at each sibling group, softmax and take the most probable child.
/// Returns the chosen nodes with their within-group probabilities.
fn greedy(tax: &Taxonomy, row: &[f16]) -> Vec<(usize, f64)> {
    let mut out = Vec::new();
    let mut g = 0;
    loop {
        let kids = &tax.groups[g];
        let xs: Vec<f64> = kids.iter().map(|&k| f64::from(row[k])).collect();
        let max = xs.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let z: f64 = xs.iter().map(|x| (x - max).exp()).sum();
        // First maximum wins ties, as a plain argmax would.
        let mut best = 0;
        for i in 1..xs.len() {
            if xs[i] > xs[best] {
                best = i;
            }
        }
        let node = kids[best];
        out.push((node, 1.0 / z));
        match tax.child_group[node] {
            Some(next) => g = next,
            None => return out,
        }
    }
}

/// Rates measured on the generated (float16) logits, printed by `gen-demo` and quoted in
/// `demo-data/README.md`.
#[derive(Default)]
struct Stats {
    rows: usize,
    background: usize,
    coarse: usize,
    foreground: usize,
    depth1_correct: usize,
    leaf_correct: usize,
    /// Greedy leaf equals the label or lies below it.
    label_consistent: usize,
    /// Per depth: rows whose greedy path was right down to depth d-1, and of those right at d.
    reached: [usize; 5],
    right: [usize; 5],
    unlearned_rows: usize,
    unlearned_depth2_correct: usize,
    unlearned_depth3_prob: f64,
    learned_depth3_prob: f64,
    learned_depth3_rows: usize,
    background_objectness_low: usize,
    foreground_objectness_high: usize,
}

impl Stats {
    fn measure(tax: &Taxonomy, sim: &Sim, logits: &[f16], truths: &[Truth]) -> Self {
        let m = tax.len();
        let mut s = Stats {
            rows: truths.len(),
            ..Stats::default()
        };
        for (r, t) in truths.iter().enumerate() {
            let Some(leaf) = t.leaf else {
                s.background += 1;
                if t.objectness < 0.45 {
                    s.background_objectness_low += 1;
                }
                continue;
            };
            s.foreground += 1;
            if t.objectness >= 0.55 {
                s.foreground_objectness_high += 1;
            }
            if t.label != Some(leaf) {
                s.coarse += 1;
            }
            let truth_path = tax.path(leaf);
            let pred = greedy(tax, &logits[r * m..(r + 1) * m]);
            if pred[0].0 == truth_path[0] {
                s.depth1_correct += 1;
            }
            let Some(&(pred_leaf, _)) = pred.last() else {
                continue;
            };
            if pred_leaf == leaf {
                s.leaf_correct += 1;
            }
            if t.label
                .is_some_and(|l| tax.is_ancestor_or_self(l, pred_leaf))
            {
                s.label_consistent += 1;
            }
            for (d, &node) in truth_path.iter().enumerate() {
                s.reached[d] += 1;
                if pred.get(d).map(|p| p.0) != Some(node) {
                    break;
                }
                s.right[d] += 1;
            }
            if pred.len() > 2 {
                if sim.unlearned[leaf] {
                    s.unlearned_depth3_prob += pred[2].1;
                } else {
                    s.learned_depth3_prob += pred[2].1;
                    s.learned_depth3_rows += 1;
                }
            }
            if sim.unlearned[leaf] {
                s.unlearned_rows += 1;
                if pred.len() > 1 && pred[1].0 == truth_path[1] {
                    s.unlearned_depth2_correct += 1;
                }
            }
        }
        s
    }

    fn report(&self, tax: &Taxonomy) -> String {
        let pct = |a: usize, b: usize| 100.0 * a as f64 / b.max(1) as f64;
        let max_depth = tax.depth.iter().copied().max().unwrap_or(0);
        let mut out = format!(
            "  taxonomy: {} nodes, {} top-level, max depth {max_depth}, {} sibling groups\n",
            tax.len(),
            tax.groups[0].len(),
            tax.groups.len()
        );
        out += &format!(
            "  rows: {}, background {:.1} %, coarse labels {:.1} % of foreground ({:.1} % of all)\n",
            self.rows,
            pct(self.background, self.rows),
            pct(self.coarse, self.foreground),
            pct(self.coarse, self.rows)
        );
        out += &format!(
            "  objectness: background < 0.45 in {:.1} %, foreground >= 0.55 in {:.1} %\n",
            pct(self.background_objectness_low, self.background),
            pct(self.foreground_objectness_high, self.foreground)
        );
        out += &format!(
            "  greedy on foreground: depth-1 {:.1} %, leaf = true item {:.1} %, leaf within label {:.1} %\n",
            pct(self.depth1_correct, self.foreground),
            pct(self.leaf_correct, self.foreground),
            pct(self.label_consistent, self.foreground)
        );
        out += "  right at depth d given right above:";
        for d in 0..max_depth {
            out += &format!(" d{}={:.1} %", d + 1, pct(self.right[d], self.reached[d]));
        }
        out += "\n";
        out += &format!(
            "  unlearned {:?}: {} rows, family right {:.1} %, mean depth-3 prob {:.2} (learned items {:.2})\n",
            UNLEARNED,
            self.unlearned_rows,
            pct(self.unlearned_depth2_correct, self.unlearned_rows),
            self.unlearned_depth3_prob / self.unlearned_rows.max(1) as f64,
            self.learned_depth3_prob / self.learned_depth3_rows.max(1) as f64
        );
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn temp_dir(tag: &str) -> PathBuf {
        let nanos = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map(|d| d.as_nanos())
            .unwrap_or(0);
        std::env::temp_dir().join(format!(
            "hedgerow-gen-demo-{tag}-{}-{nanos}",
            std::process::id()
        ))
    }

    /// The committed demo-data/ must be exactly what the generator writes.
    #[test]
    fn committed_files_come_from_the_generator() {
        let dir = temp_dir("committed");
        let args = vec!["--out".to_string(), dir.display().to_string()];
        run(&args).expect("gen-demo into a temporary directory");
        let committed = crate::root().join("demo-data");
        for name in FILES {
            let fresh = std::fs::read(dir.join(name)).expect("generated file");
            let old = std::fs::read(committed.join(name))
                .unwrap_or_else(|e| panic!("reading committed demo-data/{name}: {e}"));
            assert!(
                fresh == old,
                "demo-data/{name} differs from the generator's output; rerun `cargo xtask gen-demo`"
            );
        }
        std::fs::remove_dir_all(&dir).expect("removing the temporary directory");
    }

    /// Parses an `.npy` preamble: returns (descr, fortran_order, shape, data offset).
    fn parse_npy(bytes: &[u8]) -> (String, bool, Vec<usize>, usize) {
        assert_eq!(&bytes[..6], b"\x93NUMPY", "magic");
        assert_eq!(&bytes[6..8], &[1, 0], "version 1.0");
        let hlen = u16::from_le_bytes([bytes[8], bytes[9]]) as usize;
        let start = 10 + hlen;
        assert_eq!(start % 64, 0, "header not padded to 64 bytes");
        let text = std::str::from_utf8(&bytes[10..start]).expect("ASCII header");
        assert!(text.ends_with('\n'));
        let dict = text.trim_end();
        assert!(dict.starts_with('{') && dict.ends_with('}'), "{dict:?}");
        let field = |key: &str| -> &str {
            let at = dict.find(&format!("'{key}': ")).expect(key) + key.len() + 4;
            &dict[at..]
        };
        let descr = field("descr");
        let descr = descr[1..].split('\'').next().expect("descr").to_string();
        let fortran = field("fortran_order").starts_with("True");
        let shape_text = field("shape");
        let inner = &shape_text[1..shape_text.find(')').expect("shape tuple")];
        let shape = inner
            .split(',')
            .map(str::trim)
            .filter(|s| !s.is_empty())
            .map(|s| s.parse().expect("shape dim"))
            .collect();
        (descr, fortran, shape, start)
    }

    #[test]
    fn npy_headers_are_aligned_and_parse_back() {
        let demo = build().expect("build");
        let m = demo.tax.len();

        let (descr, fortran, shape, start) = parse_npy(&demo.logits_npy);
        assert_eq!(descr, "<f2");
        assert!(!fortran);
        assert_eq!(shape, vec![ROWS, m]);
        assert_eq!(demo.logits_npy.len(), start + ROWS * m * 2);
        assert!(demo.logits_npy[start..]
            .chunks_exact(2)
            .all(|b| f16::from_le_bytes([b[0], b[1]]).is_finite()));

        let (descr, fortran, shape, start) = parse_npy(&demo.objectness_npy);
        assert_eq!(descr, "<f4");
        assert!(!fortran);
        assert_eq!(shape, vec![ROWS]);
        assert_eq!(demo.objectness_npy.len(), start + ROWS * 4);
        assert!(demo.objectness_npy[start..].chunks_exact(4).all(|b| {
            let x = f32::from_le_bytes([b[0], b[1], b[2], b[3]]);
            (0.0..=1.0).contains(&x)
        }));

        let total: usize = demo.files().iter().map(|(_, b)| b.len()).sum();
        assert!(total <= 8_000_000, "demo data are {total} bytes");
    }

    #[test]
    fn taxonomy_fits_the_brief() {
        let tax = Taxonomy::build().expect("taxonomy");
        assert!((130..=180).contains(&tax.len()), "{} nodes", tax.len());
        assert_eq!(tax.depth.iter().copied().max(), Some(5));
        let single_child = tax.groups[1..].iter().any(|g| g.len() == 1);
        assert!(single_child, "no internal node with a single child");
        assert!((3..=5).contains(&UNLEARNED.len()));
        Sim::new(&tax).expect("unlearned items are leaves");
        let csv = tax.to_csv();
        assert_eq!(csv.lines().count(), tax.len() + 1);
        assert!(csv.starts_with("id,parent,name\nplastic,,Plastics\n"));
    }

    #[test]
    fn unknown_arguments_are_refused() {
        assert!(run(&["--bogus".to_string()]).is_err());
        assert!(run(&["--out".to_string()]).is_err());
    }
}
