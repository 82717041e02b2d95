//! End to end on a real-time paced device path (a private PulseAudio with null sinks under ALSA's
//! file plugin; see tests/audio/). Ignored by default: `.ci/run` starts the PulseAudio, exports
//! its XDG_RUNTIME_DIR and runs `cargo test --test service_paced -- --ignored`.
//!
//! The service runs for about five seconds on generated programme material. In the middle it
//! gets a SIGHUP with a broken config (nothing may change, nothing may drop), then one with a
//! re-measured link (it must crossfade without a click), then SIGTERM (exit 0). The recorded
//! output must equal the offline result of the first filter up to the good swap, and of the
//! second after it, at one constant alignment: no frame lost or repeated in between.

mod service_support;

use std::path::Path;

use redress::engine::Equalizer;
use redress::io::{generate, ProgrammeSpec};
use redress::model::config::parse_link;
use redress::pipeline::plan_link;
use service_support::{start, temp_dir, u, BROKEN, LINK_A, LINK_B};

const CHANNELS: usize = 2;
const RATE: f64 = 48_000.0;
/// Both paths compute the same f64 recursion and round once to f32 (see service_file_device).
const TOLERANCE: f32 = 1e-6;

fn offline(config: &str, input: &[f32]) -> Vec<f32> {
    let link = parse_link(config, None).unwrap();
    let mut eq = Equalizer::from_plan(&plan_link(&link), 0).unwrap();
    let mut out = vec![0.0; input.len()];
    eq.process_interleaved(input, &mut out);
    out
}

fn frame_matches(live: &[f32], l: usize, reference: &[f32], r: usize) -> bool {
    (0..CHANNELS).all(|c| (live[l * CHANNELS + c] - reference[r * CHANNELS + c]).abs() <= TOLERANCE)
}

fn max_step(y: &[f32], from: usize, to: usize) -> f32 {
    (from.max(1)..to)
        .flat_map(|f| (0..CHANNELS).map(move |c| (f, c)))
        .map(|(f, c)| (y[f * CHANNELS + c] - y[(f - 1) * CHANNELS + c]).abs())
        .fold(0.0, f32::max)
}

// Source: common practice for live audio services — a failed reload is invisible in the audio,
// a good one is a smooth crossfade, and the live result equals the offline one.
#[test]
#[ignore = "needs the private PulseAudio that .ci/run starts (tests/audio/start-paced-audio.sh)"]
fn paced_run_with_bad_and_good_reloads() {
    let runtime = std::env::var_os("XDG_RUNTIME_DIR").expect("XDG_RUNTIME_DIR of the PulseAudio");
    let dir = temp_dir("svc-paced");
    let config = dir.join("link.toml");
    let audio = "\n[audio]\nbuffer_frames = 512\n";
    std::fs::write(&config, format!("{LINK_A}{audio}")).unwrap();

    let mut input = generate(&ProgrammeSpec::new(RATE, CHANNELS, 8.0, 7));
    input.resize(input.len() + 2 * 48_000 * CHANNELS, 0.0);
    let raw_in = dir.join("capture.raw");
    let raw_out = dir.join("playback.raw");
    std::fs::write(
        &raw_in,
        input
            .iter()
            .flat_map(|s| s.to_le_bytes())
            .collect::<Vec<u8>>(),
    )
    .unwrap();
    let alsa = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/audio/alsa-paced-device.conf");
    let runtime = Path::new(&runtime);
    let mut svc = start(
        &dir,
        &config,
        &[],
        &[
            ("ALSA_CONFIG_PATH", &alsa),
            ("EQ_TEST_INFILE", &raw_in),
            ("EQ_TEST_OUTFILE", &raw_out),
            ("XDG_RUNTIME_DIR", runtime),
        ],
    );
    let frames_at_least = |n: u64| {
        move |d: &serde_json::Value| d.pointer("/engine/frames").and_then(|v| v.as_u64()) >= Some(n)
    };
    let before_bad = svc.wait_for("1.5 s of audio", frames_at_least(72_000));
    let xruns =
        |d: &serde_json::Value| u(d, "/engine/input_overruns") + u(d, "/engine/output_underruns");

    std::fs::write(&config, BROKEN).unwrap();
    svc.signal("HUP");
    let rejected = svc.wait_for("the bad reload to be rejected", |d| {
        d.pointer("/reloads/failed").and_then(|v| v.as_u64()) == Some(1)
    });
    let bad_frame = u(&rejected, "/engine/frames");
    let settled = svc.wait_for("0.5 s more audio", frames_at_least(bad_frame + 24_000));
    assert_eq!(u(&settled, "/engine/running_generation"), 1);
    assert_eq!(
        xruns(&settled),
        xruns(&before_bad),
        "the rejected reload must not drop or insert audio (overruns {} → {}, underruns {} → {})",
        u(&before_bad, "/engine/input_overruns"),
        u(&settled, "/engine/input_overruns"),
        u(&before_bad, "/engine/output_underruns"),
        u(&settled, "/engine/output_underruns")
    );

    std::fs::write(&config, format!("{LINK_B}{audio}")).unwrap();
    svc.signal("HUP");
    let swapped = svc.wait_for("generation 2 to run", |d| {
        d.pointer("/engine/running_generation")
            .and_then(|v| v.as_u64())
            == Some(2)
    });
    let swap_frame = u(&swapped, "/engine/frames");
    let end = svc.wait_for("1.5 s after the swap", frames_at_least(swap_frame + 72_000));
    let end_frame = u(&end, "/engine/frames") as usize;
    svc.signal("TERM");
    let status = svc.wait_exit();
    assert_eq!(status.code(), Some(0), "{}", svc.log_text());
    eprintln!(
        "paced run: {} frames, {} overrun and {} underrun samples",
        end_frame,
        u(&end, "/engine/input_overruns"),
        u(&end, "/engine/output_underruns")
    );

    let bytes = std::fs::read(&raw_out).unwrap();
    let live: Vec<f32> = bytes
        .chunks_exact(4)
        .map(|b| f32::from_le_bytes([b[0], b[1], b[2], b[3]]))
        .collect();
    let live_frames = live.len() / CHANNELS;
    let expected_a = offline(LINK_A, &input);
    let expected_b = offline(LINK_B, &input);

    // Align once, 0.5 s in (past the fade-in and any start-up underrun).
    let probe = 24_000;
    let offset = (0..live_frames - 8)
        .find(|&l| (0..8).all(|k| frame_matches(&live, l + k, &expected_a, probe + k)))
        .expect("the equalized programme appears in the recording")
        - probe;
    // From the probe through the rejected reload and up to the good one: first filter, every
    // frame, at that one alignment (the swap request reached the engine after `swap_frame`
    // minus the time the control loop took, so stop a little before it).
    let until = (swap_frame as usize).saturating_sub(4800);
    assert!(until > bad_frame as usize + 12_000);
    for n in probe..until {
        assert!(
            frame_matches(&live, offset + n, &expected_a, n),
            "frame {n}: live output left the first filter's result before the swap"
        );
    }
    // Well after the swap (crossfade done, the new filter's start-up transient gone): the second
    // filter, at the same alignment — nothing was lost or repeated across the swap.
    let after_from = swap_frame as usize + 4800;
    let after_to = (end_frame - 9600).min(live_frames - offset);
    assert!(
        after_to > after_from + 24_000,
        "too little audio after the swap"
    );
    for n in after_from..after_to {
        assert!(
            frame_matches(&live, offset + n, &expected_b, n),
            "frame {n}: live output is not the second filter's result after the swap"
        );
    }
    // No click: across the whole stretch, including the crossfade, no sample-to-sample step is
    // larger than either filter alone makes, plus what a 20 ms linear crossfade can add.
    let crossfade = 960.0;
    let spread = (probe..after_to)
        .flat_map(|n| (0..CHANNELS).map(move |c| n * CHANNELS + c))
        .map(|i| (expected_a[i] - expected_b[i]).abs())
        .fold(0.0, f32::max);
    let own = max_step(&expected_a, probe, after_to).max(max_step(&expected_b, probe, after_to));
    let got = max_step(&live, offset + probe, offset + after_to);
    assert!(
        got <= own + spread / crossfade + 1e-5,
        "largest step {got} exceeds the filters' own {own} plus the crossfade's {}",
        spread / crossfade
    );
}
