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
    let good: Vec<bool> = snr.snr_db.iter().map(|&v| v >= threshold_db).collect();
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
