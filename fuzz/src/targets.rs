//! The bodies of the fuzz targets: every parser a user's bytes reach, fed arbitrary bytes, and
//! what the engine then does with whatever they accept. A target returns nothing: it must not
//! panic, and the checks inside (`assert!`) state what must hold for any input. Shared by the
//! libFuzzer targets in `fuzz/fuzz_targets/` and the corpus replay in `tests/engine/fuzz.rs`.

use hedgerow_core::{
    evaluate, exact_curve, npz, paths, Batch, DepthDrag, Labels, LogitsReader, Objectness, Policy,
    Profile, Rule, Settings, Taxonomy, Temperatures, Thresholds,
};

/// A target's body.
pub type Target = fn(&[u8]);

/// Every target, by the name of its folder under `tests/fuzz-corpus/`.
pub const TARGETS: &[(&str, Target)] = &[
    ("npy_logits", npy_logits),
    ("npz", npz),
    ("taxonomy", taxonomy),
    ("labels", labels),
    ("objectness", objectness),
    ("profile", profile),
];

/// The small tree the fixed-taxonomy targets read against (as in tests/engine/harness.rs):
/// columns b=0, a=1, c=2, d=3, e=4, f=5, g=6, rows out of order, `d` with one child.
pub const TREE: &str = "id,parent,name\nb,a,B\na,,A\nc,a,C\nd,,D\ne,d,E\nf,b,F\ng,b,G\n";

fn tree() -> Option<Taxonomy> {
    Taxonomy::parse(TREE.as_bytes(), "taxonomy.csv").ok()
}

/// splitmix64, for chunk boundaries and synthetic logits (and the engine tests' damage).
pub struct Mix(pub u64);

impl Mix {
    pub fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    pub fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
}

/// Score a batch every way the engine can, under a few settings.
fn exercise(tax: &Taxonomy, batch: &Batch, settings: &Settings) {
    let m = evaluate(tax, batch, settings);
    assert_eq!(m.predictions + m.abstained, batch.len() as u64);
    for rule in [Rule::Cumulative, Rule::Conditional] {
        let points = exact_curve(
            tax,
            batch,
            rule,
            settings.thresholds.object,
            settings.policy,
        );
        assert!(!points.is_empty());
    }
    if tax.max_depth() > 0 {
        let depth = 1 + batch.len() % tax.max_depth();
        let mut drag = DepthDrag::new(tax, batch, settings, depth);
        for t in [0.0, 0.3, 1.0] {
            let moved = drag.set(tax, batch, t);
            assert_eq!(moved, evaluate(tax, batch, drag.settings()));
        }
    }
}

fn settings(rule: Rule, object: f64, depths: Vec<f64>) -> Settings {
    Settings {
        rule,
        thresholds: Thresholds {
            object,
            depths,
            nodes: Vec::new(),
        },
        policy: Policy::Credit,
    }
}

/// A summary of a read that chunking must not change.
fn summary(r: &hedgerow_core::Result<hedgerow_core::Ingested>) -> String {
    match r {
        Ok(i) => format!(
            "{:?} {:?} {}",
            i.paths.leaves(),
            i.paths.cond_all(),
            i.digest
        ),
        Err(e) => e.to_string(),
    }
}

/// A `.npy` of logits through `LogitsReader`: the first byte picks temperatures and whether
/// the rest arrives whole or in pieces of 1–97 bytes; both must read alike. What reads is
/// joined with background labels and scored.
pub fn npy_logits(data: &[u8]) {
    let Some((&seed, bytes)) = data.split_first() else {
        return;
    };
    let Some(tax) = tree() else { return };
    let temps = Temperatures(match seed & 3 {
        0 => vec![],
        1 => vec![0.5],
        2 => vec![1e-4],
        _ => vec![2.0, 1e4],
    });
    let whole = paths::ingest_bytes("logits.npy", &tax, &temps, bytes);
    let mut reader = LogitsReader::new("logits.npy", &tax, &temps);
    let mut rng = Mix(seed as u64);
    let mut rest = bytes;
    let mut failed = None;
    while !rest.is_empty() {
        let n = (1 + rng.below(97)).min(rest.len());
        if let Err(e) = reader.feed(&tax, &rest[..n]) {
            failed = Some(Err(e));
            break;
        }
        rest = &rest[n..];
    }
    let pieces = failed.unwrap_or_else(|| reader.finish(&tax));
    assert_eq!(
        summary(&whole),
        summary(&pieces),
        "chunking changed the read"
    );
    let Ok(ingested) = whole else { return };
    assert_eq!(ingested.paths.len() as u64, ingested.header.shape[0]);
    let rows = ingested.paths.len();
    let labels = Labels {
        file: "labels".into(),
        nodes: (0..rows)
            .map(|r| {
                if r % 3 == 0 {
                    u32::MAX
                } else {
                    (r % tax.len()) as u32
                }
            })
            .collect(),
    };
    if let Ok(batch) = Batch::new(&tax, "logits.npy", ingested, temps, labels, None) {
        exercise(
            &tax,
            &batch,
            &settings(Rule::Cumulative, 0.5, vec![0.5, 0.2]),
        );
    }
}

/// A bundle: its directory read straight from the bytes and from the file's tail, then every
/// member inflated whole, in pieces (capped as a small member), and its header peeked. The
/// inflater never produces more than a member declares.
pub fn npz(data: &[u8]) {
    let _ = npz::parse_directory(data);
    let len = data.len() as u64;
    let tail = &data[data.len().saturating_sub(npz::TAIL_BYTES as usize)..];
    let Ok((offset, size)) = npz::directory_range(tail, len) else {
        return;
    };
    let dir = usize::try_from(offset).ok().and_then(|o| {
        let end = o.checked_add(usize::try_from(size).ok()?)?;
        data.get(o..end)
    });
    let Some(dir) = dir else { return };
    let Ok(members) = npz::parse_directory(dir) else {
        return;
    };
    for m in members.iter().take(8) {
        let _ = npz::extract(data, m);
        let Some(local) = usize::try_from(m.local_header)
            .ok()
            .and_then(|at| data.get(at..))
        else {
            continue;
        };
        let Ok(start) = npz::data_offset(m, local) else {
            continue;
        };
        let compressed = usize::try_from(start).ok().and_then(|s| {
            let end = s.checked_add(usize::try_from(m.compressed).ok()?)?;
            data.get(s..end)
        });
        let Some(compressed) = compressed else {
            continue;
        };
        let _ = npz::peek_header(
            m,
            &compressed[..compressed.len().min(npz::PEEK_BYTES as usize)],
        );
        let Ok(flow) = npz::Inflow::new(m) else {
            continue;
        };
        let mut flow = flow.limit(Labels::npy_limit(16, "logits"));
        let mut produced = 0u64;
        let mut rng = Mix(len);
        let mut rest = compressed;
        while !rest.is_empty() {
            let n = (1 + rng.below(300)).min(rest.len());
            let fed = flow.feed(
                &rest[..n],
                &mut |c: &[u8]| -> Result<(), ()> {
                    produced += c.len() as u64;
                    Ok(())
                },
                |_| (),
            );
            if fed.is_err() {
                break;
            }
            rest = &rest[n..];
        }
        assert!(produced <= m.size, "inflated past the declared size");
        let _ = flow.finish();
    }
}

/// A taxonomy file (CSV or JSON); one that parses gets synthetic logits and labels and is
/// scored every way.
pub fn taxonomy(data: &[u8]) {
    let Ok(tax) = Taxonomy::parse(data, "taxonomy") else {
        return;
    };
    let m = tax.len();
    for v in 0..=m as u32 {
        let path = tax.path(v);
        assert_eq!(path.len(), tax.depth(v) + 1);
        assert_eq!(tax.ancestor(v, tax.depth(v)), v);
    }
    if m > 4096 {
        return;
    }
    let mut rng = Mix(data.len() as u64);
    let rows = 1 + rng.below(12);
    let mut logits = hedgerow_core::npy::header_bytes("<f4", &[rows as u64, m as u64], false);
    for _ in 0..rows * m {
        let v = (rng.below(9) as f32 - 4.0) * 0.5;
        logits.extend(v.to_le_bytes());
    }
    let temps = Temperatures::default();
    let Ok(ingested) = paths::ingest_bytes("logits.npy", &tax, &temps, &logits) else {
        return;
    };
    let labels = Labels {
        file: "labels".into(),
        nodes: (0..rows)
            .map(|_| {
                let k = rng.below(m + 1);
                if k == m {
                    u32::MAX
                } else {
                    k as u32
                }
            })
            .collect(),
    };
    let objectness = Objectness {
        file: "objectness".into(),
        values: (0..rows).map(|r| [0.0, -0.0, 1.0, 0.4][r % 4]).collect(),
    };
    let Ok(batch) = Batch::new(
        &tax,
        "logits.npy",
        ingested,
        temps,
        labels,
        Some(objectness),
    ) else {
        return;
    };
    for (rule, object, depths) in [
        (Rule::Cumulative, 0.0, vec![0.0]),
        (Rule::Conditional, 0.5, vec![0.7, 0.3]),
        (Rule::Cumulative, 1.0, vec![1.0]),
    ] {
        exercise(&tax, &batch, &settings(rule, object, depths));
    }
}

/// A labels file (CSV, or `.npy` of integers or strings) against the small tree.
pub fn labels(data: &[u8]) {
    let Some(tax) = tree() else { return };
    if let Ok(l) = Labels::parse(data, "labels", &tax) {
        assert!(l
            .nodes
            .iter()
            .all(|&v| v == u32::MAX || (v as usize) < tax.len()));
    }
}

/// An objectness `.npy`.
pub fn objectness(data: &[u8]) {
    if let Ok(o) = Objectness::parse(data, "objectness") {
        assert!(o.values.iter().all(|v| (0.0..=1.0).contains(v)));
    }
}

/// A profile JSON against the small tree; one that parses is applied to a small batch (its
/// thresholds, per-node overrides and temperatures).
pub fn profile(data: &[u8]) {
    let Some(tax) = tree() else { return };
    let Ok(profile) = Profile::from_json(data, "profile.json", &tax) else {
        return;
    };
    let Ok(settings) = profile.settings(&tax) else {
        return;
    };
    let temps = profile.temperatures();
    assert!(temps.validate().is_ok());
    let rows: Vec<f32> = (0..6 * tax.len())
        .map(|i| ((i * 7) % 11) as f32 - 5.0)
        .collect();
    let mut logits = hedgerow_core::npy::header_bytes("<f4", &[6, tax.len() as u64], false);
    for v in rows {
        logits.extend(v.to_le_bytes());
    }
    let Ok(ingested) = paths::ingest_bytes("logits.npy", &tax, &temps, &logits) else {
        return;
    };
    let labels = Labels {
        file: "labels".into(),
        nodes: vec![0, 2, u32::MAX, 4, 5, 1],
    };
    let objectness = Objectness {
        file: "objectness".into(),
        values: vec![0.0, 0.2, 0.5, 0.9, 1.0, -0.0],
    };
    if let Ok(batch) = Batch::new(
        &tax,
        "logits.npy",
        ingested,
        temps,
        labels,
        Some(objectness),
    ) {
        exercise(&tax, &batch, &settings);
    }
}
