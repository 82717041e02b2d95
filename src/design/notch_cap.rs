//! The boost cap on a long minimum-phase numerator, without its roots: only the zeros under the
//! offending peaks are found, each by Newton's method from the peak's angle, and moved.
//!
//! The inverse A/B boosts most where a zero of B sits near the circle. The highest peak of
//! |A/B| is found on a grid; Newton's method on B started on the circle at that angle converges
//! to the zero beneath it (the nearest one, isolated at this scale). Its factor — a conjugate
//! pair, or one real zero — is divided out of B (synthetic division; the remainder must be at
//! round-off level, which checks the zero) and put back at the radius that brings the peak to
//! the cap: with G = |A|/|B without the factor| at the angle θ, a pair at radius ρ boosts
//!   G / ((1 − ρ)·|1 − ρ·e^{−j2θ}|)
//! at θ (the closed form of `boost_cap`), so ρ follows by bisection on that scalar. The next
//! peak is then found on the new B, until none is over the cap or [`MAX_MOVES`] were made; what
//! is left over is taken off the level by the caller. Only the zeros that must move do, as on
//! the root route.

use num_complex::Complex64;

use super::boost_cap::{MovedZero, RADIUS_FLOOR};
use crate::numeric::poly::eval_z_inverse;
use crate::numeric::response::peak_magnitude_near;

/// Most zeros (or pairs) moved before the rest of the excess is left to a level reduction.
pub const MAX_MOVES: usize = 128;
/// A moved zero aims this far (dB) under the target, so the search does not creep.
const AIM_BELOW_DB: f64 = 0.01;
/// Newton steps allowed to reach a zero from the circle.
const NEWTON_STEPS: usize = 60;
/// Largest division remainder, relative to the largest coefficient, that confirms a zero.
const REMAINDER_TOLERANCE: f64 = 1e-8;

/// What the cap moved.
#[derive(Debug, Clone, PartialEq)]
pub struct NotchCap {
    pub moved: Vec<MovedZero>,
    /// True when a peak over the cap had no zero that could be found under it, or the moves ran
    /// out: the caller lowers the level for what remains.
    pub unresolved: bool,
}

/// Moves zeros of `b` (all inside the circle) until the peak of |A/B| is at most `target_db`.
pub fn cap_notches(a: &[f64], b: &mut Vec<f64>, target_db: f64) -> NotchCap {
    let mut moved = Vec::new();
    for _ in 0..MAX_MOVES {
        let peak = peak_magnitude_near(a, b, &[]);
        if peak.level_db <= target_db {
            return NotchCap {
                moved,
                unresolved: false,
            };
        }
        let Some(zero) = zero_near(b, peak.omega) else {
            break;
        };
        let real = zero.im.abs() <= 1e-9 * zero.norm().max(1e-300);
        let factor = if real {
            vec![1.0, -zero.re]
        } else {
            vec![1.0, -2.0 * zero.re, zero.norm_sqr()]
        };
        let Some(rest) = divide(b, &factor) else {
            break;
        };
        let theta = if real {
            if zero.re >= 0.0 {
                0.0
            } else {
                std::f64::consts::PI
            }
        } else {
            zero.arg().abs()
        };
        let at = Complex64::from_polar(1.0, theta);
        let rest_level = (eval_z_inverse(a, at) / eval_z_inverse(&rest, at)).norm();
        let wanted = 10f64.powf((target_db - AIM_BELOW_DB) / 20.0);
        let radius = zero.norm();
        // The peak sits a little off θ and above the closed form's value there: scale G so the
        // closed form gives the peak as measured, then solve for the radius.
        let measured = 10f64.powf(peak.level_db / 20.0);
        let g = rest_level.max(measured * own_level(theta, real, radius));
        let new_radius = radius_for(g, wanted, theta, real, radius);
        if new_radius >= radius {
            // The peak is not this zero's doing (broadband): leave it to the level.
            break;
        }
        let moved_to = Complex64::from_polar(new_radius, if real { theta } else { zero.arg() });
        let new_factor = if real {
            vec![1.0, -moved_to.re]
        } else {
            vec![1.0, -2.0 * moved_to.re, moved_to.norm_sqr()]
        };
        *b = crate::numeric::poly::multiply(&rest, &new_factor);
        record(&mut moved, zero, moved_to);
        if !real {
            record(&mut moved, zero.conj(), moved_to.conj());
        }
    }
    let unresolved = peak_magnitude_near(a, b, &[]).level_db > target_db;
    NotchCap { moved, unresolved }
}

/// Adds a move, or carries on one already made when this zero is where that one put it.
fn record(moved: &mut Vec<MovedZero>, from: Complex64, to: Complex64) {
    let same = |m: &MovedZero| (m.to - from).norm() <= 1e-9 * from.norm().max(1e-300);
    match moved.iter_mut().find(|m| same(m)) {
        Some(m) => m.to = to,
        None => moved.push(MovedZero { from, to }),
    }
}

/// The zero of B nearest the circle at angle ω, by Newton's method in w = z⁻¹ from the circle.
fn zero_near(b: &[f64], omega: f64) -> Option<Complex64> {
    let mut w = Complex64::from_polar(1.0, -omega);
    for _ in 0..NEWTON_STEPS {
        let (value, slope) = value_and_slope(b, w);
        if slope.norm() == 0.0 {
            return None;
        }
        let step = value / slope;
        w -= step;
        if step.norm() <= 1e-15 * w.norm() {
            break;
        }
    }
    let z = w.inv();
    (z.is_finite() && z.norm() < 1.0).then_some(z)
}

/// B(w) = Σ bₖwᵏ and B′(w), by Horner's rule.
fn value_and_slope(b: &[f64], w: Complex64) -> (Complex64, Complex64) {
    let mut p = Complex64::new(0.0, 0.0);
    let mut dp = Complex64::new(0.0, 0.0);
    for &c in b.iter().rev() {
        dp = dp * w + p;
        p = p * w + c;
    }
    (p, dp)
}

/// b ÷ factor in powers of z⁻¹ (factor leads with 1), when the remainder is at round-off level.
fn divide(b: &[f64], factor: &[f64]) -> Option<Vec<f64>> {
    let d = factor.len() - 1;
    if b.len() <= d {
        return None;
    }
    let mut q = vec![0.0; b.len() - d];
    for k in 0..q.len() {
        let mut v = b[k];
        for j in 1..=d.min(k) {
            v -= factor[j] * q[k - j];
        }
        q[k] = v;
    }
    let scale = b.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    let remainder = (q.len()..b.len()).fold(0.0f64, |m, k| {
        let mut v = b[k];
        for (j, f) in factor.iter().enumerate().skip(1) {
            if let Some(i) = k.checked_sub(j) {
                v -= f * q.get(i).copied().unwrap_or(0.0);
            }
        }
        m.max(v.abs())
    });
    (remainder <= REMAINDER_TOLERANCE * scale).then_some(q)
}

/// |factor(e^{jθ})| of a zero pair at radius r and angle θ, or of a real zero at radius r on
/// the axis at θ: (1 − r)·|1 − r·e^{−j2θ}| or 1 − r.
fn own_level(theta: f64, real: bool, r: f64) -> f64 {
    if real {
        1.0 - r
    } else {
        (1.0 - r) * (Complex64::new(1.0, 0.0) - Complex64::from_polar(r, -2.0 * theta)).norm()
    }
}

/// The radius at which a zero (pair) at angle θ brings G/|factor(θ)| down to `wanted`, searched
/// between the radius floor and `radius`.
fn radius_for(g: f64, wanted: f64, theta: f64, real: bool, radius: f64) -> f64 {
    let boost = |r: f64| g / own_level(theta, real, r);
    if boost(radius) <= wanted {
        return radius;
    }
    let floor = RADIUS_FLOOR.min(radius);
    if boost(floor) > wanted {
        return floor;
    }
    let (mut lo, mut hi) = (floor, radius);
    for _ in 0..100 {
        let mid = 0.5 * (lo + hi);
        if boost(mid) <= wanted {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo <= 1e-15 {
            break;
        }
    }
    lo
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::numeric::poly::from_roots;

    // Source: closed form for a conjugate zero pair (common practice, as in `boost_cap`): a
    // pair at 0.9995 among zeros far from the circle is the one moved, and only it.
    #[test]
    fn moves_only_the_zero_under_the_peak() {
        let w0 = 0.9;
        let mut zeros = vec![
            Complex64::from_polar(0.9995, w0),
            Complex64::from_polar(0.9995, -w0),
        ];
        // Three pairs far inside: at most 0.8⁻⁶ (11.6 dB) of boost between them.
        for k in 0..3 {
            let z = Complex64::from_polar(0.2, 0.9 * k as f64 + 0.3);
            zeros.push(z);
            zeros.push(z.conj());
        }
        let mut b = from_roots(1.0, &zeros).unwrap();
        let capped = cap_notches(&[1.0], &mut b, 20.0);
        assert!(!capped.unresolved);
        assert_eq!(capped.moved.len(), 2);
        assert!((capped.moved[0].from.norm() - 0.9995).abs() < 1e-9);
        assert!((capped.moved[0].from.arg().abs() - w0).abs() < 1e-9);
        let peak = peak_magnitude_near(&[1.0], &b, &[]);
        assert!(
            peak.level_db <= 20.0 && peak.level_db > 19.5,
            "{}",
            peak.level_db
        );
    }
}
