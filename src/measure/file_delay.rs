//! The delay between two recordings of the same programme (`compare --find-delay`): the lag of
//! the reference in the test signal, by the generalised cross-correlation with the phase
//! transform (GCC-PHAT, Knapp & Carter 1976, from memory) of the two files' channel sums.
//!
//! Programme holds steady tones, whose plain cross-correlation is a broad ripple with peaks at
//! many lags; dividing the cross-spectrum by its magnitude whitens it, so a pure delay becomes
//! one sharp peak whatever the material. Only lags at which the test follows the reference are
//! searched (an equalized file is never early). The peak must stand [`MIN_PROMINENCE_DB`] above
//! the RMS over those lags, as for a measurement.

use std::path::Path;

use rustfft::num_complex::Complex64;
use rustfft::FftPlanner;

use super::delay::{DelayFound, MIN_PROMINENCE_DB};
use super::error::MeasureError;
use crate::io::wav::read_wav;

/// Below this fraction of the largest cross-spectrum magnitude a bin is left out of the
/// whitening (it holds no signal, only rounding).
const SILENT_BIN: f64 = 1e-9;

/// How many frames `test` lags `reference` (both WAV files).
pub fn delay_between_files(reference: &Path, test: &Path) -> Result<DelayFound, MeasureError> {
    let (reference_samples, reference_format) = read_wav(reference)?;
    let (test_samples, test_format) = read_wav(test)?;
    let mono = |samples: &[f32], channels: usize| -> Vec<f64> {
        samples
            .chunks(channels.max(1))
            .map(|frame| frame.iter().map(|&x| f64::from(x)).sum())
            .collect()
    };
    whitened_delay(
        &mono(&reference_samples, reference_format.channels),
        &mono(&test_samples, test_format.channels),
    )
    .ok_or_else(|| MeasureError::NoCorrelationPeak {
        response: test.display().to_string(),
        channel: 0,
        prominence_db: -999.0,
        needed_db: MIN_PROMINENCE_DB,
    })
    .and_then(|found| {
        if found.prominence_db >= MIN_PROMINENCE_DB {
            Ok(found)
        } else {
            Err(MeasureError::NoCorrelationPeak {
                response: test.display().to_string(),
                channel: 0,
                prominence_db: found.prominence_db.max(-999.0),
                needed_db: MIN_PROMINENCE_DB,
            })
        }
    })
}

/// The GCC-PHAT peak over lags 0 … len(test) − 1; `None` for silent or empty signals.
pub fn whitened_delay(reference: &[f64], test: &[f64]) -> Option<DelayFound> {
    if reference.is_empty() || test.is_empty() {
        return None;
    }
    let size = (reference.len() + test.len()).next_power_of_two();
    let mut planner = FftPlanner::<f64>::new();
    let padded = |x: &[f64]| {
        let mut v = vec![Complex64::new(0.0, 0.0); size];
        for (c, &s) in v.iter_mut().zip(x) {
            c.re = s;
        }
        v
    };
    let (mut r, mut t) = (padded(reference), padded(test));
    let forward = planner.plan_fft_forward(size);
    forward.process(&mut r);
    forward.process(&mut t);
    let mut cross: Vec<Complex64> = t.iter().zip(&r).map(|(t, r)| t * r.conj()).collect();
    let largest = cross.iter().fold(0.0f64, |m, c| m.max(c.norm()));
    if largest <= 0.0 {
        return None;
    }
    for c in cross.iter_mut() {
        let n = c.norm();
        *c = if n > SILENT_BIN * largest {
            *c / n
        } else {
            Complex64::new(0.0, 0.0)
        };
    }
    planner.plan_fft_inverse(size).process(&mut cross);
    let lags = &cross[..test.len().min(size)];
    let (peak_lag, peak) = lags.iter().enumerate().fold((0, 0.0f64), |(i, m), (k, c)| {
        if c.re.abs() > m {
            (k, c.re.abs())
        } else {
            (i, m)
        }
    });
    let rms = (lags.iter().map(|c| c.re * c.re).sum::<f64>() / lags.len() as f64).sqrt();
    Some(DelayFound {
        peak_lag,
        prominence_db: 20.0 * (peak / rms).log10(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — a steady tone plus a little noise, delayed by 137 frames and
    // filtered by an echo: the plain correlation of a tone peaks every period, the whitened
    // one at the delay only.
    #[test]
    fn finds_the_delay_of_tonal_programme() {
        let mut state: u64 = 0x9e37_79b9_7f4a_7c15;
        let reference: Vec<f64> = (0..24_000)
            .map(|n| {
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                let noise = (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5;
                (std::f64::consts::TAU * 440.0 * n as f64 / 48_000.0).sin() + 0.01 * noise
            })
            .collect();
        let mut test = vec![0.0; 137];
        test.extend(
            (0..reference.len())
                .map(|n| reference[n] + if n >= 5 { 0.3 * reference[n - 5] } else { 0.0 }),
        );
        let found = whitened_delay(&reference, &test).unwrap();
        assert_eq!(found.peak_lag, 137);
        assert!(
            found.prominence_db > MIN_PROMINENCE_DB,
            "{}",
            found.prominence_db
        );
    }
}
