//! Signal-to-noise ratio of a measurement, overall and per frequency, and the band where the
//! fitted model can be trusted.
//!
//! The noise is what the long FIR model cannot explain: the residual y − ŷ of the least-squares
//! fit. Its spectrum against the model output's spectrum (Welch averages, smoothed over a third
//! of an octave) gives the SNR per band; the model is trusted where that stays above
//! [`TRUST_SNR_DB`], which also excludes bands the stimulus never excited.

use super::fft::welch_power;

/// Bands whose SNR is at least this (dB) count as trusted.
pub const TRUST_SNR_DB: f64 = 20.0;
/// Welch frame length in seconds (rounded to a power of two in samples): about 20 Hz bins.
const FRAME_SECONDS: f64 = 0.05;

/// SNR per frequency.
#[derive(Debug, Clone, PartialEq)]
pub struct BandSnr {
    /// Bin centre frequencies (Hz), from the first bin above 0 Hz to the Nyquist frequency.
    pub frequencies_hz: Vec<f64>,
    /// SNR (dB) at each frequency, smoothed over a third of an octave.
    pub snr_db: Vec<f64>,
}

/// Where the fit can be trusted.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TrustedRange {
    /// Lowest and highest frequency (Hz) whose SNR reaches the threshold; `None` when none does.
    pub band_hz: Option<(f64, f64)>,
    /// Share of the bins between those two that reach it (1 = no gaps).
    pub coverage: f64,
    pub threshold_db: f64,
}

/// Per-band SNR of `model_output` against `residual` at `sample_rate`.
pub fn band_snr(model_output: &[f64], residual: &[f64], sample_rate: f64) -> BandSnr {
    let wanted = (FRAME_SECONDS * sample_rate) as usize;
    let mut frame = wanted.next_power_of_two().max(256);
    while frame > 256 && frame > model_output.len() / 4 {
        frame /= 2;
    }
    let signal = welch_power(model_output, frame);
    let noise = welch_power(residual, frame);
    let bin_hz = sample_rate / frame as f64;
    let bins = signal.len();
    let mut frequencies_hz = Vec::with_capacity(bins);
    let mut snr_db = Vec::with_capacity(bins);
    for k in 1..bins {
        // Third-octave smoothing: average both spectra over k·2^(±1/6).
        let low = ((k as f64) * 2f64.powf(-1.0 / 6.0)).floor().max(1.0) as usize;
        let high = (((k as f64) * 2f64.powf(1.0 / 6.0)).ceil() as usize).min(bins - 1);
        let s: f64 = signal[low..=high].iter().sum();
        let n: f64 = noise[low..=high].iter().sum();
        frequencies_hz.push(k as f64 * bin_hz);
        snr_db.push(if n > 0.0 {
            10.0 * (s / n).log10()
        } else {
            f64::INFINITY
        });
    }
    BandSnr {
        frequencies_hz,
        snr_db,
    }
}

/// The outermost frequencies whose SNR reaches `threshold_db`, and how much of the band between
/// them does.
pub fn trusted_range(snr: &BandSnr, threshold_db: f64) -> TrustedRange {
    trusted_range_above(snr, threshold_db, 0.0)
}

/// As [`trusted_range`], counting only frequencies at or above `lowest_hz`: below the
/// frequency a sweep starts at, the model output and the residual are both made of the
/// sweep's spectral skirt and its fade, and their ratio says nothing about the link.
pub fn trusted_range_above(snr: &BandSnr, threshold_db: f64, lowest_hz: f64) -> TrustedRange {
    let good: Vec<bool> = snr
        .snr_db
        .iter()
        .zip(&snr.frequencies_hz)
        .map(|(&v, &f)| v >= threshold_db && f >= lowest_hz)
        .collect();
    let first = good.iter().position(|&g| g);
    let last = good.iter().rposition(|&g| g);
    match (first, last) {
        (Some(lo), Some(hi)) => TrustedRange {
            band_hz: Some((snr.frequencies_hz[lo], snr.frequencies_hz[hi])),
            coverage: good[lo..=hi].iter().filter(|&&g| g).count() as f64 / (hi - lo + 1) as f64,
            threshold_db,
        },
        _ => TrustedRange {
            band_hz: None,
            coverage: 0.0,
            threshold_db,
        },
    }
}

/// Crest factors (peak / RMS) between these mark a sine-like signal: a sine or a constant-level
/// sweep has √2 ≈ 1.41 (common practice); a maximum-length sequence has 1, noise 3 or more.
const SINE_LIKE_CREST: (f64, f64) = (1.3, 1.6);

/// The frequency a sine-like stimulus (an exponential sweep, or a tone) opens with, from the
/// length of its first half-cycle; `None` for a noise-like stimulus (a maximum-length
/// sequence), which excites every band from the start. A rising sweep excites nothing below
/// its first frequency, so the trusted band starts no lower (the first half-cycle's mean
/// frequency is a little above the sweep's start, which errs on the safe side).
pub fn opening_frequency_hz(stimulus: &[f64], sample_rate: f64) -> Option<f64> {
    let start = stimulus.iter().position(|v| *v != 0.0)?;
    let end = stimulus.iter().rposition(|v| *v != 0.0)? + 1;
    let signal = &stimulus[start..end];
    let peak = signal.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let rms = (signal.iter().map(|v| v * v).sum::<f64>() / signal.len() as f64).sqrt();
    if !(SINE_LIKE_CREST.0..=SINE_LIKE_CREST.1).contains(&(peak / rms)) {
        return None;
    }
    // The half-cycle runs from the signal's start (a zero crossing: it starts from silence)
    // to its first change of sign, placed between samples by linear interpolation.
    let flip = signal
        .iter()
        .position(|v| v.signum() != signal[0].signum())?;
    let (before, after) = (signal[flip - 1], signal[flip]);
    let crossing = (flip - 1) as f64 + before / (before - after);
    let half_cycle = crossing + 1.0;
    Some(sample_rate / (2.0 * half_cycle))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::measure::noise::GaussianNoise;

    #[test]
    fn white_signal_over_white_noise_gives_the_set_ratio_in_every_band() {
        // Two white sequences 30 dB apart have a 30 dB ratio in every band (common practice).
        let mut g = GaussianNoise::new(9);
        let s: Vec<f64> = (0..1 << 16).map(|_| g.sample()).collect();
        let n: Vec<f64> = (0..1 << 16)
            .map(|_| 10f64.powf(-1.5) * g.sample())
            .collect();
        let snr = band_snr(&s, &n, 16_000.0);
        for (f, v) in snr.frequencies_hz.iter().zip(&snr.snr_db).skip(8) {
            assert!((v - 30.0).abs() < 2.0, "{f} Hz: {v}");
        }
        let range = trusted_range(&snr, 20.0);
        let (lo, hi) = range.band_hz.unwrap();
        assert!(lo < 100.0 && hi > 7_900.0, "{lo}–{hi}");
        assert_eq!(range.coverage, 1.0);
    }

    #[test]
    fn a_sweep_opens_at_its_first_frequency_and_a_sequence_at_none() {
        use crate::measure::{generate_stimulus, StimulusSpec};
        // A 20 Hz – 8 kHz sweep over 1 s at 16 kHz: its first half-cycle's mean frequency is
        // 20·e^{t/L} at t ≈ 12.5 ms, L = 1 s / ln(400), about 21.6 Hz (the sweep law, common
        // practice).
        let sweep = generate_stimulus(&StimulusSpec {
            kind: crate::measure::StimulusKind::Sweep {
                start_hz: 20.0,
                end_hz: 8_000.0,
                seconds: 1.0,
            },
            ..StimulusSpec::sweep(16_000)
        })
        .unwrap();
        let f = opening_frequency_hz(&sweep.samples, 16_000.0).unwrap();
        assert!((20.0..23.0).contains(&f), "{f}");
        let mls = generate_stimulus(&StimulusSpec::mls(16_000)).unwrap();
        assert_eq!(opening_frequency_hz(&mls.samples, 16_000.0), None);
        // The band is cut there even where the SNR would pass.
        let snr = BandSnr {
            frequencies_hz: vec![15.6, 31.2, 46.9],
            snr_db: vec![40.0, 40.0, 40.0],
        };
        assert_eq!(
            trusted_range_above(&snr, 20.0, f).band_hz,
            Some((31.2, 46.9))
        );
        assert_eq!(trusted_range(&snr, 20.0).band_hz, Some((15.6, 46.9)));
    }

    #[test]
    fn a_band_without_signal_is_not_trusted() {
        // Signal: 40 tones between 100 Hz and 2 kHz; noise 60 dB down across the whole band.
        // Above ~2 kHz (plus the third-octave smoothing) only noise is left.
        let fs = 16_000.0;
        let mut g = GaussianNoise::new(4);
        let n = 1 << 16;
        let mut signal = vec![0.0; n];
        for i in 0..40 {
            let hz = 100.0 + 1_900.0 * i as f64 / 39.0;
            let phase = g.sample();
            for (t, v) in signal.iter_mut().enumerate() {
                *v += (std::f64::consts::TAU * hz * t as f64 / fs + phase).sin();
            }
        }
        let noise: Vec<f64> = (0..n).map(|_| 1e-3 * g.sample()).collect();
        let snr = band_snr(&signal, &noise, fs);
        let range = trusted_range(&snr, 20.0);
        let (lo, hi) = range.band_hz.unwrap();
        assert!(lo < 150.0 && (2_000.0..2_600.0).contains(&hi), "{lo}–{hi}");
        assert!(trusted_range(&snr, 1_000.0).band_hz.is_none());
    }
}
