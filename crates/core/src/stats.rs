//! Confidence intervals and exact tests for a proportion k/n (precision over n predictions), as
//! the page and the command line report them: Wilson's score interval, Clopper–Pearson's exact
//! interval and bound, the binomial tail, and the regularized incomplete beta function under them.
//! Logarithms and exponentials come from the `libm` crate, as in the rest of the engine, so the
//! page (wasm) and the command line compute the same bits and a suggestion's tests decide alike.

/// A two-sided interval `[low, high]` for a proportion.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Interval {
    pub low: f64,
    pub high: f64,
}

/// The standard normal quantile for a two-sided 95 % interval, z = Φ⁻¹(0.975) (common practice;
/// the value to 16 digits from scipy.stats.norm.ppf(0.975)).
pub const Z95: f64 = 1.959_963_984_540_054;

/// The Wilson score interval for k successes in n trials at normal quantile `z` (Wilson 1927;
/// Newcombe 1998, method 3): centre (k + z²/2)/(n + z²), half-width
/// z·√(k(n−k)/n + z²/4)/(n + z²). `None` for n = 0.
pub fn wilson(k: u64, n: u64, z: f64) -> Option<Interval> {
    if n == 0 || k > n {
        return None;
    }
    let (k, n) = (k as f64, n as f64);
    let z2 = z * z;
    let centre = (k + z2 / 2.0) / (n + z2);
    let half = z * (k * (n - k) / n + z2 / 4.0).sqrt() / (n + z2);
    Some(Interval {
        low: (centre - half).max(0.0),
        high: (centre + half).min(1.0),
    })
}

/// ln Γ(x) for x > 0: the Lanczos approximation with g = 7 and nine coefficients (Godfrey's
/// widely reprinted table, quoted from memory; the tests check it against exact factorials to
/// 1e-13), shifted up by Γ(x + 1) = x·Γ(x) below 0.5.
pub fn ln_gamma(x: f64) -> f64 {
    const G: f64 = 7.0;
    const C: [f64; 9] = [
        0.999_999_999_999_809_9,
        676.520_368_121_885_1,
        -1_259.139_216_722_402_8,
        771.323_428_777_653_1,
        -176.615_029_162_140_6,
        12.507_343_278_686_905,
        -0.138_571_095_265_720_12,
        9.984_369_578_019_572e-6,
        1.505_632_735_149_311_6e-7,
    ];
    if x < 0.5 {
        return ln_gamma(x + 1.0) - libm::log(x);
    }
    let x = x - 1.0;
    let mut s = C[0];
    for (i, &c) in C.iter().enumerate().skip(1) {
        s += c / (x + i as f64);
    }
    let t = x + G + 0.5;
    0.5 * libm::log(2.0 * std::f64::consts::PI) + (x + 0.5) * libm::log(t) - t + libm::log(s)
}

/// Stirling's remainder μ(z) = ln Γ(z) − [(z − ½)·ln z − z + ½·ln 2π]. From z = 30 on, the
/// asymptotic series 1/(12z) − 1/(360z³) + 1/(1260z⁵) − 1/(1680z⁷) (Abramowitz & Stegun 6.1.41;
/// the next term, 1/(1188z⁹), is below 5e-17 there); below it, from [`ln_gamma`], whose values
/// are still small.
fn stirling_remainder(z: f64) -> f64 {
    if z >= 30.0 {
        let r = 1.0 / (z * z);
        (1.0 / 12.0 - r * (1.0 / 360.0 - r * (1.0 / 1260.0 - r / 1680.0))) / z
    } else {
        ln_gamma(z) - ((z - 0.5) * libm::log(z) - z + 0.5 * libm::log(2.0 * std::f64::consts::PI))
    }
}

/// xᵃ·yᵇ / B(a, b) with y = 1 − x, written so that large a and b lose no digits: with
/// c = a + b and u = c·x − a = b·x − a·y, it is
/// exp(a·ln(1 + u/a) + b·ln(1 − u/b) + μ(c) − μ(a) − μ(b)) · √(ab / (2πc))
/// (Stirling's formula for each Γ, the powers grouped around the mode, as Boost's
/// `ibeta_power_terms` and DiDonato & Morris 1992 do). Near the mode ln(1 + ·) is taken with
/// `ln_1p` of the small u/a; far from it, as ln(x·c/a) directly.
fn beta_power_terms(a: f64, b: f64, x: f64, y: f64) -> f64 {
    let c = a + b;
    let u = b * x - a * y;
    let ln_ratio = |r: f64, direct: f64| {
        if r.abs() < 0.5 {
            libm::log1p(r)
        } else {
            libm::log(direct)
        }
    };
    let e = a * ln_ratio(u / a, x * c / a) + b * ln_ratio(-u / b, y * c / b);
    let mu = stirling_remainder(c) - stirling_remainder(a) - stirling_remainder(b);
    libm::exp(e + mu) * (a * b / (2.0 * std::f64::consts::PI * c)).sqrt()
}

/// The continued fraction of the incomplete beta function, evaluated by the modified Lentz
/// method (Numerical Recipes, 3rd ed., §6.4, `betacf`). It converges in O(√max(a, b)) terms for
/// x < (a + 1)/(a + b + 2).
fn beta_fraction(a: f64, b: f64, x: f64) -> f64 {
    const TINY: f64 = 1e-300;
    const EPS: f64 = 1e-16;
    const MAX_TERMS: usize = 1_000_000;
    let (qab, qap, qam) = (a + b, a + 1.0, a - 1.0);
    let guard = |v: f64| if v.abs() < TINY { TINY } else { v };
    let mut c = 1.0;
    let mut d = 1.0 / guard(1.0 - qab * x / qap);
    let mut h = d;
    for m in 1..=MAX_TERMS {
        let m = m as f64;
        let m2 = 2.0 * m;
        let aa = m * (b - m) * x / ((qam + m2) * (a + m2));
        d = 1.0 / guard(1.0 + aa * d);
        c = guard(1.0 + aa / c);
        h *= d * c;
        let aa = -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2));
        d = 1.0 / guard(1.0 + aa * d);
        c = guard(1.0 + aa / c);
        let step = d * c;
        h *= step;
        if (step - 1.0).abs() < EPS {
            break;
        }
    }
    h
}

/// The regularized incomplete beta function as (I_x(a, b), 1 − I_x(a, b)), each computed
/// directly where it is the smaller tail, so both keep their relative precision. a, b > 0.
pub fn beta_tails(a: f64, b: f64, x: f64) -> (f64, f64) {
    if x <= 0.0 {
        return (0.0, 1.0);
    }
    if x >= 1.0 {
        return (1.0, 0.0);
    }
    let y = 1.0 - x;
    let front = beta_power_terms(a, b, x, y);
    if x < (a + 1.0) / (a + b + 2.0) {
        let lower = (front * beta_fraction(a, b, x) / a).clamp(0.0, 1.0);
        (lower, 1.0 - lower)
    } else {
        let upper = (front * beta_fraction(b, a, y) / b).clamp(0.0, 1.0);
        (1.0 - upper, upper)
    }
}

/// The `q` quantile of the Beta(a, b) distribution: the x with I_x(a, b) = q, by bisection
/// down to adjacent floating-point numbers, comparing in whichever tail is the smaller.
pub fn beta_quantile(a: f64, b: f64, q: f64) -> f64 {
    if q <= 0.0 {
        return 0.0;
    }
    if q >= 1.0 {
        return 1.0;
    }
    let (mut lo, mut hi) = (0.0f64, 1.0f64);
    for _ in 0..2_000 {
        let mid = lo + (hi - lo) / 2.0;
        if mid <= lo || mid >= hi {
            break;
        }
        let (lower, upper) = beta_tails(a, b, mid);
        let below = if q <= 0.5 { lower < q } else { upper > 1.0 - q };
        if below {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    // Of the two neighbours, the one whose tail is closer to q.
    let miss = |x: f64| {
        let (lower, upper) = beta_tails(a, b, x);
        if q <= 0.5 {
            (lower - q).abs()
        } else {
            (upper - (1.0 - q)).abs()
        }
    };
    if miss(lo) <= miss(hi) {
        lo
    } else {
        hi
    }
}

/// P(X ≥ k) for X ~ Binomial(n, p) = I_p(k, n − k + 1): the exact p-value of k successes in n
/// trials against the null hypothesis that the success rate is at most p.
pub fn binomial_upper_tail(k: u64, n: u64, p: f64) -> f64 {
    if k == 0 {
        return 1.0;
    }
    if k > n {
        return 0.0;
    }
    beta_tails(k as f64, (n - k + 1) as f64, p).0
}

/// The Clopper–Pearson ("exact") two-sided interval at `confidence` (e.g. 0.95) for k
/// successes in n trials (Clopper & Pearson 1934; Newcombe 1998, method 5): the α/2 quantile of
/// Beta(k, n − k + 1) and the 1 − α/2 quantile of Beta(k + 1, n − k), with α = 1 − confidence;
/// 0 for k = 0 and 1 for k = n. `None` for n = 0.
pub fn clopper_pearson(k: u64, n: u64, confidence: f64) -> Option<Interval> {
    if n == 0 || k > n {
        return None;
    }
    let alpha = 1.0 - confidence;
    let (kf, nf) = (k as f64, n as f64);
    let low = if k == 0 {
        0.0
    } else {
        beta_quantile(kf, nf - kf + 1.0, alpha / 2.0)
    };
    let high = if k == n {
        1.0
    } else {
        beta_quantile(kf + 1.0, nf - kf, 1.0 - alpha / 2.0)
    };
    Some(Interval { low, high })
}

/// The one-sided Clopper–Pearson lower confidence bound at `confidence`: the largest p0 such
/// that k successes in n trials reject "rate < p0" at level 1 − confidence (0 for k = 0).
/// `None` for n = 0.
pub fn clopper_pearson_lower(k: u64, n: u64, confidence: f64) -> Option<f64> {
    if n == 0 || k > n {
        return None;
    }
    if k == 0 {
        return Some(0.0);
    }
    let (kf, nf) = (k as f64, n as f64);
    Some(beta_quantile(kf, nf - kf + 1.0, 1.0 - confidence))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn newcombes_worked_values() {
        // Newcombe (1998), Statistics in Medicine 17:857–872, Table I, method 3 (Wilson score
        // interval without continuity correction): 81/263 → 0.2553–0.3662, 0/20 → 0–0.1611
        // (recomputed with scipy.stats.binomtest(k, n).proportion_ci(method="wilson")).
        let i = wilson(81, 263, Z95).expect("n > 0");
        assert_eq!(
            (format!("{:.4}", i.low), format!("{:.4}", i.high)),
            ("0.2553".into(), "0.3662".into())
        );
        let i = wilson(0, 20, Z95).expect("n > 0");
        assert_eq!(
            (format!("{:.4}", i.low), format!("{:.4}", i.high)),
            ("0.0000".into(), "0.1611".into())
        );
        assert_eq!(wilson(0, 0, Z95), None);
    }

    fn four(i: Interval) -> (String, String) {
        (format!("{:.4}", i.low), format!("{:.4}", i.high))
    }

    #[test]
    fn newcombes_worked_values_clopper_pearson() {
        // Newcombe (1998), Statistics in Medicine 17:857–872, Table I, method 5 (the exact
        // Clopper–Pearson interval): 81/263 → 0.2527–0.3676, 0/20 → 0–0.1684 (recomputed with
        // scipy.stats.binomtest(k, n).proportion_ci(method="exact")).
        let i = clopper_pearson(81, 263, 0.95).expect("n > 0");
        assert_eq!(four(i), ("0.2527".into(), "0.3676".into()));
        let i = clopper_pearson(0, 20, 0.95).expect("n > 0");
        assert_eq!(four(i), ("0.0000".into(), "0.1684".into()));
        assert_eq!(clopper_pearson(0, 0, 0.95), None);
        assert_eq!(clopper_pearson_lower(0, 0, 0.9), None);
    }

    #[test]
    fn ln_gamma_matches_exact_factorials() {
        // ln((n − 1)!) summed exactly term by term.
        let mut exact = 0.0f64;
        for n in 1..=170u32 {
            if n > 1 {
                exact += ((n - 1) as f64).ln();
            }
            let got = ln_gamma(n as f64);
            assert!(
                (got - exact).abs() <= 1e-13 * exact.abs().max(1.0),
                "ln Γ({n}) = {got}, expected {exact}"
            );
        }
        // Γ(½) = √π.
        let half = std::f64::consts::PI.sqrt().ln();
        assert!((ln_gamma(0.5) - half).abs() < 1e-14);
    }

    #[test]
    fn binomial_tail_matches_the_sum_of_terms() {
        // P(X ≥ k) by summing the probability mass function in f64, for small n.
        for n in [1u64, 2, 5, 17, 60] {
            for p in [0.01, 0.3, 0.5, 0.9, 0.999] {
                let pmf = |i: u64| {
                    let ln_choose = ln_gamma(n as f64 + 1.0)
                        - ln_gamma(i as f64 + 1.0)
                        - ln_gamma((n - i) as f64 + 1.0);
                    (ln_choose + i as f64 * f64::ln(p) + (n - i) as f64 * f64::ln(1.0 - p)).exp()
                };
                for k in 0..=n {
                    let want: f64 = (k..=n).map(pmf).sum();
                    let got = binomial_upper_tail(k, n, p);
                    assert!(
                        (got - want).abs() <= 1e-12 * want.max(1e-300) + 1e-15,
                        "P(Bin({n}, {p}) ≥ {k}) = {got}, expected {want}"
                    );
                }
            }
        }
    }

    #[test]
    fn the_lower_bound_is_where_the_test_starts_to_reject() {
        // At the bound the p-value equals 1 − confidence; just above it the test no longer
        // rejects, just below it does.
        for (k, n) in [
            (9u64, 10u64),
            (90, 100),
            (900, 1000),
            (450_000, 500_000),
            (1, 1),
        ] {
            let lb = clopper_pearson_lower(k, n, 0.9).expect("n > 0");
            let p = binomial_upper_tail(k, n, lb);
            assert!((p - 0.1).abs() < 1e-9, "{k}/{n}: p-value at the bound {p}");
            assert!(binomial_upper_tail(k, n, lb * (1.0 + 1e-9)) > 0.1);
            assert!(binomial_upper_tail(k, n, lb * (1.0 - 1e-9)) < 0.1);
        }
    }

    #[test]
    fn quantiles_invert_the_incomplete_beta() {
        for (a, b) in [
            (0.5, 0.5),
            (1.0, 1.0),
            (3.0, 7.0),
            (263.0, 1.0),
            (1e5, 2e4),
            (2e6, 3e5),
        ] {
            for q in [1e-12, 0.025, 0.1, 0.5, 0.9, 0.975] {
                let x = beta_quantile(a, b, q);
                let (lower, _) = beta_tails(a, b, x);
                assert!(
                    (lower - q).abs() <= 1e-9 * q,
                    "I_x({a}, {b}) at its {q} quantile {x} = {lower}"
                );
            }
        }
    }
}
