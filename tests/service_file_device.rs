//! The real binary (`redress run`) on ALSA's userspace file devices (tests/audio/
//! alsa-file-device.conf): what it captures from the input file must come out equalized in the
//! output file exactly as `redress apply` equalizes the same material offline.
//!
//! The file devices are not paced, so the two streams race; the ring between them holds four
//! 4096-frame periods and starts with two of silence, so the first two captured periods (the
//! whole signal and its tail) always get in. Later periods hold only silence and may be dropped,
//! and playback may insert silence when it runs ahead: the check goes run by run.

mod service_support;

use std::path::Path;

use service_support::{start, temp_dir, LINK_A, UNPACED};

const CHANNELS: usize = 2;
const SIGNAL_FRAMES: usize = 6000;
const PAD_FRAMES: usize = 3 * 4096;
/// The engine's fade-in (0.1 ms, the shortest the config allows) covers the first 5 frames.
const FADE_FRAMES: usize = 5;
/// Live and offline run the same f64 recursion on the same input and round once to f32; only
/// the audio thread's flush of subnormals to zero can differ (below 1e-37).
const TOLERANCE: f32 = 1e-6;

fn noise(frames: usize) -> Vec<f32> {
    let mut state: u64 = 0x9e37_79b9_7f4a_7c15;
    (0..frames * CHANNELS)
        .map(|_| {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            0.15 * (2.0 * ((state >> 40) as f32 / (1u64 << 24) as f32) - 1.0)
        })
        .collect()
}

fn write_wav(path: &Path, samples: &[f32]) {
    let spec = hound::WavSpec {
        channels: CHANNELS as u16,
        sample_rate: 48_000,
        bits_per_sample: 32,
        sample_format: hound::SampleFormat::Float,
    };
    let mut w = hound::WavWriter::create(path, spec).unwrap();
    for s in samples {
        w.write_sample(*s).unwrap();
    }
    w.finalize().unwrap();
}

// Source: common practice — a live path and an offline path running the same filter on the
// same samples must produce the same samples.
#[test]
fn live_binary_matches_offline_apply() {
    let dir = temp_dir("svc-file-device");
    let config = dir.join("link.toml");
    std::fs::write(
        &config,
        format!("{LINK_A}\n[audio]\nbuffer_frames = 4096\n{UNPACED}\n[engine]\nfade_in_ms = 0.1\n"),
    )
    .unwrap();
    let mut input = noise(SIGNAL_FRAMES);
    input.resize((SIGNAL_FRAMES + PAD_FRAMES) * CHANNELS, 0.0);
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

    let alsa = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/audio/alsa-file-device.conf");
    let mut svc = start(
        &dir,
        &config,
        &["--for", "0.5"],
        &[
            ("ALSA_CONFIG_PATH", &alsa),
            ("EQ_TEST_INFILE", &raw_in),
            ("EQ_TEST_OUTFILE", &raw_out),
        ],
    );
    let status = svc.wait_exit();
    assert_eq!(status.code(), Some(0), "{}", svc.log_text());

    // Offline reference through the real binary.
    let wav_in = dir.join("in.wav");
    let wav_out = dir.join("out.wav");
    write_wav(&wav_in, &input);
    let apply = std::process::Command::new(env!("CARGO_BIN_EXE_redress"))
        .arg("apply")
        .args([&config, &wav_in, &wav_out])
        .output()
        .unwrap();
    assert!(
        apply.status.success(),
        "{}",
        String::from_utf8_lossy(&apply.stderr)
    );
    let expected: Vec<f32> = hound::WavReader::open(&wav_out)
        .unwrap()
        .samples::<f32>()
        .map(Result::unwrap)
        .collect();

    let bytes = std::fs::read(&raw_out).unwrap();
    let live: Vec<f32> = bytes
        .chunks_exact(4)
        .map(|b| f32::from_le_bytes([b[0], b[1], b[2], b[3]]))
        .collect();
    let live_frames = live.len() / CHANNELS;
    assert!(
        live_frames > SIGNAL_FRAMES,
        "only {live_frames} frames were played"
    );

    // The streams race, so playback may insert silence (an underrun) wherever it runs ahead
    // of capture. Cut the played file into runs of non-silent frames; each run must be a
    // contiguous piece of the offline result, in order, and together they must cover the
    // whole signal.
    let frame = |v: &[f32], f: usize| v[f * CHANNELS..(f + 1) * CHANNELS].to_vec();
    let silent = |f: usize| frame(&live, f).iter().all(|&s| s == 0.0);
    let expected_frames = expected.len() / CHANNELS;
    let matches = |live_f: usize, exp_f: usize| {
        exp_f < expected_frames
            && frame(&live, live_f)
                .iter()
                .zip(frame(&expected, exp_f))
                .all(|(a, b)| (a - b).abs() <= TOLERANCE)
    };
    let mut covered = vec![false; SIGNAL_FRAMES];
    let mut next_expected = 0usize;
    let mut f = 0usize;
    while f < live_frames {
        if silent(f) {
            f += 1;
            continue;
        }
        let run_start = f;
        while f < live_frames && !silent(f) {
            f += 1;
        }
        // The first run opens with the fade-in, which the offline result does not have: its
        // first full-level frame is the first that can be found there.
        let skips = if next_expected == 0 { FADE_FRAMES } else { 0 };
        let located = (0..=skips).find_map(|skip| {
            let first = run_start + skip;
            (first < f)
                .then(|| {
                    (next_expected..expected_frames)
                        .find(|&e| (0..4.min(f - first)).all(|k| matches(first + k, e + k)))
                        .map(|e| (first, e))
                })
                .flatten()
        });
        let (first, found) = located.unwrap_or_else(|| {
            panic!("played frames {run_start}..{f} are not in the offline result")
        });
        for k in 0..f - first {
            assert!(
                matches(first + k, found + k),
                "played frame {} differs from offline frame {}",
                first + k,
                found + k
            );
            if found + k < SIGNAL_FRAMES {
                covered[found + k] = true;
            }
        }
        next_expected = found + (f - first);
    }
    let missing: Vec<usize> = (FADE_FRAMES..SIGNAL_FRAMES)
        .filter(|&f| !covered[f])
        .collect();
    assert!(
        missing.is_empty(),
        "signal frames {missing:?} never came out:\n{}",
        svc.log_text()
    );
    let log = svc.log_text();
    assert!(
        log.contains("capture `"),
        "the log names the devices: {log}"
    );
}
