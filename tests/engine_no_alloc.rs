//! The real processing path allocates and frees nothing: steady running, input faults, a swap
//! with its warm-up and crossfade, a swap between latencies (a dip), an incoming set dropped, a
//! guard trip of one linked group with its fallback to the last good set (caught up mid-chunk),
//! bypass through the delay lines, and a fade-out.

mod common;

use assert_no_alloc::{assert_no_alloc, reset_violation_count, violation_count, AllocDisabler};
use common::{
    delay_filter, echo_line, inverse_set, long_fir_set, raw_filter, resonant_line, runaway_set,
    sine, structure_set,
};
use redress::engine::{engine_pair, EngineSettings, Equalizer, Fallback};
use redress::model::Structure;

#[global_allocator]
static ALLOCATOR: AllocDisabler = AllocDisabler;

// Source: common practice for real-time audio — no (de)allocation on the audio thread.
#[test]
fn processing_allocates_nothing_even_during_swaps_and_trips() {
    let settings = EngineSettings::defaults(2, 48_000.0);
    let (mut engine, mut control) = engine_pair(settings, Some(inverse_set(&echo_line(), 2, 1)));
    let input = sine(256, 2, 440.0, 0.3, 0);
    let mut faulty = input.clone();
    faulty[10] = f32::NAN;
    faulty[21] = f32::INFINITY;
    // Fine for 2000 samples (past warm-up and crossfade), then a tap of 10⁶ on channel 1 only.
    let mut late = vec![0.0; 2001];
    late[0] = 1.0;
    late[2000] = 1e6;
    let late_runaway = Equalizer::from_filters(
        vec![
            raw_filter(vec![1.0], vec![1.0]),
            raw_filter(late, vec![1.0]),
        ],
        1.0,
        4,
    )
    .with_channel_groups(vec![0, 1]);
    let delayed =
        Equalizer::from_filters(vec![delay_filter(30); 2], 1.0, 5).with_latency(vec![30; 2]);
    let mut output = vec![0.0f32; input.len()];
    reset_violation_count();

    let mut run = |engine: &mut redress::engine::Engine, x: &[f32], blocks: usize| {
        for _ in 0..blocks {
            assert_no_alloc(|| engine.process(x, &mut output));
        }
    };
    run(&mut engine, &input, 10);
    run(&mut engine, &faulty, 2); // input faults: silenced and counted
    control.send(inverse_set(&resonant_line(), 2, 2)).unwrap();
    run(&mut engine, &input, 10); // warm-up, crossfade and completion (old set handed back)
    control.send(runaway_set(2, 3)).unwrap();
    run(&mut engine, &input, 10); // runaway aborted while warming up
    control.send(late_runaway).unwrap();
    run(&mut engine, &input, 20); // swap, then channel 1 trips: its group to the last good set
    control.send(delayed).unwrap();
    run(&mut engine, &input, 10); // a dip to a set of another latency
    control.send(runaway_set(2, 6)).unwrap();
    run(&mut engine, &input, 10); // aborted again
    control.request_fade_out();
    run(&mut engine, &input, 10);

    assert_eq!(
        violation_count(),
        0,
        "the audio path allocated or freed memory"
    );
    let snap = control.snapshot();
    assert_eq!(snap.swaps_completed, 3);
    assert!(snap.instability_trips >= 3, "{snap:?}");
    assert_eq!(snap.fallbacks_last_good, 1);
    assert_eq!(snap.input_faults, 4);
    assert!(control.fade_out_done());
    assert!(
        control.collect_returned() >= 1,
        "the last aborted set comes back"
    );

    // Bypass through the delay lines, after a whole-set trip with nothing to fall back to.
    let s = EngineSettings {
        fallback: Fallback::Bypass,
        ..settings
    };
    let runaway_late =
        Equalizer::from_filters(vec![raw_filter(vec![1.0], vec![1.0, -1.5]); 2], 1.0, 1)
            .with_latency(vec![17, 40]);
    let (mut engine, control) = engine_pair(s, Some(runaway_late));
    run(&mut engine, &input, 10);
    assert_eq!(violation_count(), 0, "bypass allocated or freed memory");
    assert_eq!(control.snapshot().fallbacks_bypass, 1);

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
    // The runaway set trips; the NaN is bad input, silenced and counted, not a trip.
    assert!(snap.instability_trips >= 1);
    assert_eq!(snap.input_faults, 1);
    // The runaway set came back to be freed here (earlier sets were freed by the sends).
    assert!(control.collect_returned() >= 1);
}
