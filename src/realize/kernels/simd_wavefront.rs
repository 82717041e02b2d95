//! The sections wavefront ([`super::sections_wavefront`]) written with x86-64 vector
//! intrinsics, for AVX-512F (8 sections per register) and AVX2 (4 per register).
//!
//! Why intrinsics here: every step moves each section's output one lane up to become the next
//! section's input. Written portably, the compiler builds that shift through memory, element by
//! element, which costs more than the arithmetic it feeds; one `valignq` (AVX-512) or one
//! `vpermpd` plus a blend (AVX2) does it in registers.
//!
//! Why fused multiply-adds here: with the shift in registers, each step waits on the section's
//! own recurrence, y(n) → s0(n) → y(n + 1). Computed as in `process_sample` that is a multiply,
//! a subtraction and two additions (16 cycles on current cores); fused, s0 = s1 + b1·v − a1·y
//! and y = s0 + b0·v are two FMAs (8 cycles), which halves the time per sample. Each fused
//! operation rounds once where the plain code rounds twice, so the output differs from the
//! per-sample path by rounding only (the equality tests bound it at 1e-12 of the peak).
//!
//! Written once over [`F64Vector`] (the register type and its lane shift are the only
//! differences between the units) and compiled inside one `#[target_feature]` function per unit.
//!
//! Safety: the functions are `#[target_feature]` and `unsafe`: call them only after
//! [`super::dispatch::detected_vector_unit`] has reported the unit. Memory is touched only
//! through slices and fixed arrays (unaligned loads and stores of whole registers inside them).

#![cfg(target_arch = "x86_64")]

use std::arch::x86_64::{__m256d, __m512d};

use super::super::SectionCascade;
use super::vector::{F64Vector, MAX_LANES};

/// Coefficients of up to `N` sections (the registers' lanes) as flat lane arrays, with
/// pass-through sections past the real ones.
struct Flat<const N: usize> {
    b0: [f64; N],
    b1: [f64; N],
    b2: [f64; N],
    a1: [f64; N],
    a2: [f64; N],
    s0: [f64; N],
    s1: [f64; N],
}

impl<const N: usize> Flat<N> {
    fn load(cascade: &SectionCascade) -> Self {
        let mut f = Flat {
            b0: [1.0; N],
            b1: [0.0; N],
            b2: [0.0; N],
            a1: [0.0; N],
            a2: [0.0; N],
            s0: [0.0; N],
            s1: [0.0; N],
        };
        for (k, (c, s)) in cascade
            .sections()
            .iter()
            .zip(cascade.state())
            .take(N)
            .enumerate()
        {
            (f.b0[k], f.b1[k], f.b2[k], f.a1[k], f.a2[k]) = (c[0], c[1], c[2], c[4], c[5]);
            (f.s0[k], f.s1[k]) = (s[0], s[1]);
        }
        f
    }

    fn store(&self, cascade: &mut SectionCascade) {
        for (k, s) in cascade.state_mut().iter_mut().take(N).enumerate() {
            *s = [self.s0[k], self.s1[k]];
        }
    }
}

/// Bits `first..=last` set (lanes busy at a ramp step).
fn busy_bits(first: usize, last: usize) -> u64 {
    let upto = if last >= 63 {
        u64::MAX
    } else {
        (1u64 << (last + 1)) - 1
    };
    upto & !((1u64 << first) - 1)
}

/// AVX-512F wavefront over `V` registers (up to 8·V sections). `N` must be 8·V.
///
/// # Safety
/// The CPU must have AVX-512F and FMA.
#[target_feature(enable = "avx512f,fma")]
pub unsafe fn wavefront_avx512<const V: usize, const N: usize>(
    cascade: &mut SectionCascade,
    input: &[f64],
    output: &mut [f64],
) {
    wavefront::<__m512d, V, N>(cascade, input, output)
}

/// AVX2 wavefront over `V` registers (up to 4·V sections). `N` must be 4·V.
///
/// # Safety
/// The CPU must have AVX2 and FMA.
#[target_feature(enable = "avx2,fma")]
pub unsafe fn wavefront_avx2<const V: usize, const N: usize>(
    cascade: &mut SectionCascade,
    input: &[f64],
    output: &mut [f64],
) {
    wavefront::<__m256d, V, N>(cascade, input, output)
}

/// The wavefront over `R` registers of type `W` (up to `N` = `R`·`W::LANES` sections).
///
/// # Safety
/// Only inside a function compiled for `W`'s unit, after detection (see [`F64Vector`]).
#[inline(always)]
unsafe fn wavefront<W: F64Vector, const R: usize, const N: usize>(
    cascade: &mut SectionCascade,
    input: &[f64],
    output: &mut [f64],
) {
    debug_assert_eq!(N, R * W::LANES);
    let n = input.len().min(output.len());
    let sections = cascade.section_count();
    if n == 0 || sections == 0 || sections > N || N != R * W::LANES {
        return;
    }
    let lanes = W::LANES;
    let mut flat = Flat::<N>::load(cascade);
    // Register j covers sections lanes·j … lanes·j + lanes − 1 (N = R·lanes, checked above).
    let load = |a: &[f64; N], j: usize| W::load(&a[lanes * j..]);
    let b0: [W; R] = std::array::from_fn(|j| load(&flat.b0, j));
    let b1: [W; R] = std::array::from_fn(|j| load(&flat.b1, j));
    let b2: [W; R] = std::array::from_fn(|j| load(&flat.b2, j));
    let a1: [W; R] = std::array::from_fn(|j| load(&flat.a1, j));
    let a2: [W; R] = std::array::from_fn(|j| load(&flat.a2, j));
    let mut s0: [W; R] = std::array::from_fn(|j| load(&flat.s0, j));
    let mut s1: [W; R] = std::array::from_fn(|j| load(&flat.s1, j));
    let mut y: [W; R] = [W::splat(0.0); R];
    let gain = cascade.gain();
    let last = sections - 1;
    let (out_reg, out_lane) = (last / lanes, last % lanes);
    let mut lane_buf = [0.0f64; MAX_LANES];

    let (input, output) = (&input[..n], &mut output[..n]);
    let steps = n + last;
    for t in 0..steps {
        let x = if t < n { gain * input[t] } else { 0.0 };
        let first = (t + 1).saturating_sub(n);
        let top = t.min(last);
        // None when every lane is busy, else the lanes that are.
        let busy = if first == 0 && top == last {
            None
        } else {
            Some(busy_bits(first, top))
        };
        // Shift every output one lane up; the new input enters lane 0.
        let mut carry = W::splat(x);
        for j in 0..R {
            let (v, next_carry) = y[j].shift_up(carry);
            carry = next_carry;
            let out = b0[j].mul_add(v, s0[j]);
            let n0 = a1[j].neg_mul_add(out, b1[j].mul_add(v, s1[j]));
            let n1 = a2[j].neg_mul_add(out, b2[j].mul(v));
            match busy {
                None => {
                    s0[j] = n0;
                    s1[j] = n1;
                }
                Some(bits) => {
                    let m = bits >> (lanes * j);
                    s0[j] = W::select(m, s0[j], n0);
                    s1[j] = W::select(m, s1[j], n1);
                }
            }
            y[j] = out;
        }
        if t >= last {
            y[out_reg].store(&mut lane_buf);
            output[t - last] = lane_buf[out_lane];
        }
    }
    for j in 0..R {
        s0[j].store(&mut flat.s0[lanes * j..]);
        s1[j].store(&mut flat.s1[lanes * j..]);
    }
    flat.store(cascade);
}
