//! The step-down (backward Levinson, Schur–Cohn) recursion: reflection coefficients of a
//! polynomial `a[0] + a[1]·z⁻¹ + … + a[n]·z⁻ⁿ`.
//!
//! All roots lie strictly inside the unit circle exactly when every reflection coefficient has
//! |k| < 1. This test never computes a root, so it is an independent check on the root finder.
//!
//! Sign convention (pinned by tests): with Aₘ normalised to a leading 1,
//! `Aₘ(z) = Aₘ₋₁(z) + kₘ·z⁻¹·Bₘ₋₁(z)` where `Bₘ(z) = z⁻ᵐ·Aₘ(1/z)` is the reversed polynomial,
//! so kₘ is the last coefficient of Aₘ.

/// Outcome of the step-down recursion.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct StepDown {
    /// k₁ … kₙ in order of stage (index 0 holds k₁). Complete only when `stopped_at` is `None`.
    pub reflection: Vec<f64>,
    /// The stage m at which |kₘ| ≥ 1 stopped the recursion (stages above it are in `reflection`).
    pub stopped_at: Option<usize>,
}

impl StepDown {
    /// True when every stage has |k| < 1: all roots strictly inside the unit circle.
    pub fn all_inside(&self) -> bool {
        self.stopped_at.is_none()
    }

    /// Smallest distance 1 − |k| over the stages computed; negative or zero when a stage failed.
    pub fn margin(&self) -> f64 {
        self.reflection
            .iter()
            .map(|k| 1.0 - k.abs())
            .fold(f64::INFINITY, f64::min)
    }
}

/// Runs the step-down recursion on `a` (a[0] must be non-zero; it is normalised away).
///
/// Returns `None` only when a[0] is zero or the input is empty.
pub fn step_down(a: &[f64]) -> Option<StepDown> {
    if a.is_empty() || a[0] == 0.0 {
        return None;
    }
    let n = a.len() - 1;
    let mut current: Vec<f64> = a.iter().map(|&x| x / a[0]).collect();
    let mut reflection = vec![0.0; n];
    for m in (1..=n).rev() {
        let k = current[m];
        reflection[m - 1] = k;
        if k.abs() >= 1.0 || !k.is_finite() {
            // Keep only the stages actually computed (m..=n); lower ones are undefined.
            return Some(StepDown {
                reflection: reflection[m - 1..].to_vec(),
                stopped_at: Some(m),
            });
        }
        let denom = 1.0 - k * k;
        let next: Vec<f64> = (0..m)
            .map(|i| (current[i] - k * current[m - i]) / denom)
            .collect();
        current = next;
    }
    Some(StepDown {
        reflection,
        stopped_at: None,
    })
}

/// Zeros strictly inside the unit circle, counted by the step-down recursion carried on past
/// stages with |k| > 1, and how far its rounding may have grown.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct StepDownCount {
    pub inside: usize,
    /// Π 1/|1 − kₘ²|: each stage divides by 1 − kₘ², so rounding grows by at most this factor.
    pub growth: f64,
}

/// Counts the zeros of `a` (a[0] ≠ 0) inside the unit circle without finding them.
///
/// Aₘ₋₁ = (Aₘ − kₘBₘ)/(1 − kₘ²) loses the root at the origin that Aₘ − kₘBₘ has; on the circle
/// |Bₘ| = |Aₘ|, so by Rouché's theorem Aₘ − kₘBₘ has Aₘ's zeros inside when |kₘ| < 1 and Bₘ's
/// (the m − Iₘ reciprocals of Aₘ's outside ones) when |kₘ| > 1. Hence Iₘ = Iₘ₋₁ + 1, or
/// Iₘ = m − 1 − Iₘ₋₁ (the Schur–Cohn count, common practice). `None` when some |kₘ| = 1 (a zero
/// on the circle or a pair symmetric about it: the count is undecided) or a value is not finite.
pub fn count_inside_by_step_down(a: &[f64]) -> Option<StepDownCount> {
    if a.is_empty() || a[0] == 0.0 {
        return None;
    }
    let n = a.len() - 1;
    let mut current: Vec<f64> = a.iter().map(|&x| x / a[0]).collect();
    let mut ks = vec![0.0; n];
    let mut growth = 1.0f64;
    for m in (1..=n).rev() {
        let k = current[m];
        let denom = 1.0 - k * k;
        if denom == 0.0 || !denom.is_finite() {
            return None;
        }
        ks[m - 1] = k;
        growth /= denom.abs();
        current = (0..m)
            .map(|i| (current[i] - k * current[m - i]) / denom)
            .collect();
    }
    let mut inside = 0usize;
    for (index, k) in ks.iter().enumerate() {
        let m = index + 1;
        inside = if k.abs() < 1.0 {
            inside + 1
        } else {
            (m - 1).checked_sub(inside)?
        };
    }
    Some(StepDownCount { inside, growth })
}

/// The step-up recursion: the polynomial (leading 1) whose reflection coefficients are `k`.
pub fn step_up(k: &[f64]) -> Vec<f64> {
    let mut a = vec![1.0];
    for &km in k {
        let m = a.len();
        let mut next = vec![0.0; m + 1];
        next[..m].copy_from_slice(&a);
        for i in 1..=m {
            next[i] += km * a[m - i];
        }
        a = next;
    }
    a
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: Proakis & Manolakis, "Digital Signal Processing" (lattice structures chapter),
    // from memory: A₃(z) = 1 + (13/24)z⁻¹ + (5/8)z⁻² + (1/3)z⁻³ has k₁ = 1/4, k₂ = 1/2, k₃ = 1/3.
    #[test]
    fn textbook_third_order_example() {
        let a = [1.0, 13.0 / 24.0, 5.0 / 8.0, 1.0 / 3.0];
        let s = step_down(&a).unwrap();
        assert!(s.all_inside());
        let expected = [0.25, 0.5, 1.0 / 3.0];
        for (k, e) in s.reflection.iter().zip(expected) {
            assert!((k - e).abs() < 1e-15, "{k} vs {e}");
        }
        let back = step_up(&s.reflection);
        for (x, y) in back.iter().zip(a) {
            assert!((x - y).abs() < 1e-15);
        }
    }

    // Source: common practice — polynomials built from known zeros; the count matches how
    // many were put inside.
    #[test]
    fn step_down_counts_zeros_inside() {
        // (1 − 1.25 z⁻¹)(1 − 0.5 z⁻¹): one inside.
        let c = count_inside_by_step_down(&[1.0, -1.75, 0.625]).unwrap();
        assert_eq!(c.inside, 1);
        // (1 − 2z⁻¹)(1 + 3z⁻¹)(1 − 0.25z⁻¹) = 1 + 0.75z⁻¹ − 6.25z⁻² + 1.5z⁻³: one inside.
        assert_eq!(
            count_inside_by_step_down(&[1.0, 0.75, -6.25, 1.5])
                .unwrap()
                .inside,
            1
        );
        // All inside, all outside.
        assert_eq!(
            count_inside_by_step_down(&[1.0, 13.0 / 24.0, 5.0 / 8.0, 1.0 / 3.0])
                .unwrap()
                .inside,
            3
        );
        assert_eq!(count_inside_by_step_down(&[1.0, -3.0]).unwrap().inside, 0);
        // A zero on the circle: undecided.
        assert!(count_inside_by_step_down(&[1.0, -1.0]).is_none());
    }

    // Source: common practice — a root on or outside the circle makes some |k| ≥ 1.
    #[test]
    fn root_outside_stops_recursion() {
        // (1 − 1.25 z⁻¹)(1 − 0.5 z⁻¹)
        let s = step_down(&[1.0, -1.75, 0.625]).unwrap();
        assert!(!s.all_inside());
        assert!(s.margin() <= 0.0);
    }
}
