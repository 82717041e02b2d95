//! The band a path's per-band figures are judged in.
//!
//! Placeholder: until a path can name the band it is corrected in (the correction band of the
//! band-limited designs), every path is judged from 20 Hz up to the lower of 20 kHz and 0.9 of
//! the Nyquist frequency (the usual audio band, kept clear of the top where converters' own
//! filters roll off). This is the one place that choice is made, so the correction band replaces
//! it here.

use crate::model::InversePolicy;

/// Lowest frequency judged (Hz): the bottom of the audio band (common practice).
pub const JUDGED_LOW_HZ: f64 = 20.0;
/// Highest frequency judged (Hz) when the Nyquist frequency allows (common practice).
pub const JUDGED_HIGH_HZ: f64 = 20_000.0;
/// Share of the Nyquist frequency judged at most.
pub const JUDGED_NYQUIST_SHARE: f64 = 0.9;

/// (low, high) in Hz for a path with this policy at this sample rate.
pub fn judged_band(_policy: &InversePolicy, sample_rate: f64) -> (f64, f64) {
    (
        JUDGED_LOW_HZ,
        JUDGED_HIGH_HZ.min(JUDGED_NYQUIST_SHARE * sample_rate / 2.0),
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
}
