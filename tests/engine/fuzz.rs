//! The fuzz targets in plain `cargo test`: the committed corpus (`tests/fuzz-corpus/<target>/`)
//! replayed through the very functions the libFuzzer targets call, then a structure-aware
//! random run — `.npy` headers, zip archives, taxonomy CSV and profile JSON assembled from
//! plausible and hostile parts (proptest). Coverage-guided runs: `cargo xtask fuzz`.

#[path = "../../fuzz/src/targets.rs"]
pub(crate) mod targets;

use std::path::PathBuf;

use proptest::prelude::*;
use proptest::test_runner::Config;

use crate::zip;

fn corpus(target: &str) -> Vec<(PathBuf, Vec<u8>)> {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("../../tests/fuzz-corpus")
        .join(target);
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .filter_map(|e| e.ok().map(|e| e.path()))
        .collect();
    files.sort();
    files
        .into_iter()
        .map(|p| {
            let bytes = std::fs::read(&p).unwrap_or_else(|e| panic!("{}: {e}", p.display()));
            (p, bytes)
        })
        .collect()
}

#[test]
fn committed_corpus_replays_without_panics() {
    for (name, target) in targets::TARGETS {
        let files = corpus(name);
        assert!(!files.is_empty(), "no corpus for {name}");
        for (path, bytes) in files {
            let run = std::panic::catch_unwind(|| target(&bytes));
            assert!(run.is_ok(), "{name} panicked on {}", path.display());
        }
    }
}

fn config(default: u32) -> Config {
    Config {
        cases: std::env::var("FUZZ_CASES")
            .ok()
            .and_then(|v| v.parse().ok())
            .unwrap_or(default),
        failure_persistence: None,
        ..Config::default()
    }
}

/// A `.npy` header's dict with parts that numpy writes and parts it never would.
fn npy_header() -> impl Strategy<Value = Vec<u8>> {
    let descr = prop::sample::select(vec![
        "<f4",
        "<f8",
        "<f2",
        ">f4",
        ">f8",
        "|u1",
        "<i8",
        "<i4",
        ">i2",
        "|b1",
        "<U4",
        "<U1048577",
        "<c16",
        "f",
        "d",
        "<U0",
    ]);
    let dim = prop_oneof![
        3 => 0u64..20,
        2 => Just(7u64),
        1 => Just(1_000_000_000u64),
        1 => Just(u64::MAX),
    ];
    (
        descr,
        any::<bool>(),
        prop::collection::vec(dim, 0..4),
        prop::sample::select(vec![1u8, 2, 3, 4]),
        any::<bool>(),
    )
        .prop_map(|(descr, fortran, shape, version, tidy)| {
            let dims: Vec<String> = shape.iter().map(u64::to_string).collect();
            let shape = match dims.len() {
                1 => format!("({},)", dims[0]),
                _ => format!("({})", dims.join(", ")),
            };
            let order = if fortran { "True" } else { "False" };
            let dict = if tidy {
                format!("{{'descr': '{descr}', 'fortran_order': {order}, 'shape': {shape}, }}")
            } else {
                format!("{{\"shape\":{shape},\"descr\":\"{descr}\",\"fortran_order\":{order}}}")
            };
            let mut out = b"\x93NUMPY".to_vec();
            out.push(version);
            out.push(0);
            if version == 1 {
                out.extend((dict.len() as u16 + 1).to_le_bytes());
            } else {
                out.extend((dict.len() as u32 + 1).to_le_bytes());
            }
            out.extend(dict.as_bytes());
            out.push(b'\n');
            out
        })
}

fn body() -> impl Strategy<Value = Vec<u8>> {
    prop_oneof![
        prop::collection::vec(any::<u8>(), 0..300),
        // Whole float32 rows of the 7-node tree, some of them not finite.
        prop::collection::vec(
            prop::sample::select(vec![0.0f32, 1.5, -3.0, f32::MAX, f32::NAN, f32::INFINITY]),
            0..70
        )
        .prop_map(|v| v.iter().flat_map(|x| x.to_le_bytes()).collect()),
    ]
}

/// One member of a generated zip: its `.npy` bytes, stored or deflated, with a declared size
/// that is true, short, long or absurd.
#[derive(Debug, Clone)]
struct ZipMember {
    name: String,
    npy: Vec<u8>,
    deflate: bool,
    size_error: i64,
    cut: usize,
}

fn zip_member() -> impl Strategy<Value = ZipMember> {
    (
        prop::sample::select(vec!["logits.npy", "labels.npy", "objectness.npy", "x"]),
        (npy_header(), body()).prop_map(|(mut h, b)| {
            h.extend(b);
            h
        }),
        any::<bool>(),
        prop_oneof![4 => Just(0i64), 1 => -8i64..8, 1 => Just(1i64 << 32), 1 => Just(-1i64 << 40)],
        prop_oneof![4 => Just(0usize), 1 => 0usize..64],
    )
        .prop_map(|(name, npy, deflate, size_error, cut)| ZipMember {
            name: name.to_string(),
            npy,
            deflate,
            size_error,
            cut,
        })
}

fn zip(members: &[ZipMember], damage: (usize, u8)) -> Vec<u8> {
    let stored: Vec<(Vec<u8>, u64)> = members
        .iter()
        .map(|m| {
            let mut data = if m.deflate {
                miniz_oxide::deflate::compress_to_vec(&m.npy, 6)
            } else {
                m.npy.clone()
            };
            data.truncate(data.len().saturating_sub(m.cut));
            let size = (m.npy.len() as i64)
                .saturating_add(m.size_error)
                .clamp(0, u32::MAX as i64) as u64;
            (data, size)
        })
        .collect();
    let mut out = zip::zip(
        &members
            .iter()
            .zip(&stored)
            .map(|(m, (data, size))| zip::Member {
                name: &m.name,
                method: if m.deflate { 8 } else { 0 },
                data,
                declared: *size,
            })
            .collect::<Vec<_>>(),
    );
    let (at, byte) = damage;
    if byte != 0 {
        let i = at % out.len();
        out[i] ^= byte;
    }
    out
}

/// Taxonomy CSV rows from a small alphabet: duplicates, cycles, unknown parents, quoting.
fn taxonomy_csv() -> impl Strategy<Value = Vec<u8>> {
    let id = prop::sample::select(vec!["a", "b", "c", "d", "e", "f", "\"g,h\"", "", " a"]);
    (
        prop::sample::select(vec![
            "id,parent",
            "id,parent,name",
            "parent,id",
            "ID, Parent",
            "id",
        ]),
        prop::collection::vec((id.clone(), id), 0..12),
    )
        .prop_map(|(head, rows)| {
            let mut s = format!("{head}\n");
            for (a, b) in rows {
                s.push_str(&format!("{a},{b}\n"));
            }
            s.into_bytes()
        })
}

fn number() -> impl Strategy<Value = String> {
    prop::sample::select(vec![
        "0", "1", "0.5", "-0.0", "1e-310", "1e308", "-1", "2", "null", "\"x\"", "1e400", "0.0001",
        "10000", "10001",
    ])
    .prop_map(String::from)
}

/// Profile JSON for the small tree with every field drawn from valid and invalid values.
fn profile_json() -> impl Strategy<Value = Vec<u8>> {
    (
        prop::sample::select(vec!["cumulative", "conditional", "greedy"]),
        number(),
        prop::collection::vec(number(), 0..5),
        prop::collection::vec(
            (prop::sample::select(vec!["a", "b", "f", "zz", ""]), number()),
            0..3,
        ),
        prop::collection::vec(number(), 0..4),
        prop::sample::select(vec!["credit", "penalize", "exclude", "maybe"]),
    )
        .prop_map(|(rule, object, depths, nodes, temps, policy)| {
            let nodes: Vec<String> = nodes.iter().map(|(k, v)| format!("\"{k}\":{v}")).collect();
            format!(
                "{{\"kind\":\"hedgerow threshold profile\",\"version\":1,\"rule\":\"{rule}\",\
                 \"object_threshold\":{object},\"thresholds\":[{}],\"node_thresholds\":{{{}}},\
                 \"temperatures\":[{}],\"unverifiable\":\"{policy}\",\"taxonomy\":{{\"fingerprint\":\
                 \"76448e765213bf6983fcc6f8fd837c9f0a8c96f33b8cfb5334d92f4a9e9233c0\",\"nodes\":7,\
                 \"depth\":3}}}}",
                depths.join(","),
                nodes.join(","),
                temps.join(",")
            )
            .into_bytes()
        })
}

proptest! {
    #![proptest_config(config(2_000))]

    #[test]
    fn generated_npy_files(seed in any::<u8>(), header in npy_header(), body in body()) {
        let mut data = vec![seed];
        data.extend(&header);
        data.extend(&body);
        targets::npy_logits(&data);
        targets::labels(&data[1..]);
        targets::objectness(&data[1..]);
    }

    #[test]
    fn generated_bundles(
        members in prop::collection::vec(zip_member(), 1..4),
        damage in (any::<usize>(), prop_oneof![3 => Just(0u8), 1 => any::<u8>()]),
    ) {
        targets::npz(&zip(&members, damage));
    }

    #[test]
    fn generated_taxonomies(csv in taxonomy_csv()) {
        targets::taxonomy(&csv);
    }

    #[test]
    fn generated_profiles(json in profile_json()) {
        targets::profile(&json);
    }
}
