//! Per-sample cost of the processing paths (criterion): every structure at orders 2, 8, 16 and
//! 32; 1, 2, 8 and 32 channels; blocks of 32, 64 and 256 frames; f32 audio in and out, f64
//! state. `plain` runs each channel's filter sample by sample, channel after channel (the
//! reference path); `fast` runs the block kernels (one channel) or the channel bank (vector
//! lanes). Throughput is in samples (frames × channels), so criterion's elements/s are
//! samples/s. A last group runs a decaying tail (silence after an impulse, through the
//! subnormal range) against noise, with and without flush-to-zero.
//!
//! Two more groups time the structures the pipeline picks by cost: `long_fir/TAPS` (an invented
//! FIR as a partitioned convolution against the direct form's tapped delay line, 1 and 8
//! channels, 64-frame blocks) and `echo/right_leg` (the example echo line's inverse as a sparse
//! recursion against sections and the lattice).
//!
//! `cargo bench --bench kernels` runs everything (a few minutes); a filter argument narrows it,
//! e.g. `cargo bench --bench kernels -- 'sections/order32'`.

use std::hint::black_box;
use std::time::Duration;

use criterion::{criterion_group, criterion_main, BatchSize, BenchmarkId, Criterion, Throughput};
use redress::engine::flush_denormals_on_this_thread;
use redress::model::{CoefficientPrecision, Structure, TransferFunction};
use redress::realize::kernels::ChannelBank;
use redress::realize::{realize, Filter};

const ORDERS: [usize; 4] = [2, 8, 16, 32];
const CHANNELS: [usize; 4] = [1, 2, 8, 32];
const BLOCKS: [usize; 3] = [32, 64, 256];
/// Frames per measured call sequence (several blocks).
const FRAMES: usize = 2048;

/// A stable minimum-phase design of even `order` (pole pairs at radii 0.60–0.95, zero pairs at
/// 0.30–0.90; the same invented inverse `redress bench --recursion-limits` times).
fn design(order: usize) -> TransferFunction {
    redress::bench::invented_inverse(order)
}

fn structure_name(s: Structure) -> &'static str {
    match s {
        Structure::DirectForm2T => "direct_form",
        Structure::Sections => "sections",
        Structure::LatticeLadder => "lattice",
        Structure::SparseRecursion => "sparse",
        Structure::PartitionedConvolution => "partitioned",
    }
}

/// Deterministic noise, interleaved over `channels`.
fn noise(frames: usize, channels: usize) -> Vec<f32> {
    redress::bench::bench_noise(frames * channels)
}

fn plain(filters: &mut [Filter], input: &[f32], output: &mut [f32], channels: usize) {
    for (c, f) in filters.iter_mut().enumerate() {
        for (x, y) in input
            .chunks_exact(channels)
            .zip(output.chunks_exact_mut(channels))
        {
            y[c] = f.process_sample(f64::from(x[c])) as f32;
        }
    }
}

/// Times `bank` over `input` in calls of `step` samples (interleaved f32 in and out).
fn bench_bank(
    group: &mut criterion::BenchmarkGroup<'_, criterion::measurement::WallTime>,
    id: BenchmarkId,
    mut bank: ChannelBank,
    input: &[f32],
    output: &mut [f32],
    step: usize,
) {
    group.bench_function(id, |b| {
        b.iter(|| {
            for (x, y) in input.chunks(step).zip(output.chunks_mut(step)) {
                bank.process_f32(x, y);
            }
            black_box(&output);
        })
    });
}

fn kernels(c: &mut Criterion) {
    for structure in [
        Structure::DirectForm2T,
        Structure::Sections,
        Structure::LatticeLadder,
    ] {
        for order in ORDERS {
            let filter = match realize(&design(order), structure, CoefficientPrecision::F32) {
                Ok(r) => r.filter,
                Err(e) => {
                    eprintln!("skipping {} order {order}: {e}", structure_name(structure));
                    continue;
                }
            };
            let mut group =
                c.benchmark_group(format!("{}/order{order}", structure_name(structure)));
            group
                .warm_up_time(Duration::from_millis(200))
                .measurement_time(Duration::from_millis(600))
                .sample_size(10);
            for channels in CHANNELS {
                let input = noise(FRAMES, channels);
                let mut output = vec![0.0f32; input.len()];
                group.throughput(Throughput::Elements((FRAMES * channels) as u64));
                for block in BLOCKS {
                    let id = format!("ch{channels}/block{block}");
                    let step = block * channels;
                    let mut filters = vec![filter.clone(); channels];
                    group.bench_function(BenchmarkId::new("plain", &id), |b| {
                        b.iter(|| {
                            for (x, y) in input.chunks(step).zip(output.chunks_mut(step)) {
                                plain(&mut filters, x, y, channels);
                            }
                            black_box(&output);
                        })
                    });
                    bench_bank(
                        &mut group,
                        BenchmarkId::new("fast", &id),
                        ChannelBank::new(vec![filter.clone(); channels]),
                        &input,
                        &mut output,
                        step,
                    );
                }
            }
            group.finish();
        }
    }
}

/// Silence after a tiny impulse: the state decays through the subnormal range (below
/// 2.2e-308) to zero, where CPUs slow down unless subnormals are flushed. The kernels flush
/// them themselves; `thread_default` leaves the thread's own setting alone, `thread_ftz` sets
/// flush-to-zero first as the engine does.
fn decaying_tail(c: &mut Criterion) {
    let frames = 16_384;
    let filter = realize(&design(16), Structure::Sections, CoefficientPrecision::F32)
        .expect("order 16 realizes")
        .filter;
    let mut primed = filter.clone();
    primed.process_sample(1e-300);
    let silence = vec![0.0f32; frames];
    let input = noise(frames, 1);
    let mut output = vec![0.0f32; frames];
    let mut group = c.benchmark_group("tail/sections/order16");
    group
        .warm_up_time(Duration::from_millis(300))
        .measurement_time(Duration::from_secs(1))
        .sample_size(20)
        .throughput(Throughput::Elements(frames as u64));
    // Flush-to-zero stays on for the thread once set, so the plain settings run first.
    for ftz in [false, true] {
        if ftz {
            flush_denormals_on_this_thread();
        }
        let label = if ftz { "thread_ftz" } else { "thread_default" };
        for (what, signal, start) in [
            ("noise", &input, &filter),
            ("decaying_tail", &silence, &primed),
        ] {
            group.bench_function(BenchmarkId::new(what, label), |b| {
                b.iter_batched_ref(
                    || start.clone(),
                    |f| {
                        for (x, y) in signal.chunks(256).zip(output.chunks_mut(256)) {
                            f.process_block(x, y);
                        }
                        black_box(&output);
                    },
                    BatchSize::SmallInput,
                )
            });
        }
    }
    group.finish();
}

/// Long FIRs: partitioned convolution against the direct form, in engine-sized blocks.
fn long_fir(c: &mut Criterion) {
    for taps in [1024usize, 4096, 16_384] {
        let fir = TransferFunction::new(redress::bench::invented_long_fir(taps), vec![1.0]);
        let mut group = c.benchmark_group(format!("long_fir/{taps}"));
        group
            .warm_up_time(Duration::from_millis(300))
            .measurement_time(Duration::from_secs(1))
            .sample_size(10);
        for channels in [1usize, 8] {
            let input = noise(FRAMES, channels);
            let mut output = vec![0.0f32; input.len()];
            group.throughput(Throughput::Elements((FRAMES * channels) as u64));
            for structure in [Structure::PartitionedConvolution, Structure::DirectForm2T] {
                let filter = realize(&fir, structure, CoefficientPrecision::F32)
                    .expect("FIR realizes")
                    .filter;
                bench_bank(
                    &mut group,
                    BenchmarkId::new(structure_name(structure), format!("ch{channels}/block64")),
                    ChannelBank::new(vec![filter; channels]),
                    &input,
                    &mut output,
                    64 * channels,
                );
            }
        }
        group.finish();
    }
}

/// The example echo line's right leg (configs/echo_line.toml): its exact inverse, a recursion
/// of order 197 with three recursive taps, in the structures that can run it.
fn echo(c: &mut Criterion) {
    let mut a = vec![0.0; 198];
    a[0] = 1.0;
    a[41] = 0.25 / 0.9;
    a[120] = -0.17 / 0.9;
    a[197] = 0.08 / 0.9;
    let inverse = TransferFunction::new(vec![1.0 / 0.9], a);
    let mut group = c.benchmark_group("echo/right_leg");
    group
        .warm_up_time(Duration::from_millis(200))
        .measurement_time(Duration::from_millis(600))
        .sample_size(10);
    for channels in [1usize, 8] {
        let input = noise(FRAMES, channels);
        let mut output = vec![0.0f32; input.len()];
        group.throughput(Throughput::Elements((FRAMES * channels) as u64));
        for structure in [
            Structure::SparseRecursion,
            Structure::Sections,
            Structure::LatticeLadder,
        ] {
            let Ok(r) = realize(&inverse, structure, CoefficientPrecision::F32) else {
                eprintln!(
                    "skipping {}: it does not realize",
                    structure_name(structure)
                );
                continue;
            };
            for block in [64usize, 256] {
                bench_bank(
                    &mut group,
                    BenchmarkId::new(
                        structure_name(structure),
                        format!("ch{channels}/block{block}"),
                    ),
                    ChannelBank::new(vec![r.filter.clone(); channels]),
                    &input,
                    &mut output,
                    block * channels,
                );
            }
        }
    }
    group.finish();
}

criterion_group!(benches, kernels, decaying_tail, long_fir, echo);
criterion_main!(benches);
