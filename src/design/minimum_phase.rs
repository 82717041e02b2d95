//! Magnitude-only correction: reflect zeros outside the unit circle to 1/conj(z).
//!
//! For |w| = 1, |1 − z₀·w| = |z₀|·|1 − w/conj(z₀)|, so replacing the factor (1 − z₀z⁻¹) by
//! |z₀|·(1 − z⁻¹/conj(z₀)) leaves |B(e^{jω})| unchanged at every ω while moving the zero inside.
//! What changes is the phase: B(z) = B_min(z)·P(z) with P an all-pass, and the inverse of
//! B_min leaves P in the cascade. Its group delay is what the user gives up.

use num_complex::Complex64;
use serde::Serialize;

use crate::analysis::{PlacedRoot, Placement};
use crate::numeric::poly::{eval_z_inverse, from_roots};
use crate::numeric::response::group_delay;
use crate::numeric::roots::expand;

/// B with every zero outside the circle reflected inside; same magnitude response.
///
/// `numerator` is B with its bulk delay stripped, `zeros` its analysed roots. Returns the new
/// coefficients and the zeros that were reflected (as they were), or `None` when the roots do
/// not pair into real coefficients (cannot happen for roots of a real polynomial).
pub fn reflect_outside_zeros(
    numerator: &[f64],
    zeros: &[PlacedRoot],
) -> Option<(Vec<f64>, Vec<PlacedRoot>)> {
    // Nothing to reflect: the numerator itself, not its roots multiplied back together (which
    // only adds their error, large for clustered zeros near the circle).
    if zeros.iter().all(|z| z.placement != Placement::Outside) {
        return Some((numerator.to_vec(), Vec::new()));
    }
    let mut gain = numerator[0];
    let mut moved = Vec::new();
    let mut roots = Vec::new();
    for z in zeros {
        let values = expand(std::slice::from_ref(&z.root));
        if z.placement == Placement::Outside {
            moved.push(*z);
            for v in values {
                gain *= v.norm();
                roots.push(Complex64::new(1.0, 0.0) / v.conj());
            }
        } else {
            roots.extend(values);
        }
    }
    from_roots(gain, &roots).map(|b| (b, moved))
}

/// The all-pass left in the cascade after a magnitude-only correction, as a user sees it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AllPassResidual {
    /// Smallest and largest group delay of the all-pass over 0 < f < fs/2, in samples.
    pub group_delay_min_samples: f64,
    pub group_delay_max_samples: f64,
    /// The same in milliseconds.
    pub group_delay_min_ms: f64,
    pub group_delay_max_ms: f64,
    /// Phase of the all-pass (radians, wrapped to (−π, π]) at a few frequencies (Hz).
    pub phase_at: Vec<(f64, f64)>,
}

/// Describes the all-pass B/B_min: its group delay range and its phase at a few frequencies.
pub fn all_pass_residual(original: &[f64], minimum: &[f64], sample_rate: f64) -> AllPassResidual {
    const GRID: usize = 2048;
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for i in 1..GRID {
        let w = std::f64::consts::PI * i as f64 / GRID as f64;
        let d = group_delay(original, &[1.0], w) - group_delay(minimum, &[1.0], w);
        if d.is_finite() {
            lo = lo.min(d);
            hi = hi.max(d);
        }
    }
    let ms = 1000.0 / sample_rate;
    let phase_at = [100.0, 1000.0, 5000.0, 10_000.0]
        .into_iter()
        .filter(|&f| f < sample_rate / 2.0)
        .map(|f| {
            let z = Complex64::from_polar(1.0, 2.0 * std::f64::consts::PI * f / sample_rate);
            let ratio = eval_z_inverse(original, z) / eval_z_inverse(minimum, z);
            (f, ratio.arg())
        })
        .collect();
    AllPassResidual {
        group_delay_min_samples: lo,
        group_delay_max_samples: hi,
        group_delay_min_ms: lo * ms,
        group_delay_max_ms: hi * ms,
        phase_at,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::place;
    use crate::numeric::response::magnitude_db;
    use crate::numeric::roots::find_roots;

    // Source: common practice — reflection keeps |B(e^{jω})| (identity in the module comment).
    #[test]
    fn reflection_keeps_magnitude_and_moves_zero_inside() {
        // A direct path of 0.6 and a reflection of 0.9 one sample later: zero at −1.5.
        let b = [0.6, 0.9];
        let zeros: Vec<_> = find_roots(&b)
            .unwrap()
            .into_iter()
            .map(|r| place(r, 1e-9))
            .collect();
        let (bm, moved) = reflect_outside_zeros(&b, &zeros).unwrap();
        assert_eq!(moved.len(), 1);
        assert!((bm[0] - 0.9).abs() < 1e-15 && (bm[1] - 0.6).abs() < 1e-15);
        for i in 0..50 {
            let w = 0.06 * i as f64;
            let d = magnitude_db(&b, &[1.0], w) - magnitude_db(&bm, &[1.0], w);
            assert!(d.abs() < 1e-12);
        }
        let residual = all_pass_residual(&b, &bm, 48_000.0);
        // An all-pass with a pole inside has positive group delay everywhere (common practice).
        assert!(residual.group_delay_min_samples > 0.0);
    }
}
