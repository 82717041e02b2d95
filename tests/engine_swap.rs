//! Hot-swap by crossfade: no click.

mod common;

use common::{echo_line, inverse_set, resonant_line, sine};
use redress::engine::{engine_pair, EngineSettings, Equalizer};
use redress::model::TransferFunction;

const BLOCK: usize = 128;

/// Largest |y[n] − y[n−1]| over a window.
fn max_step(y: &[f32]) -> f32 {
    y.windows(2)
        .map(|w| (w[1] - w[0]).abs())
        .fold(0.0, f32::max)
}

/// Runs a set alone over `input`, block by block, from fresh state.
fn run_alone(mut set: Equalizer, input: &[f32]) -> Vec<f32> {
    let mut out = vec![0.0f32; input.len()];
    set.process_interleaved(input, &mut out);
    out
}

// Source: common practice — a crossfade y = (1−t)·a + t·b moves by at most
// (1−t)|Δa| + t|Δb| + |b − a|/N per sample, so its largest step is bounded by the larger of the
// two filters' own steps plus |b − a|ₘₐₓ/N. A click would be a step far beyond that.
#[test]
fn swap_on_a_steady_sine_has_no_click() {
    let settings = EngineSettings::defaults(1, 48_000.0);
    let crossfade = settings.crossfade_samples;
    let (mut engine, mut control) = engine_pair(settings, Some(inverse_set(&echo_line(), 1, 1)));
    let total_blocks = 40;
    let input = sine(total_blocks * BLOCK, 1, 500.0, 0.2, 0);
    let swap_block = 20;
    let mut output = vec![0.0f32; input.len()];
    for b in 0..total_blocks {
        if b == swap_block {
            control.send(inverse_set(&resonant_line(), 1, 2)).unwrap();
        }
        let r = b * BLOCK..(b + 1) * BLOCK;
        engine.process(&input[r.clone()], &mut output[r]);
    }
    assert_eq!(control.snapshot().swaps_completed, 1);

    let start = swap_block * BLOCK;
    let end = start + crossfade + 1;
    // Reference outputs: the old set over the whole signal; the new set from the swap on,
    // from fresh state, as it starts inside the engine.
    let old = run_alone(inverse_set(&echo_line(), 1, 1), &input);
    let new_from_swap = run_alone(inverse_set(&resonant_line(), 1, 2), &input[start..]);
    let old_win = &old[start - 1..end];
    let new_win = &new_from_swap[..end - start];
    let own_step = max_step(old_win).max(max_step(new_win));
    let spread = old[start..end]
        .iter()
        .zip(new_win)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f32::max);
    let allowed = own_step + spread / crossfade as f32 + 1e-5;
    let got = max_step(&output[start - 1..end]);
    assert!(
        got <= allowed,
        "largest step during the swap {got} exceeds {allowed} (own {own_step}, spread {spread})"
    );
    // And the swap really changed the output: after it, the engine runs the new set.
    let tail = start + crossfade + 50;
    assert!((output[tail] - old[tail]).abs() > 1e-3);
}

/// A link with a notch just inside the circle (zeros at radius 0.9995, 2 kHz): its inverse rings
/// for about 290 ms (60 dB), so a fresh copy of it takes that long to reach its steady state.
fn notched_line() -> TransferFunction {
    let r: f64 = 0.9995;
    let theta = 2.0 * std::f64::consts::PI * 2000.0 / 48_000.0;
    TransferFunction::new(vec![1.0, -2.0 * r * theta.cos(), r * r], vec![1.0])
}

// Source: common practice — a recursive filter started from rest reaches its steady-state
// response only after its transient has decayed (60 dB in its decay time). The incoming set
// runs on the live input for that long (capped at WARM_UP_CAP_SECONDS) before the crossfade,
// so when the crossfade ends it plays its steady state, not its start-up transient.
#[test]
fn an_incoming_set_is_warmed_up_before_its_crossfade() {
    let settings = EngineSettings::defaults(1, 48_000.0);
    let (mut engine, mut control) = engine_pair(settings, Some(inverse_set(&echo_line(), 1, 1)));
    let incoming = inverse_set(&notched_line(), 1, 2);
    let warm_up = incoming.warm_up_samples();
    assert!(
        (13_000..15_000).contains(&warm_up),
        "decay of the notch's inverse: {warm_up} samples"
    );
    let seconds = 2;
    let input = sine(seconds * 48_000, 1, 300.0, 0.02, 0);
    let mut output = vec![0.0f32; input.len()];
    let swap_at = 20 * BLOCK;
    // Small blocks, so the end of the crossfade is seen to within 16 frames.
    let step = 16;
    let mut done = None;
    for (b, (x, y)) in input.chunks(step).zip(output.chunks_mut(step)).enumerate() {
        if b * step == swap_at {
            control.send(incoming.clone()).unwrap();
        }
        engine.process(x, y);
        if done.is_none() && control.snapshot().swaps_completed == 1 {
            done = Some((b + 1) * step);
        }
    }
    let done = done.expect("the swap completed");
    eprintln!(
        "crossfade ended {} samples after the swap began",
        done - swap_at
    );
    // Steady state: the new set run over the whole signal.
    let steady = run_alone(inverse_set(&notched_line(), 1, 2), &input);
    let peak = steady[done..].iter().fold(0.0f32, |m, v| m.max(v.abs()));
    let worst = output[done..]
        .iter()
        .zip(&steady[done..])
        .map(|(a, b)| (a - b).abs())
        .fold(0.0f32, f32::max);
    eprintln!(
        "warm-up {warm_up} samples ({:.0} ms): after the crossfade the output differs from the \
         steady state by {:.2e} of its peak",
        warm_up as f64 / 48.0,
        worst / peak
    );
    assert!(
        worst <= 2e-3 * peak,
        "after the crossfade the output is {:.1} % of its peak away from the steady state",
        100.0 * worst / peak
    );
}
