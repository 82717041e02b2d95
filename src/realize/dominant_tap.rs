//! The cheap pole check for sparse recursions: when a₀ = 1 outweighs the others in sum, every
//! root of A(z) = 1 + Σ aₖz^−dₖ lies inside the unit circle, and a radius bound follows from
//! the taps alone, with no root finding.
//!
//! Why (common practice, the triangle inequality): for |z| = r, |Σ aₖz^−dₖ| ≤ Σ |aₖ|·r^−dₖ =: S(r).
//! S falls as r grows; wherever S(r) < 1, A(z) cannot vanish on |z| = r. So if S(1) = Σ |aₖ| < 1,
//! there is no root on or outside the circle, and every root has |z| < ρ for any ρ with
//! S(ρ) < 1. The check costs one pass over the taps per bisection step; it is sufficient, not
//! necessary: a stable recursion whose taps do not satisfy it needs the roots (and the step-down
//! test) of its dense denominator, as the direct form does.

use super::sparse_recursion::SparseTap;

/// Bisection steps: the bound is within 2⁻⁶⁰ of the smallest the majorant S allows.
const BISECTION_STEPS: usize = 60;

/// What the cheap check found.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct DominantTap {
    /// Σ |aₖ| over the recursive taps (a₀ = 1 excluded).
    pub others: f64,
    /// A radius every pole lies strictly inside.
    pub radius_bound: f64,
}

/// The bound when the leading tap dominates (Σ |aₖ| < 1), `None` otherwise.
pub(crate) fn dominant_tap_bound(recursive: &[SparseTap]) -> Option<DominantTap> {
    let others: f64 = recursive.iter().map(|t| t.coefficient.abs()).sum();
    // NaN taps fail this too.
    if others.partial_cmp(&1.0) != Some(std::cmp::Ordering::Less) {
        return None;
    }
    if recursive.iter().all(|t| t.coefficient == 0.0) {
        return Some(DominantTap {
            others,
            radius_bound: 0.0,
        });
    }
    let majorant = |r: f64| -> f64 {
        recursive
            .iter()
            .map(|t| t.coefficient.abs() * (-(t.delay as f64) * r.ln()).exp())
            .sum()
    };
    // S(1) < 1 and S(r) → ∞ as r → 0: keep S(hi) < 1 ≤ S(lo).
    let (mut lo, mut hi) = (0.0f64, 1.0f64);
    for _ in 0..BISECTION_STEPS {
        let mid = 0.5 * (lo + hi);
        if majorant(mid) < 1.0 {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Some(DominantTap {
        others,
        radius_bound: hi,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::realize::rounding::max_root_radius;

    fn tap(delay: usize, coefficient: f64) -> SparseTap {
        SparseTap { delay, coefficient }
    }

    fn dense(taps: &[SparseTap]) -> Vec<f64> {
        let order = taps.iter().map(|t| t.delay).max().unwrap_or(0);
        let mut a = vec![0.0; order + 1];
        a[0] = 1.0;
        for t in taps {
            a[t.delay] = t.coefficient;
        }
        a
    }

    // Source: common practice — 1 − c·z^−D has every root at radius c^(1/D), where the bound is
    // tight (S(ρ) = c·ρ^−D = 1 exactly there).
    #[test]
    fn single_echo_bound_is_the_roots_radius() {
        let b = dominant_tap_bound(&[tap(10, -0.5)]).unwrap();
        assert!((b.radius_bound - 0.5f64.powf(0.1)).abs() < 1e-12);
        assert_eq!(b.others, 0.5);
    }

    // Source: the roots of the dense polynomial (companion eigenvalues, this crate's root
    // finder) — the bound lies at or above the largest root radius of the example echo line's
    // right leg inverse (taps from configs/echo_line.toml).
    #[test]
    fn bound_is_above_the_largest_root() {
        let taps = [
            tap(41, 0.25 / 0.9),
            tap(120, -0.17 / 0.9),
            tap(197, 0.08 / 0.9),
        ];
        let b = dominant_tap_bound(&taps).unwrap();
        let (radius, problem) = max_root_radius(&dense(&taps));
        assert!(problem.is_none());
        assert!(b.radius_bound >= radius, "{} < {radius}", b.radius_bound);
        assert!(b.radius_bound < 1.0 && b.radius_bound - radius < 0.01);
    }

    // Source: common practice — taps summing to 1 or more in magnitude are not covered
    // (1 + z^−1 has its root on the circle; 1 − 1.2z^−1 + 0.36z^−2 = (1 − 0.6z^−1)² is stable
    // but the cheap test cannot say so).
    #[test]
    fn refuses_to_judge_when_the_leading_tap_does_not_dominate() {
        assert!(dominant_tap_bound(&[tap(1, 1.0)]).is_none());
        assert!(dominant_tap_bound(&[tap(1, -1.2), tap(2, 0.36)]).is_none());
        assert!(dominant_tap_bound(&[tap(3, f64::NAN)]).is_none());
    }
}
