//! Latency-aware fallbacks and swaps, and linked channel groups.
//!
//! A set whose filters delay on purpose (a least-squares FIR's D samples) must not be swapped
//! against one of another delay sample for sample (a comb filter while they mix, a jump in time
//! after), bypass after a trip is the input delayed by the running set's latency, and a trip on
//! one channel of a linked group moves the whole group, and only it.

mod common;

use common::{delay_filter, raw_filter, run_engine, sine};
use redress::engine::{engine_pair, EngineEvent, EngineSettings, Equalizer, Fallback};
use redress::model::config::parse_link;
use redress::pipeline::plan_link;

const BLOCK: usize = 256;

fn settings(channels: usize) -> EngineSettings {
    EngineSettings {
        fade_in_samples: 64,
        fallback: Fallback::Bypass,
        ..EngineSettings::defaults(channels, 48_000.0)
    }
}

fn runaway() -> redress::realize::Filter {
    raw_filter(vec![1.0], vec![1.0, -1.5])
}

// Source: common practice — bypass in place of a filter that delays by D must delay by D too,
// or the output jumps D samples in time (and the channels of a pair part company).
#[test]
fn bypass_after_a_trip_is_the_input_delayed_by_the_running_sets_latency() {
    let d = 48;
    let set = Equalizer::from_filters(vec![runaway()], 1.0, 1).with_latency(vec![d]);
    let (mut engine, control) = engine_pair(settings(1), Some(set));
    let input = sine(4 * BLOCK, 1, 500.0, 0.25, 0);
    let out = run_engine(&mut engine, &input, 1, BLOCK);
    let snap = control.snapshot();
    assert_eq!((snap.instability_trips, snap.running_generation), (1, 0));
    // Well after the trip and the 64-sample fade-in: x[n − d] exactly.
    for n in 2 * BLOCK..4 * BLOCK {
        assert!(
            (out[n] - input[n - d]).abs() <= 1e-7,
            "frame {n}: {} is not the input {d} samples ago ({})",
            out[n],
            input[n - d]
        );
    }
}

// Source: common practice — two copies of a programme at different delays, mixed, are a comb
// filter. A swap between sets of different latency therefore never mixes them: the old set
// fades out over the first half of the crossfade, the new one fades in over the second half
// (linear, so no step), and the output moves in time while it is silent.
#[test]
fn a_swap_between_sets_of_different_latency_never_mixes_two_delays() {
    let d = 100;
    let s = settings(1);
    let n = s.crossfade_samples;
    let old = Equalizer::from_filters(vec![delay_filter(0)], 1.0, 1);
    let new = Equalizer::from_filters(vec![delay_filter(d)], 1.0, 2).with_latency(vec![d]);
    let (mut engine, mut control) = engine_pair(s, Some(old));
    let input = sine(16 * BLOCK, 1, 330.0, 0.25, 0);
    let mut out = vec![0.0f32; input.len()];
    engine.process(&input[..4 * BLOCK], &mut out[..4 * BLOCK]);
    control.send(new).unwrap();
    engine.process(&input[4 * BLOCK..], &mut out[4 * BLOCK..]);
    assert_eq!(control.snapshot().swaps_completed, 1);
    let start = 4 * BLOCK; // no warm-up asked: the transition begins at once
    for k in 0..n + 200 {
        let at = start + k;
        let t = ((k + 1) as f32 / n as f32).min(1.0);
        let (w_old, w_new) = ((1.0 - 2.0 * t).max(0.0), (2.0 * t - 1.0).max(0.0));
        let a = input[at];
        let b = if at >= start + d { input[at - d] } else { 0.0 };
        let expected = w_old * a + w_new * b;
        assert!(
            (out[at] - expected).abs() <= 1e-6,
            "frame {k} of the swap: {} is not {expected} (one set at a time, faded)",
            out[at]
        );
    }
}

// Source: common practice for multichannel processing — channels that belong together (a
// stereo pair) are acted on together, so they stay aligned; channels that do not, are left
// alone.
#[test]
fn a_trip_on_one_channel_moves_its_linked_group_and_only_it() {
    let good = raw_filter(vec![0.5, 0.25], vec![1.0]);
    let set = Equalizer::from_filters(
        vec![runaway(), good.clone(), good.clone(), good.clone()],
        1.0,
        1,
    )
    .with_channel_groups(vec![0, 0, 1, 1]);
    let (mut engine, mut control) = engine_pair(settings(4), Some(set));
    let input = sine(4 * BLOCK, 4, 500.0, 0.25, 0);
    let out = run_engine(&mut engine, &input, 4, BLOCK);
    let trips: Vec<_> = control
        .drain_events()
        .into_iter()
        .filter(|e| matches!(e, EngineEvent::InstabilityTrip { .. }))
        .collect();
    assert_eq!(trips.len(), 1, "{trips:?}");
    assert!(matches!(
        trips[0],
        EngineEvent::InstabilityTrip { channel: 0, .. }
    ));
    assert_eq!(control.snapshot().channels_on_fallback, 2);
    let mut reference = Equalizer::from_filters(vec![good; 4], 1.0, 0);
    let mut expected = vec![0.0f32; input.len()];
    reference.process_interleaved(&input, &mut expected);
    for f in 2 * BLOCK..4 * BLOCK {
        for c in 0..2 {
            assert!(
                (out[f * 4 + c] - input[f * 4 + c]).abs() <= 1e-7,
                "frame {f} channel {c} not in bypass"
            );
        }
        for c in 2..4 {
            assert!(
                (out[f * 4 + c] - expected[f * 4 + c]).abs() <= 1e-7,
                "frame {f} channel {c}: the unlinked group was disturbed"
            );
        }
    }
}

const TWO_PATHS: &str = r#"
[link]
sample_rate_hz = 48000
channel_count = 3
LINKED

[[path]]
channels = [0]
difference_equation = { b = [1.0, -0.5], a = [1.0] }

[[path]]
channels = [1]
difference_equation = { b = [1.0, -0.4], a = [1.0] }

[[path]]
channels = [2]
difference_equation = { b = [1.0, -0.3], a = [1.0] }
"#;

// Source: the README's config format — each path's channels are linked, and `linked_channels`
// links channels across paths.
#[test]
fn linked_channels_join_paths_into_one_group() {
    let unlinked = parse_link(&TWO_PATHS.replace("LINKED", ""), None).unwrap();
    assert_eq!(unlinked.channel_groups(), vec![0, 1, 2]);
    let linked = parse_link(
        &TWO_PATHS.replace("LINKED", "linked_channels = [[0, 1]]"),
        None,
    )
    .unwrap();
    assert_eq!(linked.channel_groups(), vec![0, 0, 1]);
    let set = Equalizer::from_plan(&plan_link(&linked), 1).unwrap();
    assert_eq!(
        (0..3).map(|c| set.group_of(c)).collect::<Vec<_>>(),
        vec![0, 0, 1]
    );
    for bad in [
        "linked_channels = [[0]]",
        "linked_channels = [[0, 3]]",
        "linked_channels = [[1, 1]]",
    ] {
        let e = parse_link(&TWO_PATHS.replace("LINKED", bad), None).unwrap_err();
        assert!(e.to_string().contains("linked_channels"), "{bad}: {e}");
    }
}
