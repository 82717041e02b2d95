//! Frequency response of B(z)/A(z) on the unit circle, and the search for its peak.

use num_complex::Complex64;

use super::poly::eval_z_inverse;

/// H(e^{jω}) = B(e^{jω}) / A(e^{jω}) at normalised angular frequency ω (radians per sample).
pub fn response_at(b: &[f64], a: &[f64], omega: f64) -> Complex64 {
    let z = Complex64::from_polar(1.0, omega);
    eval_z_inverse(b, z) / eval_z_inverse(a, z)
}

/// |H(e^{jω})| in dB (20·log10). −∞ at an exact zero of B on the circle.
pub fn magnitude_db(b: &[f64], a: &[f64], omega: f64) -> f64 {
    20.0 * response_at(b, a, omega).norm().log10()
}

/// Where a response peaks: its level and frequency.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Peak {
    /// Level in dB.
    pub level_db: f64,
    /// Normalised angular frequency in radians per sample, in [0, π].
    pub omega: f64,
}

/// Largest |H(e^{jω})| over 0 ≤ ω ≤ π.
///
/// A dense grid finds the neighbourhood (at least 8 points per root, since a sharp resonance of
/// an order-n system cannot hide between grid points much finer than π/n); then a golden-section
/// search refines it. Non-finite levels (a pole on the circle) are reported as +∞.
pub fn peak_magnitude(b: &[f64], a: &[f64]) -> Peak {
    let order = b.len().max(a.len());
    let points = (8 * order).clamp(4096, 1 << 16);
    let step = std::f64::consts::PI / points as f64;
    let level = |w: f64| {
        let v = magnitude_db(b, a, w);
        if v.is_nan() {
            f64::INFINITY
        } else {
            v
        }
    };
    let mut best = Peak {
        level_db: f64::NEG_INFINITY,
        omega: 0.0,
    };
    for i in 0..=points {
        let w = i as f64 * step;
        let v = level(w);
        if v > best.level_db {
            best = Peak {
                level_db: v,
                omega: w,
            };
        }
    }
    if !best.level_db.is_finite() {
        return best;
    }
    // Golden-section refinement in the bracket around the best grid point.
    let (mut lo, mut hi) = (
        (best.omega - step).max(0.0),
        (best.omega + step).min(std::f64::consts::PI),
    );
    let ratio = (5.0_f64.sqrt() - 1.0) / 2.0;
    let mut x1 = hi - ratio * (hi - lo);
    let mut x2 = lo + ratio * (hi - lo);
    let (mut f1, mut f2) = (level(x1), level(x2));
    for _ in 0..60 {
        if f1 > f2 {
            hi = x2;
            x2 = x1;
            f2 = f1;
            x1 = hi - ratio * (hi - lo);
            f1 = level(x1);
        } else {
            lo = x1;
            x1 = x2;
            f1 = f2;
            x2 = lo + ratio * (hi - lo);
            f2 = level(x2);
        }
    }
    let w = 0.5 * (lo + hi);
    let v = level(w);
    if v > best.level_db {
        best = Peak {
            level_db: v,
            omega: w,
        };
    }
    best
}

/// Group delay −dφ/dω of B(z)/A(z) in samples at ω, computed exactly from the coefficients:
/// for P(z) = Σ pₖz⁻ᵏ, the delay of P is Re{ Σ k·pₖe^{−jωk} / Σ pₖe^{−jωk} }.
pub fn group_delay(b: &[f64], a: &[f64], omega: f64) -> f64 {
    delay_of(b, omega) - delay_of(a, omega)
}

fn delay_of(p: &[f64], omega: f64) -> f64 {
    let mut num = Complex64::new(0.0, 0.0);
    let mut den = Complex64::new(0.0, 0.0);
    for (k, &c) in p.iter().enumerate() {
        let e = Complex64::from_polar(1.0, -omega * k as f64);
        num += e * (c * k as f64);
        den += e * c;
    }
    (num / den).re
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — a one-pole resonator 1/(1 − r z⁻¹) peaks at DC with 1/(1 − r).
    #[test]
    fn one_pole_peak_at_dc() {
        let p = peak_magnitude(&[1.0], &[1.0, -0.9]);
        assert!((p.level_db - 20.0 * (1.0_f64 / 0.1).log10()).abs() < 1e-9);
        assert!(p.omega.abs() < 1e-6);
    }

    // Source: common practice — a pure delay z⁻ᴰ has group delay D everywhere.
    #[test]
    fn pure_delay_group_delay() {
        let b = [0.0, 0.0, 0.0, 1.0];
        assert!((group_delay(&b, &[1.0], 0.3) - 3.0).abs() < 1e-12);
    }
}
