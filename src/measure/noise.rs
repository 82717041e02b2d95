//! Seeded Gaussian noise for simulated recordings: the same seed gives the same samples on
//! every machine and crate version.
//!
//! Uniform numbers come from SplitMix64 (a generator fixed by its definition, so no crate can
//! change the sequence under us) and become Gaussian by the Box–Muller transform.

/// White Gaussian noise with zero mean and unit variance.
#[derive(Debug, Clone)]
pub struct GaussianNoise {
    state: u64,
    spare: Option<f64>,
}

impl GaussianNoise {
    pub fn new(seed: u64) -> Self {
        Self {
            state: seed,
            spare: None,
        }
    }

    fn next_u64(&mut self) -> u64 {
        self.state = self.state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform in (0, 1]: never 0, so its logarithm is finite.
    fn unit_open(&mut self) -> f64 {
        ((self.next_u64() >> 11) + 1) as f64 / (1u64 << 53) as f64
    }

    /// One sample.
    pub fn sample(&mut self) -> f64 {
        if let Some(s) = self.spare.take() {
            return s;
        }
        let (u1, u2) = (self.unit_open(), self.unit_open());
        let radius = (-2.0 * u1.ln()).sqrt();
        let angle = std::f64::consts::TAU * u2;
        self.spare = Some(radius * angle.sin());
        radius * angle.cos()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn mean_zero_variance_one() {
        // Sample mean within 4 standard errors of 0 and variance within 2 % of 1 for 200 000
        // draws (common practice: standard error 1/√N ≈ 0.0022).
        let mut noise = GaussianNoise::new(42);
        let n = 200_000;
        let xs: Vec<f64> = (0..n).map(|_| noise.sample()).collect();
        let mean = xs.iter().sum::<f64>() / n as f64;
        let var = xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n as f64;
        assert!(mean.abs() < 4.0 / (n as f64).sqrt(), "mean {mean}");
        assert!((var - 1.0).abs() < 0.02, "variance {var}");
        // About 4.55 % of a Gaussian lies beyond ±2σ (common practice).
        let beyond = xs.iter().filter(|x| x.abs() > 2.0).count() as f64 / n as f64;
        assert!((beyond - 0.0455).abs() < 0.003, "{beyond}");
    }

    #[test]
    fn same_seed_same_noise() {
        let a: Vec<f64> = {
            let mut g = GaussianNoise::new(7);
            (0..10).map(|_| g.sample()).collect()
        };
        let mut g = GaussianNoise::new(7);
        let b: Vec<f64> = (0..10).map(|_| g.sample()).collect();
        assert_eq!(a, b);
        let mut other = GaussianNoise::new(8);
        assert_ne!(a[0], other.sample());
    }
}
