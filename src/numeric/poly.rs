//! Polynomials in z⁻¹ with real coefficients: `c[0] + c[1]·z⁻¹ + … + c[n]·z⁻ⁿ`.
//!
//! The same coefficient vector read as an ordinary polynomial in z (highest power first) has the
//! same non-zero roots, which is why the root finder can work on it directly.

use num_complex::Complex64;

/// Evaluates `Σ c[k]·z⁻ᵏ` at `z` by Horner's rule in w = z⁻¹.
pub fn eval_z_inverse(coefficients: &[f64], z: Complex64) -> Complex64 {
    let w = z.inv();
    coefficients
        .iter()
        .rev()
        .fold(Complex64::new(0.0, 0.0), |acc, &c| acc * w + c)
}

/// Evaluates `Σ c[k]·z⁻ᵏ` with complex coefficients.
pub fn eval_z_inverse_complex(coefficients: &[Complex64], z: Complex64) -> Complex64 {
    let w = z.inv();
    coefficients
        .iter()
        .rev()
        .fold(Complex64::new(0.0, 0.0), |acc, &c| acc * w + c)
}

/// Product of two polynomials (convolution of their coefficient vectors).
pub fn multiply(a: &[f64], b: &[f64]) -> Vec<f64> {
    if a.is_empty() || b.is_empty() {
        return Vec::new();
    }
    let mut out = vec![0.0; a.len() + b.len() - 1];
    for (i, &x) in a.iter().enumerate() {
        for (j, &y) in b.iter().enumerate() {
            out[i + j] += x * y;
        }
    }
    out
}

/// Number of leading zero coefficients: each one is a sample of pure delay in front of the rest.
pub fn leading_zeros(coefficients: &[f64]) -> usize {
    coefficients.iter().take_while(|&&c| c == 0.0).count()
}

/// Drops trailing zero coefficients (they add roots at z = 0 in the z-form only as padding).
pub fn trim_trailing_zeros(coefficients: &[f64]) -> &[f64] {
    let end = coefficients
        .iter()
        .rposition(|&c| c != 0.0)
        .map_or(0, |p| p + 1);
    &coefficients[..end]
}

/// Expands `gain · Π (1 − r·z⁻¹)` into real coefficients.
///
/// Returns `None` when the roots do not come in conjugate pairs closely enough for the product to
/// be real (imaginary residue above `1e-9` relative to the largest coefficient).
pub fn from_roots(gain: f64, roots: &[Complex64]) -> Option<Vec<f64>> {
    let mut acc = vec![Complex64::new(gain, 0.0)];
    for &r in roots {
        let mut next = vec![Complex64::new(0.0, 0.0); acc.len() + 1];
        for (i, &c) in acc.iter().enumerate() {
            next[i] += c;
            next[i + 1] -= c * r;
        }
        acc = next;
    }
    let scale = acc
        .iter()
        .map(|c| c.norm())
        .fold(0.0_f64, f64::max)
        .max(1e-300);
    if acc.iter().any(|c| c.im.abs() > 1e-9 * scale) {
        return None;
    }
    Some(acc.iter().map(|c| c.re).collect())
}

/// Coefficients reversed: `z⁻ⁿ·P(1/z)`, whose roots are the reciprocals of P's.
pub fn reversed(coefficients: &[f64]) -> Vec<f64> {
    coefficients.iter().rev().copied().collect()
}

/// Pads two coefficient vectors with trailing zeros to a common length.
pub fn padded_pair(b: &[f64], a: &[f64]) -> (Vec<f64>, Vec<f64>) {
    let n = b.len().max(a.len());
    let mut bp = b.to_vec();
    let mut ap = a.to_vec();
    bp.resize(n, 0.0);
    ap.resize(n, 0.0);
    (bp, ap)
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source for these checks: common practice (polynomial algebra).
    #[test]
    fn multiply_then_evaluate_is_product_of_values() {
        let a = [1.0, -0.5, 0.25];
        let b = [2.0, 0.3];
        let p = multiply(&a, &b);
        let z = Complex64::from_polar(0.9, 0.7);
        let lhs = eval_z_inverse(&p, z);
        let rhs = eval_z_inverse(&a, z) * eval_z_inverse(&b, z);
        assert!((lhs - rhs).norm() < 1e-12);
    }

    #[test]
    fn from_roots_rejects_unpaired_complex_root() {
        let r = Complex64::new(0.3, 0.4);
        assert!(from_roots(1.0, &[r]).is_none());
        let pair = from_roots(1.0, &[r, r.conj()]).unwrap();
        assert_eq!(pair.len(), 3);
        assert!((pair[1] + 0.6).abs() < 1e-15);
        assert!((pair[2] - 0.25).abs() < 1e-15);
    }

    #[test]
    fn leading_and_trailing_zeros() {
        assert_eq!(leading_zeros(&[0.0, 0.0, 1.0, 0.5]), 2);
        assert_eq!(trim_trailing_zeros(&[1.0, 0.5, 0.0, 0.0]), &[1.0, 0.5]);
        assert!(trim_trailing_zeros(&[0.0, 0.0]).is_empty());
    }
}
