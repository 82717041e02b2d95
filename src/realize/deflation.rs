//! Refines the roots of a polynomial so that the product of their factors reproduces it.
//!
//! Roots polished one by one on the original polynomial are each as accurate as their
//! conditioning allows, but close roots are ill-conditioned: each may be off by far more than
//! round-off, and the product of the factors then misses the polynomial's coefficients by as
//! much. Sections need the product right, not each root. So the roots are taken smallest first,
//! each polished by Newton's method on what is left of the polynomial after the earlier factors
//! were divided out, then divided out itself. The remainders thrown away are at round-off level,
//! so the factors multiply back to the polynomial to about machine precision relative
//! (backward stability); forward division is stable in this order (Wilkinson's rule).

use num_complex::Complex64;

use super::pairing::RootGroup;

/// `groups` (the real factors of `c`, `c[0] ≠ 0`, no roots at the origin) refined by deflation.
pub(crate) fn refine_by_deflation(c: &[f64], groups: &[RootGroup]) -> Vec<RootGroup> {
    let Some(&lead) = c.first() else {
        return groups.to_vec();
    };
    let mut rest: Vec<f64> = c.iter().map(|x| x / lead).collect();
    let mut ordered = groups.to_vec();
    ordered.sort_by(|x, y| magnitude(*x).total_cmp(&magnitude(*y)));
    let mut out = Vec::with_capacity(ordered.len());
    for group in ordered {
        match group {
            RootGroup::Real(r) => {
                let r = polish(&rest, Complex64::new(r, 0.0)).re;
                rest = divide(&rest, &[1.0, -r]);
                out.push(RootGroup::Real(r));
            }
            RootGroup::Pair(z) => {
                let z = polish(&rest, z);
                // Keep the member above the axis; a pair polished onto the axis stays a real
                // quadratic factor, which is all a section needs.
                let z = Complex64::new(z.re, z.im.abs());
                rest = divide(&rest, &[1.0, -2.0 * z.re, z.norm_sqr()]);
                out.push(RootGroup::Pair(z));
            }
        }
    }
    out
}

fn magnitude(g: RootGroup) -> f64 {
    match g {
        RootGroup::Pair(z) => z.norm(),
        RootGroup::Real(r) => r.abs(),
    }
}

/// p(z), p'(z) for `p[0]·zⁿ + … + p[n]` by Horner's rule.
fn value_and_slope(p: &[f64], z: Complex64) -> (Complex64, Complex64) {
    let mut v = Complex64::new(0.0, 0.0);
    let mut d = Complex64::new(0.0, 0.0);
    for &c in p {
        d = d * z + v;
        v = v * z + c;
    }
    (v, d)
}

/// Newton steps on `p` from `start`, each kept only if it lowers |p| (so it cannot wander off).
fn polish(p: &[f64], start: Complex64) -> Complex64 {
    let mut z = start;
    let (mut v, mut d) = value_and_slope(p, z);
    for _ in 0..10 {
        if v.norm() == 0.0 || d.norm() == 0.0 {
            break;
        }
        let next = z - v / d;
        let (nv, nd) = value_and_slope(p, next);
        if nv.norm() >= v.norm()
            || nv.norm().is_nan()
            || !next.re.is_finite()
            || !next.im.is_finite()
        {
            break;
        }
        z = next;
        v = nv;
        d = nd;
    }
    z
}

/// Quotient of `p` (leading coefficient first) by the monic `divisor`; the remainder is dropped.
fn divide(p: &[f64], divisor: &[f64]) -> Vec<f64> {
    let m = divisor.len() - 1;
    if p.len() <= m {
        return vec![1.0];
    }
    let mut work = p.to_vec();
    let n = p.len() - m;
    for i in 0..n {
        let q = work[i];
        for (j, &d) in divisor.iter().enumerate().skip(1) {
            work[i + j] -= q * d;
        }
    }
    work.truncate(n);
    work
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::numeric::poly::from_roots;

    // Source: common practice — two roots 1e-6 apart are individually ill-conditioned, but
    // their refined factors must multiply back to the polynomial to round-off.
    #[test]
    fn close_roots_multiply_back_exactly() {
        let roots = [
            Complex64::new(0.9, 0.0),
            Complex64::new(0.900001, 0.0),
            Complex64::from_polar(0.95, 0.2),
            Complex64::from_polar(0.95, -0.2),
            Complex64::new(-0.3, 0.0),
        ];
        let c = from_roots(1.0, &roots).unwrap();
        // Start from deliberately perturbed roots.
        let start = [
            RootGroup::Real(0.8999),
            RootGroup::Real(0.9001),
            RootGroup::Pair(Complex64::from_polar(0.9501, 0.2001)),
            RootGroup::Real(-0.3001),
        ];
        let refined = refine_by_deflation(&c, &start);
        let mut product = vec![1.0];
        for g in &refined {
            let f = match g {
                RootGroup::Real(r) => vec![1.0, -r],
                RootGroup::Pair(z) => vec![1.0, -2.0 * z.re, z.norm_sqr()],
            };
            product = crate::numeric::poly::multiply(&product, &f);
        }
        for (x, y) in product.iter().zip(&c) {
            assert!((x - y).abs() < 1e-14, "{product:?} vs {c:?}");
        }
    }

    // Source: common practice — synthetic division by (z − 2) of z² − 3z + 2 gives z − 1.
    #[test]
    fn division_drops_the_remainder() {
        assert_eq!(divide(&[1.0, -3.0, 2.0], &[1.0, -2.0]), vec![1.0, -1.0]);
        assert_eq!(divide(&[1.0, -3.0, 2.5], &[1.0, -2.0]), vec![1.0, -1.0]);
    }
}
