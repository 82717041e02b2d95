//! Impulse responses of B(z)/A(z), computed straight from the difference equation.

/// The first `length` samples of the impulse response of B(z)/A(z) (a[0] ≠ 0).
pub fn impulse_response(b: &[f64], a: &[f64], length: usize) -> Vec<f64> {
    let mut h = vec![0.0; length];
    for n in 0..length {
        let mut acc = b.get(n).copied().unwrap_or(0.0);
        for k in 1..a.len().min(n + 1) {
            acc -= a[k] * h[n - k];
        }
        h[n] = acc / a[0];
    }
    h
}

/// The impulse response of a stable B(z)/A(z), long enough that what is cut off is negligible:
/// it stops once the last 64 samples are all below 1e-12 of the largest, or at `max_length`.
pub fn decayed_impulse_response(b: &[f64], a: &[f64], max_length: usize) -> Vec<f64> {
    if a.len() <= 1 {
        let mut h: Vec<f64> = b.iter().map(|x| x / a[0]).collect();
        h.truncate(max_length);
        return h;
    }
    let mut length = (4 * b.len().max(a.len())).max(256).min(max_length);
    loop {
        let h = impulse_response(b, a, length);
        let peak = h.iter().fold(0.0_f64, |m, x| m.max(x.abs()));
        let tail = h[length.saturating_sub(64)..]
            .iter()
            .fold(0.0_f64, |m, x| m.max(x.abs()));
        if tail <= 1e-12 * peak || length >= max_length {
            let end = h
                .iter()
                .rposition(|x| x.abs() > 1e-12 * peak)
                .map_or(1, |p| p + 1);
            return h[..end].to_vec();
        }
        length = (length * 2).min(max_length);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — 1/(1 − 0.5z⁻¹) has impulse response 0.5ⁿ.
    #[test]
    fn one_pole() {
        let h = impulse_response(&[1.0], &[1.0, -0.5], 10);
        for (n, v) in h.iter().enumerate() {
            assert!((v - 0.5f64.powi(n as i32)).abs() < 1e-15);
        }
        let d = decayed_impulse_response(&[1.0], &[1.0, -0.5], 10_000);
        assert!(d.len() > 35 && d.len() < 60, "{}", d.len());
    }
}
