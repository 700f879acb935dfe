//! Files written by numpy itself (tests/fixtures/numpy, made by make.py there with np.save,
//! np.savez and np.savez_compressed) read to the same greedy paths, labels and objectness.

use hedgerow_core::{npz, paths, Labels, Objectness, Taxonomy, Temperatures};

use crate::harness::{taxonomy, TREE};

fn fixture(name: &str) -> Vec<u8> {
    let path = format!(
        "{}/../../tests/fixtures/numpy/{name}",
        env!("CARGO_MANIFEST_DIR")
    );
    std::fs::read(&path).unwrap_or_else(|e| panic!("{path}: {e}"))
}

fn leaves_and_cond(tax: &Taxonomy, bytes: &[u8]) -> (Vec<u32>, Vec<f32>) {
    let got = paths::ingest_bytes("x.npy", tax, &Temperatures::default(), bytes)
        .unwrap_or_else(|e| panic!("{e}"));
    let p = got.paths;
    (
        p.leaves().to_vec(),
        (0..p.len()).flat_map(|r| p.cond(r).to_vec()).collect(),
    )
}

#[test]
fn every_numpy_encoding_reads_to_the_same_paths() {
    let tax = taxonomy(TREE);
    let reference = leaves_and_cond(&tax, &fixture("logits-f64.npy"));
    assert_eq!(reference.0.len(), 12);
    assert_eq!(
        leaves_and_cond(&tax, &fixture("logits-fortran.npy")),
        reference,
        "Fortran order"
    );
    // float32 big-endian and float16 round the logits, so only the leaves must agree.
    assert_eq!(
        leaves_and_cond(&tax, &fixture("logits-f32-be.npy")).0,
        reference.0,
        "big-endian float32"
    );
    let f16 = leaves_and_cond(&tax, &fixture("logits-f16.npy"));
    let agree = f16
        .0
        .iter()
        .zip(&reference.0)
        .filter(|(a, b)| a == b)
        .count();
    assert!(
        agree >= 11,
        "float16 rounding may flip a near tie, not more: {agree}/12"
    );
}

#[test]
fn integer_and_string_labels_agree() {
    let tax = taxonomy(TREE);
    let ints = Labels::parse(&fixture("labels-int64.npy"), "labels-int64.npy", &tax).expect("ints");
    let strs = Labels::parse(&fixture("labels-str.npy"), "labels-str.npy", &tax).expect("strings");
    assert_eq!(ints.nodes, strs.nodes);
    assert_eq!(
        ints.nodes[4],
        u32::MAX,
        "-1 and the empty string are background"
    );
}

#[test]
fn savez_and_savez_compressed_bundles_hold_the_same_arrays() {
    let tax = taxonomy(TREE);
    let plain = leaves_and_cond(&tax, &fixture("logits-f64.npy"));
    let labels = Labels::parse(&fixture("labels-int64.npy"), "l", &tax)
        .expect("labels")
        .nodes;
    let objectness = Objectness::parse(&fixture("objectness.npy"), "o")
        .expect("objectness")
        .values;
    for name in ["bundle.npz", "bundle-compressed.npz"] {
        let bytes = fixture(name);
        let members = npz::members(&bytes).unwrap_or_else(|e| panic!("{name}: {e}"));
        let keys: Vec<&str> = members.iter().map(|m| m.key()).collect();
        assert_eq!(keys, ["logits", "labels", "objectness"], "{name}");
        let compressed = name.contains("compressed");
        assert!(
            members
                .iter()
                .all(|m| m.method == if compressed { 8 } else { 0 }),
            "{name}"
        );
        let get = |key: &str| {
            npz::extract(&bytes, members.iter().find(|m| m.key() == key).expect(key)).expect(key)
        };
        assert_eq!(leaves_and_cond(&tax, &get("logits")), plain, "{name}");
        assert_eq!(
            Labels::parse(&get("labels"), "l", &tax)
                .expect("labels")
                .nodes,
            labels
        );
        assert_eq!(
            Objectness::parse(&get("objectness"), "o")
                .expect("obj")
                .values,
            objectness
        );
    }
}

#[test]
fn bundle_logits_stream_in_small_chunks() {
    let tax = taxonomy(TREE);
    let plain = leaves_and_cond(&tax, &fixture("logits-f64.npy"));
    let bytes = fixture("bundle-compressed.npz");
    let members = npz::members(&bytes).expect("members");
    let m = members
        .iter()
        .find(|m| m.key() == "logits")
        .expect("logits");
    let start = npz::data_offset(m, &bytes[m.local_header as usize..]).expect("offset") as usize;
    let data = &bytes[start..start + m.compressed as usize];
    let mut reader = hedgerow_core::LogitsReader::new(
        "bundle-compressed.npz:logits",
        &tax,
        &Temperatures::default(),
    );
    let mut flow = npz::Inflow::new(m).expect("inflow");
    for chunk in data.chunks(7) {
        flow.feed(chunk, &mut |out: &[u8]| reader.feed(&tax, out), |k| {
            hedgerow_core::Error::new("b", Default::default(), k).into()
        })
        .expect("feed");
    }
    flow.finish().expect("complete");
    let got = reader.finish(&tax).expect("paths");
    assert_eq!(got.paths.leaves(), &plain.0[..]);
}

#[test]
fn a_truncated_bundle_is_refused() {
    let bytes = fixture("bundle.npz");
    let e = npz::members(&bytes[..bytes.len() - 30]).expect_err("cut");
    assert!(e.to_string().contains("zip bundle"), "{e}");
}
