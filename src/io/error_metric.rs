//! How far a signal is from a reference, in dB.
//!
//! The measure is the ratio of the error's energy to the reference's energy:
//!
//! ```text
//!                 Σ (x[n] − r[n − D])²
//! error_dB = 10·log10 ─────────────────────
//!                 Σ r[n − D]²
//! ```
//!
//! summed over every channel and every frame n from `skip` up to the end of the shorter of the two
//! (the reference counted as D frames longer), with r[m] = 0 for m < 0. D may differ per channel
//! ([`error_db_per_channel`]). D is the delay the
//! inverse cannot undo (the link's bulk delay): the equalized signal is at best the reference
//! delayed by D. `skip` leaves out a start-up stretch, e.g. while a filter's state fills.
//!
//! 0 dB means the error is as large as the signal itself; −20 dB means the error carries 1 % of
//! the signal's energy; a perfect match is −∞ dB. Because the ratio is of energies over the whole
//! window, a short loud error and a long quiet one of equal energy score the same.

use std::fmt;

/// The result of a comparison.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ErrorMeasure {
    /// 10·log10(error energy / reference energy); −∞ when the two match exactly.
    pub db: f64,
    /// Frames compared (per channel; the most of any channel when their delays differ).
    pub frames: usize,
    pub error_energy: f64,
    pub reference_energy: f64,
}

/// Why a comparison could not be made.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum MetricError {
    /// A slice is not a whole number of frames, or the channel count is zero.
    PartialFrame { samples: usize, channels: usize },
    /// Nothing is left to compare after the delay and skip.
    NothingToCompare {
        test_frames: usize,
        reference_frames: usize,
        delay: usize,
        skip: usize,
    },
    /// The reference is silent over the compared stretch, so no ratio exists.
    SilentReference,
}

impl fmt::Display for MetricError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            MetricError::PartialFrame { samples, channels } => write!(
                f,
                "{samples} samples are not a whole number of {channels}-channel frames"
            ),
            MetricError::NothingToCompare {
                test_frames,
                reference_frames,
                delay,
                skip,
            } => write!(
                f,
                "nothing to compare: the signal has {test_frames} frames and the reference \
                 {reference_frames}, with a delay of {delay} and {skip} frames skipped\n  help: \
                 lower the delay or the skip"
            ),
            MetricError::SilentReference => write!(
                f,
                "the reference is silent over the compared frames, so the error has no scale\n  \
                 help: compare over a stretch where the reference carries signal (lower --skip)"
            ),
        }
    }
}

impl std::error::Error for MetricError {}

/// Compares interleaved `test` against interleaved `reference` (both `channels` wide), the
/// reference delayed by `delay` frames, leaving out the first `skip` frames.
pub fn error_db(
    test: &[f32],
    reference: &[f32],
    channels: usize,
    delay: usize,
    skip: usize,
) -> Result<ErrorMeasure, MetricError> {
    error_db_per_channel(test, reference, &vec![delay; channels], skip)
}

/// As [`error_db`], with a delay of its own for each channel (`delays.len()` channels), for
/// links whose paths have different bulk delays. Channel c is compared over frames
/// `skip .. min(test frames, reference frames + delays[c])`.
pub fn error_db_per_channel(
    test: &[f32],
    reference: &[f32],
    delays: &[usize],
    skip: usize,
) -> Result<ErrorMeasure, MetricError> {
    let channels = delays.len();
    for samples in [test.len(), reference.len()] {
        if channels == 0 || samples % channels != 0 {
            return Err(MetricError::PartialFrame { samples, channels });
        }
    }
    let test_frames = test.len() / channels;
    let reference_frames = reference.len() / channels;
    let mut error_energy = 0.0f64;
    let mut reference_energy = 0.0f64;
    let mut frames = 0;
    for (c, &delay) in delays.iter().enumerate() {
        let end = test_frames.min(reference_frames.saturating_add(delay));
        if skip >= end {
            return Err(MetricError::NothingToCompare {
                test_frames,
                reference_frames,
                delay,
                skip,
            });
        }
        frames = frames.max(end - skip);
        for n in skip..end {
            let x = f64::from(test[n * channels + c]);
            let r = if n >= delay {
                f64::from(reference[(n - delay) * channels + c])
            } else {
                0.0
            };
            error_energy += (x - r) * (x - r);
            reference_energy += r * r;
        }
    }
    if reference_energy == 0.0 {
        return Err(MetricError::SilentReference);
    }
    Ok(ErrorMeasure {
        db: 10.0 * (error_energy / reference_energy).log10(),
        frames,
        error_energy,
        reference_energy,
    })
}

/// "-87.3 dB", or "-∞ dB (identical)" for an exact match (ASCII minus, as everywhere in
/// redress's output).
pub fn format_db(db: f64) -> String {
    if db == f64::NEG_INFINITY {
        "-∞ dB (identical)".to_string()
    } else {
        format!("{db:.1} dB")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn half_amplitude_error_is_minus_six_db() {
        // An error of half the signal's amplitude carries a quarter of its energy:
        // 10·log10(0.25) = −6.02 dB (common practice).
        let reference: Vec<f32> = (0..1000).map(|n| (n as f32 * 0.1).sin()).collect();
        let test: Vec<f32> = reference.iter().map(|x| 0.5 * x).collect();
        let measure = error_db(&test, &reference, 1, 0, 0).unwrap();
        assert!(
            (measure.db - 10.0 * 0.25f64.log10()).abs() < 1e-9,
            "{}",
            measure.db
        );
        assert_eq!(measure.frames, 1000);
    }

    #[test]
    fn delay_lines_the_reference_up() {
        let reference: Vec<f32> = (0..2 * 500)
            .map(|n| ((n * 7919) % 13) as f32 - 6.0)
            .collect();
        let mut test = vec![0.0f32; 2 * 3];
        test.extend_from_slice(&reference);
        let measure = error_db(&test, &reference, 2, 3, 0).unwrap();
        assert_eq!(measure.db, f64::NEG_INFINITY);
        // Without the delay the two do not line up.
        assert!(error_db(&test, &reference, 2, 0, 0).unwrap().db > -3.0);
        assert_eq!(format_db(measure.db), "-∞ dB (identical)");
    }

    #[test]
    fn each_channel_may_have_its_own_delay() {
        // Left delayed by 1, right by 4: lined up per channel the match is exact.
        let reference: Vec<f32> = (0..2 * 50).map(|n| ((n * 31) % 7) as f32 - 3.0).collect();
        let mut test = vec![0.0f32; 2 * 60];
        for n in 0..50 {
            test[(n + 1) * 2] = reference[n * 2];
            test[(n + 4) * 2 + 1] = reference[n * 2 + 1];
        }
        let measure = error_db_per_channel(&test, &reference, &[1, 4], 0).unwrap();
        assert_eq!(measure.db, f64::NEG_INFINITY);
        assert!(error_db(&test, &reference, 2, 1, 0).unwrap().db > -10.0);
    }

    #[test]
    fn skip_leaves_out_the_start() {
        let reference = vec![1.0f32; 100];
        let mut test = reference.clone();
        test[..10].fill(0.0);
        let with_start = error_db(&test, &reference, 1, 0, 0).unwrap();
        assert!((with_start.db - 10.0 * 0.1f64.log10()).abs() < 1e-9);
        let skipped = error_db(&test, &reference, 1, 0, 10).unwrap();
        assert_eq!(skipped.db, f64::NEG_INFINITY);
        assert_eq!(skipped.frames, 90);
    }

    #[test]
    fn refuses_what_cannot_be_compared() {
        let signal = vec![0.5f32; 10];
        assert!(matches!(
            error_db(&signal, &signal, 1, 0, 10),
            Err(MetricError::NothingToCompare { .. })
        ));
        assert!(matches!(
            error_db(&signal, &[0.0; 10], 1, 0, 0),
            Err(MetricError::SilentReference)
        ));
        assert!(matches!(
            error_db(&signal, &signal, 3, 0, 0),
            Err(MetricError::PartialFrame { .. })
        ));
        assert_eq!(format_db(-87.34), "-87.3 dB");
    }
}
