//! Reading an exponential sweep's law back from its samples, so that a stimulus made elsewhere
//! (or by `redress stimulus`, whose settings are not stored in the WAV) can be deconvolved with
//! Farina's inverse filter and its harmonics placed in time.
//!
//! An exponential sweep's instantaneous frequency is f(t) = f₁·e^{t/L}, L = T / ln(f₂/f₁), so
//! ln f is a straight line in time. Zero crossings give f without regard to the amplitude
//! envelope (fades included): between two crossings half a cycle passes. A straight-line fit of
//! ln f against time over the crossings gives f₁ and L; a poor fit means the stimulus is not an
//! exponential sweep.

/// Crossings are used only while the local frequency is below this fraction of the sample
/// rate: nearer the Nyquist frequency a crossing falls within a sample or two of the last, and
/// linear interpolation between samples places it too roughly.
const HIGHEST_USED_FRACTION: f64 = 0.125;
/// At least this many half-cycles must be usable for a fit.
const FEWEST_CROSSINGS: usize = 16;
/// Largest accepted deviation of one half-cycle's ln f from the fitted line: 5 % in frequency.
/// A linear sweep, a tone or a sequence misses it by far.
const LARGEST_DEVIATION: f64 = 0.05;
/// The sweep must span at least this ratio of end to start frequency.
const SMALLEST_SPAN: f64 = 1.5;

/// An exponential sweep found in a stimulus.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SweepLaw {
    /// First frame of the sweep in the stimulus (the silence before it left out).
    pub start: usize,
    /// Frames of the sweep, from `start` to just past its last non-zero sample.
    pub frames: usize,
    /// Instantaneous frequency (Hz) at `start` and at `start + frames`.
    pub start_hz: f64,
    pub end_hz: f64,
    /// L = T / ln(f₂/f₁) in seconds: the time the frequency takes to grow by a factor e.
    pub rate_seconds: f64,
}

impl SweepLaw {
    /// How far (in frames, not rounded) the k-th harmonic's response lies ahead of the linear
    /// one after deconvolution: L·ln k (Farina).
    pub fn harmonic_advance(&self, k: usize, sample_rate: f64) -> f64 {
        self.rate_seconds * (k as f64).ln() * sample_rate
    }

    /// The sweep's samples within `stimulus`.
    pub fn samples<'a>(&self, stimulus: &'a [f64]) -> &'a [f64] {
        &stimulus[self.start..self.start + self.frames]
    }
}

/// The exponential sweep in `stimulus`, or `None` when it is not one (a sequence, noise, a
/// tone, a linear sweep) or too short to tell.
pub fn sweep_law(stimulus: &[f64], sample_rate: f64) -> Option<SweepLaw> {
    let first = stimulus.iter().position(|v| *v != 0.0)?;
    let last = stimulus.iter().rposition(|v| *v != 0.0)?;
    // A sweep made from silence starts on a zero sample (sin 0 under a fade) just before its
    // first non-zero one, and ends on one just after its last.
    let start = first.saturating_sub(1);
    let end = (last + 2).min(stimulus.len());
    let signal = &stimulus[start..end];
    let crossings: Vec<f64> = signal
        .windows(2)
        .enumerate()
        .filter(|(_, w)| w[0] != 0.0 && (w[0] > 0.0) != (w[1] > 0.0))
        .map(|(n, w)| n as f64 + w[0] / (w[0] - w[1]))
        .collect();
    // Each half-cycle: (time at its middle in seconds, ln of its frequency).
    let highest = HIGHEST_USED_FRACTION * sample_rate;
    let points: Vec<(f64, f64)> = crossings
        .windows(2)
        .filter_map(|c| {
            let half = (c[1] - c[0]) / sample_rate;
            let hz = 1.0 / (2.0 * half);
            (hz < highest).then(|| (0.5 * (c[0] + c[1]) / sample_rate, hz.ln()))
        })
        .collect();
    if points.len() < FEWEST_CROSSINGS {
        return None;
    }
    let count = points.len() as f64;
    let mean_t = points.iter().map(|p| p.0).sum::<f64>() / count;
    let mean_l = points.iter().map(|p| p.1).sum::<f64>() / count;
    let stt: f64 = points.iter().map(|p| (p.0 - mean_t).powi(2)).sum();
    let stl: f64 = points.iter().map(|p| (p.0 - mean_t) * (p.1 - mean_l)).sum();
    if stt <= 0.0 {
        return None;
    }
    let slope = stl / stt;
    let frames = signal.len();
    let duration = frames as f64 / sample_rate;
    // A tone (or a sweep over less than half an octave) has no law worth the name.
    if slope * duration < SMALLEST_SPAN.ln() {
        return None;
    }
    let intercept = mean_l - slope * mean_t;
    let deviation = points
        .iter()
        .map(|p| (p.1 - (intercept + slope * p.0)).abs())
        .fold(0.0f64, f64::max);
    if deviation > LARGEST_DEVIATION {
        return None;
    }
    let start_hz = intercept.exp();
    Some(SweepLaw {
        start,
        frames,
        start_hz,
        end_hz: start_hz * (slope * duration).exp(),
        rate_seconds: 1.0 / slope,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::measure::{generate_stimulus, maximum_length_sequence, StimulusKind, StimulusSpec};

    #[test]
    fn a_generated_sweep_gives_back_its_band_and_rate() {
        // The sweep law f(t) = f1·e^{t/L}, L = T/ln(f2/f1) (Farina, from memory): 50 Hz to
        // 20 kHz over 1.5 s at 48 kHz has L = 1.5/ln(400) = 0.2504 s.
        let spec = StimulusSpec {
            kind: StimulusKind::Sweep {
                start_hz: 50.0,
                end_hz: 20_000.0,
                seconds: 1.5,
            },
            ..StimulusSpec::sweep(48_000)
        };
        let stimulus = generate_stimulus(&spec).unwrap();
        let mut delayed = vec![0.0; 300];
        delayed.extend(&stimulus.samples);
        let law = sweep_law(&delayed, 48_000.0).unwrap();
        assert_eq!(law.start, 300);
        assert_eq!(law.frames, 72_000);
        let expected_rate = 1.5 / 400f64.ln();
        assert!(
            (law.rate_seconds / expected_rate - 1.0).abs() < 1e-3,
            "{}",
            law.rate_seconds
        );
        assert!((law.start_hz / 50.0 - 1.0).abs() < 5e-3, "{}", law.start_hz);
        assert!((law.end_hz / 20_000.0 - 1.0).abs() < 5e-3, "{}", law.end_hz);
    }

    #[test]
    fn a_sequence_a_tone_and_a_linear_sweep_are_not_exponential_sweeps() {
        let mls: Vec<f64> = maximum_length_sequence(14).unwrap();
        assert_eq!(sweep_law(&mls, 48_000.0), None);
        let tone: Vec<f64> = (0..48_000)
            .map(|n| (std::f64::consts::TAU * 440.0 * n as f64 / 48_000.0).sin())
            .collect();
        assert_eq!(sweep_law(&tone, 48_000.0), None);
        // A linear sweep from 100 Hz to 5 kHz over 1 s: ln f is far from a straight line.
        let linear: Vec<f64> = (0..48_000)
            .map(|n| {
                let t = n as f64 / 48_000.0;
                (std::f64::consts::TAU * (100.0 * t + 0.5 * 4_900.0 * t * t)).sin()
            })
            .collect();
        assert_eq!(sweep_law(&linear, 48_000.0), None);
    }
}
