//! Device sample formats the live layer runs, and their conversion to and from the engine's f32.
//!
//! The engine works in f32 with full scale at ±1.0. Integer devices are scaled by 2^(bits−1)
//! (common practice, the same scale ALSA's own plug converter uses): −32768 ↦ −1.0 exactly, and
//! on the way out values are rounded to the nearest integer and clamped, since +1.0 has no
//! integer counterpart. Non-finite values never reach a device (the engine's clip guard zeroes
//! them); the conversion still maps NaN to silence rather than to an arbitrary code.
//!
//! 24-bit devices are run as the backend's 24-bit-in-32 samples (ALSA `S24_LE`); cpal does not
//! open the packed three-byte layout (`S24_3LE`), so a device that has only that is reached
//! through ALSA's `plughw:` device, which converts. 16-bit output is dithered
//! ([`super::dither`]).

use std::fmt;

use super::dither::TpdfDither;

/// A sample format the live layer can open a device with, in order of preference.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum DeviceFormat {
    F32,
    I32,
    I24,
    I16,
}

impl DeviceFormat {
    /// Formats tried when a device offers several: float first (no conversion), then the
    /// integers from the widest down (the finest steps; 16 bits last, as it needs dither).
    pub const PREFERENCE: [DeviceFormat; 4] = [
        DeviceFormat::F32,
        DeviceFormat::I32,
        DeviceFormat::I24,
        DeviceFormat::I16,
    ];

    pub(crate) fn to_cpal(self) -> cpal::SampleFormat {
        match self {
            DeviceFormat::F32 => cpal::SampleFormat::F32,
            DeviceFormat::I16 => cpal::SampleFormat::I16,
            DeviceFormat::I32 => cpal::SampleFormat::I32,
            DeviceFormat::I24 => cpal::SampleFormat::I24,
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
            DeviceFormat::I24 => "24-bit integer (in 32 bits)",
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
    /// `from_f32` with dither where the format needs it (16 bits: TPDF of ±1 LSB); the wider
    /// formats ignore `dither`.
    #[inline]
    fn from_f32_dithered(value: f32, dither: &mut TpdfDither) -> Self {
        let _ = dither;
        Self::from_f32(value)
    }
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

    #[inline]
    fn from_f32_dithered(value: f32, dither: &mut TpdfDither) -> Self {
        // In steps: the dither is added where the rounding happens, in f32 (exact enough: a
        // step is 2⁻¹⁵ of full scale, f32 carries 24 bits).
        (value * 32_768.0 + dither.next_lsb()).round() as i16
    }
}

impl DeviceSample for cpal::I24 {
    const FORMAT: DeviceFormat = DeviceFormat::I24;
    const SILENCE: Self = <cpal::I24 as cpal::Sample>::EQUILIBRIUM;

    #[inline]
    fn to_f32(self) -> f32 {
        // 24 bits fit f32's significand: exact.
        self.inner() as f32 / 8_388_608.0
    }

    #[inline]
    fn from_f32(value: f32) -> Self {
        let code = (f64::from(value) * 8_388_608.0).round();
        // NaN maps to 0 through `as`; the clamp keeps the code inside 24 bits.
        cpal::I24::new_unchecked((code as i32).clamp(-8_388_608, 8_388_607))
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
        assert_eq!(cpal::I24::new_unchecked(-8_388_608).to_f32(), -1.0);
        assert_eq!(cpal::I24::new_unchecked(1).to_f32(), 1.0 / 8_388_608.0);
        assert_eq!(cpal::I24::from_f32(0.5).inner(), 4_194_304);
    }

    #[test]
    fn out_of_range_and_nan_saturate_instead_of_wrapping() {
        assert_eq!(i16::from_f32(1.0), i16::MAX);
        assert_eq!(i16::from_f32(-3.0), i16::MIN);
        assert_eq!(i16::from_f32(f32::NAN), 0);
        assert_eq!(i32::from_f32(2.0), i32::MAX);
        assert_eq!(i32::from_f32(f32::NAN), 0);
        assert_eq!(cpal::I24::from_f32(1.0).inner(), 8_388_607);
        assert_eq!(cpal::I24::from_f32(-2.0).inner(), -8_388_608);
        assert_eq!(cpal::I24::from_f32(f32::NAN).inner(), 0);
    }

    #[test]
    fn every_i16_code_survives_a_round_trip() {
        for code in i16::MIN..=i16::MAX {
            assert_eq!(i16::from_f32(code.to_f32()), code);
        }
    }

    #[test]
    fn every_i24_code_survives_a_round_trip() {
        for code in (-8_388_608..=8_388_607).step_by(7) {
            let sample = cpal::I24::new_unchecked(code);
            assert_eq!(cpal::I24::from_f32(sample.to_f32()).inner(), code);
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
        assert_eq!(
            <cpal::I24 as DeviceSample>::FORMAT.to_cpal(),
            <cpal::I24 as cpal::SizedSample>::FORMAT
        );
    }
}
