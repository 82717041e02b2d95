//! One channel's sparse recursion, a run of samples at a time.
//!
//! Inside a run no longer than the shortest recursive delay d₁, y(n − dₖ) lies before the run
//! for every recursive tap, so the run's outputs are independent of one another: each tap is
//! one multiply-add over the whole run from a lagged slice of the history, which the compiler
//! does a vector register at a time. Runs are cut at d₁ (and at the history lines' run area),
//! so a block of any length gives the same output as sample after sample.

use super::super::sparse_recursion::SparseRecursion;
use super::dispatch::Arithmetic;

/// Runs `input` through `filter` into `output` (the shorter length counts), carrying state.
#[inline(always)]
pub fn process<A: Arithmetic>(filter: &mut SparseRecursion, input: &[f64], output: &mut [f64]) {
    let parts = filter.parts_mut();
    let n = input.len().min(output.len());
    let mut done = 0;
    while done < n {
        let len = (n - done).min(parts.run);
        let (xs, ys) = (&input[done..done + len], &mut output[done..done + len]);
        parts.x.make_room(len);
        parts.y.make_room(len);
        parts.x.slots(len).copy_from_slice(xs);
        ys.fill(0.0);
        for tap in parts.numerator {
            let lagged = parts.x.lagged(tap.delay, len);
            for (y, x) in ys.iter_mut().zip(lagged) {
                *y = A::multiply_add(tap.coefficient, *x, *y);
            }
        }
        for tap in parts.denominator {
            let lagged = parts.y.lagged(tap.delay, len);
            for (y, past) in ys.iter_mut().zip(lagged) {
                *y = A::multiply_add(-tap.coefficient, *past, *y);
            }
        }
        parts.y.slots(len).copy_from_slice(ys);
        parts.x.advance(len);
        parts.y.advance(len);
        done += len;
    }
}
