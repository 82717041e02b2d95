//! Device sample formats the live layer runs, and their conversion to and from the engine's f32.
//!
//! The engine works in f32 with full scale at ±1.0. Integer devices are scaled by 2^(bits−1)
//! (common practice, the same scale ALSA's own plug converter uses): −32768 ↦ −1.0 exactly, and
//! on the way out values are rounded to the nearest integer and clamped, since +1.0 has no
//! integer counterpart. Non-finite values never reach a device (the engine's clip guard zeroes
//! them); the conversion still maps NaN to silence rather than to an arbitrary code.

use std::fmt;

/// A sample format the live layer can open a device with, in order of preference.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum DeviceFormat {
    F32,
    I16,
    I32,
}

impl DeviceFormat {
    /// Formats tried when a device offers several: float first (no conversion), then the
    /// integer widths devices most often have.
    pub const PREFERENCE: [DeviceFormat; 3] =
        [DeviceFormat::F32, DeviceFormat::I16, DeviceFormat::I32];

    pub(crate) fn to_cpal(self) -> cpal::SampleFormat {
        match self {
            DeviceFormat::F32 => cpal::SampleFormat::F32,
            DeviceFormat::I16 => cpal::SampleFormat::I16,
            DeviceFormat::I32 => cpal::SampleFormat::I32,
        }
    }

    pub(crate) fn from_cpal(format: cpal::SampleFormat) -> Option<Self> {
        Self::PREFERENCE.into_iter().find(|f| f.to_cpal() == format)
    }
}

impl fmt::Display for DeviceFormat {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            DeviceFormat::F32 => "32-bit float",
            DeviceFormat::I16 => "16-bit integer",
            DeviceFormat::I32 => "32-bit integer",
        })
    }
}

/// A device sample type: converts to and from the engine's f32 without allocating.
pub trait DeviceSample: cpal::SizedSample + Send + 'static {
    const FORMAT: DeviceFormat;
    /// The value a device plays as silence.
    const SILENCE: Self;
    fn to_f32(self) -> f32;
    fn from_f32(value: f32) -> Self;
}

impl DeviceSample for f32 {
    const FORMAT: DeviceFormat = DeviceFormat::F32;
    const SILENCE: Self = 0.0;

    #[inline]
    fn to_f32(self) -> f32 {
        self
    }

    #[inline]
    fn from_f32(value: f32) -> Self {
        value
    }
}

impl DeviceSample for i16 {
    const FORMAT: DeviceFormat = DeviceFormat::I16;
    const SILENCE: Self = 0;

    #[inline]
    fn to_f32(self) -> f32 {
        f32::from(self) / 32_768.0
    }

    #[inline]
    fn from_f32(value: f32) -> Self {
        // `as` saturates and maps NaN to 0.
        (value * 32_768.0).round() as i16
    }
}

impl DeviceSample for i32 {
    const FORMAT: DeviceFormat = DeviceFormat::I32;
    const SILENCE: Self = 0;

    #[inline]
    fn to_f32(self) -> f32 {
        // Through f64: i32 → f64 is exact, the one rounding is to f32.
        (f64::from(self) / 2_147_483_648.0) as f32
    }

    #[inline]
    fn from_f32(value: f32) -> Self {
        (f64::from(value) * 2_147_483_648.0).round() as i32
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice (ALSA plug / libsndfile scaling): full-scale negative integer is
    // exactly −1.0, one LSB of i16 is 2⁻¹⁵.
    #[test]
    fn integer_scale_matches_the_usual_full_scale() {
        assert_eq!(i16::MIN.to_f32(), -1.0);
        assert_eq!(1i16.to_f32(), 1.0 / 32_768.0);
        assert_eq!(i32::MIN.to_f32(), -1.0);
        assert_eq!(i16::from_f32(0.5), 16_384);
        assert_eq!(i32::from_f32(-0.25), -536_870_912);
    }

    #[test]
    fn out_of_range_and_nan_saturate_instead_of_wrapping() {
        assert_eq!(i16::from_f32(1.0), i16::MAX);
        assert_eq!(i16::from_f32(-3.0), i16::MIN);
        assert_eq!(i16::from_f32(f32::NAN), 0);
        assert_eq!(i32::from_f32(2.0), i32::MAX);
        assert_eq!(i32::from_f32(f32::NAN), 0);
    }

    #[test]
    fn every_i16_code_survives_a_round_trip() {
        for code in i16::MIN..=i16::MAX {
            assert_eq!(i16::from_f32(code.to_f32()), code);
        }
    }

    #[test]
    fn formats_map_to_and_from_the_backend() {
        for f in DeviceFormat::PREFERENCE {
            assert_eq!(DeviceFormat::from_cpal(f.to_cpal()), Some(f));
        }
        assert_eq!(DeviceFormat::from_cpal(cpal::SampleFormat::U8), None);
        assert_eq!(
            <i16 as DeviceSample>::FORMAT.to_cpal(),
            <i16 as cpal::SizedSample>::FORMAT
        );
    }
}
