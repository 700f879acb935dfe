//! Confidence intervals for a proportion k/n (precision over n predictions), as the page and
//! the command line report them.

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
}
