//! How long one dependent floating-point operation takes on this processor, measured, not
//! assumed: a loop whose every step needs the previous step's result runs at the operation's
//! latency, whatever the clock. Those times are the floor of any recursion: a recursive filter
//! cannot produce sample n + 1 before the chain of operations from y(n) has finished.
//!
//! The clock itself comes from a chain of dependent integer operations (an exclusive-or and an
//! addition per step, one cycle each on every x86-64 core of the last two decades, common
//! practice), so the latencies can also be said in cycles. It is the clock while that loop ran:
//! the kernels may run at another one (wide vector units lower it on some processors), which
//! is why the bounds are kept in time and cycles are given beside them.

use std::hint::black_box;
use std::time::Instant;

use serde::Serialize;

use crate::realize::kernels::dispatch::{with_widest_vectors, Arithmetic, Kernel};
use crate::realize::kernels::{detected_vector_unit, VectorUnit};

/// Steps per timed loop (a few milliseconds, shorter than a scheduler's time slice); the best
/// of `REPEATS` runs is kept (the least disturbed).
const STEPS: u64 = 1_000_000;
const REPEATS: usize = 41;

/// Measured latencies of dependent operations.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ChainCalibration {
    /// Clock during the integer chain, GHz.
    pub clock_ghz: f64,
    /// One dependent f64 addition, ns (and in cycles at that clock).
    pub add_ns: f64,
    pub add_cycles: f64,
    /// One dependent f64 multiplication.
    pub mul_ns: f64,
    pub mul_cycles: f64,
    /// One dependent multiply-add as the kernels do it: fused on units with FMA, else a
    /// multiplication and an addition.
    pub multiply_add_ns: f64,
    pub multiply_add_cycles: f64,
    /// Whether `multiply_add` was one fused instruction.
    pub fused: bool,
}

/// Wall-clock time per step of the fastest run: runs are kept shorter than a scheduler's time
/// slice, so on a shared machine some run through undisturbed. (The thread's processor time
/// from schedstat is only brought up to date at scheduler ticks: too coarse for a run this short.)
fn best_ns_per_step(run: impl Fn() -> f64) -> f64 {
    let mut best = f64::INFINITY;
    for _ in 0..REPEATS {
        let started = Instant::now();
        black_box(run());
        best = best.min(started.elapsed().as_nanos() as f64 / STEPS as f64);
    }
    best
}

/// Two one-cycle integer operations per step, each needing the last.
fn integer_chain() -> f64 {
    let (mut x, y, z) = (black_box(1u64), black_box(0x9e37u64), black_box(3u64));
    for _ in 0..STEPS {
        x = (x ^ y).wrapping_add(z);
    }
    x as f64
}

fn add_chain() -> f64 {
    let (mut x, c) = (black_box(0.0f64), black_box(1e-9f64));
    for _ in 0..STEPS {
        x += c;
    }
    x
}

fn mul_chain() -> f64 {
    let (mut x, c) = (black_box(1.0f64), black_box(1.000_000_001f64));
    for _ in 0..STEPS {
        x *= c;
    }
    x
}

/// x ← a·x + b through the kernels' own arithmetic, compiled like them.
struct MultiplyAddChain;

impl Kernel for MultiplyAddChain {
    type Output = f64;
    #[inline(always)]
    fn run<A: Arithmetic>(self) -> f64 {
        let (mut x, a, b) = (
            black_box(0.5f64),
            black_box(0.999_999f64),
            black_box(1e-7f64),
        );
        for _ in 0..STEPS {
            x = A::multiply_add(a, x, b);
        }
        x
    }
}

/// Measures the clock and the three latencies (about a second on a 3 GHz core).
pub fn calibrate_chains() -> ChainCalibration {
    let cycle_ns = best_ns_per_step(integer_chain) / 2.0;
    let add_ns = best_ns_per_step(add_chain);
    let mul_ns = best_ns_per_step(mul_chain);
    let multiply_add_ns = best_ns_per_step(|| with_widest_vectors(MultiplyAddChain));
    ChainCalibration {
        clock_ghz: 1.0 / cycle_ns,
        add_ns,
        add_cycles: add_ns / cycle_ns,
        mul_ns,
        mul_cycles: mul_ns / cycle_ns,
        multiply_add_ns,
        multiply_add_cycles: multiply_add_ns / cycle_ns,
        fused: detected_vector_unit() != VectorUnit::Baseline,
    }
}
