//! The least-squares FIR inverse weighted by band, and regularised by the measured noise.
//!
//! On an FFT grid of M points (ωₖ = 2πk/M) the L taps g minimise
//!   Σₖ W(ωₖ)·|H(ωₖ)G(ωₖ) − e^{−jωₖD}|² + (1 − W(ωₖ))·|G(ωₖ) − e^{−jωₖD}|²
//!      + Λ(ωₖ)·|G(ωₖ)|²,
//! W the band's weight (1 inside, rolled to 0 outside: there G is held to a pure delay, i.e.
//! unity gain), Λ = W·|H|²/S + λ·‖h‖² the Wiener term of the measured SNR S (`noise_weight`)
//! plus the configured Tikhonov weight. Setting the gradient to zero gives the normal
//! equations R·g = p with R(n) = (1/M)·Σₖ P(ωₖ)·e^{jωₖn}, P = W|H|² + (1 − W) + Λ, and
//! p(n) = (1/M)·Σₖ (W·H* + 1 − W)(ωₖ)·e^{jωₖ(n − D)}: a symmetric Toeplitz system (P is real
//! and even), solved by Levinson's recursion like the unweighted design. With W = 1 and Λ = 0
//! it is that design (R is h's autocorrelation, p(n) = h[D − n]), as long as M ≥ L + len(h).

use rustfft::num_complex::Complex64;
use rustfft::FftPlanner;

use super::correction_band::CorrectionBand;
use super::least_squares_fir::FirSolution;
use super::noise_weight::wiener_factor;
use crate::numeric::homomorphic::spectrum_on_grid;
use crate::numeric::toeplitz::solve_symmetric_toeplitz;

/// Per-bin weights on the half grid k = 0 … M/2: the band's W and the noise's Wiener factor.
#[derive(Debug, Clone, PartialEq)]
pub struct SpectralWeights {
    pub size: usize,
    pub band: Vec<f64>,
    /// S/(1 + S) per bin (1 where no SNR was measured).
    pub wiener: Vec<f64>,
}

impl SpectralWeights {
    /// The weights of `band` and `snr_at` (SNR in dB at a frequency) on an M-point grid.
    pub fn new(size: usize, band: &CorrectionBand, snr_at: impl Fn(f64) -> Option<f64>) -> Self {
        let fs = band.sample_rate_hz;
        let (mut w, mut wiener) = (Vec::new(), Vec::new());
        for k in 0..=size / 2 {
            let hz = k as f64 * fs / size as f64;
            w.push(band.weight(hz));
            wiener.push(snr_at(hz).map_or(1.0, wiener_factor));
        }
        SpectralWeights {
            size,
            band: w,
            wiener,
        }
    }
}

/// The weighted, noise-regularised taps at delay D (see the module comment). `None` when the
/// system is singular.
pub fn solve_weighted(
    h: &[f64],
    taps: usize,
    delay: usize,
    regularization: f64,
    weights: &SpectralWeights,
) -> Option<FirSolution> {
    let size = weights.size;
    let spectrum = spectrum_on_grid(h, size);
    let energy: f64 = h.iter().map(|x| x * x).sum();
    let lambda = regularization * energy;
    let mut power = vec![Complex64::new(0.0, 0.0); size];
    let mut cross = vec![Complex64::new(0.0, 0.0); size];
    for k in 0..size {
        let half = k.min(size - k);
        let (w, s) = (weights.band[half], weights.wiener[half]);
        let hk = spectrum[k];
        let h2 = hk.norm_sqr();
        // |H|²/S = |H|²·(1 − f)/f with f = S/(1 + S).
        let noise = if s > 0.0 {
            h2 * (1.0 - s) / s
        } else {
            f64::MAX
        };
        power[k] = Complex64::new(w * h2 + (1.0 - w) + w * noise + lambda, 0.0);
        let omega = 2.0 * std::f64::consts::PI * k as f64 / size as f64;
        cross[k] = (hk.conj() * w + (1.0 - w)) * Complex64::from_polar(1.0, -omega * delay as f64);
    }
    let mut planner = FftPlanner::<f64>::new();
    let inverse = planner.plan_fft_inverse(size);
    inverse.process(&mut power);
    inverse.process(&mut cross);
    let scale = 1.0 / size as f64;
    let r: Vec<f64> = power[..taps].iter().map(|c| c.re * scale).collect();
    let p: Vec<f64> = cross[..taps].iter().map(|c| c.re * scale).collect();
    let g = solve_symmetric_toeplitz(&r, &p)?;
    Some(FirSolution::measured(h, g, delay, regularization))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::least_squares_fir::solve_at_delay;
    use crate::model::BandEdges;
    use crate::model::InversePolicy;

    // Source: the normal equations (common practice): with W = 1 everywhere and no noise the
    // weighted problem is the time-domain least-squares problem, so the taps agree.
    #[test]
    fn whole_band_equals_the_time_domain_design() {
        let h: Vec<f64> = (0..40)
            .map(|n| 0.8f64.powi(n) * if n % 3 == 0 { 1.0 } else { -0.4 })
            .collect();
        let policy = InversePolicy {
            correction_band_hz: Some(BandEdges {
                low_hz: 0.0,
                high_hz: 24_000.0,
            }),
            ..InversePolicy::default()
        };
        let band = crate::design::correction_band(&policy, 48_000.0);
        let weights = SpectralWeights::new(1024, &band, |_| None);
        for (taps, delay, reg) in [(64, 10, 0.0), (64, 30, 1e-3), (200, 5, 1e-6)] {
            let w = solve_weighted(&h, taps, delay, reg, &weights).unwrap();
            let t = solve_at_delay(&h, taps, delay, reg).unwrap();
            let scale = t.taps.iter().fold(0.0f64, |m, x| m.max(x.abs()));
            for (a, b) in w.taps.iter().zip(&t.taps) {
                assert!((a - b).abs() <= 1e-9 * scale, "{a} vs {b}");
            }
        }
    }
}
