//! `cargo xtask gen-wordnet`: test batches over a taxonomy we did not write, the WordNet noun
//! hierarchy as Debian's `wordnet-base` installs it (`/usr/share/wordnet/data.noun`).
//!
//! By default the taxonomy is the hyponym tree below `container` (offset 03094503 in WordNet
//! 3.0): bottles, cans, boxes, bags, jars, what a sorting line sees. Wheeled vehicles (WordNet
//! files them under container too) and the containers kept for animals are excluded. How the
//! tree is cut is in `wordnet/tree.rs`, how rows are simulated in `wordnet/rows.rs`.
//!
//! Writes `taxonomy.csv` (`id,parent,name`; ids like `bottle.02876657`, names the lemmas),
//! `logits.npy` (float32 `(rows, nodes)`), `labels.csv` (`label`: node ids, some internal,
//! empty for background), with `--objectness` `objectness.npy` (float32 `(rows,)`, with exact
//! 0.0 and 1.0 among the values) and with `--bundle` `batch.npz` (deflated `logits.npy`,
//! `labels.npy` as int64 columns with -1 for background, and `objectness.npy`). Other xtask
//! modules call [`generate`].

mod rows;
mod tree;
mod wndb;

use std::path::{Path, PathBuf};

use anyhow::{bail, Context};

use crate::args::Flags;
use crate::{npy_write, npz_write};
pub use rows::RowSpec;
pub use tree::Limits;

/// Where Debian's `wordnet-base` puts the noun data file.
pub const DATA_NOUN: &str = "/usr/share/wordnet/data.noun";

/// Synsets left out of the default taxonomy, by WordNet 3.0 offset (with the first lemma, which
/// [`generate`] checks so another WordNet version fails loudly instead of cutting elsewhere).
pub const DEFAULT_EXCLUDE: [(&str, &str); 6] = [
    ("04576211", "wheeled_vehicle"),
    ("02732072", "aquarium"),
    ("03350204", "fishbowl"),
    ("02822865", "beehive"),
    ("02843158", "birdbath"),
    ("02982515", "cat_box"),
];

const USAGE: &str =
    "usage: cargo xtask gen-wordnet --out DIR [--root SYNSET] [--exclude SYNSET]... \
[--rows N] [--seed S] [--objectness] [--bundle] [--max-depth D] [--max-nodes M] [--data FILE]

  --out DIR       where to write taxonomy.csv, logits.npy, labels.csv [, objectness.npy, batch.npz]
  --root SYNSET   the synset whose hyponyms form the taxonomy: an 8-digit offset or a lemma
                  (default container; naming a root drops the default exclusions)
  --exclude SYN   leave this synset and what lies only below it out (repeatable)
  --rows N        rows of logits (default 550)
  --seed S        generator seed (default 1)
  --objectness    a detector batch: background rows and objectness.npy
  --bundle        also write batch.npz
  --max-depth D   cut the taxonomy below depth D (default 8)
  --max-nodes M   cap every node's fan-out so that at most M nodes remain (default 800)
  --data FILE     the WordNet noun data file (default /usr/share/wordnet/data.noun)";

/// What to generate.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Options {
    pub data: PathBuf,
    /// Offset (8 digits) or lemma.
    pub root: String,
    /// Offsets or lemmas.
    pub exclude: Vec<String>,
    pub limits: Limits,
    pub rows: usize,
    pub seed: u64,
    pub objectness: bool,
    pub bundle: bool,
}

impl Default for Options {
    fn default() -> Self {
        Self {
            data: PathBuf::from(DATA_NOUN),
            root: "container".into(),
            exclude: DEFAULT_EXCLUDE.iter().map(|(o, _)| o.to_string()).collect(),
            limits: Limits {
                max_depth: 8,
                max_nodes: 800,
            },
            rows: 550,
            seed: 1,
            objectness: false,
            bundle: false,
        }
    }
}

/// What was written.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Generated {
    pub dir: PathBuf,
    pub taxonomy: PathBuf,
    pub logits: PathBuf,
    pub labels: PathBuf,
    pub objectness: Option<PathBuf>,
    pub bundle: Option<PathBuf>,
    /// The implicit root, `lemma.offset`.
    pub root: String,
    pub nodes: usize,
    pub depth: usize,
    pub leaves: usize,
    pub groups: usize,
    /// Synsets below the root before the depth cut and the fan-out cap.
    pub reached: usize,
    /// The fan-out cap that was needed to fit `max_nodes`, if any.
    pub fanout_cap: Option<usize>,
    pub rows: usize,
    pub background_rows: usize,
    /// Rows labelled with an internal node.
    pub coarse_rows: usize,
}

/// Read `data.noun`, cut the taxonomy and write the batch into `out` (created if missing; files
/// a previous run left that this one does not write are removed).
pub fn generate(out: &Path, opts: &Options) -> anyhow::Result<Generated> {
    let text = std::fs::read_to_string(&opts.data).with_context(|| {
        format!(
            "reading {} (Debian: apt-get install wordnet-base)",
            opts.data.display()
        )
    })?;
    let noun = wndb::Noun::new(wndb::parse(&text)?)?;
    for (offset, lemma) in DEFAULT_EXCLUDE {
        if !opts.exclude.iter().any(|e| e == offset) {
            continue;
        }
        let found = offset
            .parse()
            .ok()
            .and_then(|o| noun.get(o))
            .and_then(|s| s.words.first());
        if found.map(String::as_str) != Some(lemma) {
            bail!(
                "{}: synset {offset} should be `{lemma}` (WordNet 3.0), found {found:?}",
                opts.data.display()
            );
        }
    }
    let root = noun.resolve(&opts.root).context("--root")?;
    let exclude = opts
        .exclude
        .iter()
        .map(|e| noun.resolve(e).with_context(|| format!("--exclude {e}")))
        .collect::<anyhow::Result<Vec<u32>>>()?;
    let tree = tree::Tree::build(&noun, root, &exclude, opts.limits)?;
    let sim = rows::simulate(
        &tree,
        RowSpec {
            rows: opts.rows,
            seed: opts.seed,
            objectness: opts.objectness,
        },
    );

    std::fs::create_dir_all(out).with_context(|| format!("creating {}", out.display()))?;
    let write = |name: &str, bytes: &[u8]| -> anyhow::Result<PathBuf> {
        let path = out.join(name);
        std::fs::write(&path, bytes).with_context(|| format!("writing {}", path.display()))?;
        Ok(path)
    };
    let remove_stale = |name: &str| -> anyhow::Result<()> {
        let path = out.join(name);
        match std::fs::remove_file(&path) {
            Err(e) if e.kind() != std::io::ErrorKind::NotFound => {
                Err(e).with_context(|| format!("removing {}", path.display()))
            }
            _ => Ok(()),
        }
    };

    let taxonomy = write("taxonomy.csv", &tree.to_csv()?)?;
    let logits_npy = npy_write::encode(&[opts.rows, tree.len()], &sim.logits)?;
    let logits = write("logits.npy", &logits_npy)?;
    let mut labels_csv = csv::Writer::from_writer(Vec::new());
    labels_csv.write_record(["label"])?;
    for label in &sim.labels {
        labels_csv.write_record([label.map_or("", |v| tree.ids[v].as_str())])?;
    }
    let labels_csv = labels_csv
        .into_inner()
        .context("labels.csv: flushing the CSV writer")?;
    let labels = write("labels.csv", &labels_csv)?;
    let objectness_npy = match &sim.objectness {
        Some(p) => Some(npy_write::encode(&[opts.rows], p)?),
        None => None,
    };
    let objectness = match &objectness_npy {
        Some(bytes) => Some(write("objectness.npy", bytes)?),
        None => {
            remove_stale("objectness.npy")?;
            None
        }
    };
    let bundle = if opts.bundle {
        let columns: Vec<i64> = sim
            .labels
            .iter()
            .map(|l| l.map_or(-1, |v| v as i64))
            .collect();
        let labels_npy = npy_write::encode(&[opts.rows], &columns)?;
        let mut members: Vec<(&str, &[u8])> =
            vec![("logits.npy", &logits_npy), ("labels.npy", &labels_npy)];
        if let Some(bytes) = &objectness_npy {
            members.push(("objectness.npy", bytes));
        }
        Some(write("batch.npz", &npz_write::encode(&members)?)?)
    } else {
        remove_stale("batch.npz")?;
        None
    };

    let root_synset = noun.get(root);
    let root_lemma = root_synset
        .and_then(|s| s.words.first())
        .map_or_else(|| "synset".to_string(), |w| w.to_lowercase());
    Ok(Generated {
        dir: out.to_path_buf(),
        taxonomy,
        logits,
        labels,
        objectness,
        bundle,
        root: format!("{root_lemma}.{root:08}"),
        nodes: tree.len(),
        depth: tree.max_depth(),
        leaves: tree.leaves().len(),
        groups: tree.groups(),
        reached: tree.reached,
        fanout_cap: tree.fanout_cap,
        rows: opts.rows,
        background_rows: sim.background(),
        coarse_rows: sim.coarse(&tree),
    })
}

/// Parse `gen-wordnet` arguments into options and the output folder.
pub fn parse_args(args: &[String]) -> anyhow::Result<Option<(Options, PathBuf)>> {
    let mut opts = Options::default();
    let mut out = None;
    let mut root_given = false;
    let mut exclude = Vec::new();
    let mut flags = Flags::new(args);
    while let Some(flag) = flags.next() {
        match flag {
            "--out" => out = Some(PathBuf::from(flags.value()?)),
            "--root" => {
                opts.root = flags.value()?;
                root_given = true;
            }
            "--exclude" => exclude.push(flags.value()?),
            "--rows" => opts.rows = flags.number()? as usize,
            "--seed" => opts.seed = flags.number()?,
            "--max-depth" => opts.limits.max_depth = flags.number()? as usize,
            "--max-nodes" => opts.limits.max_nodes = flags.number()? as usize,
            "--data" => opts.data = PathBuf::from(flags.value()?),
            "--objectness" => opts.objectness = true,
            "--bundle" => opts.bundle = true,
            "-h" | "--help" => {
                println!("{USAGE}");
                return Ok(None);
            }
            other => bail!("gen-wordnet: unknown argument {other:?}\n{USAGE}"),
        }
    }
    if root_given {
        opts.exclude = exclude;
    } else {
        opts.exclude.extend(exclude);
    }
    let Some(out) = out else {
        bail!("gen-wordnet: --out is required\n{USAGE}");
    };
    Ok(Some((opts, out)))
}

/// `cargo xtask gen-wordnet …`
pub fn run(args: &[String]) -> anyhow::Result<()> {
    let Some((opts, out)) = parse_args(args)? else {
        return Ok(());
    };
    let g = generate(&out, &opts)?;
    let cap = g
        .fanout_cap
        .map_or_else(String::new, |k| format!(", fan-out capped at {k}"));
    println!(
        "gen-wordnet: taxonomy below {}: {} nodes of the {} reached, depth {}, {} leaves, \
         {} sibling groups{cap}",
        g.root, g.nodes, g.reached, g.depth, g.leaves, g.groups
    );
    println!(
        "gen-wordnet: {} rows ({} background, {} labelled with an internal node), seed {}",
        g.rows, g.background_rows, g.coarse_rows, opts.seed
    );
    let mut files = vec![&g.taxonomy, &g.logits, &g.labels];
    files.extend(g.objectness.iter());
    files.extend(g.bundle.iter());
    for f in files {
        println!("  {}", f.display());
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use hedgerow_core::{
        evaluate, npz, paths, Batch, Labels, Objectness, Settings, Taxonomy, Temperatures,
    };

    fn temp_dir(tag: &str) -> PathBuf {
        let dir =
            std::env::temp_dir().join(format!("hedgerow-gen-wordnet-{tag}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        dir
    }

    fn core<T>(r: Result<T, impl std::fmt::Debug>) -> anyhow::Result<T> {
        r.map_err(|e| anyhow::anyhow!("{e:?}"))
    }

    /// The tests read the installed file; CI installs `wordnet-base` (`.ci/run`).
    fn data_is_installed() {
        assert!(
            Path::new(DATA_NOUN).exists(),
            "{DATA_NOUN} is missing: apt-get install wordnet-base"
        );
    }

    #[test]
    fn classifier_batch_loads_in_the_engine() -> anyhow::Result<()> {
        data_is_installed();
        let (a, b) = (temp_dir("a"), temp_dir("b"));
        let opts = Options::default();
        let g = generate(&a, &opts)?;
        // Measured on Debian's wordnet-base 1:3.0 (WordNet 3.0): the container subtree
        // without the exclusions.
        assert_eq!((g.nodes, g.depth, g.leaves), (508, 5, 405));
        assert_eq!(g.fanout_cap, None);
        assert_eq!(g.background_rows, 0);
        assert!(g.objectness.is_none() && g.bundle.is_none());

        let tax = core(Taxonomy::parse(
            &std::fs::read(&g.taxonomy)?,
            "taxonomy.csv",
        ))?;
        assert_eq!(tax.len(), g.nodes);
        assert_eq!(tax.max_depth(), g.depth);
        let bottle = tax.lookup("bottle.02876657").expect("bottle is a node");
        assert_eq!(tax.name(bottle), "bottle");
        assert_eq!(tax.id(tax.parent(bottle)), "vessel.04531098");
        let ashcan = tax.lookup("ashcan.02747177").expect("ashcan is a node");
        assert!(tax
            .name(ashcan)
            .starts_with("ashcan, trash can, garbage can"));

        let logits = std::fs::read(&g.logits)?;
        let ingested = core(paths::ingest_bytes(
            "logits.npy",
            &tax,
            &Temperatures::default(),
            &logits,
        ))?;
        assert_eq!(ingested.header.shape, vec![550, g.nodes as u64]);
        assert_eq!(ingested.header.dtype.name(), "float32");
        let labels = core(Labels::parse(
            &std::fs::read(&g.labels)?,
            "labels.csv",
            &tax,
        ))?;
        let batch = core(Batch::new(
            &tax,
            "logits.npy",
            ingested,
            Temperatures::default(),
            labels,
            None,
        ))?;
        assert_eq!(batch.len(), 550);
        assert_eq!(batch.background_rows(), 0);
        let coarse = batch.coarse_share(&tax).unwrap_or(0.0);
        assert!((0.1..0.35).contains(&coarse), "coarse share {coarse}");
        let m = evaluate(&tax, &batch, &Settings::default());
        assert_eq!(m.rows, 550);
        assert!(m.correct > m.wrong, "{m:?}");

        // Same seed, same bytes; another seed, other logits.
        generate(&b, &opts)?;
        for name in ["taxonomy.csv", "logits.npy", "labels.csv"] {
            assert_eq!(
                std::fs::read(a.join(name))?,
                std::fs::read(b.join(name))?,
                "{name}"
            );
        }
        generate(&b, &Options { seed: 2, ..opts })?;
        assert_ne!(
            std::fs::read(a.join("logits.npy"))?,
            std::fs::read(b.join("logits.npy"))?
        );
        assert_eq!(
            std::fs::read(a.join("taxonomy.csv"))?,
            std::fs::read(b.join("taxonomy.csv"))?
        );
        let _ = std::fs::remove_dir_all(&a);
        let _ = std::fs::remove_dir_all(&b);
        Ok(())
    }

    #[test]
    fn detector_batch_and_bundle_load_in_the_engine() -> anyhow::Result<()> {
        data_is_installed();
        let (a, b) = (temp_dir("det-a"), temp_dir("det-b"));
        let opts = Options {
            rows: 2000,
            objectness: true,
            bundle: true,
            ..Options::default()
        };
        let g = generate(&a, &opts)?;
        assert_eq!(g.rows, 2000);
        assert!((120..=280).contains(&g.background_rows), "{g:?}");
        let tax = core(Taxonomy::parse(
            &std::fs::read(&g.taxonomy)?,
            "taxonomy.csv",
        ))?;

        let obj_bytes = std::fs::read(g.objectness.as_ref().expect("objectness written"))?;
        let obj = core(Objectness::parse(&obj_bytes, "objectness.npy"))?;
        let p = &obj_bytes[obj_bytes.len() - 2000 * 4..];
        let p: Vec<f32> = p
            .chunks_exact(4)
            .map(|c| f32::from_le_bytes([c[0], c[1], c[2], c[3]]))
            .collect();
        assert!(p.iter().all(|x| (0.0..=1.0).contains(x)));
        assert!(p.iter().filter(|&&x| x == 0.0).count() >= 10);
        assert!(p.iter().filter(|&&x| x == 1.0).count() >= 10);

        let logits = std::fs::read(&g.logits)?;
        let ingested = core(paths::ingest_bytes(
            "logits.npy",
            &tax,
            &Temperatures::default(),
            &logits,
        ))?;
        let labels_csv = core(Labels::parse(
            &std::fs::read(&g.labels)?,
            "labels.csv",
            &tax,
        ))?;
        let batch = core(Batch::new(
            &tax,
            "logits.npy",
            ingested,
            Temperatures::default(),
            labels_csv.clone(),
            Some(obj.clone()),
        ))?;
        assert_eq!(batch.background_rows(), g.background_rows);
        let m = evaluate(&tax, &batch, &Settings::default());
        assert_eq!(m.rows, 2000);
        assert!(m.correct > m.wrong, "{m:?}");

        // The bundle holds the same arrays; its labels are column indices.
        let npz_bytes = std::fs::read(g.bundle.as_ref().expect("bundle written"))?;
        let members = core(npz::members(&npz_bytes))?;
        let keys: Vec<&str> = members.iter().map(|m| m.key()).collect();
        assert_eq!(keys, ["logits", "labels", "objectness"]);
        assert!(members.iter().all(|m| m.method == 8));
        let member = |k: &str| -> anyhow::Result<Vec<u8>> {
            let m = members.iter().find(|m| m.key() == k).expect("member");
            core(npz::extract(&npz_bytes, m))
        };
        assert_eq!(member("logits")?, logits);
        assert_eq!(member("objectness")?, obj_bytes);
        let labels_npy = core(Labels::parse(&member("labels")?, "labels.npy", &tax))?;
        assert_eq!(labels_npy.nodes, labels_csv.nodes);
        let from_bundle = core(Batch::new(
            &tax,
            "batch.npz",
            core(paths::ingest_bytes(
                "batch.npz",
                &tax,
                &Temperatures::default(),
                &member("logits")?,
            ))?,
            Temperatures::default(),
            labels_npy,
            Some(obj),
        ))?;
        assert_eq!(evaluate(&tax, &from_bundle, &Settings::default()), m);

        generate(&b, &opts)?;
        for name in ["logits.npy", "labels.csv", "objectness.npy", "batch.npz"] {
            assert_eq!(
                std::fs::read(a.join(name))?,
                std::fs::read(b.join(name))?,
                "{name}"
            );
        }
        // A classifier run into the same folder leaves no stale detector files.
        let g = generate(&b, &Options::default())?;
        assert!(g.objectness.is_none());
        assert!(!b.join("objectness.npy").exists() && !b.join("batch.npz").exists());
        let _ = std::fs::remove_dir_all(&a);
        let _ = std::fs::remove_dir_all(&b);
        Ok(())
    }

    #[test]
    fn a_wide_deep_root_is_cut_to_the_limits() -> anyhow::Result<()> {
        data_is_installed();
        let dir = temp_dir("material");
        // `material` names several synsets; 14580897 is "material, stuff": 2544 hyponyms down
        // to depth 10 in WordNet 3.0 (counted with this module's tree rules).
        let err = generate(
            &dir,
            &Options {
                root: "material".into(),
                exclude: Vec::new(),
                ..Options::default()
            },
        )
        .expect_err("ambiguous lemma");
        assert!(
            format!("{err:#}").contains("14580897  material, stuff"),
            "{err:#}"
        );
        let g = generate(
            &dir,
            &Options {
                root: "14580897".into(),
                exclude: Vec::new(),
                rows: 50,
                ..Options::default()
            },
        )?;
        assert!(g.nodes <= 800 && g.nodes > 400, "{g:?}");
        assert_eq!(g.depth, 8);
        assert!(g.fanout_cap.is_some());
        let tax = core(Taxonomy::parse(
            &std::fs::read(&g.taxonomy)?,
            "taxonomy.csv",
        ))?;
        assert_eq!((tax.len(), tax.max_depth()), (g.nodes, g.depth));
        let _ = std::fs::remove_dir_all(&dir);
        Ok(())
    }

    #[test]
    fn arguments() -> anyhow::Result<()> {
        let args = |s: &str| s.split_whitespace().map(String::from).collect::<Vec<_>>();
        let (opts, out) =
            parse_args(&args("--out x --rows 2000 --objectness --bundle"))?.expect("options");
        assert_eq!(out, PathBuf::from("x"));
        let want = Options {
            rows: 2000,
            objectness: true,
            bundle: true,
            ..Options::default()
        };
        assert_eq!(opts, want);
        let (opts, _) = parse_args(&args("--out=x --exclude 02876657"))?.expect("options");
        assert_eq!(opts.exclude.len(), DEFAULT_EXCLUDE.len() + 1);
        let (opts, _) = parse_args(&args("--out x --root 14580897 --max-nodes 300 --seed 7"))?
            .expect("options");
        assert!(opts.exclude.is_empty());
        assert_eq!((opts.limits.max_nodes, opts.seed), (300, 7));
        assert!(parse_args(&args("--rows 5")).is_err());
        assert!(parse_args(&args("--out x --rows many")).is_err());
        assert!(parse_args(&args("--out x --bogus")).is_err());
        Ok(())
    }
}
