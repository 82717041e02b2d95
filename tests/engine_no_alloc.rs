//! The real processing path allocates and frees nothing: steady running, a swap with its
//! crossfade, a guard trip with its fallback, and a fade-out.

mod common;

use assert_no_alloc::{assert_no_alloc, reset_violation_count, violation_count, AllocDisabler};
use common::{
    echo_line, inverse_set, long_fir_set, resonant_line, runaway_set, sine, structure_set,
};
use redress::engine::{engine_pair, EngineSettings};
use redress::model::Structure;

#[global_allocator]
static ALLOCATOR: AllocDisabler = AllocDisabler;

// Source: common practice for real-time audio — no (de)allocation on the audio thread.
#[test]
fn processing_allocates_nothing_even_during_swaps_and_trips() {
    let settings = EngineSettings::defaults(2, 48_000.0);
    let (mut engine, mut control) = engine_pair(settings, Some(inverse_set(&echo_line(), 2, 1)));
    let input = sine(256, 2, 440.0, 0.3, 0);
    let mut nan_input = input.clone();
    nan_input[10] = f32::NAN;
    let mut output = vec![0.0f32; input.len()];
    reset_violation_count();

    let mut run = |engine: &mut redress::engine::Engine, x: &[f32], blocks: usize| {
        for _ in 0..blocks {
            assert_no_alloc(|| engine.process(x, &mut output));
        }
    };
    run(&mut engine, &input, 10);
    control.send(inverse_set(&resonant_line(), 2, 2)).unwrap();
    run(&mut engine, &input, 10); // crossfade and completion (old set handed back)
    control.send(runaway_set(2, 3)).unwrap();
    run(&mut engine, &input, 10); // runaway aborted during its crossfade
    run(&mut engine, &nan_input, 1); // guard trip, fallback to last good
    run(&mut engine, &input, 10);
    control.request_fade_out();
    run(&mut engine, &input, 10);

    assert_eq!(
        violation_count(),
        0,
        "the audio path allocated or freed memory"
    );
    let snap = control.snapshot();
    assert_eq!(snap.swaps_completed, 1);
    assert!(snap.instability_trips >= 2);
    assert!(control.fade_out_done());
    assert!(control.collect_returned() >= 2);

    // The detector itself works: one allocation inside the zone is counted.
    assert_no_alloc(|| drop(std::hint::black_box(Vec::<u8>::with_capacity(8))));
    assert!(violation_count() > 0, "the allocation detector saw nothing");
}

// Source: common practice for real-time audio — the sparse recursion (history lines moved to
// the front now and then) and the partitioned convolution (real FFTs, spectra, its delay line)
// allocate nothing either: steady running in callbacks of sizes that do and do not divide the
// partition, swaps between them, a runaway and a trip.
#[test]
fn sparse_and_partitioned_filters_allocate_nothing() {
    let settings = EngineSettings::defaults(2, 48_000.0);
    let (mut engine, mut control) = engine_pair(settings, Some(long_fir_set(16_384, 2, 1)));
    let mut output = vec![0.0f32; 2 * 1000];
    let blocks: Vec<Vec<f32>> = [64usize, 100, 17, 256, 1, 1000]
        .iter()
        .enumerate()
        .map(|(i, &frames)| sine(frames, 2, 440.0, 0.3, i * 1000))
        .collect();
    reset_violation_count();
    let mut run = |engine: &mut redress::engine::Engine, rounds: usize| {
        for _ in 0..rounds {
            for x in &blocks {
                let y = &mut output[..x.len()];
                assert_no_alloc(|| engine.process(x, y));
            }
        }
    };
    run(&mut engine, 30); // past the first FFT blocks, every partition in use
    control
        .send(structure_set(
            &echo_line(),
            Structure::SparseRecursion,
            2,
            2,
        ))
        .unwrap();
    run(&mut engine, 30); // crossfade from the long FIR to the sparse recursion
    control.send(long_fir_set(2048, 2, 3)).unwrap();
    run(&mut engine, 30);
    control.send(runaway_set(2, 4)).unwrap();
    run(&mut engine, 5);
    let mut nan = sine(64, 2, 440.0, 0.3, 0);
    nan[3] = f32::NAN;
    let mut nan_out = vec![0.0f32; nan.len()];
    assert_no_alloc(|| engine.process(&nan, &mut nan_out));
    run(&mut engine, 5);
    assert_eq!(
        violation_count(),
        0,
        "the audio path allocated or freed memory"
    );
    let snap = control.snapshot();
    assert_eq!(snap.swaps_completed, 2);
    assert!(snap.instability_trips >= 2);
    assert!(control.collect_returned() >= 2);
}
