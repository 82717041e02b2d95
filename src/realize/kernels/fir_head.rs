//! A short FIR over a run of samples: out[i] = Σⱼ h[j]·x[at + i − j], the direct-form head of
//! the partitioned convolution.
//!
//! Written output-major, a window of outputs at a time: for each tap, one multiply-add of the
//! whole window from the input shifted by that tap, with the window's sums held in registers
//! (the compiler turns the fixed-size arrays into vector registers). The window reads up to
//! `HEAD_WINDOW − 1` samples past the run's last input: the caller's buffer has that much slack,
//! and the sums there are discarded.

use super::dispatch::Arithmetic;

/// Outputs per window (four AVX-512 registers, eight AVX2 ones).
pub const HEAD_WINDOW: usize = 32;
/// Window for short runs (one AVX-512 register).
const SHORT_WINDOW: usize = 8;

/// `out[i] = Σⱼ taps[j]·x[at + i − j]` for i < out.len(). Needs `at + 1 ≥ taps.len()` and
/// `x.len() ≥ at + out.len() + HEAD_WINDOW − 1` (the slack past the run); otherwise the outputs
/// are left as they were.
#[inline(always)]
pub fn convolve_head<A: Arithmetic>(taps: &[f64], x: &[f64], at: usize, out: &mut [f64]) {
    if at + 1 < taps.len() || x.len() + 1 < at + out.len() + HEAD_WINDOW {
        return;
    }
    let mut i0 = 0;
    while i0 < out.len() {
        let len = out.len() - i0;
        let start = at + i0;
        if len <= SHORT_WINDOW {
            window::<A, SHORT_WINDOW>(taps, x, start, &mut out[i0..]);
            i0 += len;
        } else {
            let len = len.min(HEAD_WINDOW);
            window::<A, HEAD_WINDOW>(taps, x, start, &mut out[i0..i0 + len]);
            i0 += len;
        }
    }
}

/// One window of `W` outputs starting at input index `start`; the first `out.len()` ≤ W kept.
#[inline(always)]
fn window<A: Arithmetic, const W: usize>(taps: &[f64], x: &[f64], start: usize, out: &mut [f64]) {
    let mut sums = [0.0f64; W];
    for (j, &h) in taps.iter().enumerate() {
        let from = start - j;
        let Some(Ok(xs)) = x.get(from..from + W).map(<&[f64; W]>::try_from) else {
            return;
        };
        for (s, v) in sums.iter_mut().zip(xs) {
            *s = A::multiply_add(h, *v, *s);
        }
    }
    let n = out.len().min(W);
    out[..n].copy_from_slice(&sums[..n]);
}
