//! The engine's guards fire within one block and recover: NaN input, a runaway (unstable)
//! filter set, and a full-scale square wave through a boosting inverse.

mod common;

use common::{echo_line, inverse_set, runaway_set, sine};
use redress::engine::{engine_pair, ClipPolicy, EngineEvent, EngineSettings, Fallback};

const BLOCK: usize = 256;

fn settings(channels: usize) -> EngineSettings {
    EngineSettings {
        fade_in_samples: 64,
        ..EngineSettings::defaults(channels, 48_000.0)
    }
}

// Source: common practice — a NaN must never reach the output, and the filter state it
// poisoned must be cleared (IEEE 754: NaN propagates through every recursion it enters).
#[test]
fn nan_input_trips_within_the_block_and_recovers() {
    let (mut engine, mut control) = engine_pair(settings(2), Some(inverse_set(&echo_line(), 2, 1)));
    let mut out = vec![0.0f32; BLOCK * 2];
    for block in 0..4 {
        engine.process(&sine(BLOCK, 2, 440.0, 0.25, block * BLOCK), &mut out);
    }
    let mut poisoned = sine(BLOCK, 2, 440.0, 0.25, 4 * BLOCK);
    poisoned[100 * 2] = f32::NAN;
    engine.process(&poisoned, &mut out);
    assert!(out.iter().all(|y| y.is_finite()), "NaN reached the output");
    let snap = control.snapshot();
    assert_eq!(
        snap.non_finite_trips, 1,
        "guard must fire in the block with the NaN"
    );
    let events = control.drain_events();
    assert!(events.iter().any(|e| matches!(
        e,
        EngineEvent::InstabilityTrip {
            non_finite: true,
            ..
        }
    )));
    // No earlier set to fall back to: bypass, faded in from silence.
    assert_eq!(snap.fallbacks_bypass, 1);
    assert_eq!(out[100 * 2], 0.0, "the frame that tripped is silenced");
    // …and the fallback fades in from there (64-sample ramp: 1/64 of the input next frame).
    assert!((out[101 * 2] - poisoned[101 * 2] / 64.0).abs() < 1e-6);
    // Recovery: later blocks are finite, carry signal, and trip no more.
    let clean = sine(BLOCK, 2, 440.0, 0.25, 5 * BLOCK);
    engine.process(&clean, &mut out);
    assert!(out.iter().all(|y| y.is_finite()));
    assert!(out[BLOCK..].iter().any(|y| y.abs() > 0.1));
    assert_eq!(control.snapshot().instability_trips, 1);
    // In bypass (after the fade-in) output equals input.
    for (x, y) in clean[BLOCK..].iter().zip(&out[BLOCK..]) {
        assert!((x - y).abs() < 1e-6);
    }
}

// Source: common practice — an unstable recursion grows geometrically; the guard must reset it
// and fall back before it reaches the output at level.
#[test]
fn runaway_set_trips_within_one_block_and_falls_back_to_last_good() {
    let (mut engine, mut control) = engine_pair(settings(1), Some(inverse_set(&echo_line(), 1, 1)));
    let mut out = vec![0.0f32; BLOCK];
    // Swap to a second good set so the first becomes "last good"… then to the runaway one.
    for block in 0..4 {
        engine.process(&sine(BLOCK, 1, 300.0, 0.25, block * BLOCK), &mut out);
    }
    // The runaway arrives as a swap: the guard must abort it during the crossfade.
    control.send(runaway_set(1, 2)).unwrap();
    engine.process(&sine(BLOCK, 1, 300.0, 0.25, 4 * BLOCK), &mut out);
    let events = control.drain_events();
    assert!(
        events
            .iter()
            .any(|e| matches!(e, EngineEvent::SwapAborted { generation: 2 })),
        "{events:?}"
    );
    assert!(out.iter().all(|y| y.is_finite() && y.abs() <= 1.0));
    assert_eq!(control.snapshot().running_generation, 1);
    assert_eq!(
        control.collect_returned(),
        1,
        "the runaway set goes back to be freed"
    );
}

#[test]
fn runaway_running_set_trips_and_bypasses() {
    let s = EngineSettings {
        fallback: Fallback::Bypass,
        ..settings(1)
    };
    let (mut engine, control) = engine_pair(s, Some(runaway_set(1, 7)));
    let mut out = vec![0.0f32; BLOCK];
    engine.process(&sine(BLOCK, 1, 300.0, 0.25, 0), &mut out);
    let snap = control.snapshot();
    assert_eq!(
        snap.instability_trips, 1,
        "must fire within the first block"
    );
    assert_eq!(snap.running_generation, 0, "bypass after the trip");
    assert!(out.iter().all(|y| y.is_finite() && y.abs() <= 1.0));
    // Recovered: the next block is the input itself (bypass, fade-in done).
    let next = sine(BLOCK, 1, 300.0, 0.25, BLOCK);
    engine.process(&next, &mut out);
    for (x, y) in next.iter().zip(&out) {
        assert!((x - y).abs() < 1e-6);
    }
    assert_eq!(control.snapshot().instability_trips, 1);
}

// Source: common practice — a limiter's output never exceeds full scale, and every sample that
// reached full scale before it is counted.
#[test]
fn full_scale_square_is_counted_and_limited_then_recovers() {
    for policy in [
        ClipPolicy::HardLimit,
        ClipPolicy::SoftLimit,
        ClipPolicy::GainReduction,
    ] {
        let s = EngineSettings {
            clip: policy,
            gain_release_samples: 200,
            ..settings(1)
        };
        let (mut engine, control) = engine_pair(s, Some(inverse_set(&echo_line(), 1, 1)));
        let mut out = vec![0.0f32; BLOCK];
        // Let the fade-in finish on silence.
        engine.process(&vec![0.0; BLOCK], &mut out);
        let square: Vec<f32> = (0..BLOCK)
            .map(|n| if (n / 50) % 2 == 0 { 1.0 } else { -1.0 })
            .collect();
        engine.process(&square, &mut out);
        let snap = control.snapshot();
        assert!(snap.clipped_samples > 0, "{policy:?}: clipping not counted");
        assert!(out.iter().all(|y| y.abs() <= 1.0), "{policy:?}");
        assert_eq!(
            snap.instability_trips, 0,
            "{policy:?}: clipping is not instability"
        );
        // Recovery: a quiet passage comes through unlimited once the tail has died away.
        for block in 0..20 {
            engine.process(&sine(BLOCK, 1, 200.0, 0.05, block * BLOCK), &mut out);
        }
        let before = control.snapshot().clipped_samples;
        engine.process(&sine(BLOCK, 1, 200.0, 0.05, 20 * BLOCK), &mut out);
        assert_eq!(control.snapshot().clipped_samples, before, "{policy:?}");
        assert!(out.iter().all(|y| y.abs() < 0.2), "{policy:?}");
    }
}
