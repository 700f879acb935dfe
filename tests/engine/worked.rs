//! Worked examples derived by hand from the published definitions, on the tree in
//! `harness::TREE`. Each value's derivation is written beside it.

use hedgerow_core::{evaluate, Policy, Rule};

use crate::harness::{batch, close, row, settings, taxonomy, TREE};

/// Information gain (Deng, Krause, Berg & Fei-Fei, CVPR 2012, "Hedging your bets", eq. for
/// normalised information gain): IG(v) = 1 − ln|leaves(v)| / ln|leaves(root)|.
/// |leaves(root)| = 4. a covers {c, f, g}: IG = 1 − ln 3/ln 4 = 1 − 1.098612/1.386294 = 0.207519.
/// b covers {f, g}: 1 − ln 2/ln 4 = 0.5 exactly. d covers {e}: 1. Root: 0.
#[test]
fn information_gain_by_hand() {
    let tax = taxonomy(TREE);
    let g = |id: &str| tax.gain(tax.lookup(id).expect("node"));
    assert!((g("a") - 0.207_518_749).abs() < 1e-9);
    assert_eq!(g("b"), 0.5);
    assert_eq!(g("d"), 1.0);
    assert_eq!(g("f"), 1.0);
    assert_eq!(tax.gain(tax.root()), 0.0);
}

/// One row, logits a = ln 3, d = 0 → p(a|root) = 3/(3+1) = 0.75; b = c = 0 → a tie at 0.5,
/// broken to the lowest column (b is column 0, c column 2); f = ln 4, g = 0 → p(f|b) = 4/5 = 0.8.
/// Path root → a → b → f with P = 0.75, 0.375, 0.3.
fn one_row(label: &str) -> (hedgerow_core::Taxonomy, hedgerow_core::Batch) {
    let tax = taxonomy(TREE);
    let r = row(&tax, &[("a", 3f64.ln()), ("f", 4f64.ln())]);
    let b = batch(&tax, &[r], &[label], None, &[]);
    (tax, b)
}

#[test]
fn path_probabilities_by_hand() {
    let (tax, b) = one_row("f");
    assert_eq!(tax.id(b.paths().leaf(0)), "f");
    let c = b.paths().cond(0);
    assert_eq!(c[0], 0.75);
    assert_eq!(c[1], 0.5);
    assert!((c[2] - 0.8).abs() < 1e-7);
}

/// Cumulative at 0.5: a (0.75 ≥ 0.5) yes, b (0.375) no → predicts a.
/// Conditional at 0.5: a (0.75), b (0.5 ≥ 0.5, equality steps), f (0.8) → predicts f.
#[test]
fn both_rules_by_hand() {
    let (tax, b) = one_row("g");
    let m = evaluate(
        &tax,
        &b,
        &settings(Rule::Cumulative, &[0.5], 0.5, Policy::Credit),
    );
    // a is an ancestor of g: correct; specificity = IG(a) = 0.207519; reward the same.
    assert_eq!((m.correct, m.wrong), (1, 0));
    assert!(close(m.specificity, 0.207_518_749_4));
    assert!(close(m.reward, 0.207_518_749_4));
    assert_eq!(
        m.stop_share,
        vec![Some(0.0), Some(1.0), Some(0.0), Some(0.0)]
    );
    let m = evaluate(
        &tax,
        &b,
        &settings(Rule::Conditional, &[0.5], 0.5, Policy::Credit),
    );
    // f vs label g: wrong. Tree distance (Dekel, Keshet & Singer 2004): f and g meet at b
    // (depth 2): 3 + 3 − 2·2 = 2. Reward 0 (not correct), specificity IG(f) = 1.
    assert_eq!((m.correct, m.wrong), (0, 1));
    assert!(close(m.mistake_severity, 2.0));
    assert!(close(m.reward, 0.0));
    assert!(close(m.specificity, 1.0));
    assert_eq!(m.stop_share[3], Some(1.0));
}

/// Hierarchical P/R/F (Kiritchenko, Matwin, Nock & Famili 2006), ancestors without the root.
/// Prediction f = {a, b, f}, label c = {a, c}: |∩| = 1, hP = 1/3, hR = 1/2,
/// hF = 2·(1/3)(1/2)/(1/3 + 1/2) = (1/3)/(5/6) = 0.4.
#[test]
fn hierarchical_scores_by_hand() {
    let (tax, b) = one_row("c");
    let m = evaluate(
        &tax,
        &b,
        &settings(Rule::Conditional, &[0.5], 0.5, Policy::Credit),
    );
    assert!(close(m.hierarchical_precision, 1.0 / 3.0));
    assert!(close(m.hierarchical_recall, 0.5));
    assert!(close(m.hierarchical_f1, 0.4));
    // f vs c: LCA a (depth 1): 3 + 2 − 2 = 3 edges.
    assert!(close(m.mistake_severity, 3.0));
}

/// A coarse label b with prediction f (below b) is unverifiable; precision under each policy
/// with one more correct row (label f) and one wrong row (label c), all predicting f:
/// credit (1 + 1)/3, penalize 1/3, exclude 1/(1 + 1).
#[test]
fn unverifiable_under_each_policy() {
    let tax = taxonomy(TREE);
    let r = row(&tax, &[("a", 3f64.ln()), ("f", 4f64.ln())]);
    let b = batch(
        &tax,
        &[r.clone(), r.clone(), r],
        &["b", "f", "c"],
        None,
        &[],
    );
    for (policy, want) in [
        (Policy::Credit, 2.0 / 3.0),
        (Policy::Penalize, 1.0 / 3.0),
        (Policy::Exclude, 0.5),
    ] {
        let m = evaluate(&tax, &b, &settings(Rule::Conditional, &[0.0], 0.5, policy));
        assert_eq!((m.correct, m.unverifiable, m.wrong), (1, 1, 1));
        assert!(close(m.precision, want), "{policy:?}: {:?}", m.precision);
    }
}
