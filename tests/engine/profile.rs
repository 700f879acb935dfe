//! Profiles round-trip exactly and refuse another taxonomy.

use hedgerow_core::{evaluate, Policy, Profile, Rule, Temperatures};

use crate::harness::{batch, row, settings, taxonomy, TREE};

#[test]
fn saved_profile_gives_back_the_same_decode() {
    let tax = taxonomy(TREE);
    let r = row(&tax, &[("a", 1.3), ("f", 0.7)]);
    let b = batch(&tax, &[r], &["f"], Some(&[0.9]), &[1.0, 1.7]);
    let mut s = settings(
        Rule::Conditional,
        &[0.1 + 0.2, 1.0 / 3.0, 0.55],
        0.123_456_789_012_345_68,
        Policy::Exclude,
    );
    s.thresholds.nodes = vec![(tax.lookup("g").expect("g"), 0.77)];
    let m = evaluate(&tax, &b, &s);
    let p = Profile::new(&tax, &s, &Temperatures(vec![1.0, 1.7]), Some((&b, &m)));
    let text = p.to_json();
    let back = Profile::from_json(text.as_bytes(), "p.json", &tax).expect("loads");
    let s2 = back.settings(&tax).expect("settings");
    assert_eq!(s2, s, "bit-identical thresholds after the round trip");
    assert_eq!(back.temperatures(), Temperatures(vec![1.0, 1.7]));
    assert_eq!(evaluate(&tax, &b, &s2), m);
    assert_eq!(back.scored.as_ref().map(|x| x.metrics.clone()), Some(m));
    assert_eq!(
        back.scored.map(|x| x.data_fingerprint),
        Some(b.fingerprint().to_string())
    );
}

#[test]
fn profile_for_another_taxonomy_is_refused() {
    let tax = taxonomy(TREE);
    let other = taxonomy("id,parent\nx,\ny,x\n");
    let s = settings(Rule::Cumulative, &[0.5], 0.5, Policy::Credit);
    let text = Profile::new(&other, &s, &Temperatures::default(), None).to_json();
    let e = Profile::from_json(text.as_bytes(), "p.json", &tax).expect_err("refused");
    assert!(
        e.to_string().starts_with(
            "p.json, key `taxonomy.fingerprint`: this profile was made for another taxonomy"
        ),
        "{e}"
    );
    // Renaming a display name keeps the fingerprint; re-parenting changes it.
    let renamed = taxonomy(&TREE.replace(",B\n", ",Bee\n"));
    assert_eq!(renamed.fingerprint(), tax.fingerprint());
    let moved = taxonomy(&TREE.replace("g,b,G", "g,a,G"));
    assert_ne!(moved.fingerprint(), tax.fingerprint());
}
