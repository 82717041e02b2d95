//! Runs a kernel compiled for the widest vector unit the CPU has, or the portable build.
//!
//! The kernels are plain Rust written so the compiler can vectorise them (fixed-size lanes, no
//! bounds checks, no branches in the inner loops). Stable Rust compiles for the baseline CPU
//! (SSE2 on x86-64) unless told otherwise, so [`with_widest_vectors`] also compiles each
//! kernel inside a function marked `#[target_feature(enable = "avx2,fma")]` or
//! `"avx512f,avx2,fma"`, and calls that copy only after the CPU has said it has the feature.
//! Enabling FMA does not fuse anything: Rust never contracts `a * b + c` by itself, so every
//! copy does the same operations in the same order and gives the same bits.
//!
//! It also runs every kernel with flush-to-zero on (x86-64): a filter ringing out on silence
//! reaches subnormal numbers, which cost tens of times the normal time on many CPUs; flushed,
//! a decaying tail costs what a loud signal does. The thread's previous setting is restored
//! afterwards, so callers see no change; results differ from the unflushed per-sample path
//! only below 2.2e-308.
//!
//! This file holds the only `unsafe` of the kernels besides the intrinsics ([`super::vector`],
//! used by [`super::simd_wavefront`] and the x86-64 copies in [`super::lane_direct_form`]): the
//! call into a `#[target_feature]` function, made after the runtime check, and the
//! floating-point control register.

use std::sync::atomic::{AtomicU8, Ordering};

/// Vector units the kernels can use.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum VectorUnit {
    /// Whatever the build targets (SSE2 on x86-64, NEON on aarch64).
    Baseline,
    /// 256-bit AVX2 (with FMA available, not used for contraction).
    Avx2,
    /// 512-bit AVX-512F.
    Avx512,
}

impl VectorUnit {
    /// The trade's spelling, for people: "AVX-512", "AVX2", or the baseline named plainly.
    pub fn name(self) -> &'static str {
        match self {
            VectorUnit::Baseline if cfg!(target_arch = "x86_64") => {
                "baseline x86-64 (SSE2, no wider vector unit used)"
            }
            VectorUnit::Baseline if cfg!(target_arch = "aarch64") => "baseline (NEON)",
            VectorUnit::Baseline => "baseline (the build's own instruction set)",
            VectorUnit::Avx2 => "AVX2",
            VectorUnit::Avx512 => "AVX-512",
        }
    }

    /// The spelling in JSON and in `REDRESS_KERNELS`: "baseline", "avx2", "avx512".
    pub fn key(self) -> &'static str {
        match self {
            VectorUnit::Baseline => "baseline",
            VectorUnit::Avx2 => "avx2",
            VectorUnit::Avx512 => "avx512",
        }
    }
}

const UNKNOWN: u8 = 0;
static DETECTED: AtomicU8 = AtomicU8::new(UNKNOWN);

/// The widest vector unit this CPU has that the kernels know (detected once, then cached).
pub fn detected_vector_unit() -> VectorUnit {
    match DETECTED.load(Ordering::Relaxed) {
        1 => VectorUnit::Baseline,
        2 => VectorUnit::Avx2,
        3 => VectorUnit::Avx512,
        _ => {
            let unit = detect();
            let code = match unit {
                VectorUnit::Baseline => 1,
                VectorUnit::Avx2 => 2,
                VectorUnit::Avx512 => 3,
            };
            DETECTED.store(code, Ordering::Relaxed);
            unit
        }
    }
}

fn detect() -> VectorUnit {
    #[cfg(target_arch = "x86_64")]
    {
        // REDRESS_KERNELS=baseline|avx2 caps the unit (benchmarks compare them this way).
        let cap = std::env::var("REDRESS_KERNELS").unwrap_or_default();
        if cap == "baseline" {
            return VectorUnit::Baseline;
        }
        if cap != "avx2"
            && is_x86_feature_detected!("avx512f")
            && is_x86_feature_detected!("avx2")
            && is_x86_feature_detected!("fma")
        {
            return VectorUnit::Avx512;
        }
        if is_x86_feature_detected!("avx2") && is_x86_feature_detected!("fma") {
            return VectorUnit::Avx2;
        }
    }
    VectorUnit::Baseline
}

/// A piece of work to compile once per vector unit. Implement `run` with `#[inline(always)]`
/// (and make what it calls `#[inline(always)]` too), so that the whole body is compiled again
/// inside each `#[target_feature]` wrapper; a closure would not do, since the compiler keeps
/// one shared copy of it built for the baseline CPU. `A` is the arithmetic to use: [`Plain`]
/// on the baseline CPU, [`Fused`] where FMA is there.
pub trait Kernel {
    type Output;
    fn run<A: Arithmetic>(self) -> Self::Output;
}

/// The multiply-adds of the filter updates, written once per rounding behaviour.
///
/// [`Plain`] is each `process_sample`'s own expression, operation for operation (bit-identical
/// results). [`Fused`] computes the same quantities with fused multiply-adds, one rounding
/// where the plain form has two: fewer instructions and a shorter chain of dependent ones, at
/// the price of results that differ by rounding only. Fused is used only where the CPU has FMA
/// (otherwise `f64::mul_add` would be a slow library call).
pub trait Arithmetic {
    /// One second-order section in direct form II transposed: returns (y, s0′, s1′) for input
    /// `v` and state (s0, s1); `c` = [b0, b1, b2, a1, a2].
    #[inline(always)]
    fn section(c: [f64; 5], v: f64, s0: f64, s1: f64) -> (f64, f64, f64) {
        let [b0, b1, b2, a1, a2] = c;
        let y = Self::section_output(b0, v, s0);
        (
            y,
            Self::section_s0(b1, v, a1, y, s1),
            Self::section_s1(b2, v, a2, y),
        )
    }
    /// The section's three steps one by one (lane kernels run each over all lanes in turn,
    /// which the compiler turns into whole-register operations): y = b0·v + s0 …
    fn section_output(b0: f64, v: f64, s0: f64) -> f64;
    /// … s0′ = b1·v − a1·y + s1 …
    fn section_s0(b1: f64, v: f64, a1: f64, y: f64, s1: f64) -> f64;
    /// … s1′ = b2·v − a2·y.
    fn section_s1(b2: f64, v: f64, a2: f64, y: f64) -> f64;
    /// b·x − a·y + next (one direct-form state update).
    fn state_update(b: f64, x: f64, a: f64, y: f64, next: f64) -> f64;
    /// One lattice stage: f − k·g, then k·f′ + g and y + v·(k·f′ + g); returns (f′, g′, y′).
    fn lattice_stage(k: f64, g_below: f64, f: f64, v: f64, y: f64) -> (f64, f64, f64);
    /// a·b + c (the taps of the sparse recursion and the convolutions' accumulations).
    fn multiply_add(a: f64, b: f64, c: f64) -> f64;
}

/// The per-sample path's own arithmetic.
pub struct Plain;

/// Fused multiply-adds (only inside FMA-enabled code).
pub struct Fused;

impl Arithmetic for Plain {
    #[inline(always)]
    fn section_output(b0: f64, v: f64, s0: f64) -> f64 {
        b0 * v + s0
    }
    #[inline(always)]
    fn section_s0(b1: f64, v: f64, a1: f64, y: f64, s1: f64) -> f64 {
        b1 * v - a1 * y + s1
    }
    #[inline(always)]
    fn section_s1(b2: f64, v: f64, a2: f64, y: f64) -> f64 {
        b2 * v - a2 * y
    }
    #[inline(always)]
    fn state_update(b: f64, x: f64, a: f64, y: f64, next: f64) -> f64 {
        b * x - a * y + next
    }
    #[inline(always)]
    fn lattice_stage(k: f64, g_below: f64, f: f64, v: f64, y: f64) -> (f64, f64, f64) {
        let f = f - k * g_below;
        let g = k * f + g_below;
        (f, g, y + v * g)
    }
    #[inline(always)]
    fn multiply_add(a: f64, b: f64, c: f64) -> f64 {
        a * b + c
    }
}

impl Arithmetic for Fused {
    #[inline(always)]
    fn section_output(b0: f64, v: f64, s0: f64) -> f64 {
        b0.mul_add(v, s0)
    }
    #[inline(always)]
    fn section_s0(b1: f64, v: f64, a1: f64, y: f64, s1: f64) -> f64 {
        (-a1).mul_add(y, b1.mul_add(v, s1))
    }
    #[inline(always)]
    fn section_s1(b2: f64, v: f64, a2: f64, y: f64) -> f64 {
        (-a2).mul_add(y, b2 * v)
    }
    #[inline(always)]
    fn state_update(b: f64, x: f64, a: f64, y: f64, next: f64) -> f64 {
        (-a).mul_add(y, b.mul_add(x, next))
    }
    #[inline(always)]
    fn lattice_stage(k: f64, g_below: f64, f: f64, v: f64, y: f64) -> (f64, f64, f64) {
        let f = (-k).mul_add(g_below, f);
        let g = k.mul_add(f, g_below);
        (f, g, v.mul_add(g, y))
    }
    #[inline(always)]
    fn multiply_add(a: f64, b: f64, c: f64) -> f64 {
        a.mul_add(b, c)
    }
}

/// Flush-to-zero and denormals-are-zero on for as long as it lives; the previous control
/// register comes back when it is dropped.
#[cfg(target_arch = "x86_64")]
struct FlushToZero {
    saved: u32,
}

#[cfg(target_arch = "x86_64")]
impl FlushToZero {
    #[inline(always)]
    #[allow(deprecated)] // the intrinsics are deprecated in favour of inline asm; same effect
    fn on() -> Self {
        // MXCSR bit 15 = FTZ, bit 6 = DAZ (Intel SDM vol. 1, §10.2.3; common practice).
        const FTZ_DAZ: u32 = (1 << 15) | (1 << 6);
        // SAFETY: reading and writing MXCSR only changes how this thread's SSE/AVX arithmetic
        // treats subnormal numbers; no memory is touched. SSE is always present on x86-64.
        unsafe {
            use std::arch::x86_64::{_mm_getcsr, _mm_setcsr};
            let saved = _mm_getcsr();
            _mm_setcsr(saved | FTZ_DAZ);
            FlushToZero { saved }
        }
    }
}

#[cfg(target_arch = "x86_64")]
impl Drop for FlushToZero {
    #[inline(always)]
    #[allow(deprecated)]
    fn drop(&mut self) {
        // SAFETY: as in `on`: restores this thread's own earlier setting.
        unsafe { std::arch::x86_64::_mm_setcsr(self.saved) }
    }
}

/// Runs `kernel` compiled for the widest vector unit available, with flush-to-zero on.
#[inline(always)]
pub fn with_widest_vectors<K: Kernel>(kernel: K) -> K::Output {
    #[cfg(target_arch = "x86_64")]
    let _flush = FlushToZero::on();
    #[cfg(target_arch = "x86_64")]
    {
        #[target_feature(enable = "avx512f,avx2,fma")]
        fn on_avx512<K: Kernel>(kernel: K) -> K::Output {
            kernel.run::<Fused>()
        }
        #[target_feature(enable = "avx2,fma")]
        fn on_avx2<K: Kernel>(kernel: K) -> K::Output {
            kernel.run::<Fused>()
        }
        match detected_vector_unit() {
            // SAFETY: `detect` saw avx512f, avx2 and fma on this CPU.
            VectorUnit::Avx512 => return unsafe { on_avx512(kernel) },
            // SAFETY: `detect` saw avx2 and fma on this CPU.
            VectorUnit::Avx2 => return unsafe { on_avx2(kernel) },
            VectorUnit::Baseline => {}
        }
    }
    kernel.run::<Plain>()
}
