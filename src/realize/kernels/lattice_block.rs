//! One channel's lattice–ladder filter, a block at a time.
//!
//! The stages of one sample form a chain (f passes down through every stage), but sample n + 1
//! can start its top stage as soon as sample n has updated the g it needs, so the processor
//! overlaps consecutive samples by itself once the inner loop is free of bounds checks and
//! branches. The operations and their order are those of [`LatticeLadder::process_sample`].

use super::super::LatticeLadder;

/// Runs `input` through `filter` into `output` (the shorter length counts), carrying state.
#[inline(always)]
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
            let km = k[m];
            let g_below = g[m];
            f -= km * g_below;
            let gm = km * f + g_below;
            y += v[m] * gm;
            g[m + 1] = gm;
        }
        g[0] = f;
        *y_out = y + v0 * f;
    }
}
