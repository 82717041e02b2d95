//! The real processing path allocates and frees nothing: steady running, a swap with its
//! crossfade, a guard trip with its fallback, and a fade-out.

mod common;

use assert_no_alloc::{assert_no_alloc, reset_violation_count, violation_count, AllocDisabler};
use common::{echo_line, inverse_set, resonant_line, runaway_set, sine};
use redress::engine::{engine_pair, EngineSettings};

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
