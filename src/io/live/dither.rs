//! TPDF dither for devices that take 16-bit samples.
//!
//! Rounding the engine's f32 output to 16 bits leaves an error that follows the signal: quiet
//! passages and fade tails turn into distortion, and a signal under half a step vanishes. Adding
//! dither with a triangular probability density (the difference of two independent uniform
//! numbers, so it lies in (−1, 1) LSB, mean 0, variance 1/6 LSB²) before rounding makes the
//! error's mean and power independent of the signal: the quantizer then behaves as the signal
//! plus a constant noise of 1/12 + 1/6 = 1/4 LSB², an RMS of half a step, −96.3 dBFS at 16 bits
//! (Lipshitz, Wannamaker and Vanderkooy, "Quantization and dither: a theoretical survey",
//! J. Audio Eng. Soc. 1992; the level is the standard one). Wider formats (24/32-bit integer,
//! float) are left undithered: their steps lie below any converter's own noise.

use crate::io::programme::SplitMix64;

/// Seed of every playback side's dither: any fixed value serves, and a fixed one keeps runs
/// repeatable.
const SEED: u64 = 0x7064_665f_6469_7468;

/// Triangular dither values, one per output sample, allocation-free.
#[derive(Debug, Clone)]
pub struct TpdfDither {
    random: SplitMix64,
}

impl Default for TpdfDither {
    fn default() -> Self {
        Self {
            random: SplitMix64::new(SEED),
        }
    }
}

impl TpdfDither {
    /// The next dither value, in steps (LSB) of the target format: in (−1, 1), triangular.
    #[inline]
    pub fn next_lsb(&mut self) -> f32 {
        (self.random.unit() - self.random.unit()) as f32
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::live::DeviceSample;

    const N: usize = 200_000;

    // Source: the TPDF definition (Lipshitz, Wannamaker and Vanderkooy 1992, from memory): the
    // difference of two independent uniform [0, 1) numbers has mean 0, variance 1/6 and lies
    // in (−1, 1). Sample mean within 4 standard errors (σ/√N ≈ 0.0009), variance within 2 %.
    #[test]
    fn the_dither_is_triangular_with_the_stated_level() {
        let mut d = TpdfDither::default();
        let xs: Vec<f64> = (0..N).map(|_| f64::from(d.next_lsb())).collect();
        let mean = xs.iter().sum::<f64>() / N as f64;
        let var = xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / N as f64;
        assert!(
            mean.abs() < 4.0 * (1.0f64 / 6.0).sqrt() / (N as f64).sqrt(),
            "{mean}"
        );
        assert!((var - 1.0 / 6.0).abs() < 0.02 / 6.0, "{var}");
        assert!(xs.iter().all(|x| x.abs() < 1.0));
        // Triangular, not uniform: a quarter of the mass lies beyond ±0.5 LSB (uniform on
        // (−1, 1) would put half there).
        let outer = xs.iter().filter(|x| x.abs() > 0.5).count() as f64 / N as f64;
        assert!((outer - 0.25).abs() < 0.01, "{outer}");
    }

    /// A sine of `amplitude` LSB at 1 kHz, 48 kHz, quantized to i16 with or without dither;
    /// returns (amplitude found by correlation, error power in LSB²).
    fn quantize_sine(amplitude: f64, dither: bool) -> (f64, f64) {
        let lsb = 1.0 / 32_768.0;
        let mut d = TpdfDither::default();
        let (mut dot, mut error) = (0.0, 0.0);
        for n in 0..N {
            let phase = std::f64::consts::TAU * 1000.0 * n as f64 / 48_000.0;
            let x = (amplitude * lsb * phase.sin()) as f32;
            let code = match dither {
                true => i16::from_f32_dithered(x, &mut d),
                false => i16::from_f32(x),
            };
            let y = f64::from(code.to_f32());
            dot += y * phase.sin();
            error += ((y - f64::from(x)) / lsb).powi(2);
        }
        (2.0 * dot / N as f64 / lsb, error / N as f64)
    }

    // Source: same survey — with TPDF dither the quantizer's mean output equals its input (a
    // signal under half a step survives, as a sine in noise) and the total error power is
    // 1/12 + 1/6 = 1/4 LSB² whatever the signal; plain rounding turns that sine into silence.
    #[test]
    fn a_sine_below_half_a_step_survives_dithered_and_vanishes_without() {
        let (found, error) = quantize_sine(0.4, true);
        assert!((found - 0.4).abs() < 0.02, "amplitude {found} LSB");
        assert!((error - 0.25).abs() < 0.01, "error power {error} LSB²");
        let (plain, _) = quantize_sine(0.4, false);
        assert_eq!(plain, 0.0);
        // A louder sine: the same error power (signal-independent).
        let (found, error) = quantize_sine(1000.3, true);
        assert!((found - 1000.3).abs() < 0.02, "amplitude {found} LSB");
        assert!((error - 0.25).abs() < 0.01, "error power {error} LSB²");
    }
}
