//! The minimum-phase sequence with a given magnitude, by the homomorphic (cepstral) route.
//!
//! ln|X(e^{jω})| is the Fourier transform of the real cepstrum ĉ[n]; the minimum-phase sequence
//! with that magnitude has the complex cepstrum that keeps ĉ[0], doubles ĉ[n] for n > 0 and
//! drops n < 0 (Oppenheim & Schafer, "Discrete-Time Signal Processing", homomorphic chapter,
//! from memory). Exponentiating its transform and transforming back gives the sequence. No
//! root is computed, so nothing is multiplied back out of hundreds of factors.
//!
//! On an FFT grid of M points the cepstrum is aliased: a zero at radius r contributes rⁿ/n to
//! ĉ[n], so M must grow as zeros near the circle. [`minimum_phase`] doubles M until the result
//! stops changing (to [`CONVERGED`] of its largest coefficient), the accuracy stated.

use rustfft::num_complex::Complex64;
use rustfft::FftPlanner;

/// Relative change between two FFT sizes under which the result counts as converged.
pub const CONVERGED: f64 = 1e-9;
/// Largest FFT tried (points over the whole circle).
pub const MAX_FFT: usize = 1 << 22;

/// A minimum-phase sequence and the FFT size that reached it.
#[derive(Debug, Clone, PartialEq)]
pub struct MinimumPhase {
    pub coefficients: Vec<f64>,
    pub fft_size: usize,
    /// Largest change of a coefficient from the previous FFT size, relative to the largest.
    pub last_change: f64,
}

/// The first `length` samples of the minimum-phase sequence whose magnitude on the circle is
/// `magnitude(size)` (|X| at ω = 2πi/size, i = 0 … size − 1, every value finite and > 0).
///
/// The FFT starts at `first_size` (a power of two) and doubles until two sizes agree to
/// [`CONVERGED`], or [`MAX_FFT`] is reached (then `last_change` says how far it got).
pub fn minimum_phase(
    length: usize,
    first_size: usize,
    magnitude: &dyn Fn(usize) -> Vec<f64>,
) -> MinimumPhase {
    let mut size = first_size
        .next_power_of_two()
        .max(2 * length.next_power_of_two());
    let mut previous = from_log_magnitude(&log_of(&magnitude(size)), length);
    loop {
        let next_size = size * 2;
        if next_size > MAX_FFT {
            return MinimumPhase {
                coefficients: previous,
                fft_size: size,
                last_change: f64::INFINITY,
            };
        }
        let next = from_log_magnitude(&log_of(&magnitude(next_size)), length);
        let scale = next.iter().fold(0.0f64, |m, x| m.max(x.abs()));
        let change = next
            .iter()
            .zip(&previous)
            .fold(0.0f64, |m, (x, y)| m.max((x - y).abs()))
            / scale.max(f64::MIN_POSITIVE);
        if change <= CONVERGED || next_size == MAX_FFT {
            return MinimumPhase {
                coefficients: next,
                fft_size: next_size,
                last_change: change,
            };
        }
        previous = next;
        size = next_size;
    }
}

fn log_of(magnitude: &[f64]) -> Vec<f64> {
    magnitude
        .iter()
        .map(|m| m.max(f64::MIN_POSITIVE).ln())
        .collect()
}

/// The minimum-phase sequence (first `length` samples) for ln|X| given on a full FFT grid.
pub fn from_log_magnitude(log_magnitude: &[f64], length: usize) -> Vec<f64> {
    let size = log_magnitude.len();
    let mut planner = FftPlanner::<f64>::new();
    let forward = planner.plan_fft_forward(size);
    let inverse = planner.plan_fft_inverse(size);
    let mut buffer: Vec<Complex64> = log_magnitude
        .iter()
        .map(|&v| Complex64::new(v, 0.0))
        .collect();
    inverse.process(&mut buffer);
    let scale = 1.0 / size as f64;
    // Fold the real cepstrum onto n ≥ 0: the minimum-phase complex cepstrum.
    let half = size / 2;
    for (n, c) in buffer.iter_mut().enumerate() {
        let weight = if n == 0 || n == half {
            1.0
        } else if n < half {
            2.0
        } else {
            0.0
        };
        *c = Complex64::new(c.re * scale * weight, 0.0);
    }
    forward.process(&mut buffer);
    for c in buffer.iter_mut() {
        *c = c.exp();
    }
    inverse.process(&mut buffer);
    buffer[..length.min(size)]
        .iter()
        .map(|c| c.re * scale)
        .collect()
}

/// |P(e^{jω})| at ω = 2πi/size for i = 0 … size − 1 (zero-padded FFT; `p` may be longer than
/// `size`, in which case it is wrapped, which samples the same z-transform on the grid).
pub fn magnitude_on_grid(p: &[f64], size: usize) -> Vec<f64> {
    spectrum_on_grid(p, size).iter().map(|c| c.norm()).collect()
}

/// P(e^{jω}) at ω = 2πi/size for i = 0 … size − 1.
pub fn spectrum_on_grid(p: &[f64], size: usize) -> Vec<Complex64> {
    let mut buffer = vec![Complex64::new(0.0, 0.0); size];
    for (k, &x) in p.iter().enumerate() {
        buffer[k % size].re += x;
    }
    FftPlanner::<f64>::new()
        .plan_fft_forward(size)
        .process(&mut buffer);
    buffer
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — 0.6 + 0.9z⁻¹ (zero at −1.5) has the minimum-phase twin
    // 0.9 + 0.6z⁻¹ (zero at −2/3), same magnitude.
    #[test]
    fn reflects_a_single_zero() {
        let b = [0.6, 0.9];
        let m = minimum_phase(2, 1 << 10, &|size| magnitude_on_grid(&b, size));
        assert!(m.last_change <= CONVERGED);
        assert!(
            (m.coefficients[0] - 0.9).abs() < 1e-12,
            "{:?}",
            m.coefficients
        );
        assert!(
            (m.coefficients[1] - 0.6).abs() < 1e-12,
            "{:?}",
            m.coefficients
        );
    }

    // Source: common practice — a minimum-phase sequence is its own minimum-phase version.
    #[test]
    fn keeps_a_minimum_phase_sequence() {
        let minimum = [1.0, -0.9, 0.2];
        let m = minimum_phase(3, 1 << 10, &|size| magnitude_on_grid(&minimum, size));
        for (x, y) in m.coefficients.iter().zip(minimum) {
            assert!((x - y).abs() < 1e-12);
        }
    }
}
