//! The recursive kernels against the floor their recurrence sets: for each structure, the chain
//! of dependent operations that leads from y(n) to y(n + 1), timed on this processor
//! ([`calibrate_chains`]), against the measured cost per sample, per section or lattice stage.
//!
//! The chains (per sample of one channel; N the order, K the sections, M the stages):
//! - direct form II transposed (the plain arithmetic, bit-equal to the per-sample path):
//!   y(n) → a₁·y(n) → b₁x − a₁y → + s₂ → y(n + 1) = b₀x + s₁: one multiplication and three
//!   additions, whatever N (the other states update beside it);
//! - second-order sections, wavefront (fused where FMA exists): section k works on sample n − k,
//!   all sections at once; each step waits on one section's y → s₀ → y, two multiply-adds,
//!   whatever K (while the sections fit the vector registers);
//! - lattice–ladder: f runs down all M stages within a sample, but sample n + 1 may start a stage
//!   as soon as sample n has left the one below it, so the recurrence is the loop
//!   f_{m−1}(n) → g_m(n) = k·f + g → f_m(n + 1) = f − k·g → f_{m−1}(n + 1): two multiplications
//!   and three additions, whatever M (the stages' own work, six operations each, is then what
//!   limits a long lattice: throughput, not the chain);
//! - channels in lanes: the same chain per frame, shared by every channel in a register (8 with
//!   AVX-512, 4 with AVX2), so the floor per channel is the chain over that count;
//! - sparse recursion: y(n) waits on y(n − d₁) only (d₁ the shortest recursive delay), so a run
//!   of d₁ samples costs one multiply-add per recursive tap on the chain: the floor per sample is
//!   that over d₁, far below what the taps' arithmetic itself costs.

use std::time::Instant;

use num_complex::Complex64;
use serde::Serialize;

use super::chain_calibration::{calibrate_chains, ChainCalibration};
use crate::model::{CoefficientPrecision, Structure, TransferFunction};
use crate::numeric::poly::from_roots;
use crate::realize::kernels::{detected_vector_unit, ChannelBank, VectorUnit};
use crate::realize::{realize, Filter};

/// Samples per channel per timed run; the best of `REPEATS` runs is kept.
const SAMPLES: usize = 1 << 14;
const REPEATS: usize = 15;

/// One kernel's cost against its chain's floor.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RecursionCost {
    pub structure: String,
    pub order: usize,
    /// Sections (K), lattice stages (M), direct-form order (N) or sparse recursive taps: what
    /// the cost is divided by.
    pub units: usize,
    pub unit_name: &'static str,
    pub channels: usize,
    pub block_frames: usize,
    /// Measured, per sample of one channel.
    pub ns_per_sample: f64,
    pub cycles_per_sample: f64,
    pub cycles_per_unit: f64,
    /// The recurrence's floor, per sample of one channel.
    pub chain_ns_per_sample: f64,
    pub chain_cycles_per_unit: f64,
    /// Measured over floor (1 would be the chain's own speed).
    pub over_chain: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RecursionLimits {
    /// "baseline", "avx2", "avx512"; `vector_unit_name` spells it for people.
    pub vector_unit: &'static str,
    pub vector_unit_name: &'static str,
    pub calibration: ChainCalibration,
    pub costs: Vec<RecursionCost>,
}

/// A stable design of even `order`: pole pairs at radii 0.60–0.95 and zero pairs at
/// 0.30–0.90, angles spread over the band (an invented inverse of the kind redress runs; the
/// criterion benchmarks use it too).
pub fn invented_inverse(order: usize) -> TransferFunction {
    let pairs = order / 2;
    let mut poles = Vec::new();
    let mut zeros = Vec::new();
    for i in 0..pairs {
        let f = (i as f64 + 0.5) / pairs as f64;
        let pole = Complex64::from_polar(0.60 + 0.35 * f, 0.1 + 2.9 * f);
        let zero = Complex64::from_polar(0.90 - 0.60 * f, 0.3 + 2.5 * (1.0 - f));
        poles.extend([pole, pole.conj()]);
        zeros.extend([zero, zero.conj()]);
    }
    TransferFunction::new(
        from_roots(0.8, &zeros).unwrap_or_else(|| vec![0.8]),
        from_roots(1.0, &poles).unwrap_or_else(|| vec![1.0]),
    )
}

/// The example echo line's right leg inverse (configs/echo_line.toml): recursive taps at 41,
/// 120 and 197 samples.
fn echo_inverse() -> TransferFunction {
    let mut a = vec![0.0; 198];
    a[0] = 1.0;
    a[41] = 0.25 / 0.9;
    a[120] = -0.17 / 0.9;
    a[197] = 0.08 / 0.9;
    TransferFunction::new(vec![1.0 / 0.9], a)
}

/// `n` samples of deterministic white noise at ±0.25 (the criterion benchmarks use it too).
pub fn bench_noise(n: usize) -> Vec<f32> {
    let mut state = 0x2545_f491_4f6c_dd1du64;
    (0..n)
        .map(|_| {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            ((state >> 40) as f32 / (1u64 << 24) as f32 - 0.5) * 0.5
        })
        .collect()
}

/// Best ns per sample per channel of `filter` on `channels` channels in blocks of `block`.
fn time_filter(filter: &Filter, channels: usize, block: usize) -> f64 {
    let input = bench_noise(SAMPLES * channels);
    let mut best = f64::INFINITY;
    if channels == 1 {
        let x: Vec<f64> = input.iter().map(|&v| f64::from(v)).collect();
        let mut y = vec![0.0f64; x.len()];
        let mut f = filter.clone();
        for _ in 0..REPEATS {
            let started = Instant::now();
            for (xs, ys) in x.chunks(block).zip(y.chunks_mut(block)) {
                f.process_block_f64(xs, ys);
            }
            best = best.min(started.elapsed().as_nanos() as f64);
            std::hint::black_box(&y);
        }
    } else {
        let mut bank = ChannelBank::new(vec![filter.clone(); channels]);
        let mut y = vec![0.0f64; input.len()];
        let step = block * channels;
        for _ in 0..REPEATS {
            let started = Instant::now();
            for (xs, ys) in input.chunks(step).zip(y.chunks_mut(step)) {
                bank.process(xs, ys);
            }
            best = best.min(started.elapsed().as_nanos() as f64);
            std::hint::black_box(&y);
        }
    }
    best / (SAMPLES * channels) as f64
}

/// Channels sharing one vector register in lanes.
fn lanes_per_register() -> usize {
    match detected_vector_unit() {
        VectorUnit::Avx512 => 8,
        VectorUnit::Avx2 => 4,
        VectorUnit::Baseline => 2,
    }
}

/// The floor of one sample of one channel, and what the cost is divided by.
fn chain(
    structure: Structure,
    filter: &Filter,
    channels: usize,
    c: &ChainCalibration,
) -> (f64, usize, &'static str) {
    let shared = if channels > 1 {
        lanes_per_register().min(channels) as f64
    } else {
        1.0
    };
    let (per_frame, units, name) = match (structure, filter) {
        (Structure::DirectForm2T, _) => (c.mul_ns + 3.0 * c.add_ns, filter.order(), "order"),
        (Structure::Sections, _) => (
            2.0 * c.multiply_add_ns,
            filter.order().div_ceil(2),
            "section",
        ),
        (Structure::LatticeLadder, _) => (2.0 * c.mul_ns + 3.0 * c.add_ns, filter.order(), "stage"),
        (_, Filter::SparseRecursion(s)) => {
            let shortest = s.denominator().first().map_or(1, |t| t.delay).max(1);
            (
                s.denominator().len() as f64 * c.multiply_add_ns / shortest as f64,
                s.taps_touched(),
                "tap",
            )
        }
        _ => (0.0, 1, "sample"),
    };
    (per_frame / shared, units.max(1), name)
}

/// Calibrates, then times every recursive kernel: direct form, sections and lattice at orders
/// 8, 16 and 32, one channel and eight, blocks of 64 and 256; the echo line's sparse recursion.
pub fn measure_recursion_limits() -> RecursionLimits {
    let calibration = calibrate_chains();
    let cycle_ns = 1.0 / calibration.clock_ghz;
    let mut costs = Vec::new();
    let mut cases: Vec<(Structure, TransferFunction)> = Vec::new();
    for structure in [
        Structure::DirectForm2T,
        Structure::Sections,
        Structure::LatticeLadder,
    ] {
        for order in [8, 16, 32] {
            cases.push((structure, invented_inverse(order)));
        }
    }
    cases.push((Structure::SparseRecursion, echo_inverse()));
    for (structure, tf) in cases {
        let Ok(r) = realize(&tf, structure, CoefficientPrecision::F32) else {
            continue;
        };
        for channels in [1, 8] {
            for block in [64, 256] {
                let ns = time_filter(&r.filter, channels, block);
                let (floor, units, unit_name) = chain(structure, &r.filter, channels, &calibration);
                costs.push(RecursionCost {
                    structure: structure.name().to_string(),
                    order: r.filter.order(),
                    units,
                    unit_name,
                    channels,
                    block_frames: block,
                    ns_per_sample: ns,
                    cycles_per_sample: ns / cycle_ns,
                    cycles_per_unit: ns / cycle_ns / units as f64,
                    chain_ns_per_sample: floor,
                    chain_cycles_per_unit: floor / cycle_ns / units as f64,
                    over_chain: if floor > 0.0 { ns / floor } else { f64::NAN },
                });
            }
        }
    }
    RecursionLimits {
        vector_unit: detected_vector_unit().key(),
        vector_unit_name: detected_vector_unit().name(),
        calibration,
        costs,
    }
}

/// The table as text.
pub fn render_recursion_limits(r: &RecursionLimits) -> String {
    use std::fmt::Write;
    let c = &r.calibration;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "recursion limits    {} vector unit; clock {:.2} GHz (dependent integer chain)",
        r.vector_unit_name, c.clock_ghz
    );
    let _ =
        writeln!(
        s,
        "  dependent f64     add {:.3} ns ({:.1} cycles), multiply {:.3} ns ({:.1}), multiply-add \
         {:.3} ns ({:.1}, {})",
        c.add_ns,
        c.add_cycles,
        c.mul_ns,
        c.mul_cycles,
        c.multiply_add_ns,
        c.multiply_add_cycles,
        if c.fused { "fused" } else { "multiply then add" }
    );
    let _ = writeln!(
        s,
        "\n{:<28} {:>5} {:>3} {:>5} {:>9} {:>10} {:>14} {:>14} {:>8}",
        "structure",
        "order",
        "ch",
        "block",
        "ns/sample",
        "cyc/sample",
        "cyc/unit",
        "chain cyc/unit",
        "× chain"
    );
    for k in &r.costs {
        let _ = writeln!(
            s,
            "{:<28} {:>5} {:>3} {:>5} {:>9.2} {:>10.1} {:>8.2} /{:<5} {:>14.2} {:>8.1}",
            k.structure,
            k.order,
            k.channels,
            k.block_frames,
            k.ns_per_sample,
            k.cycles_per_sample,
            k.cycles_per_unit,
            k.unit_name,
            k.chain_cycles_per_unit,
            k.over_chain
        );
    }
    let _ = writeln!(
        s,
        "\nper sample of one channel; the chain is the recurrence's own floor (dependent \
         operations from y(n) to y(n + 1), timed above), shared by the channels of one vector \
         register in lanes"
    );
    s
}
