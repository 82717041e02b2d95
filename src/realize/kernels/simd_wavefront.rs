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
//! Safety: the functions are `#[target_feature]` and `unsafe`: call them only after
//! [`super::dispatch::detected_vector_unit`] has reported the unit. Memory is touched only
//! through slices and fixed arrays (unaligned loads and stores on arrays of the right length).

#![cfg(target_arch = "x86_64")]

use std::arch::x86_64::*;

use super::super::SectionCascade;

/// Coefficients of up to `8·V` (AVX-512) or `4·V` (AVX2) sections as flat lane arrays, with
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
    debug_assert_eq!(N, 8 * V);
    let n = input.len().min(output.len());
    let sections = cascade.section_count();
    if n == 0 || sections == 0 || sections > N {
        return;
    }
    let mut flat = Flat::<N>::load(cascade);
    let load = |a: &[f64; N], j: usize| unsafe { _mm512_loadu_pd(a.as_ptr().add(8 * j)) };
    let b0: [__m512d; V] = std::array::from_fn(|j| load(&flat.b0, j));
    let b1: [__m512d; V] = std::array::from_fn(|j| load(&flat.b1, j));
    let b2: [__m512d; V] = std::array::from_fn(|j| load(&flat.b2, j));
    let a1: [__m512d; V] = std::array::from_fn(|j| load(&flat.a1, j));
    let a2: [__m512d; V] = std::array::from_fn(|j| load(&flat.a2, j));
    let mut s0: [__m512d; V] = std::array::from_fn(|j| load(&flat.s0, j));
    let mut s1: [__m512d; V] = std::array::from_fn(|j| load(&flat.s1, j));
    let mut y: [__m512d; V] = [_mm512_setzero_pd(); V];
    let gain = cascade.gain();
    let last = sections - 1;
    let (out_reg, out_lane) = (last / 8, last % 8);
    let mut lane_buf = [0.0f64; 8];

    // One step; `busy` = None when every lane is busy, else the lanes that are.
    let (input, output) = (&input[..n], &mut output[..n]);
    let steps = n + last;
    for t in 0..steps {
        let x = if t < n { gain * input[t] } else { 0.0 };
        let first = (t + 1).saturating_sub(n);
        let top = t.min(last);
        let busy = if first == 0 && top == last {
            None
        } else {
            Some(busy_bits(first, top))
        };
        // Shift every output one lane up; the new input enters lane 0.
        let mut below = _mm512_set1_pd(x);
        for j in 0..V {
            let v = _mm512_castsi512_pd(_mm512_alignr_epi64::<7>(
                _mm512_castpd_si512(y[j]),
                _mm512_castpd_si512(below),
            ));
            below = y[j];
            let out = _mm512_fmadd_pd(b0[j], v, s0[j]);
            let n0 = _mm512_fnmadd_pd(a1[j], out, _mm512_fmadd_pd(b1[j], v, s1[j]));
            let n1 = _mm512_fnmadd_pd(a2[j], out, _mm512_mul_pd(b2[j], v));
            match busy {
                None => {
                    s0[j] = n0;
                    s1[j] = n1;
                }
                Some(bits) => {
                    let m = (bits >> (8 * j)) as u8;
                    s0[j] = _mm512_mask_blend_pd(m, s0[j], n0);
                    s1[j] = _mm512_mask_blend_pd(m, s1[j], n1);
                }
            }
            y[j] = out;
        }
        if t >= last {
            // SAFETY: lane_buf holds exactly 8 f64.
            unsafe { _mm512_storeu_pd(lane_buf.as_mut_ptr(), y[out_reg]) };
            output[t - last] = lane_buf[out_lane];
        }
    }
    for j in 0..V {
        // SAFETY: each array holds N = 8·V f64; register j covers 8j .. 8j + 8.
        unsafe {
            _mm512_storeu_pd(flat.s0.as_mut_ptr().add(8 * j), s0[j]);
            _mm512_storeu_pd(flat.s1.as_mut_ptr().add(8 * j), s1[j]);
        }
    }
    flat.store(cascade);
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
    debug_assert_eq!(N, 4 * V);
    let n = input.len().min(output.len());
    let sections = cascade.section_count();
    if n == 0 || sections == 0 || sections > N {
        return;
    }
    let mut flat = Flat::<N>::load(cascade);
    let load = |a: &[f64; N], j: usize| unsafe { _mm256_loadu_pd(a.as_ptr().add(4 * j)) };
    let b0: [__m256d; V] = std::array::from_fn(|j| load(&flat.b0, j));
    let b1: [__m256d; V] = std::array::from_fn(|j| load(&flat.b1, j));
    let b2: [__m256d; V] = std::array::from_fn(|j| load(&flat.b2, j));
    let a1: [__m256d; V] = std::array::from_fn(|j| load(&flat.a1, j));
    let a2: [__m256d; V] = std::array::from_fn(|j| load(&flat.a2, j));
    let mut s0: [__m256d; V] = std::array::from_fn(|j| load(&flat.s0, j));
    let mut s1: [__m256d; V] = std::array::from_fn(|j| load(&flat.s1, j));
    let mut y: [__m256d; V] = [_mm256_setzero_pd(); V];
    let gain = cascade.gain();
    let last = sections - 1;
    let (out_reg, out_lane) = (last / 4, last % 4);
    let mut lane_buf = [0.0f64; 4];
    let lane_mask = |bits: u64| {
        _mm256_castsi256_pd(_mm256_set_epi64x(
            -(((bits >> 3) & 1) as i64),
            -(((bits >> 2) & 1) as i64),
            -(((bits >> 1) & 1) as i64),
            -((bits & 1) as i64),
        ))
    };

    let (input, output) = (&input[..n], &mut output[..n]);
    let steps = n + last;
    for t in 0..steps {
        let x = if t < n { gain * input[t] } else { 0.0 };
        let first = (t + 1).saturating_sub(n);
        let top = t.min(last);
        let busy = if first == 0 && top == last {
            None
        } else {
            Some(busy_bits(first, top))
        };
        // [y3, y0, y1, y2] per register; lane 0 then comes from the register below (whose
        // lane 0, after the same rotation, holds its y3), or the new input for register 0.
        let mut below = _mm256_set1_pd(x);
        for j in 0..V {
            let rotated = _mm256_permute4x64_pd::<0b10_01_00_11>(y[j]);
            let v = _mm256_blend_pd::<0b0001>(rotated, below);
            below = rotated;
            let out = _mm256_fmadd_pd(b0[j], v, s0[j]);
            let n0 = _mm256_fnmadd_pd(a1[j], out, _mm256_fmadd_pd(b1[j], v, s1[j]));
            let n1 = _mm256_fnmadd_pd(a2[j], out, _mm256_mul_pd(b2[j], v));
            match busy {
                None => {
                    s0[j] = n0;
                    s1[j] = n1;
                }
                Some(bits) => {
                    let m = lane_mask(bits >> (4 * j));
                    s0[j] = _mm256_blendv_pd(s0[j], n0, m);
                    s1[j] = _mm256_blendv_pd(s1[j], n1, m);
                }
            }
            y[j] = out;
        }
        if t >= last {
            // SAFETY: lane_buf holds exactly 4 f64.
            unsafe { _mm256_storeu_pd(lane_buf.as_mut_ptr(), y[out_reg]) };
            output[t - last] = lane_buf[out_lane];
        }
    }
    for j in 0..V {
        // SAFETY: each array holds N = 4·V f64; register j covers 4j .. 4j + 4.
        unsafe {
            _mm256_storeu_pd(flat.s0.as_mut_ptr().add(4 * j), s0[j]);
            _mm256_storeu_pd(flat.s1.as_mut_ptr().add(4 * j), s1[j]);
        }
    }
    flat.store(cascade);
}
