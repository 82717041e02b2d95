//! The engine's guards fire within one block and recover: NaN input, a runaway (unstable)
//! filter set, and a full-scale square wave through a boosting inverse.

mod common;

use common::{echo_line, inverse_set, raw_filter, resonant_line, run_engine, runaway_set, sine};
use redress::engine::Equalizer;
use redress::engine::{engine_pair, ClipPolicy, EngineEvent, EngineSettings, Fallback};

const BLOCK: usize = 256;

fn settings(channels: usize) -> EngineSettings {
    EngineSettings {
        fade_in_samples: 64,
        ..EngineSettings::defaults(channels, 48_000.0)
    }
}

/// Interleaved input with the bad samples of `faults` ((frame, channel, value)) written in.
fn with_faults(mut x: Vec<f32>, channels: usize, faults: &[(usize, usize, f32)]) -> Vec<f32> {
    for &(f, c, v) in faults {
        x[f * channels + c] = v;
    }
    x
}

// Source: IEEE 754 (NaN and ∞ propagate through every recursion they enter) and common practice
// for audio inputs: a sample that is not audio is replaced by silence before the filters see it,
// counted as an input fault, and the filters that were running keep running.
#[test]
fn bad_input_is_an_input_fault_not_a_runaway() {
    let (mut engine, control) = engine_pair(settings(2), Some(inverse_set(&echo_line(), 2, 1)));
    let clean = sine(8 * BLOCK, 2, 440.0, 0.25, 0);
    let faults = [
        (1100, 0, f32::NAN),
        (1101, 1, f32::INFINITY),
        (1150, 0, f32::NEG_INFINITY),
        (1150, 1, f32::NEG_INFINITY),
        (1200, 0, 5000.0), // +74 dBFS: beyond any converter
    ];
    let poisoned = with_faults(clean.clone(), 2, &faults);
    let out = run_engine(&mut engine, &poisoned, 2, BLOCK);
    let snap = control.snapshot();
    assert_eq!(
        snap.instability_trips, 0,
        "bad input was blamed on the filters"
    );
    assert_eq!(snap.fallbacks_bypass + snap.fallbacks_last_good, 0);
    assert_eq!(
        snap.running_generation, 1,
        "the configured filters must stay"
    );
    assert_eq!(snap.input_faults, 5);
    assert_eq!(snap.input_faults_non_finite, 4);
    // The output is the same set run on the input with the bad samples silenced, from the end
    // of the fade-in on (both round the same f64 result once to f32).
    let silenced = with_faults(clean, 2, &faults.map(|(f, c, _)| (f, c, 0.0)));
    let mut reference = vec![0.0f32; silenced.len()];
    inverse_set(&echo_line(), 2, 1).process_interleaved(&silenced, &mut reference);
    for (i, (y, r)) in out.iter().zip(&reference).enumerate().skip(64 * 2) {
        assert!((y - r).abs() <= 1e-6, "sample {i}: {y} against {r}");
    }
}

// Source: as above — an input fault during a crossfade does not abort the incoming set.
#[test]
fn bad_input_during_a_swap_keeps_the_incoming_set() {
    let (mut engine, mut control) = engine_pair(settings(2), Some(inverse_set(&echo_line(), 2, 1)));
    let mut out = vec![0.0f32; BLOCK * 2];
    engine.process(&sine(BLOCK, 2, 440.0, 0.25, 0), &mut out);
    control.send(inverse_set(&resonant_line(), 2, 2)).unwrap();
    for block in 1..12 {
        let mut x = sine(BLOCK, 2, 440.0, 0.25, block * BLOCK);
        if block == 2 {
            x[10 * 2] = f32::NAN;
            x[11 * 2 + 1] = f32::INFINITY;
        }
        engine.process(&x, &mut out);
        assert!(out.iter().all(|y| y.is_finite()));
    }
    let events = control.drain_events();
    assert!(
        !events
            .iter()
            .any(|e| matches!(e, EngineEvent::SwapAborted { .. })),
        "{events:?}"
    );
    let snap = control.snapshot();
    assert_eq!((snap.swaps_completed, snap.running_generation), (1, 2));
    assert_eq!(snap.instability_trips, 0);
    assert_eq!(snap.input_faults, 2);
}

/// A set of one filter per channel with output bound 1 (its guard limit is then the input
/// envelope × the margin).
fn set_of(filters: Vec<redress::realize::Filter>, generation: u64) -> Equalizer {
    Equalizer::from_filters(filters, 1.0, generation)
}

/// Largest |y| over a stretch.
fn peak(y: &[f32]) -> f32 {
    y.iter().fold(0.0, |m, v| m.max(v.abs()))
}

/// Frames until the first instability trip (processing in blocks of 16), or None.
fn frames_to_first_trip(
    engine: &mut redress::engine::Engine,
    control: &redress::engine::EngineControl,
    input: &[f32],
    channels: usize,
) -> (Option<usize>, Vec<f32>) {
    let step = 16;
    let mut out = vec![0.0f32; input.len()];
    let mut tripped = None;
    for (k, (x, y)) in input
        .chunks(step * channels)
        .zip(out.chunks_mut(step * channels))
        .enumerate()
    {
        engine.process(x, y);
        if tripped.is_none() && control.snapshot().instability_trips > 0 {
            tripped = Some((k + 1) * step);
        }
    }
    (tripped, out)
}

// Source: common practice — the runaway guard compares output with the filter's own bound for
// the input level; an input sample that is not audio must not lift that level for good. After
// a +∞ input sample, a slowly growing set (a real pole at 1.0005) sent next must still be
// caught before it reaches full scale.
#[test]
fn an_infinite_input_sample_does_not_blind_the_runaway_guard() {
    let s = EngineSettings {
        clip: ClipPolicy::HardLimit,
        ..settings(1)
    };
    let (mut engine, mut control) = engine_pair(s, Some(inverse_set(&resonant_line(), 1, 1)));
    let mut first = sine(BLOCK, 1, 300.0, 0.01, 0);
    first[5] = f32::INFINITY;
    let mut out = vec![0.0f32; BLOCK];
    engine.process(&first, &mut out);
    let slow = set_of(vec![raw_filter(vec![1.0], vec![1.0, -1.0005])], 2);
    control.send(slow).unwrap();
    // Two seconds of quiet programme: the runaway must be stopped well within them.
    let rest = sine(2 * 48_000, 1, 300.0, 0.01, BLOCK);
    let out = run_engine(&mut engine, &rest, 1, BLOCK);
    let stopped = control.drain_events().iter().any(|e| {
        matches!(
            e,
            EngineEvent::SwapAborted { generation: 2 }
                | EngineEvent::InstabilityTrip { generation: 2, .. }
        )
    });
    assert!(stopped, "the runaway set was never stopped");
    assert!(peak(&out) < 0.95, "the runaway reached {}", peak(&out));
}

/// Poles at radius `r` and frequency `hz` (48 kHz): y[n] = g·x[n] + 2r·cos θ·y[n−1] − r²·y[n−2].
fn resonator(r: f64, hz: f64, g: f64) -> redress::realize::Filter {
    let theta = 2.0 * std::f64::consts::PI * hz / 48_000.0;
    raw_filter(vec![g], vec![1.0, -2.0 * r * theta.cos(), r * r])
}

// Source: common practice — poles just outside the unit circle make a growing oscillation at
// their angle's frequency, whose output crosses zero every half period. The guard must judge
// how long the level has been over the limit, not how many samples in a row were, so such a
// runaway is caught as early as a real pole of the same radius: before it reaches full scale.
#[test]
fn an_oscillating_runaway_is_caught_as_early_as_a_growing_one() {
    let s = EngineSettings {
        clip: ClipPolicy::HardLimit,
        fallback: Fallback::Bypass,
        ..settings(1)
    };
    let input = sine(48_000, 1, 440.0, 0.1, 0);
    for (what, filter) in [
        ("poles at 1.0005, 1 kHz", resonator(1.0005, 1000.0, 0.001)),
        (
            "a real pole at 1.0005",
            raw_filter(vec![0.001], vec![1.0, -1.0005]),
        ),
    ] {
        let (mut engine, control) = engine_pair(s, Some(set_of(vec![filter.clone()], 1)));
        let (tripped, out) = frames_to_first_trip(&mut engine, &control, &input, 1);
        let tripped = tripped.unwrap_or_else(|| panic!("{what}: never tripped"));
        let before = peak(&out[..tripped]);
        // Where the runaway first passed its limit (bound 1 × input peak 0.1 × 12 dB margin),
        // from the filter alone.
        let mut alone = set_of(vec![filter], 1);
        let mut y = vec![0.0f32; input.len()];
        alone.process_interleaved(&input, &mut y);
        let limit = 0.1 * 10f32.powf(12.0 / 20.0);
        let crossed = y.iter().position(|v| v.abs() > limit).unwrap();
        eprintln!(
            "{what}: over its limit from frame {crossed}, tripped by frame {tripped} ({:.1} ms \
             later), largest output before {before:.3}",
            (tripped as f64 - crossed as f64) / 48.0
        );
        assert!(
            before < 0.95,
            "{what}: reached {before} before the guard acted"
        );
    }
}

// Source: common practice — an incoming set that runs away during its crossfade is dropped, and
// the frame in which it did carries the running set's output alone: not its share of the
// runaway.
#[test]
fn an_incoming_set_dropped_mid_crossfade_leaves_no_click() {
    let (mut engine, mut control) = engine_pair(settings(1), Some(inverse_set(&echo_line(), 1, 1)));
    let input = sine(8 * BLOCK, 1, 440.0, 0.25, 0);
    let mut out = vec![0.0f32; input.len()];
    engine.process(&input[..4 * BLOCK], &mut out[..4 * BLOCK]);
    // Fine for 100 samples, then a tap of 10⁶: beyond 1000× its bound at once.
    let mut b = vec![0.0; 101];
    b[0] = 1.0;
    b[100] = 1e6;
    control
        .send(set_of(vec![raw_filter(b, vec![1.0])], 2))
        .unwrap();
    engine.process(&input[4 * BLOCK..], &mut out[4 * BLOCK..]);
    let events = control.drain_events();
    assert!(
        events
            .iter()
            .any(|e| matches!(e, EngineEvent::SwapAborted { generation: 2 })),
        "{events:?}"
    );
    let mut reference = vec![0.0f32; input.len()];
    inverse_set(&echo_line(), 1, 1).process_interleaved(&input, &mut reference);
    // The crossfade began at frame 4·BLOCK; the runaway frame is 100 later.
    let at = 4 * BLOCK + 100;
    assert!(
        (out[at] - reference[at]).abs() <= 1e-6,
        "the frame the incoming set ran away in is {} instead of the running set's {}",
        out[at],
        reference[at]
    );
    for n in at..input.len() {
        assert!((out[n] - reference[n]).abs() <= 1e-6, "frame {n}");
    }
}

// Source: common practice — a report names the channel that ran away.
#[test]
fn a_hold_rule_trip_names_the_channel_that_ran_away() {
    let s = EngineSettings {
        fallback: Fallback::Bypass,
        ..settings(2)
    };
    let good = raw_filter(vec![1.0], vec![1.0]);
    let slow = raw_filter(vec![1.0], vec![1.0, -1.0005]);
    let (mut engine, mut control) = engine_pair(s, Some(set_of(vec![good, slow], 1)));
    // Channel 0 is loud, channel 1 quiet: the runaway is on the quiet one.
    let input: Vec<f32> = sine(4 * BLOCK, 1, 300.0, 1.0, 0)
        .into_iter()
        .flat_map(|v| [0.5 * v, 0.01 * v])
        .collect();
    run_engine(&mut engine, &input, 2, BLOCK);
    let channel = control.drain_events().into_iter().find_map(|e| match e {
        EngineEvent::InstabilityTrip {
            channel,
            non_finite: false,
            ..
        } => Some(channel),
        _ => None,
    });
    assert_eq!(channel, Some(1));
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
