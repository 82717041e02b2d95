//! Lattice–ladder (Gray–Markel): the poles live in reflection coefficients k₁…k_M, the zeros in
//! ladder taps v₀…v_M.
//!
//! Conventions (the same as `numeric::stepdown`): Aₘ(z) = Aₘ₋₁(z) + kₘz⁻¹Bₘ₋₁(z), A₀ = 1,
//! Bₘ(z) = z⁻ᵐAₘ(1/z). Per sample, with f_M(n) = x(n):
//!   for m = M … 1:  fₘ₋₁(n) = fₘ(n) − kₘ·gₘ₋₁(n−1),   gₘ(n) = kₘ·fₘ₋₁(n) + gₘ₋₁(n−1);
//!   g₀(n) = f₀(n);  y(n) = Σₘ vₘ·gₘ(n).
//! Then f₀/x = 1/A_M and gₘ/x = Bₘ/A_M, so y/x = C(z)/A_M(z) with C = Σ vₘBₘ. The lattice is
//! stable exactly when every |kₘ| < 1, a test that rounding k cannot make ambiguous.

use crate::numeric::stepdown::step_down;

use super::RealizeError;

/// A running lattice–ladder filter (state f64).
#[derive(Debug, Clone, PartialEq)]
pub struct LatticeLadder {
    /// k₁ … k_M (index 0 holds k₁).
    k: Vec<f64>,
    /// v₀ … v_M.
    v: Vec<f64>,
    /// gₘ(n−1) for m = 0 … M (the last is never read back; it keeps the loop free of branches).
    g: Vec<f64>,
}

impl LatticeLadder {
    /// `v` must have one more entry than `k` (`realize` guarantees it).
    pub(crate) fn new(k: Vec<f64>, v: Vec<f64>) -> Self {
        debug_assert_eq!(v.len(), k.len() + 1);
        let g = vec![0.0; v.len()];
        Self { k, v, g }
    }

    pub fn process_sample(&mut self, x: f64) -> f64 {
        let mut f = x;
        let mut y = 0.0;
        for m in (1..=self.k.len()).rev() {
            let k = self.k[m - 1];
            let g_below = self.g[m - 1];
            f -= k * g_below;
            let g = k * f + g_below;
            y += self.v[m] * g;
            self.g[m] = g;
        }
        if let Some(g0) = self.g.first_mut() {
            *g0 = f;
        }
        y + self.v.first().copied().unwrap_or(0.0) * f
    }

    pub fn reset(&mut self) {
        self.g.fill(0.0);
    }

    /// Number of lattice stages M.
    pub fn order(&self) -> usize {
        self.k.len()
    }

    /// Reflection coefficients as run, k₁ first.
    pub fn reflection(&self) -> &[f64] {
        &self.k
    }

    /// Ladder taps as run, v₀ first.
    pub fn ladder(&self) -> &[f64] {
        &self.v
    }

    /// State as it stands, g₀ … g_M of the previous sample.
    pub(crate) fn state(&self) -> &[f64] {
        &self.g
    }

    /// Coefficients and state at once, for the block kernel.
    pub(crate) fn parts_mut(&mut self) -> (&[f64], &[f64], &mut [f64]) {
        (&self.k, &self.v, &mut self.g)
    }
}

/// Reflection coefficients of the denominator `a` (a[0] = 1), or the stage where |k| ≥ 1.
pub(crate) fn reflection_coefficients(a: &[f64]) -> Result<Vec<f64>, RealizeError> {
    let steps = step_down(a).ok_or(RealizeError::InvalidInput {
        problem: "the denominator is empty or starts with zero".into(),
    })?;
    match steps.stopped_at {
        None => Ok(steps.reflection),
        Some(stage) => Err(RealizeError::LatticeStageUnstable {
            stage,
            k: steps.reflection.first().copied().unwrap_or(f64::NAN),
        }),
    }
}

/// A₀ … A_M built up from `k` by the step-up recursion (Aₘ has m + 1 coefficients, leading 1).
fn step_up_all(k: &[f64]) -> Vec<Vec<f64>> {
    let mut all = vec![vec![1.0]];
    for &km in k {
        let prev = all.last().map_or(&[][..], |p| p.as_slice());
        let m = prev.len();
        let mut next = prev.to_vec();
        next.push(0.0);
        for i in 1..=m {
            next[i] += km * prev[m - i];
        }
        all.push(next);
    }
    all
}

/// Ladder taps v₀ … v_M such that Σ vₘBₘ(z) = C(z), for the lattice `k` and numerator `c`
/// (`c` has M + 1 coefficients).
///
/// Bₘ is the only term reaching z⁻ᵐ with coefficient 1 there, so from the top down:
/// v_M = c_M, then take v_M·B_M out of C and repeat one order lower; this is
/// vₘ = cₘ − Σ_{i>m} vᵢ·αᵢ(i − m) with αᵢ the coefficients of Aᵢ.
pub(crate) fn ladder_taps(k: &[f64], c: &[f64]) -> Vec<f64> {
    let polys = step_up_all(k);
    let mut rest = c.to_vec();
    rest.resize(k.len() + 1, 0.0);
    let mut v = vec![0.0; k.len() + 1];
    for m in (0..=k.len()).rev() {
        v[m] = rest[m];
        let alpha = &polys[m];
        // Bₘ[j] = αₘ(m − j) for j = 0 … m.
        for j in 0..=m {
            rest[j] -= v[m] * alpha[m - j];
        }
    }
    v
}

/// The transfer function C(z)/A_M(z) a lattice–ladder runs, multiplied out.
pub(crate) fn expand_lattice(k: &[f64], v: &[f64]) -> (Vec<f64>, Vec<f64>) {
    let polys = step_up_all(k);
    let order = k.len();
    let mut c = vec![0.0; order + 1];
    for (m, (alpha, &vm)) in polys.iter().zip(v).enumerate() {
        for j in 0..=m {
            c[j] += vm * alpha[m - j];
        }
    }
    let a = polys.into_iter().last().unwrap_or_else(|| vec![1.0]);
    (c, a)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn impulse_response(f: &mut LatticeLadder, n: usize) -> Vec<f64> {
        (0..n)
            .map(|i| f.process_sample(if i == 0 { 1.0 } else { 0.0 }))
            .collect()
    }

    // Source: Proakis & Manolakis, "Digital Signal Processing", lattice structures chapter
    // (from memory): A₃(z) = 1 + (13/24)z⁻¹ + (5/8)z⁻² + (1/3)z⁻³ gives k₁ = 1/4, k₂ = 1/2,
    // k₃ = 1/3. This pins the sign convention of the running lattice too: its all-pole output
    // (v = [1, 0, 0, 0]) must be the impulse response of 1/A₃.
    #[test]
    fn textbook_third_order_reflection_coefficients() {
        let a = [1.0, 13.0 / 24.0, 5.0 / 8.0, 1.0 / 3.0];
        let k = reflection_coefficients(&a).unwrap();
        for (got, want) in k.iter().zip([0.25, 0.5, 1.0 / 3.0]) {
            assert!((got - want).abs() < 1e-15, "{got} vs {want}");
        }
        let v = ladder_taps(&k, &[1.0, 0.0, 0.0, 0.0]);
        for (got, want) in v.iter().zip([1.0, 0.0, 0.0, 0.0]) {
            assert!((got - want).abs() < 1e-15, "{v:?}");
        }
        let mut lattice = LatticeLadder::new(k, v);
        let h = impulse_response(&mut lattice, 30);
        // 1/A₃ by its own difference equation: h(n) = δ(n) − Σ aᵢh(n − i).
        let mut expected: Vec<f64> = Vec::new();
        for n in 0..30 {
            let mut y = if n == 0 { 1.0 } else { 0.0 };
            for i in 1..4 {
                if n >= i {
                    y -= a[i] * expected[n - i];
                }
            }
            expected.push(y);
        }
        for (n, (x, e)) in h.iter().zip(&expected).enumerate() {
            assert!((x - e).abs() < 1e-15, "n={n}: {x} vs {e}");
        }
    }

    // Source: hand derivation at order 1 (common practice). With one stage:
    //   f₀(n) = x(n) − k₁g₀(n−1), g₀ = f₀  ⇒  f₀ = x / (1 + k₁z⁻¹);
    //   g₁(n) = k₁f₀(n) + g₀(n−1)          ⇒  g₁ = (k₁ + z⁻¹) f₀;
    //   y = v₀g₀ + v₁g₁ = (v₀ + v₁k₁ + v₁z⁻¹) / (1 + k₁z⁻¹).
    // So H = (c₀ + c₁z⁻¹)/(1 + a₁z⁻¹) needs k₁ = a₁, v₁ = c₁, v₀ = c₀ − c₁a₁.
    // With c = [2, −0.6], a₁ = 0.8: k₁ = 0.8, v₁ = −0.6, v₀ = 2 + 0.48 = 2.48.
    #[test]
    fn order_one_by_hand() {
        let k = reflection_coefficients(&[1.0, 0.8]).unwrap();
        assert_eq!(k, vec![0.8]);
        let v = ladder_taps(&k, &[2.0, -0.6]);
        assert!((v[0] - 2.48).abs() < 1e-15 && v[1] == -0.6, "{v:?}");
        // Impulse response of (2 − 0.6z⁻¹)/(1 + 0.8z⁻¹): h0 = 2, h(n) = (−0.6 − 1.6)(−0.8)^(n−1).
        let mut f = LatticeLadder::new(k, v);
        let h = impulse_response(&mut f, 12);
        assert!((h[0] - 2.0).abs() < 1e-15);
        for (n, x) in h.iter().enumerate().skip(1) {
            let want = -2.2 * (-0.8f64).powi(n as i32 - 1);
            assert!((x - want).abs() < 1e-14, "n={n}: {x} vs {want}");
        }
    }

    // Source: common practice — a root outside the circle makes a step-down stage fail.
    #[test]
    fn unstable_denominator_names_the_stage() {
        // (1 − 1.25z⁻¹)(1 − 0.5z⁻¹): k₂ = 0.625, then k₁ = −1.75·(1 − 0.625)/(1 − 0.625²) ≈ −1.077.
        match reflection_coefficients(&[1.0, -1.75, 0.625]) {
            Err(RealizeError::LatticeStageUnstable { stage, k }) => {
                assert_eq!(stage, 1);
                assert!(k.abs() >= 1.0);
            }
            other => panic!("expected a failing stage, got {other:?}"),
        }
    }

    // Source: common practice — expanding the lattice gives back the numerator and
    // denominator the taps were computed for.
    #[test]
    fn expansion_inverts_tap_computation() {
        let a = [1.0, -0.3, 0.4, 0.1, -0.05];
        let c = [0.5, 1.0, -2.0, 0.25, 0.75];
        let k = reflection_coefficients(&a).unwrap();
        let v = ladder_taps(&k, &c);
        let (eb, ea) = expand_lattice(&k, &v);
        for (x, y) in eb.iter().zip(c) {
            assert!((x - y).abs() < 1e-14);
        }
        for (x, y) in ea.iter().zip(a) {
            assert!((x - y).abs() < 1e-14);
        }
    }
}
