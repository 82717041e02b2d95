//! The band a path's per-band figures are judged in: its correction band (what the inverse is
//! asked to correct), kept inside the audio band from 20 Hz to 20 kHz, since a fractional-octave
//! figure below or above it (or from 0 Hz, where a whole-axis band starts) judges nothing a
//! listener hears. Under the default correction band this is 20 Hz up to the lower of 20 kHz and
//! 0.9 of the Nyquist frequency.

use super::correction_band;
use crate::model::InversePolicy;

/// Lowest frequency judged (Hz): the bottom of the audio band (common practice).
pub const JUDGED_LOW_HZ: f64 = 20.0;
/// Highest frequency judged (Hz) when the correction band reaches it (common practice).
pub const JUDGED_HIGH_HZ: f64 = 20_000.0;

/// (low, high) in Hz for a path with this policy at this sample rate.
pub fn judged_band(policy: &InversePolicy, sample_rate: f64) -> (f64, f64) {
    let band = correction_band(policy, sample_rate);
    (
        band.low_hz.max(JUDGED_LOW_HZ),
        band.high_hz.min(JUDGED_HIGH_HZ),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn audio_band_below_nine_tenths_of_nyquist() {
        let p = InversePolicy::default();
        assert_eq!(judged_band(&p, 48_000.0), (20.0, 20_000.0));
        let (low, high) = judged_band(&p, 16_000.0);
        assert_eq!(low, 20.0);
        assert!((high - 7_200.0).abs() < 1e-9);
    }

    #[test]
    fn a_configured_band_is_judged_inside_the_audio_band() {
        let with_band = |low_hz, high_hz| InversePolicy {
            correction_band_hz: Some(crate::model::BandEdges { low_hz, high_hz }),
            ..InversePolicy::default()
        };
        assert_eq!(
            judged_band(&with_band(0.0, 24_000.0), 48_000.0),
            (20.0, 20_000.0)
        );
        assert_eq!(
            judged_band(&with_band(100.0, 8_000.0), 48_000.0),
            (100.0, 8_000.0)
        );
    }
}
