//! A tiny self-contained PRNG (splitmix64 seeding a xoshiro256**) for the generators (demo data, large batches).
//!
//! Written out here rather than taken from a crate so that the committed demo data never change
//! with a dependency upgrade. Only `+ - * /` on `f64` are used to turn bits into numbers: those
//! are exactly rounded by IEEE 754 on every platform, whereas `ln`/`cos` come from the
//! platform's libm and may differ in the last bit, which would flip the occasional float16.

/// splitmix64: a good 64-bit mixer, used to expand a seed into xoshiro state.
fn splitmix64(state: &mut u64) -> u64 {
    *state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// xoshiro256** (Blackman and Vigna).
pub struct Rng {
    s: [u64; 4],
}

impl Rng {
    /// An independent stream for `(seed, stream)`; each demo row gets its own stream, so a row's
    /// values do not depend on how many numbers earlier rows consumed.
    pub fn new(seed: u64, stream: u64) -> Self {
        let mut sm = seed ^ stream.wrapping_mul(0xD1B5_4A32_D192_ED03);
        let s = [
            splitmix64(&mut sm),
            splitmix64(&mut sm),
            splitmix64(&mut sm),
            splitmix64(&mut sm),
        ];
        Self { s }
    }

    pub fn next_u64(&mut self) -> u64 {
        let result = self.s[1].wrapping_mul(5).rotate_left(7).wrapping_mul(9);
        let t = self.s[1] << 17;
        self.s[2] ^= self.s[0];
        self.s[3] ^= self.s[1];
        self.s[1] ^= self.s[2];
        self.s[0] ^= self.s[3];
        self.s[2] ^= t;
        self.s[3] = self.s[3].rotate_left(45);
        result
    }

    /// Uniform in [0, 1), 53 bits.
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }

    /// Uniform integer in [0, n), by Lemire's multiply-shift (bias below 2^-32 for small n).
    pub fn below(&mut self, n: u64) -> u64 {
        ((u128::from(self.next_u64()) * u128::from(n)) >> 64) as u64
    }

    /// Standard normal, approximated by the Irwin–Hall sum of 12 uniforms minus 6: mean 0,
    /// variance 1, tails cut at ±6. Box–Muller would need `ln` and `cos` (see the module note).
    pub fn normal(&mut self) -> f64 {
        let mut sum = 0.0;
        for _ in 0..12 {
            sum += self.uniform();
        }
        sum - 6.0
    }

    /// Approximately standard normal from one draw: the sum of four 16-bit uniforms, centred and
    /// scaled to unit variance (Irwin–Hall, tails cut at ±3.46). Cheap enough for 10⁹ values
    /// (the large synthetic batches).
    #[inline]
    pub fn normal_fast(&mut self) -> f64 {
        let x = self.next_u64();
        let part = |k: u32| ((x >> (16 * k)) & 0xFFFF) as f64;
        let sum = part(0) + part(1) + part(2) + part(3) + 2.0; // + 4 × 0.5: cell midpoints
        (sum * (1.0 / 65536.0) - 2.0) * 1.732_050_807_568_877_2
    }
}

#[cfg(test)]
mod tests {
    use super::Rng;

    #[test]
    fn streams_are_reproducible_and_distinct() {
        let a: Vec<u64> = (0..4).map(|_| Rng::new(7, 1).next_u64()).collect();
        assert!(a.windows(2).all(|w| w[0] == w[1]));
        assert_ne!(Rng::new(7, 1).next_u64(), Rng::new(7, 2).next_u64());
    }

    #[test]
    fn normal_has_unit_moments() {
        let mut rng = Rng::new(1, 0);
        let n = 200_000;
        let xs: Vec<f64> = (0..n).map(|_| rng.normal()).collect();
        let mean = xs.iter().sum::<f64>() / n as f64;
        let var = xs.iter().map(|x| (x - mean) * (x - mean)).sum::<f64>() / n as f64;
        assert!(mean.abs() < 0.01, "mean {mean}");
        assert!((var - 1.0).abs() < 0.02, "variance {var}");
    }
}
