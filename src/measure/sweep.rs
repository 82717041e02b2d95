//! The exponential (logarithmic) sine sweep and its inverse filter, after Farina's swept-sine
//! method: the sweep's frequency rises exponentially, so it spends equal time per octave, and
//! convolving a recording of it with the inverse filter gives the link's impulse response (with
//! any harmonic distortion pushed to negative times, out of the way).
//!
//! x(t) = sin( ω₁·T / ln(ω₂/ω₁) · (e^{t·ln(ω₂/ω₁)/T} − 1) ),  0 ≤ t < T,
//! instantaneous frequency ω₁·e^{t·ln(ω₂/ω₁)/T}.
//!
//! The inverse filter is the sweep reversed in time, its amplitude falling 6 dB per octave
//! (envelope e^{−t·ln(ω₂/ω₁)/T}) to undo the sweep's pink spectrum, scaled so that sweep ∗
//! inverse has unit gain at the band's geometric centre.

use std::f64::consts::TAU;

use rustfft::num_complex::Complex;

/// Samples of a unit-amplitude exponential sweep from `start_hz` to `end_hz`, `frames` long.
pub fn exponential_sweep(start_hz: f64, end_hz: f64, frames: usize, sample_rate: f64) -> Vec<f64> {
    let duration = frames as f64 / sample_rate;
    let rate = (end_hz / start_hz).ln();
    let w1 = TAU * start_hz;
    (0..frames)
        .map(|n| {
            let t = n as f64 / sample_rate;
            (w1 * duration / rate * ((t * rate / duration).exp() - 1.0)).sin()
        })
        .collect()
}

/// Instantaneous frequency (Hz) of the sweep at time `t` seconds.
pub fn sweep_frequency_at(start_hz: f64, end_hz: f64, duration: f64, t: f64) -> f64 {
    start_hz * (t * (end_hz / start_hz).ln() / duration).exp()
}

/// The inverse filter for `sweep` (the samples as played, fades and all), which swept from
/// `start_hz` to `end_hz`: reversed, with a 6 dB/octave falling envelope, and scaled so that
/// `sweep ∗ inverse` has unit gain at √(start·end).
pub fn sweep_inverse_filter(
    sweep: &[f64],
    start_hz: f64,
    end_hz: f64,
    sample_rate: f64,
) -> Vec<f64> {
    let frames = sweep.len();
    if frames == 0 {
        return Vec::new();
    }
    let duration = frames as f64 / sample_rate;
    let rate = (end_hz / start_hz).ln();
    let mut inverse: Vec<f64> = (0..frames)
        .map(|n| {
            let t = n as f64 / sample_rate;
            sweep[frames - 1 - n] * (-t * rate / duration).exp()
        })
        .collect();
    let centre = TAU * (start_hz * end_hz).sqrt() / sample_rate;
    let gain = (dtft(sweep, centre) * dtft(&inverse, centre)).norm();
    if gain > 0.0 {
        inverse.iter_mut().for_each(|v| *v /= gain);
    }
    inverse
}

/// The impulse response from a recording of the sweep: `recording ∗ inverse`, starting
/// `before` samples ahead of where an undelayed response would peak (index `sweep length − 1`
/// of the convolution), `length` samples long. The band-limited impulse that sweep ∗ inverse
/// makes is nearly zero-phase, so it reaches before its peak; `before` keeps that part.
pub fn deconvolve_sweep(
    recording: &[f64],
    inverse: &[f64],
    before: usize,
    length: usize,
) -> Vec<f64> {
    let full = super::fft::convolve(recording, inverse);
    let centre = inverse.len().saturating_sub(1);
    (0..length)
        .map(|k| {
            (centre + k)
                .checked_sub(before)
                .and_then(|i| full.get(i).copied())
                .unwrap_or(0.0)
        })
        .collect()
}

/// Σ x[n]·e^{−jωn}.
fn dtft(x: &[f64], omega: f64) -> Complex<f64> {
    x.iter()
        .enumerate()
        .map(|(n, &v)| Complex::from_polar(v, -omega * n as f64))
        .sum()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn instantaneous_frequency_runs_from_start_to_end() {
        // The phase's derivative at t = 0 and t = T is ω₁ and ω₂ (Farina's definition, from
        // memory); measured here from the sample-to-sample phase advance near each end, via
        // zero crossings counted over a short stretch.
        let fs = 48_000.0;
        let sweep = exponential_sweep(100.0, 10_000.0, 96_000, fs);
        let crossings = |from: usize, to: usize| {
            sweep[from..to]
                .windows(2)
                .filter(|w| w[0] <= 0.0 && w[1] > 0.0)
                .count() as f64
        };
        // Over the last 0.1 s the frequency runs from 7 943 Hz to 10 000 Hz: mean ≈ 8 930 Hz.
        let late = crossings(96_000 - 4_800, 96_000) / 0.1;
        let expected_late = (10_000.0 - sweep_frequency_at(100.0, 10_000.0, 2.0, 1.9))
            / ((10_000.0f64 / 100.0).ln() / 2.0)
            / 0.1;
        assert!(
            (late - expected_late).abs() / expected_late < 0.01,
            "{late} vs {expected_late}"
        );
        assert!((sweep_frequency_at(100.0, 10_000.0, 2.0, 0.0) - 100.0).abs() < 1e-9);
        assert!((sweep_frequency_at(100.0, 10_000.0, 2.0, 2.0) - 10_000.0).abs() < 1e-6);
        assert!((sweep_frequency_at(100.0, 10_000.0, 2.0, 1.0) - 1_000.0).abs() < 1e-6);
    }

    #[test]
    fn sweep_convolved_with_its_inverse_is_flat_across_the_band() {
        // Farina's property (from memory): the sweep convolved with its inverse filter is a
        // band-limited impulse, flat in magnitude across the swept band.
        let fs = 16_000.0;
        let sweep = exponential_sweep(50.0, 7_000.0, 16_000, fs);
        let inverse = sweep_inverse_filter(&sweep, 50.0, 7_000.0, fs);
        let both = crate::measure::fft::convolve(&sweep, &inverse);
        for hz in [200.0, 500.0, 1_000.0, 2_000.0, 4_000.0] {
            let level = 20.0 * dtft(&both, TAU * hz / fs).norm().log10();
            assert!(level.abs() < 0.5, "{hz} Hz: {level:.2} dB");
        }
        // The impulse sits at index N − 1 and is the largest sample.
        let peak =
            both.iter().enumerate().fold(
                (0, 0.0f64),
                |m, (i, v)| if v.abs() > m.1 { (i, v.abs()) } else { m },
            );
        assert_eq!(peak.0, sweep.len() - 1);
    }
}
