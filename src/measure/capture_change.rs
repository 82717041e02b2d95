//! Whether the link stayed the same from one capture to the next: each capture's linear
//! response (Farina deconvolution, the linear window) against their mean, per band.
//!
//! For captures H_1 … H_N and their mean H̄ the figure in band B is
//!   10·log10( mean over f in B of (1/N)·Σ_i |H_i(f) − H̄(f)|²  /  mean over f in B of |H̄(f)|² ),
//! the spread of the captures in dB below the response. Noise alone spreads them too: with a
//! noise power n per capture the expected spread is (N − 1)/N·n, and the figure is compared with
//! that floor, measured from a noise-only stretch of the deconvolution.

use rustfft::num_complex::Complex;

use super::fft::{complex_spectrum, interpolate_bins, power_spectrum};
use super::harmonic_distortion::ABOVE_FLOOR_DB;
use super::harmonic_windows::{deconvolve_recording, harmonic_windows};
use super::repeated_captures::capture;
use super::sweep_law::SweepLaw;
use crate::numeric::fractional_octave::{band_mean_power_db, bands_within, Band};

/// The spread of the captures in one band, in dB below the mean response.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BandChange {
    pub band: Band,
    pub spread_db: f64,
    /// What noise alone would spread them by; `None` when it could not be measured.
    pub floor_db: Option<f64>,
}

impl BandChange {
    /// The magnitude-squared coherence of the captures with the stimulus over the band: with
    /// one stimulus X in every capture, γ² = |Σ X*·Y_i|² / (Σ|X|²·Σ|Y_i|²) becomes
    /// |H̄|² / mean|H_i|², and mean|H_i|² = |H̄|² + spread, so γ² = 1 / (1 + spread ratio)
    /// (the estimate over N records, Bendat & Piersol, from memory). 1 for a link that holds
    /// still without noise.
    pub fn coherence(&self) -> f64 {
        1.0 / (1.0 + 10f64.powf(self.spread_db / 10.0))
    }

    /// True when the spread stands clear of what noise alone makes.
    pub fn beyond_noise(&self) -> bool {
        self.floor_db
            .is_none_or(|floor| self.spread_db >= floor + ABOVE_FLOOR_DB)
    }
}

/// Capture-to-capture change of the link per band.
#[derive(Debug, Clone, PartialEq)]
pub struct CaptureChange {
    pub captures: usize,
    pub fraction: u32,
    pub bands: Vec<BandChange>,
}

/// The spread between the `repeats` captures of `recording` (capture i starts at i·`period`),
/// each aligned with `stimulus` (one period) as recorded; `None` for fewer than two captures or
/// a sweep too short for the windows.
pub fn capture_change(
    stimulus: &[f64],
    law: &SweepLaw,
    recording: &[f64],
    period: usize,
    repeats: usize,
    sample_rate: f64,
    fraction: u32,
) -> Option<CaptureChange> {
    if repeats < 2 {
        return None;
    }
    let length = recording.len().saturating_sub((repeats - 1) * period);
    let deconvolved: Vec<_> = (0..repeats)
        .map(|i| {
            deconvolve_recording(
                stimulus,
                law,
                capture(recording, period, i, length),
                sample_rate,
            )
        })
        .collect();
    // Every capture is cut at the same place: where the first one's linear response peaks
    // (a window placed per capture would follow the change it is meant to see).
    let windows = harmonic_windows(&deconvolved[0], law, 2, sample_rate)?;
    let linear = windows.responses[0].clone();
    let size = (2 * linear.len()).next_power_of_two();
    let bin_hz = sample_rate / size as f64;
    let spectra: Vec<Vec<Complex<f64>>> = deconvolved
        .iter()
        .map(|d| complex_spectrum(&d.samples[linear.clone()], size))
        .collect();
    let count = repeats as f64;
    let bins = size / 2 + 1;
    let mean: Vec<_> = (0..bins)
        .map(|k| spectra.iter().map(|s| s[k]).sum::<Complex<f64>>() / count)
        .collect();
    let spread: Vec<f64> = (0..bins)
        .map(|k| {
            spectra
                .iter()
                .map(|s| (s[k] - mean[k]).norm_sqr())
                .sum::<f64>()
                / count
        })
        .collect();
    let response: Vec<f64> = mean.iter().map(|c| c.norm_sqr()).collect();
    // Noise per capture, from the first capture's noise-only stretch scaled to the linear
    // window's length; the expected spread is (N − 1)/N of it.
    let floor = windows.noise.as_ref().map(|r| {
        let scale = (count - 1.0) / count * linear.len() as f64 / r.len() as f64;
        power_spectrum(&deconvolved[0].samples[r.clone()], size)
            .into_iter()
            .map(|p| scale * p)
            .collect::<Vec<f64>>()
    });
    let top = law.end_hz.min(0.5 * sample_rate);
    let bands = bands_within(fraction, law.start_hz, top)
        .into_iter()
        .map(|band| {
            let reference = band_mean_power_db(&band, |f| interpolate_bins(&response, bin_hz, f));
            BandChange {
                band,
                spread_db: band_mean_power_db(&band, |f| interpolate_bins(&spread, bin_hz, f))
                    - reference,
                floor_db: floor.as_ref().map(|fl| {
                    band_mean_power_db(&band, |f| interpolate_bins(fl, bin_hz, f)) - reference
                }),
            }
        })
        .collect();
    Some(CaptureChange {
        captures: repeats,
        fraction,
        bands,
    })
}
