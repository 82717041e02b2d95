//! Helpers shared by the integration tests: filter sets built through the library's own
//! pipeline, and simple test signals.
#![allow(dead_code)]

use redress::analysis::analyse;
use redress::design::design_exact;
use redress::engine::Equalizer;
use redress::model::{CoefficientPrecision, Structure, TransferFunction};
use redress::numeric::impulse::decayed_impulse_response;
use redress::realize::{realize, Filter};

/// Exact-inverse filters for `channel`, one per audio channel, as a generation-tagged set.
pub fn inverse_set(channel: &TransferFunction, channels: usize, generation: u64) -> Equalizer {
    let analysis = analyse(channel, 1e-9).expect("analysis");
    let design = design_exact(channel, &analysis, 48_000.0).expect("invertible test channel");
    let realization = realize(
        &design.inverse,
        Structure::Sections,
        CoefficientPrecision::F32,
    )
    .expect("realizable");
    let bound: f64 = decayed_impulse_response(&design.inverse.b, &design.inverse.a, 1 << 16)
        .iter()
        .map(|x| x.abs())
        .sum();
    // As `Equalizer::from_plan` does: the set asks for its own 60 dB decay as warm-up.
    let warm_up = (design.decay_60db_seconds * 48_000.0).ceil() as usize;
    Equalizer::from_filters(vec![realization.filter; channels], bound, generation)
        .with_warm_up(warm_up)
}

/// Exact-inverse filters for `channel` realized in `structure` (f32 coefficients).
pub fn structure_set(
    channel: &TransferFunction,
    structure: Structure,
    channels: usize,
    generation: u64,
) -> Equalizer {
    let analysis = analyse(channel, 1e-9).expect("analysis");
    let design = design_exact(channel, &analysis, 48_000.0).expect("invertible test channel");
    let realization =
        realize(&design.inverse, structure, CoefficientPrecision::F32).expect("realizable");
    Equalizer::from_filters(vec![realization.filter; channels], 4.0, generation)
}

/// A long decaying FIR of `taps` taps (Σ|h| = 1) as a partitioned convolution on every channel.
pub fn long_fir_set(taps: usize, channels: usize, generation: u64) -> Equalizer {
    let h = redress::bench::invented_long_fir(taps);
    let realization = realize(
        &TransferFunction::new(h, vec![1.0]),
        Structure::PartitionedConvolution,
        CoefficientPrecision::F32,
    )
    .expect("FIR realizes");
    Equalizer::from_filters(vec![realization.filter; channels], 1.0, generation)
}

/// A deliberately unstable set, built straight from coefficients (the test-only way round
/// validation): 1/(1 − 1.5z⁻¹) grows by half again every sample.
pub fn runaway_set(channels: usize, generation: u64) -> Equalizer {
    let f = Filter::unvalidated_direct_form(vec![1.0], vec![1.0, -1.5]);
    Equalizer::from_filters(vec![f; channels], 1.0, generation)
}

/// Interleaved sine, same on every channel.
pub fn sine(
    frames: usize,
    channels: usize,
    freq_hz: f64,
    amplitude: f32,
    start: usize,
) -> Vec<f32> {
    (start..start + frames)
        .flat_map(|n| {
            let v = amplitude
                * (2.0 * std::f64::consts::PI * freq_hz * n as f64 / 48_000.0).sin() as f32;
            std::iter::repeat_n(v, channels)
        })
        .collect()
}

/// An echo line (direct path plus two weaker reflections), invertible.
pub fn echo_line() -> TransferFunction {
    let mut b = vec![0.0; 40];
    b[0] = 1.0;
    b[17] = 0.35;
    b[39] = -0.2;
    TransferFunction::new(b, vec![1.0])
}

/// A different invertible link: a short resonant line, for swap tests.
pub fn resonant_line() -> TransferFunction {
    TransferFunction::new(vec![1.0, -0.6, 0.25], vec![1.0, -0.3])
}

/// Runs `engine` over interleaved `input` in blocks of `block` frames; returns the output.
pub fn run_engine(
    engine: &mut redress::engine::Engine,
    input: &[f32],
    channels: usize,
    block: usize,
) -> Vec<f32> {
    let mut out = vec![0.0f32; input.len()];
    for (x, y) in input
        .chunks(block * channels)
        .zip(out.chunks_mut(block * channels))
    {
        engine.process(x, y);
    }
    out
}

/// A filter of the test door, straight from its difference equation (stable or not).
pub fn raw_filter(b: Vec<f64>, a: Vec<f64>) -> Filter {
    Filter::unvalidated_direct_form(b, a)
}

/// A pure delay of `d` samples as an FIR.
pub fn delay_filter(d: usize) -> Filter {
    let mut b = vec![0.0; d + 1];
    b[d] = 1.0;
    Filter::unvalidated_direct_form(b, vec![1.0])
}
