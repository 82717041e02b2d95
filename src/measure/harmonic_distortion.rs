//! Harmonic distortion per fractional-octave band, from a sweep recording separated in time
//! (see `harmonic_windows`): how far below the fundamental the 2nd and 3rd harmonics, and all of
//! harmonics 2 ..= [`HIGHEST_HARMONIC`] together, lie for excitation within each band.
//!
//! For a band B of excitation frequencies and harmonic k the figure is
//!   10·log10( mean over f in B of |H_k(k·f)|²  /  mean over f in B of |H_1(f)|² ),
//! the means taken as `band_mean_power_db` takes them (a logarithmic grid over the band), |H_k|²
//! read from the zero-padded spectrum of the k-th window by linear interpolation between bins.
//! The total adds the numerators of harmonics 2 ..= [`HIGHEST_HARMONIC`].
//!
//! Below a floor a harmonic cannot be told from what is not one: the same figure made from a
//! noise-only stretch of the deconvolution (scaled to each window's length), plus what a
//! perfectly linear link with the measured response would leave in the harmonic's window (the
//! inverse filter is exact only where the sweep dwells long, so near a short sweep's low end the
//! linear response smears ahead into the harmonics' windows).

use super::fft::{interpolate_bins, power_spectrum};
use super::harmonic_windows::{deconvolve_recording, harmonic_windows};
use super::sweep_law::SweepLaw;
use crate::numeric::fractional_octave::{band_mean_power_db, bands_within, Band};

/// The total distortion counts harmonics 2 up to this one.
pub const HIGHEST_HARMONIC: usize = 5;
/// A harmonic counts as measured when it stands at least this far (dB) above its noise floor
/// (common practice: 6 dB, twice the amplitude).
pub const ABOVE_FLOOR_DB: f64 = 6.0;

/// One harmonic figure in one band, in dB relative to the fundamental.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HarmonicLevel {
    pub level_db: f64,
    /// The floor in the same terms: noise (when the recording left room to measure it) plus
    /// the linear response's own leakage into the harmonic's window.
    pub floor_db: Option<f64>,
}

impl HarmonicLevel {
    /// True when the figure stands clear of the noise floor (or no floor was measured).
    pub fn measured(&self) -> bool {
        self.floor_db
            .is_none_or(|floor| self.level_db >= floor + ABOVE_FLOOR_DB)
    }
}

/// The figures for excitation within one band; a harmonic that falls above the sweep's top
/// frequency (or above the Nyquist frequency) for part of the band is left out (`None`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BandDistortion {
    pub band: Band,
    pub second: Option<HarmonicLevel>,
    pub third: Option<HarmonicLevel>,
    /// Harmonics 2 ..= [`HIGHEST_HARMONIC`] together: present where at least the 2nd and 3rd
    /// fall inside the sweep; the harmonics above its top are then left out of the sum.
    pub total: Option<HarmonicLevel>,
}

/// Distortion per band, and the measurement's dynamic range.
#[derive(Debug, Clone, PartialEq)]
pub struct HarmonicDistortion {
    /// Bandwidth designator of the bands (1 = octave, 3 = one-third octave).
    pub fraction: u32,
    pub bands: Vec<BandDistortion>,
    /// Peak of the linear impulse response against the mean power of the noise-only stretch
    /// (dB): the impulse response's peak-to-noise ratio (common practice); `None` when the
    /// recording left no room to measure the noise.
    pub dynamic_range_db: Option<f64>,
}

/// Distortion of the link recorded in `recording` (aligned with `stimulus` as recorded), per
/// 1/`fraction`-octave band; `None` when the deconvolution cannot hold every harmonic's window.
pub fn harmonic_distortion(
    stimulus: &[f64],
    law: &SweepLaw,
    recording: &[f64],
    sample_rate: f64,
    fraction: u32,
) -> Option<HarmonicDistortion> {
    let deconvolved = deconvolve_recording(stimulus, law, recording, sample_rate);
    let windows = harmonic_windows(&deconvolved, law, HIGHEST_HARMONIC, sample_rate)?;
    let longest = windows.responses.iter().map(|r| r.len()).max()?;
    // Zero padding to twice the longest window keeps the linear interpolation between bins
    // close to the true spectrum.
    let size = (2 * longest).next_power_of_two();
    let bin_hz = sample_rate / size as f64;
    let spectra: Vec<Vec<f64>> = windows
        .responses
        .iter()
        .map(|r| power_spectrum(&deconvolved.samples[r.clone()], size))
        .collect();
    let noise = windows.noise.as_ref().map(|r| {
        (
            power_spectrum(&deconvolved.samples[r.clone()], size),
            r.len() as f64,
        )
    });
    let leakage = leakage_ratios(stimulus, law, sample_rate, size)?;
    let top = law.end_hz.min(0.5 * sample_rate);
    let mut bands = Vec::new();
    for band in bands_within(fraction, law.start_hz, top / 2.0) {
        let fundamental = band_mean_power_db(&band, |f| interpolate_bins(&spectra[0], bin_hz, f));
        let fits = |k: usize| k as f64 * band.upper_hz <= top;
        // Band mean (linear power) of harmonic k's spectrum at k·f, and of the noise floor
        // scaled to harmonic k's window length.
        let mean = |spectrum: &[f64], k: usize, scale: f64| {
            10f64.powf(
                band_mean_power_db(&band, |f| {
                    scale * interpolate_bins(spectrum, bin_hz, k as f64 * f)
                }) / 10.0,
            )
        };
        let level = |ks: &[usize]| -> HarmonicLevel {
            let power: f64 = ks.iter().map(|&k| mean(&spectra[k - 1], k, 1.0)).sum();
            let noise_floor = noise.as_ref().map(|(spectrum, length)| {
                ks.iter()
                    .map(|&k| mean(spectrum, k, windows.responses[k - 1].len() as f64 / length))
                    .sum::<f64>()
            });
            // The linear response's own leakage into harmonic k's window, at k·f.
            let leaked: f64 = ks
                .iter()
                .map(|&k| {
                    let at = |f: f64| {
                        let hz = k as f64 * f;
                        interpolate_bins(&spectra[0], bin_hz, hz)
                            * interpolate_bins(&leakage[k - 1], bin_hz, hz)
                    };
                    10f64.powf(band_mean_power_db(&band, at) / 10.0)
                })
                .sum();
            HarmonicLevel {
                level_db: 10.0 * power.log10() - fundamental,
                floor_db: Some(10.0 * (noise_floor.unwrap_or(0.0) + leaked).log10() - fundamental),
            }
        };
        let counted: Vec<usize> = (2..=HIGHEST_HARMONIC).filter(|&k| fits(k)).collect();
        bands.push(BandDistortion {
            band,
            second: fits(2).then(|| level(&[2])),
            third: fits(3).then(|| level(&[3])),
            total: fits(3).then(|| level(&counted)),
        });
    }
    let dynamic_range_db = windows.noise.as_ref().map(|r| {
        let peak = deconvolved.samples[deconvolved.linear_peak].powi(2);
        let stretch = &deconvolved.samples[r.clone()];
        let mean = stretch.iter().map(|v| v * v).sum::<f64>() / stretch.len() as f64;
        10.0 * (peak / mean).log10()
    });
    Some(HarmonicDistortion {
        fraction,
        bands,
        dynamic_range_db,
    })
}

/// Per bin, what a perfectly linear line leaves in each harmonic's window relative to its
/// linear window at the same frequency: the stimulus deconvolved as its own recording. The
/// sweep's inverse filter is exact only where the sweep dwells many cycles per octave (a
/// stationary-phase approximation, Farina); near a short sweep's low end the linear response
/// smears ahead of its peak into the harmonics' windows, and a linear link would read as
/// distorted there. Index k − 1 for harmonic k (index 0 is all ones).
fn leakage_ratios(
    stimulus: &[f64],
    law: &SweepLaw,
    sample_rate: f64,
    size: usize,
) -> Option<Vec<Vec<f64>>> {
    let own = deconvolve_recording(stimulus, law, stimulus, sample_rate);
    let windows = harmonic_windows(&own, law, HIGHEST_HARMONIC, sample_rate)?;
    let spectra: Vec<Vec<f64>> = windows
        .responses
        .iter()
        .map(|r| power_spectrum(&own.samples[r.clone()], size))
        .collect();
    let largest = spectra[0].iter().fold(0.0f64, |m, &v| m.max(v));
    Some(
        spectra
            .iter()
            .map(|spectrum| {
                spectrum
                    .iter()
                    .zip(&spectra[0])
                    // Outside the sweep's band the linear window holds next to nothing: no
                    // ratio there (no band is judged there either).
                    .map(|(&k, &linear)| {
                        if linear > 1e-12 * largest {
                            k / linear
                        } else {
                            0.0
                        }
                    })
                    .collect()
            })
            .collect(),
    )
}
