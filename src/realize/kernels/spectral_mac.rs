//! acc += X·H over a run of frequency bins, complex numbers held as separate real and imaginary
//! parts so that each of the four products is a whole-register multiply-add.

use super::dispatch::Arithmetic;

/// `acc[i] += x[i]·h[i]` (complex), for i up to the shortest of the slices.
#[inline(always)]
pub fn multiply_accumulate<A: Arithmetic>(
    acc_re: &mut [f64],
    acc_im: &mut [f64],
    x_re: &[f64],
    x_im: &[f64],
    h_re: &[f64],
    h_im: &[f64],
) {
    let n = acc_re
        .len()
        .min(acc_im.len())
        .min(x_re.len())
        .min(x_im.len())
        .min(h_re.len())
        .min(h_im.len());
    let (acc_re, acc_im) = (&mut acc_re[..n], &mut acc_im[..n]);
    let (x_re, x_im, h_re, h_im) = (&x_re[..n], &x_im[..n], &h_re[..n], &h_im[..n]);
    for i in 0..n {
        let (xr, xi, hr, hi) = (x_re[i], x_im[i], h_re[i], h_im[i]);
        acc_re[i] = A::multiply_add(xr, hr, A::multiply_add(-xi, hi, acc_re[i]));
        acc_im[i] = A::multiply_add(xr, hi, A::multiply_add(xi, hr, acc_im[i]));
    }
}
