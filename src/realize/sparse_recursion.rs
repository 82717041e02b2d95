//! The difference equation y(n) = Σ bₖ·x(n − eₖ) − Σ aₖ·y(n − dₖ) with only its non-zero taps:
//! the exact inverse of an echo channel g₀ + Σ gₖz^−Dₖ is 1/(g₀ + Σ gₖz^−Dₖ), a recursion of
//! order max Dₖ with a handful of taps, which the dense structures run at the cost of its order.
//!
//! Only the non-zero taps are stored and touched; the past of x and y is kept in
//! [`HistoryLine`]s sized by the longest delay; state in f64. A run of samples no longer than the
//! shortest recursive delay depends only on outputs already computed, so it is filtered a tap at
//! a time over the whole run ([`super::kernels`]), which vector registers do several samples at a
//! time.

use serde::Serialize;

use super::history_line::HistoryLine;
use super::kernels::dispatch::Plain;
use super::kernels::sparse_block;

/// One non-zero coefficient of a sparse polynomial in z⁻¹ and its delay in samples.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SparseTap {
    pub delay: usize,
    pub coefficient: f64,
}

/// The non-zero coefficients of `dense` (coefficient k at delay k), in delay order.
pub fn sparse_taps(dense: &[f64]) -> Vec<SparseTap> {
    dense
        .iter()
        .enumerate()
        .filter(|(_, c)| **c != 0.0)
        .map(|(delay, &coefficient)| SparseTap { delay, coefficient })
        .collect()
}

/// Coefficients a direct form of `b`/`a` (trailing zeros dropped) touches a sample: every bₖ and
/// every aₖ past a₀. The figure a sparse recursion's non-zero taps are weighed against.
pub fn dense_direct_form_taps(b: &[f64], a: &[f64]) -> usize {
    let b = crate::numeric::poly::trim_trailing_zeros(b);
    let a = crate::numeric::poly::trim_trailing_zeros(a);
    b.len() + a.len().saturating_sub(1)
}

/// A running sparse recursion (a₀ = 1, state f64).
#[derive(Debug, Clone, PartialEq)]
pub struct SparseRecursion {
    /// Non-zero bₖ with their delays.
    numerator: Vec<SparseTap>,
    /// Non-zero aₖ for k ≥ 1 with their delays (a₀ = 1 is not stored).
    denominator: Vec<SparseTap>,
    order: usize,
    /// Longest run of samples whose outputs depend only on earlier runs: the shortest
    /// recursive delay, capped by the history lines' run area.
    run: usize,
    x: HistoryLine,
    y: HistoryLine,
}

impl SparseRecursion {
    /// `b`, `a` dense with a[0] = 1 (`realize` guarantees it); zeros are dropped here.
    pub(crate) fn new(b: &[f64], a: &[f64]) -> Self {
        debug_assert_eq!(a.first(), Some(&1.0));
        let numerator = sparse_taps(b);
        let denominator: Vec<SparseTap> = sparse_taps(a).into_iter().skip(1).collect();
        let order = b.len().max(a.len()).saturating_sub(1);
        let x_span = numerator.last().map_or(0, |t| t.delay);
        let y_span = denominator.last().map_or(0, |t| t.delay);
        let x = HistoryLine::new(x_span);
        let y = HistoryLine::new(y_span);
        let shortest_recursive = denominator.first().map_or(usize::MAX, |t| t.delay);
        let run = shortest_recursive.min(x.run()).min(y.run()).max(1);
        Self {
            numerator,
            denominator,
            order,
            run,
            x,
            y,
        }
    }

    pub fn process_sample(&mut self, x: f64) -> f64 {
        let mut y = [0.0];
        sparse_block::process::<Plain>(self, &[x], &mut y);
        y[0]
    }

    pub fn reset(&mut self) {
        self.x.reset();
        self.y.reset();
    }

    /// Order of the difference equation (the longest delay).
    pub fn order(&self) -> usize {
        self.order
    }

    /// Non-zero numerator taps as run.
    pub fn numerator(&self) -> &[SparseTap] {
        &self.numerator
    }

    /// Non-zero denominator taps after a₀ = 1, as run.
    pub fn denominator(&self) -> &[SparseTap] {
        &self.denominator
    }

    /// Multiply-adds per sample: one per stored tap.
    pub fn taps_touched(&self) -> usize {
        self.numerator.len() + self.denominator.len()
    }

    /// Everything the block kernel needs at once.
    pub(crate) fn parts_mut(&mut self) -> SparseParts<'_> {
        SparseParts {
            numerator: &self.numerator,
            denominator: &self.denominator,
            run: self.run,
            x: &mut self.x,
            y: &mut self.y,
        }
    }
}

/// Borrowed pieces of a [`SparseRecursion`] for its block kernel.
pub(crate) struct SparseParts<'a> {
    pub numerator: &'a [SparseTap],
    pub denominator: &'a [SparseTap],
    pub run: usize,
    pub x: &'a mut HistoryLine,
    pub y: &'a mut HistoryLine,
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — the inverse of the echo channel 1 + 0.5z⁻³ is the recursion
    // y(n) = x(n) − 0.5·y(n − 3), whose impulse response is (−0.5)^k at n = 3k and 0 elsewhere.
    #[test]
    fn impulse_response_of_a_single_echo_inverse() {
        let mut f = SparseRecursion::new(&[1.0], &[1.0, 0.0, 0.0, 0.5]);
        assert_eq!(f.taps_touched(), 2);
        assert_eq!(f.order(), 3);
        for n in 0..40 {
            let y = f.process_sample(if n == 0 { 1.0 } else { 0.0 });
            let expected = if n % 3 == 0 {
                (-0.5f64).powi(n / 3)
            } else {
                0.0
            };
            assert_eq!(y, expected, "n = {n}");
        }
    }

    // Source: common practice — a sparse FIR x(n) + 2·x(n − 5) is its own taps.
    #[test]
    fn sparse_fir_without_recursion() {
        let mut f = SparseRecursion::new(&[1.0, 0.0, 0.0, 0.0, 0.0, 2.0], &[1.0]);
        let h: Vec<f64> = (0..8)
            .map(|n| f.process_sample(if n == 0 { 1.0 } else { 0.0 }))
            .collect();
        assert_eq!(h, vec![1.0, 0.0, 0.0, 0.0, 0.0, 2.0, 0.0, 0.0]);
        f.reset();
        assert_eq!(f.process_sample(0.0), 0.0);
    }
}
