//! A tiny deterministic random source for the invented readings:
//! splitmix64 (Steele, Lea & Flood 2014, "Fast splittable pseudorandom
//! number generators", OOPSLA) for uniform bits, and the Box–Muller
//! transform (Box & Muller 1958) for normal deviates. Seeded, so every run
//! prints the same report.

/// splitmix64 state.
#[derive(Clone, Debug)]
pub struct SplitMix64 {
    state: u64,
    spare: Option<f64>,
}

impl SplitMix64 {
    /// A generator with the given seed.
    pub const fn new(seed: u64) -> Self {
        SplitMix64 {
            state: seed,
            spare: None,
        }
    }

    /// Next 64 uniform bits.
    pub fn next_u64(&mut self) -> u64 {
        self.state = self.state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform on the open interval (0, 1): 53 random bits, offset by half
    /// a step so 0 never occurs (Box–Muller takes its logarithm).
    pub fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }

    /// Standard normal deviate (Box–Muller; the second value of each pair
    /// is kept for the next call).
    pub fn normal(&mut self) -> f64 {
        if let Some(z) = self.spare.take() {
            return z;
        }
        let r = (-2.0 * self.uniform().ln()).sqrt();
        let theta = 2.0 * std::f64::consts::PI * self.uniform();
        self.spare = Some(r * theta.sin());
        r * theta.cos()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn splitmix_matches_reference_sequence() {
        // First outputs for seed 1234567 of the published splitmix64
        // reference code (Vigna's splitmix64.c), from memory and confirmed
        // by re-running that C code: 6457827717110365317, 3203168211198807973.
        let mut g = SplitMix64::new(1_234_567);
        assert_eq!(g.next_u64(), 6_457_827_717_110_365_317);
        assert_eq!(g.next_u64(), 3_203_168_211_198_807_973);
    }

    #[test]
    fn normal_deviates_have_unit_moments() {
        // 200 000 deviates: the sample mean and variance lie within about
        // 5 standard errors (0.011 and 0.016) of 0 and 1.
        let mut g = SplitMix64::new(42);
        let n = 200_000;
        let v: Vec<f64> = (0..n).map(|_| g.normal()).collect();
        let mean = v.iter().sum::<f64>() / n as f64;
        let var = v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1) as f64;
        assert!(mean.abs() < 0.011, "{mean}");
        assert!((var - 1.0).abs() < 0.016, "{var}");
    }
}
