//! Wilson and Clopper–Pearson intervals against scipy over a grid of (k, n): the values in
//! tests/fixtures/intervals/scipy.csv were written by scipy 1.17.1
//! (`scipy.stats.binomtest(k, n).proportion_ci(method="wilson" | "exact")`, and the one-sided
//! exact lower bound with `alternative="greater"`), with `tests/python/scipy_intervals.py`.

use hedgerow_core::stats::{clopper_pearson, clopper_pearson_lower, wilson, Z95};

const SCIPY: &str = include_str!("../fixtures/intervals/scipy.csv");

#[test]
fn intervals_match_scipy() {
    let mut checked = 0;
    for line in SCIPY
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with('k'))
    {
        let f: Vec<f64> = line
            .split(',')
            .map(|x| x.parse().expect("number"))
            .collect();
        let (k, n) = (f[0] as u64, f[1] as u64);
        let w = wilson(k, n, Z95).expect("n > 0");
        let cp = clopper_pearson(k, n, 0.95).expect("n > 0");
        let lower = clopper_pearson_lower(k, n, 0.9).expect("n > 0");
        let got = [w.low, w.high, cp.low, cp.high, lower];
        for (i, (g, want)) in got.iter().zip(&f[2..]).enumerate() {
            // Wilson is closed form (1e-12); the exact bounds are beta quantiles found by
            // different root finders (1e-9).
            let tol = if i < 2 { 1e-12 } else { 1e-9 };
            assert!(
                (g - want).abs() <= tol,
                "{k}/{n}, column {}: ours {g}, scipy {want}",
                i + 2
            );
        }
        checked += 1;
    }
    assert!(checked > 100, "{checked} rows");
}
