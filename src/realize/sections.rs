//! Cascade of second-order sections: H(z) = g · Π (b₀ + b₁z⁻¹ + b₂z⁻²) / (1 + a₁z⁻¹ + a₂z⁻²).
//!
//! Factoring B and A into real quadratics moves each pole only with its own two coefficients,
//! so rounding cannot push a pole much further than the rounding itself, whatever the order.
//! Each section runs in direct form II transposed with f64 state; the overall gain g scales the
//! input of the first section.

use num_complex::Complex64;

use crate::numeric::poly::{leading_zeros, multiply};
use crate::numeric::roots::{expand, find_roots, Root, AFFORDABLE_ORDER};

use super::deflation::refine_by_deflation;
use super::normalise::Normalised;
use super::pairing::{conjugate_groups, pair_into_sections, RootGroup};
use super::RealizeError;

/// Largest allowed ‖product of sections − original‖∞ / ‖original‖∞, for numerator and denominator.
pub(crate) const FACTOR_TOLERANCE: f64 = 1e-10;

/// One section's coefficients, `[b0, b1, b2, a0, a1, a2]` with a0 = 1.
pub type SectionCoefficients = [f64; 6];

/// A running cascade of second-order sections (state f64, two values per section).
#[derive(Debug, Clone, PartialEq)]
pub struct SectionCascade {
    gain: f64,
    sections: Vec<SectionCoefficients>,
    state: Vec<[f64; 2]>,
}

impl SectionCascade {
    pub(crate) fn new(gain: f64, sections: Vec<SectionCoefficients>) -> Self {
        let state = vec![[0.0; 2]; sections.len()];
        Self {
            gain,
            sections,
            state,
        }
    }

    pub fn process_sample(&mut self, x: f64) -> f64 {
        let mut v = self.gain * x;
        for (c, s) in self.sections.iter().zip(self.state.iter_mut()) {
            let y = c[0] * v + s[0];
            s[0] = c[1] * v - c[4] * y + s[1];
            s[1] = c[2] * v - c[5] * y;
            v = y;
        }
        v
    }

    pub fn reset(&mut self) {
        self.state.fill([0.0; 2]);
    }

    /// Sum of the sections' orders (the highest power of z⁻¹ each one uses).
    pub fn order(&self) -> usize {
        self.sections.iter().map(section_order).sum()
    }

    pub fn gain(&self) -> f64 {
        self.gain
    }

    /// Number of sections (each holds two state values).
    pub fn section_count(&self) -> usize {
        self.sections.len()
    }

    /// State as it stands, `[s0, s1]` per section (the block kernels load and store it).
    pub(crate) fn state(&self) -> &[[f64; 2]] {
        &self.state
    }

    pub(crate) fn state_mut(&mut self) -> &mut [[f64; 2]] {
        &mut self.state
    }

    /// Coefficients and state at once, for the block kernels.
    pub(crate) fn parts_mut(&mut self) -> (&[SectionCoefficients], &mut [[f64; 2]]) {
        (&self.sections, &mut self.state)
    }

    /// Sections as run, in running order (rounded to the run precision).
    pub fn sections(&self) -> &[SectionCoefficients] {
        &self.sections
    }
}

fn section_order(c: &SectionCoefficients) -> usize {
    if c[2] != 0.0 || c[5] != 0.0 {
        2
    } else if c[1] != 0.0 || c[4] != 0.0 {
        1
    } else {
        0
    }
}

/// The overall gain and the sections of `h`, in running order, unrounded.
///
/// Fails when the roots cannot be found or paired, or when the sections multiplied back
/// together miss B or A by more than [`FACTOR_TOLERANCE`] relative.
pub(crate) fn factor(h: &Normalised) -> Result<(f64, Vec<SectionCoefficients>), RealizeError> {
    let delay = leading_zeros(&h.b);
    let stripped = &h.b[delay..];
    let order = stripped.len().max(h.a.len()) - 1;
    if order > AFFORDABLE_ORDER {
        return Err(RealizeError::TooLongForSections {
            order,
            most: AFFORDABLE_ORDER,
        });
    }
    let gain = stripped[0];
    let zeros = groups("numerator", stripped)?;
    let poles = groups("denominator", &h.a)?;
    // Roots refined for the product first; the roots as found if that somehow does worse.
    let refined = assemble(
        &refine_by_deflation(&h.a, &poles),
        &refine_by_deflation(stripped, &zeros),
        delay,
    );
    match verify(h, gain, &refined) {
        Ok(()) => Ok((gain, refined)),
        Err(refined_error) => {
            let found = assemble(&poles, &zeros, delay);
            match verify(h, gain, &found) {
                Ok(()) => Ok((gain, found)),
                Err(_) => Err(refined_error),
            }
        }
    }
}

fn assemble(poles: &[RootGroup], zeros: &[RootGroup], delay: usize) -> Vec<SectionCoefficients> {
    pair_into_sections(poles, zeros, delay)
        .iter()
        .map(|s| {
            let b = s.numerator();
            let a = s.denominator();
            [b[0], b[1], b[2], a[0], a[1], a[2]]
        })
        .collect()
}

fn verify(h: &Normalised, gain: f64, sections: &[SectionCoefficients]) -> Result<(), RealizeError> {
    let (b, a) = expand_sections(gain, sections);
    check_reproduces("numerator", &b, &h.b)?;
    check_reproduces("denominator", &a, &h.a)
}

/// Real factors of `c` (c[0] ≠ 0); roots at the origin are factors of 1 and are left out.
fn groups(polynomial: &'static str, c: &[f64]) -> Result<Vec<RootGroup>, RealizeError> {
    let roots: Vec<Root> =
        find_roots(c).map_err(|source| RealizeError::Roots { polynomial, source })?;
    let values: Vec<Complex64> = expand(&roots)
        .into_iter()
        .filter(|z| *z != Complex64::new(0.0, 0.0))
        .collect();
    conjugate_groups(&values).map_err(|(upper, lower)| RealizeError::NotConjugate {
        polynomial,
        upper,
        lower,
    })
}

/// g·Π numerators and Π denominators, multiplied out.
pub(crate) fn expand_sections(gain: f64, sections: &[SectionCoefficients]) -> (Vec<f64>, Vec<f64>) {
    let mut b = vec![gain];
    let mut a = vec![1.0];
    for c in sections {
        b = multiply(&b, &c[0..3]);
        a = multiply(&a, &c[3..6]);
    }
    (b, a)
}

fn check_reproduces(
    polynomial: &'static str,
    product: &[f64],
    original: &[f64],
) -> Result<(), RealizeError> {
    let relative_error = relative_difference(product, original);
    if relative_error <= FACTOR_TOLERANCE {
        Ok(())
    } else {
        Err(RealizeError::SectionsMismatch {
            polynomial,
            relative_error,
            tolerance: FACTOR_TOLERANCE,
        })
    }
}

/// max |x − y| / max |y| over the coefficients, the shorter padded with zeros (NaN → ∞).
pub(crate) fn relative_difference(x: &[f64], y: &[f64]) -> f64 {
    let n = x.len().max(y.len());
    let at = |v: &[f64], i: usize| v.get(i).copied().unwrap_or(0.0);
    let scale = y.iter().fold(0.0_f64, |m, c| m.max(c.abs()));
    let worst = (0..n).fold(0.0_f64, |m, i| {
        let d = (at(x, i) - at(y, i)).abs();
        if d.is_nan() {
            f64::INFINITY
        } else {
            m.max(d)
        }
    });
    if scale == 0.0 {
        worst
    } else {
        worst / scale
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn normalised(b: &[f64], a: &[f64]) -> Normalised {
        Normalised {
            b: b.to_vec(),
            a: a.to_vec(),
        }
    }

    // Source: common practice — (1 − 0.5z⁻¹)(1 + 0.25z⁻¹) / (1 − 0.9z⁻¹) factors exactly.
    #[test]
    fn factors_a_small_pole_zero_filter() {
        let b = multiply(&[2.0, -1.0], &[1.0, 0.25]);
        let (gain, s) = factor(&normalised(&b, &[1.0, -0.9])).unwrap();
        assert_eq!(gain, 2.0);
        assert_eq!(s.len(), 1);
        let (eb, ea) = expand_sections(gain, &s);
        assert!(relative_difference(&eb, &b) < 1e-15);
        assert!(relative_difference(&ea, &[1.0, -0.9]) < 1e-15);
    }

    // Source: common practice — a leading zero tap is one sample of pure delay; a trailing
    // zero in the denominator is a pole at the origin (a factor of 1).
    #[test]
    fn delay_fir_and_all_pole_cases() {
        let cases: [(&[f64], &[f64]); 6] = [
            (&[0.0, 0.0, 0.0, 3.0], &[1.0]),
            (&[0.0, 1.0, -0.5], &[1.0, -0.5, 0.0, 0.06]),
            (&[0.7], &[1.0, -1.6, 0.89, 0.2]),
            // Double zero at z = 1 times (1 + 0.5z⁻¹); pole at −0.1.
            (&[1.0, -1.5, 0.0, 0.5], &[1.0, 0.1]),
            // Triple pole at −0.5: (1 + 0.5z⁻¹)³.
            (&[1.0, 0.2], &[1.0, 1.5, 0.75, 0.125]),
            (&[4.0], &[1.0]),
        ];
        for (b, a) in cases {
            let (gain, s) = factor(&normalised(b, a)).unwrap();
            let (eb, ea) = expand_sections(gain, &s);
            assert!(relative_difference(&eb, b) < 1e-12, "{b:?}/{a:?}: {eb:?}");
            assert!(relative_difference(&ea, a) < 1e-12, "{b:?}/{a:?}: {ea:?}");
            // One section per two powers of z⁻¹ in the longer polynomial, rounded up.
            assert_eq!(
                s.len(),
                (b.len().max(a.len()) - 1).div_ceil(2),
                "{b:?}/{a:?}"
            );
        }
    }

    // Source: common practice — the impulse response of a cascade is that of the product.
    #[test]
    fn cascade_runs_the_product() {
        let mut f = SectionCascade::new(
            2.0,
            vec![
                [1.0, 0.5, 0.0, 1.0, -0.5, 0.0],
                [1.0, 0.0, 0.0, 1.0, 0.0, 0.25],
            ],
        );
        // 2(1 + 0.5z⁻¹) / ((1 − 0.5z⁻¹)(1 + 0.25z⁻²)): the expected impulse response comes
        // from running the multiplied-out difference equation directly.
        let a = multiply(&[1.0, -0.5], &[1.0, 0.0, 0.25]);
        let b = [2.0, 1.0];
        let mut expected = Vec::new();
        for n in 0..10usize {
            let mut y = if n < b.len() { b[n] } else { 0.0 };
            for k in 1..a.len() {
                if n >= k {
                    y -= a[k] * expected[n - k];
                }
            }
            expected.push(y);
        }
        for (n, e) in expected.iter().enumerate() {
            let y = f.process_sample(if n == 0 { 1.0 } else { 0.0 });
            assert!((y - e).abs() < 1e-15, "n={n}: {y} vs {e}");
        }
        assert_eq!(f.order(), 3);
    }
}
