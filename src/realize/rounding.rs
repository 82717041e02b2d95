//! Coefficient rounding to the run precision, and the pole check on the structure as it will run.
//!
//! A filter runs exactly the coefficients it holds, so stability is judged on the rounded
//! coefficients, never on the design they came from. Two independent tests look at a denominator:
//! its roots (max radius) and the step-down recursion (every |k| < 1); either failing refuses.

use crate::model::CoefficientPrecision;
use crate::numeric::poly::trim_trailing_zeros;
use crate::numeric::roots::{find_roots, AFFORDABLE_ORDER};
use crate::numeric::stepdown::step_down;
use crate::numeric::winding::largest_zero_radius;

/// A pole with radius at or above `1 − STABILITY_MARGIN` is treated as on the circle: such a
/// filter would ring for longer than any audio session (10¹² samples), or grow.
pub(crate) const STABILITY_MARGIN: f64 = 1e-12;

/// `x` as the running filter will hold it: through f32 and back when the precision is F32.
pub(crate) fn round(x: f64, precision: CoefficientPrecision) -> f64 {
    match precision {
        CoefficientPrecision::F32 => x as f32 as f64,
        CoefficientPrecision::F64 => x,
    }
}

pub(crate) fn round_all(xs: &[f64], precision: CoefficientPrecision) -> Vec<f64> {
    xs.iter().map(|&x| round(x, precision)).collect()
}

/// The first coefficient that is not finite once rounded (f32 overflows above about 3.4e38),
/// as (its name, e.g. `b[3]`, and its value before rounding).
pub(crate) fn first_unrepresentable(
    name: &str,
    original: &[f64],
    precision: CoefficientPrecision,
) -> Option<(String, f64)> {
    original
        .iter()
        .position(|&x| !round(x, precision).is_finite())
        .map(|i| (format!("{name}[{i}]"), original[i]))
}

/// What the two stability tests say about one denominator `1 + a₁z⁻¹ + …`.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct PoleCheck {
    /// Largest root radius; NaN when the roots could not be found.
    pub max_pole_radius: f64,
    /// Step-down (Schur–Cohn) test: `None` when every |k| < 1, else the failing stage and k.
    pub failing_stage: Option<(usize, f64)>,
    /// Why the roots could not be found, when they could not.
    pub root_problem: Option<String>,
}

impl PoleCheck {
    pub fn stable(&self) -> bool {
        self.max_pole_radius.is_finite()
            && self.max_pole_radius < 1.0 - STABILITY_MARGIN
            && self.failing_stage.is_none()
    }

    /// Plain words on why the check failed (empty when it passed).
    pub fn detail(&self) -> String {
        let mut parts = Vec::new();
        if let Some(problem) = &self.root_problem {
            parts.push(format!("the poles could not be found ({problem})"));
        }
        if let Some((stage, k)) = self.failing_stage {
            parts.push(format!(
                "the step-down test fails at stage {stage} (k = {k}, |k| >= 1)"
            ));
            if self.max_pole_radius.is_finite() && self.max_pole_radius < 1.0 - STABILITY_MARGIN {
                parts.push(
                    "the root finder puts every pole inside; the two tests disagree this close \
                     to the circle, so the filter is treated as unstable"
                        .to_string(),
                );
            }
        } else if self.max_pole_radius.is_finite() && self.max_pole_radius >= 1.0 - STABILITY_MARGIN
        {
            parts.push(format!(
                "a pole lies within {STABILITY_MARGIN:e} of the unit circle or beyond"
            ));
        }
        parts.join("; ")
    }
}

/// Roots and step-down of `a` (a[0] ≠ 0). An order-0 denominator has no poles: radius 0.
pub(crate) fn check_denominator(a: &[f64]) -> PoleCheck {
    let (max_pole_radius, root_problem) = max_root_radius(a);
    let failing_stage = match step_down(a) {
        Some(s) => s
            .stopped_at
            .map(|m| (m, s.reflection.first().copied().unwrap_or(f64::NAN))),
        None => Some((0, f64::NAN)),
    };
    PoleCheck {
        max_pole_radius,
        failing_stage,
        root_problem,
    }
}

/// Largest |root| of `a`, or NaN with the reason when the roots cannot be found.
pub(crate) fn max_root_radius(a: &[f64]) -> (f64, Option<String>) {
    // Trailing zeros are roots at the origin (radius 0); leaving them out also keeps a
    // polynomial with only such roots away from the eigenvalue solver, which needs order ≥ 1.
    let a = trim_trailing_zeros(a);
    if a.len() <= 1 {
        return (0.0, None);
    }
    if a.len() - 1 > AFFORDABLE_ORDER {
        // No roots at this order: the smallest radius proven to hold them all (an upper bound
        // on the largest, to 1e-12 relative), by the argument principle.
        return match largest_zero_radius(a, 1e-12) {
            Ok(radius) => (radius, None),
            Err(e) => (f64::NAN, Some(e.to_string())),
        };
    }
    match find_roots(a) {
        Ok(roots) => {
            let radius = roots.iter().map(|r| r.radius()).fold(0.0_f64, |m, r| {
                if r.is_nan() || m.is_nan() {
                    f64::NAN
                } else {
                    m.max(r)
                }
            });
            (radius, None)
        }
        Err(e) => (f64::NAN, Some(e.to_string())),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: IEEE 754 binary32 has a 24-bit significand (common practice): 0.1 is not exact.
    #[test]
    fn f32_rounding_is_the_f32_value() {
        assert_eq!(
            round(0.1, CoefficientPrecision::F32),
            0.100_000_001_490_116_12
        );
        assert_eq!(round(0.1, CoefficientPrecision::F64), 0.1);
        assert_eq!(round(0.5, CoefficientPrecision::F32), 0.5);
    }

    // Source: common practice — (1 − 0.9z⁻¹)(1 + 0.5z⁻¹) has poles 0.9 and −0.5;
    // (1 − 1.25z⁻¹) has its pole outside.
    #[test]
    fn stable_and_unstable_denominators() {
        let c = check_denominator(&[1.0, -0.4, -0.45]);
        assert!(c.stable(), "{c:?}");
        assert!((c.max_pole_radius - 0.9).abs() < 1e-14);
        let u = check_denominator(&[1.0, -1.25]);
        assert!(!u.stable());
        assert_eq!(u.failing_stage.map(|s| s.0), Some(1));
        assert!(u.detail().contains("stage 1"));
        for only_origin in [&[1.0][..], &[1.0, 0.0, 0.0]] {
            let none = check_denominator(only_origin);
            assert!(none.stable());
            assert_eq!(none.max_pole_radius, 0.0);
        }
    }
}
