//! One channel's direct form II transposed filter, a block at a time.
//!
//! Per sample the state update s[i] = b[i+1]·x − a[i+1]·y + s[i+1] reads only the old s[i+1],
//! so for a given y all N updates are independent: written over slices of one length (no
//! index arithmetic, no bounds checks, no branch for the last element) the compiler runs them
//! in vector lanes. The operations and their order are those of
//! [`DirectForm2T::process_sample`], so the output is the same to the bit.

use super::super::DirectForm2T;

/// Runs `input` through `filter` into `output` (the shorter length counts), carrying state.
#[inline(always)]
pub fn process(filter: &mut DirectForm2T, input: &[f64], output: &mut [f64]) {
    let (b, a, state) = filter.parts_mut();
    let b0 = b[0];
    let order = state.len();
    if order == 0 {
        for (x, y) in input.iter().zip(output.iter_mut()) {
            *y = b0 * x;
        }
        return;
    }
    // b[1..], a[1..] split into the N − 1 updates that read a successor and the last one,
    // which adds an explicit 0.0 as the per-sample code does.
    let (b, b_last) = (&b[1..order], b[order]);
    let (a, a_last) = (&a[1..order], a[order]);
    let state = &mut state[..order];
    for (x, y_out) in input.iter().zip(output.iter_mut()) {
        let x = *x;
        let y = b0 * x + state[0];
        for i in 0..order - 1 {
            state[i] = b[i] * x - a[i] * y + state[i + 1];
        }
        state[order - 1] = b_last * x - a_last * y + 0.0;
        *y_out = y;
    }
}
