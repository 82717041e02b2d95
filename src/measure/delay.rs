//! Where the stimulus lies in the recording: the lag of the largest cross-correlation.
//!
//! c(k) = Σₙ y[n]·s[n − k] peaks where the response lines up with the stimulus. How far that
//! peak stands above the correlation's RMS says whether the recording holds the stimulus at all:
//! for an unrelated signal the largest of ~10⁵ lags stands only about 14 dB above the RMS
//! (the maximum of that many Gaussian values, common practice), for a real response far more.

use super::error::MeasureError;
use super::fft::cross_correlation;

/// A correlation peak must stand at least this far (dB) above the correlation's RMS.
pub const MIN_PROMINENCE_DB: f64 = 20.0;

/// The lag found and how clearly.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DelayFound {
    /// Frames from the stimulus's start to the correlation peak in the recording.
    pub peak_lag: usize,
    /// Peak |c| over the RMS of c, in dB.
    pub prominence_db: f64,
}

/// Finds the lag of `stimulus` in `response` (channel `channel` of the file `response_name`).
pub fn find_delay(
    stimulus: &[f64],
    response: &[f64],
    response_name: &str,
    channel: usize,
) -> Result<DelayFound, MeasureError> {
    let (positive, negative) = cross_correlation(
        response,
        stimulus,
        response.len().saturating_sub(1),
        stimulus.len().saturating_sub(1),
    );
    let all = positive.iter().chain(&negative);
    let count = positive.len() + negative.len();
    let rms = (all.clone().map(|v| v * v).sum::<f64>() / count.max(1) as f64).sqrt();
    let (best_positive, best_value) =
        positive.iter().enumerate().fold(
            (0, 0.0f64),
            |m, (k, v)| if v.abs() > m.1 { (k, v.abs()) } else { m },
        );
    let (best_negative, negative_value) =
        negative.iter().enumerate().fold((0, 0.0f64), |m, (k, v)| {
            if v.abs() > m.1 {
                (k + 1, v.abs())
            } else {
                m
            }
        });
    let peak = best_value.max(negative_value);
    let prominence_db = if rms > 0.0 {
        20.0 * (peak / rms).log10()
    } else {
        f64::NEG_INFINITY
    };
    if prominence_db.is_nan() || prominence_db < MIN_PROMINENCE_DB {
        return Err(MeasureError::NoCorrelationPeak {
            response: response_name.to_string(),
            channel,
            prominence_db: prominence_db.max(-999.0),
            needed_db: MIN_PROMINENCE_DB,
        });
    }
    if negative_value > best_value {
        return Err(MeasureError::ResponseStartsLate {
            response: response_name.to_string(),
            channel,
            frames: best_negative,
        });
    }
    Ok(DelayFound {
        peak_lag: best_positive,
        prominence_db,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::measure::noise::GaussianNoise;

    fn noise(seed: u64, n: usize, level: f64) -> Vec<f64> {
        let mut g = GaussianNoise::new(seed);
        (0..n).map(|_| level * g.sample()).collect()
    }

    #[test]
    fn finds_a_delayed_echoing_copy() {
        let s = noise(1, 8_000, 0.1);
        let mut r = vec![0.0; 12_000];
        for (n, &x) in s.iter().enumerate() {
            r[n + 1_234] += 0.5 * x;
            r[n + 1_240] += 0.2 * x;
        }
        let found = find_delay(&s, &r, "r.wav", 0).unwrap();
        assert_eq!(found.peak_lag, 1_234);
        assert!(found.prominence_db > 30.0, "{}", found.prominence_db);
    }

    #[test]
    fn unrelated_noise_has_no_peak() {
        let s = noise(1, 8_000, 0.1);
        let r = noise(2, 12_000, 0.1);
        let e = find_delay(&s, &r, "r.wav", 0).unwrap_err();
        assert!(matches!(e, MeasureError::NoCorrelationPeak { .. }), "{e}");
    }

    #[test]
    fn a_recording_that_starts_late_is_refused() {
        let s = noise(3, 8_000, 0.1);
        // The recording begins 500 frames into the stimulus.
        let r: Vec<f64> = s[500..].iter().copied().chain(vec![0.0; 600]).collect();
        let e = find_delay(&s, &r, "r.wav", 0).unwrap_err();
        assert!(
            matches!(e, MeasureError::ResponseStartsLate { frames: 500, .. }),
            "{e}"
        );
    }
}
