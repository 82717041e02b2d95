//! One x86-64 vector register of f64 lanes, as the intrinsics kernels use it: the same few
//! operations for AVX-512F (`__m512d`, 8 lanes) and AVX2 (`__m256d`, 4 lanes), so each kernel
//! is written once over [`F64Vector`] and compiled inside a `#[target_feature]` function per
//! unit.
//!
//! Why intrinsics at all, when the other kernels are portable Rust: for the two kernels that
//! use this, the compiler's own vectoriser picks the wrong dimension or the wrong moves (lane
//! shifts through memory in the wavefront; gathers across the delay line instead of one
//! register per delay element in the direct-form lanes), which costs more than the arithmetic.
//!
//! Safety: every method is `unsafe` and `#[inline(always)]`; call them only from a function
//! compiled with the unit's features (`#[target_feature]`) after
//! [`super::dispatch::detected_vector_unit`] has reported the unit, so the intrinsics inline
//! into code that may use them.

#![cfg(target_arch = "x86_64")]

use std::arch::x86_64::*;

/// Most lanes of any implementation (buffers sized for it fit every unit).
pub const MAX_LANES: usize = 8;

pub trait F64Vector: Copy {
    /// f64 lanes per register.
    const LANES: usize;
    /// # Safety
    /// See the module notes.
    unsafe fn splat(v: f64) -> Self;
    /// The first `LANES` values of `from`.
    ///
    /// # Safety
    /// See the module notes; `from` must hold at least `LANES` values (checked in debug builds).
    unsafe fn load(from: &[f64]) -> Self;
    /// Into the first `LANES` places of `to`.
    ///
    /// # Safety
    /// See the module notes; `to` must hold at least `LANES` values (checked in debug builds).
    unsafe fn store(self, to: &mut [f64]);
    /// # Safety
    /// See the module notes.
    unsafe fn add(self, other: Self) -> Self;
    /// # Safety
    /// See the module notes.
    unsafe fn sub(self, other: Self) -> Self;
    /// # Safety
    /// See the module notes.
    unsafe fn mul(self, other: Self) -> Self;
    /// self·m + c, rounded once.
    ///
    /// # Safety
    /// See the module notes (needs FMA).
    unsafe fn mul_add(self, m: Self, c: Self) -> Self;
    /// c − self·m, rounded once.
    ///
    /// # Safety
    /// See the module notes (needs FMA).
    unsafe fn neg_mul_add(self, m: Self, c: Self) -> Self;
    /// Every lane of `self` moved one lane up, lane 0 taking the top lane of the register
    /// below; `carry` is that register below as returned by the previous call (or, for the
    /// first register, [`F64Vector::splat`] of the value to enter lane 0). Returns the shifted
    /// register and the carry for the next one.
    ///
    /// # Safety
    /// See the module notes.
    unsafe fn shift_up(self, carry: Self) -> (Self, Self);
    /// `new` in the lanes whose bit of `bits` is set (bit l for lane l), `old` elsewhere.
    ///
    /// # Safety
    /// See the module notes.
    unsafe fn select(bits: u64, old: Self, new: Self) -> Self;
}

impl F64Vector for __m512d {
    const LANES: usize = 8;
    #[inline(always)]
    unsafe fn splat(v: f64) -> Self {
        _mm512_set1_pd(v)
    }
    #[inline(always)]
    unsafe fn load(from: &[f64]) -> Self {
        debug_assert!(from.len() >= Self::LANES);
        // SAFETY: the caller guarantees 8 values (unaligned load).
        unsafe { _mm512_loadu_pd(from.as_ptr()) }
    }
    #[inline(always)]
    unsafe fn store(self, to: &mut [f64]) {
        debug_assert!(to.len() >= Self::LANES);
        // SAFETY: the caller guarantees room for 8 values (unaligned store).
        unsafe { _mm512_storeu_pd(to.as_mut_ptr(), self) }
    }
    #[inline(always)]
    unsafe fn add(self, other: Self) -> Self {
        _mm512_add_pd(self, other)
    }
    #[inline(always)]
    unsafe fn sub(self, other: Self) -> Self {
        _mm512_sub_pd(self, other)
    }
    #[inline(always)]
    unsafe fn mul(self, other: Self) -> Self {
        _mm512_mul_pd(self, other)
    }
    #[inline(always)]
    unsafe fn mul_add(self, m: Self, c: Self) -> Self {
        _mm512_fmadd_pd(self, m, c)
    }
    #[inline(always)]
    unsafe fn neg_mul_add(self, m: Self, c: Self) -> Self {
        _mm512_fnmadd_pd(self, m, c)
    }
    #[inline(always)]
    unsafe fn shift_up(self, carry: Self) -> (Self, Self) {
        // One `valignq`: lanes 7 of `carry` and 0…6 of `self`.
        let v = _mm512_castsi512_pd(_mm512_alignr_epi64::<7>(
            _mm512_castpd_si512(self),
            _mm512_castpd_si512(carry),
        ));
        (v, self)
    }
    #[inline(always)]
    unsafe fn select(bits: u64, old: Self, new: Self) -> Self {
        _mm512_mask_blend_pd(bits as u8, old, new)
    }
}

impl F64Vector for __m256d {
    const LANES: usize = 4;
    #[inline(always)]
    unsafe fn splat(v: f64) -> Self {
        _mm256_set1_pd(v)
    }
    #[inline(always)]
    unsafe fn load(from: &[f64]) -> Self {
        debug_assert!(from.len() >= Self::LANES);
        // SAFETY: the caller guarantees 4 values (unaligned load).
        unsafe { _mm256_loadu_pd(from.as_ptr()) }
    }
    #[inline(always)]
    unsafe fn store(self, to: &mut [f64]) {
        debug_assert!(to.len() >= Self::LANES);
        // SAFETY: the caller guarantees room for 4 values (unaligned store).
        unsafe { _mm256_storeu_pd(to.as_mut_ptr(), self) }
    }
    #[inline(always)]
    unsafe fn add(self, other: Self) -> Self {
        _mm256_add_pd(self, other)
    }
    #[inline(always)]
    unsafe fn sub(self, other: Self) -> Self {
        _mm256_sub_pd(self, other)
    }
    #[inline(always)]
    unsafe fn mul(self, other: Self) -> Self {
        _mm256_mul_pd(self, other)
    }
    #[inline(always)]
    unsafe fn mul_add(self, m: Self, c: Self) -> Self {
        _mm256_fmadd_pd(self, m, c)
    }
    #[inline(always)]
    unsafe fn neg_mul_add(self, m: Self, c: Self) -> Self {
        _mm256_fnmadd_pd(self, m, c)
    }
    #[inline(always)]
    unsafe fn shift_up(self, carry: Self) -> (Self, Self) {
        // AVX2 has no lane shift across the 128-bit halves: rotate to [y3, y0, y1, y2] with one
        // `vpermpd`, then blend lane 0 from the register below, whose lane 0 after the same
        // rotation holds its y3 (or, for the first register, the splatted input).
        let rotated = _mm256_permute4x64_pd::<0b10_01_00_11>(self);
        (_mm256_blend_pd::<0b0001>(rotated, carry), rotated)
    }
    #[inline(always)]
    unsafe fn select(bits: u64, old: Self, new: Self) -> Self {
        let mask = _mm256_castsi256_pd(_mm256_set_epi64x(
            -(((bits >> 3) & 1) as i64),
            -(((bits >> 2) & 1) as i64),
            -(((bits >> 1) & 1) as i64),
            -((bits & 1) as i64),
        ));
        _mm256_blendv_pd(old, new, mask)
    }
}
