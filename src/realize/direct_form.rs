//! Direct form II transposed: one difference equation of the full order, N delay elements.
//!
//! y(n) = b₀x(n) + s₁(n−1);  sᵢ(n) = bᵢx(n) − aᵢy(n) + sᵢ₊₁(n−1);  s_N(n) = b_N x(n) − a_N y(n).
//! The simplest structure, and the most sensitive: every pole moves when any aᵢ is rounded.

/// A running direct form II transposed filter (a[0] = 1, state f64).
#[derive(Debug, Clone, PartialEq)]
pub struct DirectForm2T {
    b: Vec<f64>,
    a: Vec<f64>,
    state: Vec<f64>,
}

impl DirectForm2T {
    /// `b` and `a` must have the same length with a[0] = 1 (`realize` guarantees both).
    pub(crate) fn new(b: Vec<f64>, a: Vec<f64>) -> Self {
        debug_assert_eq!(b.len(), a.len());
        debug_assert_eq!(a.first(), Some(&1.0));
        let order = a.len().saturating_sub(1);
        Self {
            b,
            a,
            state: vec![0.0; order],
        }
    }

    pub fn process_sample(&mut self, x: f64) -> f64 {
        let n = self.state.len();
        let b0 = self.b.first().copied().unwrap_or(0.0);
        let y = b0 * x + self.state.first().copied().unwrap_or(0.0);
        for i in 0..n {
            let carried = self.state.get(i + 1).copied().unwrap_or(0.0);
            self.state[i] = self.b[i + 1] * x - self.a[i + 1] * y + carried;
        }
        y
    }

    pub fn reset(&mut self) {
        self.state.fill(0.0);
    }

    /// Order of the difference equation (number of delay elements).
    pub fn order(&self) -> usize {
        self.state.len()
    }

    /// Numerator as run (rounded to the run precision).
    pub fn b(&self) -> &[f64] {
        &self.b
    }

    /// Denominator as run (a[0] = 1, rounded to the run precision).
    pub fn a(&self) -> &[f64] {
        &self.a
    }

    /// State as it stands, s₁ … s_N.
    pub(crate) fn state(&self) -> &[f64] {
        &self.state
    }

    /// Coefficients and state at once, for the block kernel.
    pub(crate) fn parts_mut(&mut self) -> (&[f64], &[f64], &mut [f64]) {
        (&self.b, &self.a, &mut self.state)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — the impulse response of 1/(1 − 0.5 z⁻¹) is 0.5ⁿ, and of the
    // FIR 1 + 2z⁻¹ + 3z⁻² is its taps.
    #[test]
    fn impulse_responses_of_simple_filters() {
        let mut f = DirectForm2T::new(vec![1.0, 0.0], vec![1.0, -0.5]);
        for n in 0..20 {
            let y = f.process_sample(if n == 0 { 1.0 } else { 0.0 });
            assert_eq!(y, 0.5f64.powi(n));
        }
        let mut fir = DirectForm2T::new(vec![1.0, 2.0, 3.0], vec![1.0, 0.0, 0.0]);
        let h: Vec<f64> = (0..5)
            .map(|n| fir.process_sample(if n == 0 { 1.0 } else { 0.0 }))
            .collect();
        assert_eq!(h, vec![1.0, 2.0, 3.0, 0.0, 0.0]);
        assert_eq!(fir.order(), 2);
    }

    // Source: common practice — order 0 is a plain gain.
    #[test]
    fn order_zero_is_a_gain() {
        let mut f = DirectForm2T::new(vec![-2.5], vec![1.0]);
        assert_eq!(f.process_sample(2.0), -5.0);
        assert_eq!(f.order(), 0);
    }
}
