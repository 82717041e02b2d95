//! FFT-based correlation and spectra for the measurement stage.
//!
//! Signals here run to millions of samples and lags to hundreds of thousands, so sums over every
//! lag are done in the frequency domain (O(N log N)) rather than directly (O(N·lags)).

use rustfft::num_complex::Complex;
use rustfft::FftPlanner;

/// Cross-correlation `c[k] = Σₙ x[n]·z[n − k]` for `k` from `−max_negative` to `max_positive`,
/// returned as (values for k = 0, 1, …, max_positive; values for k = −1, −2, …, −max_negative).
/// Samples outside either signal count as zero.
pub(crate) fn cross_correlation(
    x: &[f64],
    z: &[f64],
    max_positive: usize,
    max_negative: usize,
) -> (Vec<f64>, Vec<f64>) {
    if x.is_empty() || z.is_empty() {
        return (vec![0.0; max_positive + 1], vec![0.0; max_negative]);
    }
    // No wrap-around: the transform must hold every lag that can be non-zero.
    let size = (x.len() + z.len()).next_power_of_two();
    let mut planner = FftPlanner::<f64>::new();
    let forward = planner.plan_fft_forward(size);
    let inverse = planner.plan_fft_inverse(size);
    let mut fx = padded(x, size);
    let mut fz = padded(z, size);
    forward.process(&mut fx);
    forward.process(&mut fz);
    for (a, b) in fx.iter_mut().zip(&fz) {
        *a *= b.conj();
    }
    inverse.process(&mut fx);
    let scale = 1.0 / size as f64;
    // Lag k sits at index k; lag −k at index size − k.
    let positive = (0..=max_positive)
        .map(|k| if k < size { fx[k].re * scale } else { 0.0 })
        .collect();
    let negative = (1..=max_negative)
        .map(|k| {
            if k < size {
                fx[size - k].re * scale
            } else {
                0.0
            }
        })
        .collect();
    (positive, negative)
}

/// Linear convolution of `x` and `h` (length `x.len() + h.len() − 1`).
pub(crate) fn convolve(x: &[f64], h: &[f64]) -> Vec<f64> {
    if x.is_empty() || h.is_empty() {
        return Vec::new();
    }
    let length = x.len() + h.len() - 1;
    let size = length.next_power_of_two();
    let mut planner = FftPlanner::<f64>::new();
    let forward = planner.plan_fft_forward(size);
    let inverse = planner.plan_fft_inverse(size);
    let mut fx = padded(x, size);
    let mut fh = padded(h, size);
    forward.process(&mut fx);
    forward.process(&mut fh);
    for (a, b) in fx.iter_mut().zip(&fh) {
        *a *= b;
    }
    inverse.process(&mut fx);
    let scale = 1.0 / size as f64;
    fx[..length].iter().map(|c| c.re * scale).collect()
}

/// Averaged power spectrum (Welch's method: Hann-windowed frames of `frame` samples, half
/// overlapping), bins 0 ..= frame/2. Each bin is the mean of |X(k)|² over the frames.
pub(crate) fn welch_power(signal: &[f64], frame: usize) -> Vec<f64> {
    let bins = frame / 2 + 1;
    let mut power = vec![0.0; bins];
    if frame < 2 || signal.len() < frame {
        return power;
    }
    let window: Vec<f64> = (0..frame)
        .map(|n| 0.5 - 0.5 * (std::f64::consts::TAU * n as f64 / frame as f64).cos())
        .collect();
    let mut planner = FftPlanner::<f64>::new();
    let fft = planner.plan_fft_forward(frame);
    let hop = frame / 2;
    let mut frames = 0usize;
    let mut buffer = vec![Complex::new(0.0, 0.0); frame];
    let mut start = 0;
    while start + frame <= signal.len() {
        for (slot, (x, w)) in buffer
            .iter_mut()
            .zip(signal[start..start + frame].iter().zip(&window))
        {
            *slot = Complex::new(x * w, 0.0);
        }
        fft.process(&mut buffer);
        for (p, c) in power.iter_mut().zip(&buffer) {
            *p += c.norm_sqr();
        }
        frames += 1;
        start += hop;
    }
    for p in &mut power {
        *p /= frames as f64;
    }
    power
}

/// |X(k)|² of `x` zero-padded to `size` (at least its length), bins 0 ..= size/2.
pub(crate) fn power_spectrum(x: &[f64], size: usize) -> Vec<f64> {
    let size = size.max(x.len()).max(2);
    let mut buffer = padded(x, size);
    FftPlanner::<f64>::new()
        .plan_fft_forward(size)
        .process(&mut buffer);
    buffer[..=size / 2].iter().map(|c| c.norm_sqr()).collect()
}

/// X(k) of `x` zero-padded to `size` (at least its length), bins 0 ..= size/2.
pub(crate) fn complex_spectrum(x: &[f64], size: usize) -> Vec<Complex<f64>> {
    let size = size.max(x.len()).max(2);
    let mut buffer = padded(x, size);
    FftPlanner::<f64>::new()
        .plan_fft_forward(size)
        .process(&mut buffer);
    buffer.truncate(size / 2 + 1);
    buffer
}

/// `values` (one per bin, bins `bin_hz` apart from 0 Hz) at `hz`, by linear interpolation
/// between the two bins around it; 0 beyond the last bin.
pub(crate) fn interpolate_bins(values: &[f64], bin_hz: f64, hz: f64) -> f64 {
    let position = hz / bin_hz;
    let below = position.floor() as usize;
    match (values.get(below), values.get(below + 1)) {
        (Some(&a), Some(&b)) => a + (b - a) * (position - below as f64),
        (Some(&a), None) => a,
        _ => 0.0,
    }
}

fn padded(x: &[f64], size: usize) -> Vec<Complex<f64>> {
    let mut v: Vec<Complex<f64>> = x.iter().map(|&r| Complex::new(r, 0.0)).collect();
    v.resize(size, Complex::new(0.0, 0.0));
    v
}

#[cfg(test)]
mod tests {
    use super::*;

    fn direct(x: &[f64], z: &[f64], k: isize) -> f64 {
        // Σ x[n] z[n − k], the definition written out (common practice).
        (0..x.len() as isize)
            .filter_map(|n| {
                let m = n - k;
                (m >= 0 && (m as usize) < z.len()).then(|| x[n as usize] * z[m as usize])
            })
            .sum()
    }

    #[test]
    fn correlation_matches_the_direct_sum() {
        let x: Vec<f64> = (0..37).map(|n| ((n * 7 % 11) as f64 - 5.0) / 3.0).collect();
        let z: Vec<f64> = (0..23).map(|n| ((n * 5 % 13) as f64 - 6.0) / 4.0).collect();
        let (pos, neg) = cross_correlation(&x, &z, 40, 25);
        for (k, v) in pos.iter().enumerate() {
            assert!((v - direct(&x, &z, k as isize)).abs() < 1e-9, "lag {k}");
        }
        for (i, v) in neg.iter().enumerate() {
            let k = -(i as isize + 1);
            assert!((v - direct(&x, &z, k)).abs() < 1e-9, "lag {k}");
        }
    }

    #[test]
    fn convolution_matches_the_direct_sum() {
        let x = [1.0, -2.0, 0.5, 3.0];
        let h = [0.25, 0.5, -1.0];
        let y = convolve(&x, &h);
        let expected = [0.25, 0.0, -1.875, 3.0, 1.0, -3.0];
        for (a, b) in y.iter().zip(expected) {
            assert!((a - b).abs() < 1e-12);
        }
    }

    #[test]
    fn white_noise_spectrum_is_flat() {
        // A unit-variance white sequence has a flat power spectrum (common practice); with a
        // Hann window the mean bin power is frame · Σw²/frame = 3·frame/8.
        let mut noise = super::super::noise::GaussianNoise::new(5);
        let x: Vec<f64> = (0..1 << 16).map(|_| noise.sample()).collect();
        let p = welch_power(&x, 256);
        let expected = 3.0 * 256.0 / 8.0;
        let mean: f64 = p[10..120].iter().sum::<f64>() / 110.0;
        assert!((mean / expected - 1.0).abs() < 0.05, "{mean} vs {expected}");
    }
}
