//! Flush-to-zero for the audio thread.
//!
//! A decaying IIR tail eventually reaches subnormal numbers, which many CPUs handle in
//! microcode at tens of times the normal cost; a filter ringing out on silence would then
//! slow down exactly when nothing is happening. Setting flush-to-zero (FTZ) and
//! denormals-are-zero (DAZ) makes those values zero instead. This is the crate's only `unsafe`:
//! writing the floating-point control register affects only the calling thread.

/// Turns on flush-to-zero and denormals-are-zero for the calling thread, where the CPU has them.
pub fn flush_denormals_on_this_thread() {
    #[cfg(target_arch = "x86_64")]
    {
        // MXCSR bit 15 = FTZ, bit 6 = DAZ (Intel SDM vol. 1, §10.2.3; common practice).
        const FTZ_DAZ: u32 = (1 << 15) | (1 << 6);
        #[allow(deprecated)] // the intrinsics are deprecated in favour of inline asm; same effect
        // SAFETY: reading and writing MXCSR only changes how this thread's SSE arithmetic rounds
        // tiny results; no memory is touched. SSE is always present on x86_64.
        unsafe {
            use std::arch::x86_64::{_mm_getcsr, _mm_setcsr};
            _mm_setcsr(_mm_getcsr() | FTZ_DAZ);
        }
    }
    #[cfg(target_arch = "aarch64")]
    {
        // FPCR bit 24 = FZ (flush subnormal inputs and outputs to zero).
        // SAFETY: as above, only this thread's floating-point control register changes.
        unsafe {
            let mut fpcr: u64;
            std::arch::asm!("mrs {}, fpcr", out(reg) fpcr);
            fpcr |= 1 << 24;
            std::arch::asm!("msr fpcr, {}", in(reg) fpcr);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: IEEE 754 — the smallest positive normal f64 is 2^−1022; half of it is subnormal
    // and, with FTZ set, the product comes out as zero.
    #[test]
    #[cfg(any(target_arch = "x86_64", target_arch = "aarch64"))]
    fn subnormal_results_become_zero() {
        std::thread::spawn(|| {
            let tiny = std::hint::black_box(f64::MIN_POSITIVE);
            assert!((tiny * 0.5) > 0.0, "subnormal before FTZ");
            flush_denormals_on_this_thread();
            assert_eq!(std::hint::black_box(tiny) * 0.5, 0.0);
        })
        .join()
        .unwrap();
    }
}
