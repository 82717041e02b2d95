//! Hot-swap by crossfade: no click.

mod common;

use common::{echo_line, inverse_set, resonant_line, sine};
use redress::engine::{engine_pair, EngineSettings, Equalizer};

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
