//! Roots of a polynomial in z⁻¹, as points of the z-plane.
//!
//! Method: eigenvalues of the companion matrix (nalgebra's real Schur decomposition), then a
//! Newton polish on the original polynomial, then coincident roots are gathered into one root
//! with a multiplicity. Eigenvalue solvers scatter an m-fold root over a circle of radius about
//! ε^(1/m); the mean of the cluster is far more accurate than any member, so that is what we keep.

use nalgebra::DMatrix;
use num_complex::Complex64;

/// Largest order whose roots the rest of redress asks for. The companion matrix's eigenvalues
/// cost O(n³) (about a second at this order in a debug build, minutes at 4096), and the roots of
/// a long polynomial with clustered zeros come out too inexact to multiply back into it; above
/// this order zeros are counted and bounded without being computed (`numeric::winding`).
pub const AFFORDABLE_ORDER: usize = 256;

/// A root of a polynomial, with how many times it repeats.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Root {
    pub value: Complex64,
    pub multiplicity: usize,
}

impl Root {
    pub fn radius(&self) -> f64 {
        self.value.norm()
    }
    /// Angle in radians, in (−π, π].
    pub fn angle(&self) -> f64 {
        self.value.arg()
    }
}

/// Why roots could not be found.
#[derive(Debug, Clone, PartialEq)]
pub enum RootError {
    /// The leading coefficient is zero: strip leading zeros (bulk delay) before asking for roots.
    LeadingZero,
    /// The eigenvalue iteration did not converge within its iteration budget.
    NoConvergence { order: usize },
}

impl std::fmt::Display for RootError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            RootError::LeadingZero => write!(f, "leading coefficient is zero"),
            RootError::NoConvergence { order } => write!(
                f,
                "root finding did not converge for a polynomial of order {order}"
            ),
        }
    }
}

impl std::error::Error for RootError {}

/// Relative distance under which two polished roots are taken to be one repeated root.
///
/// A double root scatters by about √ε ≈ 1.5e-8 and a triple one by a few times ∛ε ≈ 6e-6
/// (1.3e-5 seen for (1 − z⁻¹)³), so 5e-5 gathers both; fourfold and higher roots may be listed as
/// separate close roots (their values are still right to about ε^(1/m)). Distinct roots this
/// close are numerically indistinguishable from a repeated one in f64 anyway.
const COINCIDENCE_TOLERANCE: f64 = 5e-5;

/// Finds the roots of `c[0] + c[1]·z⁻¹ + … + c[n]·z⁻ⁿ` in the z-plane, each with its multiplicity.
///
/// The polynomial read in z is `c[0]·zⁿ + … + c[n]`; trailing zeros give roots at z = 0.
/// The leading coefficient must be non-zero.
pub fn find_roots(coefficients: &[f64]) -> Result<Vec<Root>, RootError> {
    let c = coefficients;
    if c.is_empty() || c[0] == 0.0 {
        return Err(RootError::LeadingZero);
    }
    let order = c.len() - 1;
    if order == 0 {
        return Ok(Vec::new());
    }
    // Trailing zeros are exact roots at the origin; keep them out of the eigenproblem.
    let origin_roots = c.iter().rev().take_while(|&&x| x == 0.0).count();
    let reduced = &c[..c.len() - origin_roots];
    let raw = if reduced.len() > 1 {
        companion_eigenvalues(reduced)?
    } else {
        Vec::new()
    };
    let mut roots = gather_coincident(&raw);
    for root in roots.iter_mut() {
        // An m-fold root of p is a simple root of p^(m−1): polish there, where Newton converges
        // quadratically.
        let derivative = differentiate(reduced, root.multiplicity - 1);
        root.value = newton_polish(&derivative, root.value);
    }
    if origin_roots > 0 {
        roots.push(Root {
            value: Complex64::new(0.0, 0.0),
            multiplicity: origin_roots,
        });
    }
    roots.sort_by(|x, y| {
        y.radius()
            .total_cmp(&x.radius())
            .then(x.angle().total_cmp(&y.angle()))
    });
    Ok(roots)
}

/// Every root listed as many times as its multiplicity.
pub fn expand(roots: &[Root]) -> Vec<Complex64> {
    roots
        .iter()
        .flat_map(|r| std::iter::repeat_n(r.value, r.multiplicity))
        .collect()
}

fn companion_eigenvalues(c: &[f64]) -> Result<Vec<Complex64>, RootError> {
    let n = c.len() - 1;
    if n == 1 {
        return Ok(vec![Complex64::new(-c[1] / c[0], 0.0)]);
    }
    // Companion matrix of the monic polynomial zⁿ + p₁zⁿ⁻¹ + … + pₙ, pᵢ = cᵢ/c₀.
    let mut m = DMatrix::<f64>::zeros(n, n);
    for j in 0..n {
        m[(0, j)] = -c[j + 1] / c[0];
    }
    for i in 1..n {
        m[(i, i - 1)] = 1.0;
    }
    let max_iterations = 100 * n.max(10);
    if let Some(schur) = nalgebra::linalg::Schur::try_new(m.clone(), f64::EPSILON, max_iterations) {
        return Ok(to_complex(&schur.complex_eigenvalues()));
    }
    // The shifted QR iteration can stall on companion matrices whose roots are spread evenly
    // round a circle (a single echo 1 + g·z⁻ᴺ is exactly that): the matrix is close to a cyclic
    // permutation, on which the standard shifts make no progress. An orthogonal similarity
    // H·M·H (H a Householder reflector) has the same eigenvalues but a different Hessenberg
    // form, which breaks the symmetry; try a few fixed, irregular reflectors.
    for attempt in 1..=3u32 {
        let h = householder(n, attempt);
        let rotated = &h * &m * &h;
        if let Some(schur) = nalgebra::linalg::Schur::try_new(rotated, f64::EPSILON, max_iterations)
        {
            return Ok(to_complex(&schur.complex_eigenvalues()));
        }
    }
    Err(RootError::NoConvergence { order: n })
}

fn to_complex(eig: &nalgebra::DVector<num_complex::Complex<f64>>) -> Vec<Complex64> {
    eig.iter().map(|e| Complex64::new(e.re, e.im)).collect()
}

/// I − 2·v·vᵀ/‖v‖² for a fixed, irregular v (deterministic, so results are repeatable).
fn householder(n: usize, attempt: u32) -> DMatrix<f64> {
    let v = nalgebra::DVector::<f64>::from_fn(n, |i, _| {
        // Fractional parts of multiples of an irrational number: irregular, never all zero.
        let x = (i as f64 + 1.0) * (std::f64::consts::SQRT_2 + f64::from(attempt));
        x - x.floor() + 0.1
    });
    let norm2 = v.dot(&v);
    DMatrix::<f64>::identity(n, n) - (&v * v.transpose()) * (2.0 / norm2)
}

/// Coefficients of the `times`-th derivative of the z-form polynomial `c[0]·zⁿ + … + c[n]`.
fn differentiate(c: &[f64], times: usize) -> Vec<f64> {
    let mut p = c.to_vec();
    for _ in 0..times {
        let n = p.len() - 1;
        p = p[..n]
            .iter()
            .enumerate()
            .map(|(i, &x)| x * (n - i) as f64)
            .collect();
    }
    p
}

/// p(z) and p'(z) for the z-form polynomial `c[0]·zⁿ + … + c[n]`.
fn value_and_slope(c: &[f64], z: Complex64) -> (Complex64, Complex64) {
    let mut p = Complex64::new(0.0, 0.0);
    let mut dp = Complex64::new(0.0, 0.0);
    for &ci in c {
        dp = dp * z + p;
        p = p * z + ci;
    }
    (p, dp)
}

/// A few Newton steps on the original polynomial; a step is kept only if it lowers |p|.
fn newton_polish(c: &[f64], start: Complex64) -> Complex64 {
    let mut z = start;
    let (mut p, mut dp) = value_and_slope(c, z);
    for _ in 0..8 {
        if dp.norm() == 0.0 || p.norm() == 0.0 {
            break;
        }
        let candidate = z - p / dp;
        let (pc, dpc) = value_and_slope(c, candidate);
        if pc.norm().partial_cmp(&p.norm()) != Some(std::cmp::Ordering::Less) {
            break;
        }
        z = candidate;
        p = pc;
        dp = dpc;
    }
    // Real polynomials have real roots exactly real: clear round-off imaginary parts.
    if z.im.abs() <= 1e-14 * z.norm().max(1.0) {
        z.im = 0.0;
    }
    z
}

fn gather_coincident(raw: &[Complex64]) -> Vec<Root> {
    let mut used = vec![false; raw.len()];
    let mut out = Vec::new();
    for i in 0..raw.len() {
        if used[i] {
            continue;
        }
        used[i] = true;
        let mut members = vec![raw[i]];
        // Grow the cluster transitively: members of a scattered multiple root sit on a small ring.
        let mut grew = true;
        while grew {
            grew = false;
            for j in 0..raw.len() {
                if !used[j]
                    && members
                        .iter()
                        .any(|m| (raw[j] - m).norm() <= COINCIDENCE_TOLERANCE * m.norm().max(1.0))
                {
                    used[j] = true;
                    members.push(raw[j]);
                    grew = true;
                }
            }
        }
        let mut value = members.iter().sum::<Complex64>() / members.len() as f64;
        if value.im.abs() <= 1e-12 * value.norm().max(1.0) {
            value.im = 0.0;
        }
        out.push(Root {
            value,
            multiplicity: members.len(),
        });
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source for these checks: common practice (roots of polynomials built from known factors).
    #[test]
    fn quadratic_with_complex_pair() {
        // (1 − 0.9e^{jπ/3} z⁻¹)(1 − 0.9e^{−jπ/3} z⁻¹) = 1 − 0.9 z⁻¹ + 0.81 z⁻²
        let roots = find_roots(&[1.0, -0.9, 0.81]).unwrap();
        assert_eq!(roots.len(), 2);
        for r in &roots {
            assert!((r.radius() - 0.9).abs() < 1e-14);
            assert!((r.angle().abs() - std::f64::consts::FRAC_PI_3).abs() < 1e-14);
        }
    }

    #[test]
    fn repeated_root_is_gathered_with_multiplicity() {
        // (1 − 0.5 z⁻¹)³ = 1 − 1.5 z⁻¹ + 0.75 z⁻² − 0.125 z⁻³
        let roots = find_roots(&[1.0, -1.5, 0.75, -0.125]).unwrap();
        assert_eq!(roots.len(), 1);
        assert_eq!(roots[0].multiplicity, 3);
        assert!((roots[0].value - Complex64::new(0.5, 0.0)).norm() < 1e-9);
    }

    #[test]
    fn triple_root_on_the_circle_is_gathered() {
        // (1 − z⁻¹)³ = 1 − 3z⁻¹ + 3z⁻² − z⁻³
        let roots = find_roots(&[1.0, -3.0, 3.0, -1.0]).unwrap();
        assert_eq!(roots.len(), 1);
        assert_eq!(roots[0].multiplicity, 3);
        assert!((roots[0].value - Complex64::new(1.0, 0.0)).norm() < 1e-9);
    }

    #[test]
    fn all_roots_at_origin() {
        let roots = find_roots(&[1.0, 0.0, 0.0]).unwrap();
        assert_eq!(roots.len(), 1);
        assert_eq!(roots[0].multiplicity, 2);
        assert_eq!(roots[0].value, Complex64::new(0.0, 0.0));
    }

    #[test]
    fn trailing_zero_is_a_root_at_origin() {
        let roots = find_roots(&[1.0, -0.5, 0.0]).unwrap();
        assert!(roots
            .iter()
            .any(|r| r.value.norm() == 0.0 && r.multiplicity == 1));
        assert!(roots
            .iter()
            .any(|r| (r.value.re - 0.5).abs() < 1e-15 && r.multiplicity == 1));
    }

    // Source: common practice — 1 + g·z⁻ᴺ has N zeros of radius g^(1/N), evenly spaced.
    #[test]
    fn single_echo_with_even_delay() {
        for n in 2..=64usize {
            let mut c = vec![0.0; n + 1];
            c[0] = 1.0;
            c[n] = 0.5;
            let roots = find_roots(&c).unwrap_or_else(|e| panic!("N = {n}: {e}"));
            let count: usize = roots.iter().map(|r| r.multiplicity).sum();
            assert_eq!(count, n);
            for r in &roots {
                assert!(
                    (r.radius() - 0.5f64.powf(1.0 / n as f64)).abs() < 1e-12,
                    "N = {n}"
                );
            }
        }
    }

    #[test]
    fn leading_zero_is_refused() {
        assert_eq!(find_roots(&[0.0, 1.0]), Err(RootError::LeadingZero));
    }
}
