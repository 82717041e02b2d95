//! One channel's lattice–ladder filter, a block at a time.
//!
//! The stages of one sample form a chain (f passes down through every stage), but sample n + 1
//! can start its top stage as soon as sample n has updated the g it needs, so the processor
//! overlaps consecutive samples by itself once the inner loop is free of bounds checks and
//! branches. The operations and their order are those of [`LatticeLadder::process_sample`].

use super::super::LatticeLadder;
use super::dispatch::{Arithmetic, Plain};

/// Runs `input` through `filter` into `output` (the shorter length counts), carrying state.
#[inline(always)]
/// Always the plain arithmetic: fusing changes the rounding, and a high-order direct form
/// or a lattice with |k| near 1 amplifies that past the 1e-12 the fast paths promise.
pub fn process(filter: &mut LatticeLadder, input: &[f64], output: &mut [f64]) {
    let (k, v, g) = filter.parts_mut();
    let order = k.len();
    let v0 = v[0];
    // Stage m (1-based) uses k[m−1], v[m], reads g[m−1] and writes g[m]; run m = M … 1.
    let v = &v[1..=order];
    let g = &mut g[..=order];
    for (x, y_out) in input.iter().zip(output.iter_mut()) {
        let mut f = *x;
        let mut y = 0.0;
        for m in (0..order).rev() {
            let (f_next, gm, y_next) = Plain::lattice_stage(k[m], g[m], f, v[m], y);
            (f, y) = (f_next, y_next);
            g[m + 1] = gm;
        }
        g[0] = f;
        *y_out = y + v0 * f;
    }
}
