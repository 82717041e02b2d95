//! Farina's separation of harmonic distortion in time: a recording of an exponential sweep,
//! convolved with the sweep's inverse filter, holds the link's linear impulse response at its
//! delay and, ahead of it, one impulse response per harmonic: the k-th harmonic of a sweep is the
//! sweep itself played L·ln k earlier (kφ(t) = φ(t + L·ln k) plus a constant phase, for
//! φ(t) = ω₁L(e^{t/L} − 1)), so the inverse filter gathers it L·ln k before the linear one.
//!
//! Each response is cut out with a window reaching halfway to its neighbours; the spectrum of
//! the k-th window at frequency k·f is the k-th harmonic the link made from excitation at f.

use std::ops::Range;

use super::fft::convolve;
use super::sweep::sweep_inverse_filter;
use super::sweep_law::SweepLaw;

/// A recording deconvolved by the sweep's inverse filter.
#[derive(Debug, Clone, PartialEq)]
pub struct Deconvolved {
    /// recording ∗ inverse filter, whole.
    pub samples: Vec<f64>,
    /// Where the linear response peaks (the largest sample at or after the undelayed position).
    pub linear_peak: usize,
    /// Samples at or after this index no longer have the whole inverse filter over recorded
    /// frames: the noise there is not representative.
    pub whole_overlap_end: usize,
}

/// Deconvolves `recording` (aligned with `stimulus`, as recorded) with the inverse filter of the
/// sweep `law` finds in `stimulus`.
pub fn deconvolve_recording(
    stimulus: &[f64],
    law: &SweepLaw,
    recording: &[f64],
    sample_rate: f64,
) -> Deconvolved {
    let inverse =
        sweep_inverse_filter(law.samples(stimulus), law.start_hz, law.end_hz, sample_rate);
    let samples = convolve(recording, &inverse);
    // An undelayed response peaks where the sweep's last sample meets the inverse's first.
    let undelayed = inverse.len().saturating_sub(1) + law.start;
    let linear_peak = samples
        .iter()
        .enumerate()
        .skip(undelayed)
        .fold((undelayed, 0.0f64), |best, (i, v)| {
            if v.abs() > best.1 {
                (i, v.abs())
            } else {
                best
            }
        })
        .0;
    Deconvolved {
        samples,
        linear_peak,
        whole_overlap_end: recording.len(),
    }
}

/// Where each response lies in a [`Deconvolved`] recording.
#[derive(Debug, Clone, PartialEq)]
pub struct HarmonicWindows {
    /// Window of the linear response (index 0) and of harmonics 2, 3, … (index k − 1): from
    /// halfway to the next harmonic ahead to halfway to the one behind (the linear window
    /// reaches as far behind its peak as ahead).
    pub responses: Vec<Range<usize>>,
    /// A stretch behind the linear window, as long as the second harmonic's, where only noise
    /// (and what is left of the linear response's tail) lies; `None` when the recording stops
    /// too soon after the sweep.
    pub noise: Option<Range<usize>>,
}

/// Windows for the linear response and harmonics 2 ..= `highest`, or `None` when the
/// deconvolution does not reach far enough ahead for the highest (a sweep too short for its
/// band).
pub fn harmonic_windows(
    deconvolved: &Deconvolved,
    law: &SweepLaw,
    highest: usize,
    sample_rate: f64,
) -> Option<HarmonicWindows> {
    let peak = deconvolved.linear_peak as f64;
    let advance = |k: usize| law.harmonic_advance(k, sample_rate);
    // Half the gap between harmonic k and harmonic k − 1 (the linear response is k = 1).
    let half_gap = |k: usize| 0.5 * (advance(k) - advance(k - 1));
    let mut responses = Vec::with_capacity(highest);
    for k in 1..=highest {
        let centre = peak - advance(k);
        let ahead = centre - half_gap(k + 1);
        let behind = if k == 1 {
            centre + half_gap(2)
        } else {
            centre + half_gap(k)
        };
        if ahead < 0.0 {
            return None;
        }
        let range = ahead.round() as usize..behind.round() as usize;
        if range.is_empty() || range.end > deconvolved.samples.len() {
            return None;
        }
        responses.push(range);
    }
    // The noise is read from the last stretch the recording covers whole, as far behind the
    // linear response as it goes: the aliases of harmonics that fold back past the Nyquist
    // frequency are chirps that the inverse filter spreads behind the linear response, falling
    // in frequency, and the farther behind, the fewer of them (common practice reads an impulse
    // response's noise from its tail).
    let noise_length = responses.get(1).map_or(0, |r| r.len());
    let noise = deconvolved
        .whole_overlap_end
        .checked_sub(noise_length)
        .filter(|&start| noise_length > 0 && start >= responses[0].end)
        .map(|start| start..start + noise_length);
    Some(HarmonicWindows { responses, noise })
}
