//! FIR model of the link by least squares: the taps h minimising Σₙ (y[n] − Σₖ h[k]·s[n − k])².
//!
//! The normal equations R·h = r (R the stimulus's lagged Gram matrix, r its cross-correlation
//! with the response) are solved by a Cholesky factorisation R = L·Lᵀ (nalgebra). One
//! factorisation of the longest model serves every shorter one: the leading k × k block of L
//! factors the leading block of R, and with z = L⁻¹·r the residual of the k-tap fit is
//! ‖y‖² − Σ_{i<k} zᵢ². So the automatic length costs no more than the longest fit, and is chosen
//! by Rissanen's minimum description length, MDL(k) = N·ln(residualₖ / N) + k·ln N (Rissanen,
//! "Modeling by shortest data description", Automatica 1978, from memory): the residual must
//! fall by more than the price of each extra tap.

use nalgebra::{DMatrix, DVector};

use super::error::MeasureError;
use super::lagged_gram::{lagged_cross, lagged_gram};
use crate::model::MAX_ORDER;

/// Most taps an automatic fit tries by default.
pub const DEFAULT_MOST_FIR_TAPS: usize = 512;
/// Most taps any FIR model may have (a config's numerator is limited to MAX_ORDER + 1).
pub const MOST_FIR_TAPS: usize = MAX_ORDER + 1;
/// Frames of data needed per tap.
pub const FRAMES_PER_TAP: usize = 4;
/// Diagonal loading relative to the stimulus energy: keeps R positive definite where the
/// stimulus has no energy (outside a sweep's band) without touching the fit where it has.
const RIDGE: f64 = 1e-9;

/// How long the FIR model is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FirLength {
    /// Exactly this many taps.
    Fixed(usize),
    /// Chosen by minimum description length, at most this many.
    Automatic { most: usize },
}

/// A fitted FIR model.
#[derive(Debug, Clone, PartialEq)]
pub struct FirFit {
    pub taps: Vec<f64>,
    /// Frames of response the fit used.
    pub frames: usize,
    /// Σ (y − ŷ)² over those frames.
    pub residual_energy: f64,
    /// Σ y² over those frames.
    pub response_energy: f64,
    /// True when the length was chosen automatically.
    pub automatic: bool,
    /// Longest length considered.
    pub most_taps: usize,
}

impl FirFit {
    /// Residual energy relative to the response's, in dB.
    pub fn residual_db(&self) -> f64 {
        10.0 * (self.residual_energy / self.response_energy).log10()
    }

    /// The residual's variance per sample, unbiased for the taps fitted.
    pub fn noise_variance(&self) -> f64 {
        self.residual_energy / (self.frames.saturating_sub(self.taps.len())).max(1) as f64
    }
}

/// Frames of response a fit of up to `taps` taps reads: the stimulus plus the tail the last tap
/// reaches, or what the recording holds.
pub fn fit_frames(stimulus_len: usize, response_len: usize, taps: usize) -> usize {
    response_len.min(stimulus_len + taps.saturating_sub(1))
}

/// The most taps the data allow (at most [`MOST_FIR_TAPS`], at least four frames per tap), or
/// the refusal of a fixed length beyond it (or of zero taps).
pub fn check_length(
    stimulus_len: usize,
    response_len: usize,
    length: FirLength,
) -> Result<usize, MeasureError> {
    let frames_available = fit_frames(stimulus_len, response_len, MOST_FIR_TAPS);
    let most = (frames_available / FRAMES_PER_TAP).min(MOST_FIR_TAPS);
    let (wanted, automatic) = match length {
        FirLength::Fixed(taps) => (taps, false),
        FirLength::Automatic { most } => (most, true),
    };
    if wanted == 0 || (!automatic && wanted > most) {
        return Err(MeasureError::FirTooLong {
            taps: wanted,
            frames: frames_available,
            most,
        });
    }
    Ok(most)
}

/// Fits an FIR model of `response` (aligned so that index 0 is where the stimulus starts to
/// arrive) to `stimulus`.
pub fn fit_fir(
    stimulus: &[f64],
    response: &[f64],
    length: FirLength,
) -> Result<FirFit, MeasureError> {
    let (wanted, automatic) = match length {
        FirLength::Fixed(taps) => (taps, false),
        FirLength::Automatic { most } => (most, true),
    };
    let most = check_length(stimulus.len(), response.len(), length)?;
    let taps_max = wanted.min(most).max(1);
    let n_end = fit_frames(stimulus.len(), response.len(), taps_max);
    let mut gram = lagged_gram(stimulus, stimulus, taps_max, taps_max, n_end);
    let load = RIDGE * gram[(0, 0)].max(f64::MIN_POSITIVE);
    for i in 0..taps_max {
        gram[(i, i)] += load;
    }
    let cross = DVector::from_vec(lagged_cross(response, stimulus, taps_max, n_end));
    let response_energy: f64 = response[..n_end].iter().map(|v| v * v).sum();
    let factor = gram.cholesky().ok_or_else(|| MeasureError::Numerical {
        what: "the stimulus's Gram matrix is not positive definite".into(),
    })?;
    let lower: DMatrix<f64> = factor.l();
    let z = lower
        .solve_lower_triangular(&cross)
        .ok_or_else(|| MeasureError::Numerical {
            what: "forward substitution failed".into(),
        })?;

    let floor = response_energy * 1e-30;
    let mut residual = response_energy;
    let mut residuals = Vec::with_capacity(taps_max);
    for zi in z.iter() {
        residual -= zi * zi;
        residuals.push(residual.max(floor));
    }
    let chosen = if automatic {
        let n = n_end as f64;
        (1..=taps_max)
            .min_by(|&a, &b| {
                let mdl = |k: usize| n * (residuals[k - 1] / n).ln() + k as f64 * n.ln();
                mdl(a).total_cmp(&mdl(b))
            })
            .unwrap_or(taps_max)
    } else {
        taps_max
    };
    let upper = lower.view((0, 0), (chosen, chosen)).transpose();
    let rhs = DVector::from_iterator(chosen, z.iter().take(chosen).copied());
    let taps = upper
        .solve_upper_triangular(&rhs)
        .ok_or_else(|| MeasureError::Numerical {
            what: "back substitution failed".into(),
        })?;
    let taps: Vec<f64> = taps.iter().copied().collect();
    // The residual straight from the model, not the running difference, which loses digits.
    let residual_energy = output_residual(stimulus, response, &taps, &[1.0], n_end);
    Ok(FirFit {
        taps,
        frames: n_end,
        residual_energy,
        response_energy,
        automatic,
        most_taps: taps_max,
    })
}

/// Standard deviation of one fitted tap of a `taps`-long model when the residual is white noise
/// of `noise_variance`.
///
/// The Gram matrix R of a long stimulus is nearly Toeplitz, and its eigenvalues are then the
/// stimulus's power spectrum μ(f) (N times its power per sample, smoothed over the model's
/// resolution: a Welch average over frames of the model's length). With the fit's diagonal loading λ
/// the taps' covariance is σ²·(R + λI)⁻¹R(R + λI)⁻¹, whose diagonal is about
/// σ²·mean_f μ(f)/(μ(f) + λ)² for every tap (common practice). For a white stimulus it is
/// σ²/Σs², the figure this replaces; a sweep's pink spectrum makes it several times larger.
pub fn tap_scatter(stimulus: &[f64], taps: usize, noise_variance: f64) -> f64 {
    // Frames as long as the model: its spectral resolution, over which R's eigenvalues average
    // the stimulus's spectrum (a finer one would see gaps the model cannot).
    let frame = taps
        .max(64)
        .next_power_of_two()
        .min(stimulus.len().max(4).next_power_of_two() / 2);
    let power = super::fft::welch_power(stimulus, frame);
    let energy: f64 = stimulus.iter().map(|v| v * v).sum();
    if energy <= 0.0 || power.iter().all(|&p| p == 0.0) {
        return (noise_variance / energy.max(f64::MIN_POSITIVE)).sqrt();
    }
    // Hann frames: E|X(f)|² = Σw²·(power per sample), Σw² = 3·frame/8.
    let per_sample = 3.0 * frame as f64 / 8.0;
    let total = stimulus.len() as f64;
    let load = RIDGE * energy;
    let eigen = |p: f64| total * p / per_sample;
    let bins = power.len();
    let mean = power
        .iter()
        .enumerate()
        .map(|(i, &p)| {
            let mu = eigen(p);
            // Both ends of the half spectrum stand for one bin each, the rest for two.
            let weight = if i == 0 || i == bins - 1 { 1.0 } else { 2.0 };
            weight * mu / ((mu + load) * (mu + load))
        })
        .sum::<f64>()
        / (2 * (bins - 1)) as f64;
    (noise_variance * mean).sqrt()
}

/// Σ (y − (B/A)·s)² over the first `n_end` frames.
pub(crate) fn output_residual(s: &[f64], y: &[f64], b: &[f64], a: &[f64], n_end: usize) -> f64 {
    let model = super::iir_fit::filter(b, a, s, n_end);
    model
        .iter()
        .zip(&y[..n_end])
        .map(|(m, y)| (y - m) * (y - m))
        .sum()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::measure::noise::GaussianNoise;

    fn white(seed: u64, n: usize) -> Vec<f64> {
        let mut g = GaussianNoise::new(seed);
        (0..n).map(|_| 0.1 * g.sample()).collect()
    }

    #[test]
    fn recovers_an_exact_fir_without_noise_and_picks_its_length() {
        let h = [0.0, 0.9, -0.4, 0.25, 0.0, 0.1];
        let s = white(11, 4_000);
        let y = crate::measure::fft::convolve(&s, &h);
        let fixed = fit_fir(&s, &y, FirLength::Fixed(8)).unwrap();
        for (k, v) in fixed.taps.iter().enumerate() {
            let want = h.get(k).copied().unwrap_or(0.0);
            assert!((v - want).abs() < 1e-7, "tap {k}: {v}");
        }
        assert!(fixed.residual_db() < -120.0, "{}", fixed.residual_db());
        let auto = fit_fir(&s, &y, FirLength::Automatic { most: 64 }).unwrap();
        assert_eq!(auto.taps.len(), 6);
        assert!(auto.automatic);
    }

    #[test]
    fn too_many_taps_for_the_data_is_refused() {
        let s = white(1, 1_000);
        let e = fit_fir(&s, &s, FirLength::Fixed(600)).unwrap_err();
        assert!(
            matches!(e, MeasureError::FirTooLong { taps: 600, .. }),
            "{e}"
        );
        let e = fit_fir(&s, &s, FirLength::Fixed(0)).unwrap_err();
        assert!(matches!(e, MeasureError::FirTooLong { .. }), "{e}");
    }
}
