//! Nothing a user supplies may reach a panic (in the page a panic kills everything): every
//! reader gets damaged versions of real files — bytes flipped, cut short, spliced — and must
//! answer with a value or an error.

use hedgerow_core::{npz, paths, Labels, Objectness, Profile, Taxonomy, Temperatures};

use crate::harness::{taxonomy, TREE};

use crate::fuzz::targets::Mix;

fn damaged(original: &[u8], rng: &mut Mix) -> Vec<u8> {
    let mut b = original.to_vec();
    match rng.below(4) {
        0 => {
            for _ in 0..1 + rng.below(4) {
                let i = rng.below(b.len());
                if let Some(x) = b.get_mut(i) {
                    *x ^= 1 << rng.below(8);
                }
            }
        }
        1 => b.truncate(rng.below(b.len())),
        2 => {
            let i = rng.below(b.len());
            let junk: Vec<u8> = (0..rng.below(40)).map(|_| rng.next() as u8).collect();
            b.splice(i..i, junk);
        }
        _ => {
            // Header bytes are where the structure lives: hit them harder.
            for _ in 0..3 {
                let i = rng.below(b.len().min(160));
                if let Some(x) = b.get_mut(i) {
                    *x = rng.next() as u8;
                }
            }
        }
    }
    b
}

fn fixture(name: &str) -> Vec<u8> {
    std::fs::read(format!(
        "{}/../../tests/fixtures/numpy/{name}",
        env!("CARGO_MANIFEST_DIR")
    ))
    .expect("fixture")
}

#[test]
fn damaged_inputs_give_errors_not_panics() {
    let tax = taxonomy(TREE);
    let temps = Temperatures::default();
    let mut rng = Mix(42);
    let profile = {
        let s = hedgerow_core::Settings::default();
        Profile::new(&tax, &s, &temps, None).to_json().into_bytes()
    };
    let inputs: Vec<(&str, Vec<u8>)> = vec![
        ("logits-f64.npy", fixture("logits-f64.npy")),
        ("logits-f16.npy", fixture("logits-f16.npy")),
        ("logits-fortran.npy", fixture("logits-fortran.npy")),
        ("labels-int64.npy", fixture("labels-int64.npy")),
        ("labels-str.npy", fixture("labels-str.npy")),
        ("objectness.npy", fixture("objectness.npy")),
        ("bundle.npz", fixture("bundle.npz")),
        ("bundle-compressed.npz", fixture("bundle-compressed.npz")),
        ("taxonomy.csv", TREE.as_bytes().to_vec()),
        (
            "taxonomy.json",
            br#"[{"id":"a"},{"id":"b","parent":"a"},{"id":"c","parent":"a","name":"C"}]"#.to_vec(),
        ),
        ("labels.csv", b"label\nf\n\ng\nc\n".to_vec()),
        ("profile.json", profile),
    ];
    let mut outcomes = [0usize; 2];
    for (name, original) in &inputs {
        for _ in 0..400 {
            let bytes = damaged(original, &mut rng);
            let ok = [
                Taxonomy::parse(&bytes, name).is_ok(),
                paths::ingest_bytes(name, &tax, &temps, &bytes).is_ok(),
                Labels::parse(&bytes, name, &tax).is_ok(),
                Objectness::parse(&bytes, name).is_ok(),
                Profile::from_json(&bytes, name, &tax).is_ok(),
                npz::members(&bytes)
                    .map(|ms| {
                        ms.iter()
                            .filter(|m| npz::extract(&bytes, m).is_ok())
                            .count()
                    })
                    .is_ok(),
            ];
            outcomes[ok.iter().any(|&x| x) as usize] += 1;
        }
    }
    // Both kinds of answer occur: the damage is real and the readers still read what they can.
    assert!(outcomes[0] > 100 && outcomes[1] > 100, "{outcomes:?}");
}
