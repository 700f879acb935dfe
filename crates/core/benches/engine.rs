//! Criterion benchmarks: evaluation over precomputed paths (what a threshold change costs),
//! the exact curve, and ingestion (read + softmax + greedy path) of in-memory .npy bytes.

use criterion::{criterion_group, criterion_main, BatchSize, Criterion, Throughput};
use hedgerow_core::{
    evaluate, exact_curve, paths, Batch, Paths, Policy, Rule, Settings, Taxonomy, Temperatures,
    Thresholds,
};

/// A balanced tree: `fanout` children per node down to `depth`.
fn tree(fanout: usize, depth: usize) -> Taxonomy {
    let mut csv = String::from("id,parent\n");
    let mut level = vec![String::new()];
    for d in 1..=depth {
        let mut next = Vec::new();
        for parent in &level {
            for k in 0..fanout {
                let id = format!("{parent}{d}.{k}/");
                csv.push_str(&format!("\"{id}\",\"{parent}\"\n"));
                next.push(id);
            }
        }
        level = next;
    }
    Taxonomy::parse(csv.as_bytes(), "bench").expect("bench taxonomy")
}

/// A small deterministic generator (splitmix64) so the benchmark needs no extra crates.
struct Mix(u64);
impl Mix {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn unit(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// `rows` synthetic paths with labels near the path (so every outcome occurs).
fn synthetic_batch(tax: &Taxonomy, rows: usize) -> Batch {
    let mut rng = Mix(7);
    let leaves: Vec<u32> = (0..tax.len() as u32).filter(|&v| tax.is_leaf(v)).collect();
    let mut p = Paths::new(tax.max_depth());
    let mut labels = Vec::with_capacity(rows);
    let mut obj = Vec::with_capacity(rows);
    let mut cond = vec![0f32; tax.max_depth()];
    for _ in 0..rows {
        let leaf = leaves[(rng.next() % leaves.len() as u64) as usize];
        for (d, c) in cond.iter_mut().enumerate() {
            *c = (1.0 - rng.unit() * (0.2 + 0.15 * d as f64)) as f32;
        }
        p.push(leaf, &cond);
        let roll = rng.unit();
        labels.push(if roll < 0.1 {
            u32::MAX
        } else if roll < 0.25 {
            tax.ancestor(leaf, 1 + (rng.next() % tax.depth(leaf) as u64) as usize)
        } else {
            leaves[(rng.next() % leaves.len() as u64) as usize]
        });
        obj.push(rng.unit() as f32);
    }
    Batch::from_parts(
        tax,
        p,
        labels,
        Some(obj),
        Temperatures::default(),
        String::new(),
    )
}

fn bench_evaluate(c: &mut Criterion) {
    let tax = tree(4, 5);
    let rows = 1_000_000;
    let batch = synthetic_batch(&tax, rows);
    let mut group = c.benchmark_group("evaluate");
    group.throughput(Throughput::Elements(rows as u64));
    group.sample_size(20);
    for rule in [Rule::Cumulative, Rule::Conditional] {
        let settings = Settings {
            rule,
            thresholds: Thresholds {
                object: 0.3,
                depths: vec![0.6, 0.5, 0.4, 0.35, 0.3],
                nodes: Vec::new(),
            },
            policy: Policy::Credit,
        };
        group.bench_function(format!("1M rows, depth 5, {}", rule.as_str()), |b| {
            b.iter(|| evaluate(&tax, &batch, &settings))
        });
    }
    // Past six levels the kernel leaves a row early (its other variant).
    let deep = tree(3, 8);
    let deep_batch = synthetic_batch(&deep, rows);
    for rule in [Rule::Cumulative, Rule::Conditional] {
        let settings = Settings {
            rule,
            thresholds: Thresholds {
                object: 0.3,
                depths: vec![0.6, 0.5, 0.4, 0.35, 0.3, 0.25, 0.2, 0.15],
                nodes: Vec::new(),
            },
            policy: Policy::Credit,
        };
        group.bench_function(format!("1M rows, depth 8, {}", rule.as_str()), |b| {
            b.iter(|| evaluate(&deep, &deep_batch, &settings))
        });
    }
    group.finish();
    let mut group = c.benchmark_group("curve");
    group.sample_size(10);
    group.bench_function("1M rows, depth 5, cumulative", |b| {
        b.iter(|| exact_curve(&tax, &batch, Rule::Cumulative, 0.3, Policy::Credit))
    });
    group.finish();
}

fn bench_ingest(c: &mut Criterion) {
    let tax = tree(4, 4); // 340 nodes
    let rows = 20_000;
    let mut rng = Mix(11);
    let m = tax.len();
    let mut bytes = hedgerow_core::npy::header_bytes("<f2", &[rows as u64, m as u64], false);
    for _ in 0..rows * m {
        bytes.extend(half::f16::from_f64(rng.unit() * 8.0 - 4.0).to_le_bytes());
    }
    let mut group = c.benchmark_group("ingest");
    group.throughput(Throughput::Bytes(bytes.len() as u64));
    group.sample_size(10);
    group.bench_function("20k rows x 340 nodes f16", |b| {
        b.iter_batched(
            || (),
            |_| {
                paths::ingest_bytes("bench.npy", &tax, &Temperatures::default(), &bytes)
                    .expect("ingest")
            },
            BatchSize::SmallInput,
        )
    });
    group.finish();
}

criterion_group!(benches, bench_evaluate, bench_ingest);
criterion_main!(benches);
