//! Live duplex through real ALSA, on file-backed devices (tests/audio/alsa-file-device.conf):
//! capture reads a raw file, the engine runs in the capture callback, playback writes a raw
//! file. The played file must hold the engine's output for the captured signal.
//!
//! alsa-lib reads its configuration once per process, so this binary holds one test function
//! and sets ALSA_CONFIG_PATH before anything touches ALSA.
//!
//! The file devices are not paced: both streams run as fast as the CPU allows, independently,
//! so what crosses the ring between them is cut up unpredictably (silence where playback ran
//! ahead, drops where capture did). The check is therefore per contiguous run of output: each
//! run is located in the offline result and must match it sample for sample.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::sync::atomic::Ordering;
use std::time::{Duration, Instant};

use redress::engine::{engine_pair, EngineSettings, Equalizer};
use redress::io::live::{list_devices, start_duplex, DeviceFormat, DeviceRequest, LiveError};
use redress::model::{
    BandEdges, CoefficientPrecision, InversePolicy, Link, ModelForm, Path as LinkPath, Structure,
    TransferFunction, DEFAULT_CIRCLE_TOLERANCE,
};
use redress::pipeline::plan_link;

const CHANNELS: usize = 2;
const RATE: u32 = 48_000;
/// Device period. The ring holds 4 periods and starts with 2 of silence, so the first two
/// capture periods always fit, whatever playback does: signal and filter tail sit inside them,
/// and only the trailing silence can be dropped.
const PERIOD: usize = 4096;
const SIGNAL_FRAMES: usize = 6000;
/// Silence after the signal: the capture device repeats its last period at end of file, and the
/// inverse's tail must ring out inside the file.
const PAD_FRAMES: usize = 2 * PERIOD;
/// Noise peak. The inverse's Σ|g| (checked below from the offline run) keeps the output under
/// the soft limiter's 0.75 knee, so the limiter never touches it.
const LEVEL: f32 = 0.15;
/// Per-sample tolerance between live and offline output. Both run the same f64 recursion on the
/// same f32 input and round once to f32, so they agree exactly; the one known difference is the
/// audio thread's flush of denormals to zero (below 1e-37). 1e-6 is far above that and far below
/// any real fault (a lost, repeated or misrouted sample changes values by ~1e-2 at these levels).
const TOLERANCE: f32 = 1e-6;

/// A link of our own: a patch line to the annex booth whose transformer adds a damped resonance,
/// H(z) = 1 / (1 − 0.6 z⁻¹ + 0.25 z⁻²) · (1 − 0.3 z⁻¹) — invertible, with a short decaying tail.
fn annex_line() -> Link {
    let path = LinkPath {
        label: "annex booth line".to_string(),
        channels: (0..CHANNELS).collect(),
        form: ModelForm::DifferenceEquation,
        channel: TransferFunction::new(vec![1.0, -0.6, 0.25], vec![1.0, -0.3]),
        structure: Structure::Sections,
        precision: CoefficientPrecision::F32,
        circle_tolerance: DEFAULT_CIRCLE_TOLERANCE,
        // The whole axis: the short recursion this test compares frame by frame (see
        // tests/service_support/mod.rs on why not the default band's long FIR).
        inverse: InversePolicy {
            correction_band_hz: Some(BandEdges {
                low_hz: 0.0,
                high_hz: f64::from(RATE) / 2.0,
            }),
            ..InversePolicy::default()
        },
    };
    Link {
        source: None,
        sample_rate: f64::from(RATE),
        channel_count: CHANNELS,
        paths: vec![path],
        linked_channels: Vec::new(),
        runtime: Default::default(),
    }
}

/// Deterministic noise, different on each channel, so every frame is (practically) unique and
/// a run of output can be located in the expected signal by its first frame.
fn noise(frames: usize) -> Vec<f32> {
    let mut state: u64 = 0x2545_f491_4f6c_dd1d;
    (0..frames * CHANNELS)
        .map(|_| {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            let unit = (state >> 40) as f32 / (1u64 << 24) as f32; // [0, 1)
            LEVEL * (2.0 * unit - 1.0)
        })
        .collect()
}

fn write_f32(path: &Path, samples: &[f32]) {
    let bytes: Vec<u8> = samples.iter().flat_map(|s| s.to_le_bytes()).collect();
    std::fs::write(path, bytes).expect("write test input");
}

fn read_f32(path: &Path) -> Vec<f32> {
    let bytes = std::fs::read(path).expect("read test output");
    bytes
        .chunks_exact(4)
        .map(|b| f32::from_le_bytes([b[0], b[1], b[2], b[3]]))
        .collect()
}

/// Not silence and not a denormal: the audio thread flushes denormals to zero, so where the
/// offline tail has decayed into them the live output is exactly zero instead.
fn audible((l, r): (f32, f32)) -> bool {
    l.abs() >= f32::MIN_POSITIVE || r.abs() >= f32::MIN_POSITIVE
}

struct RunReport {
    runs: usize,
    matched_frames: usize,
    /// Non-silent output frames found nowhere in the expected signal.
    unmatched_frames: usize,
    /// A run that started before the end of the previous one (reordered or repeated data).
    out_of_order: usize,
    /// Expected frames that were seen in the output.
    covered: Vec<bool>,
    max_difference: f32,
}

/// Splits `played` into contiguous runs of the expected signal: silence (both channels exactly
/// zero: prefill and underruns) where the signal is audible separates runs, and so does any
/// jump (dropped data). Each run is anchored by its first frame's exact bits and extended while
/// it matches within `TOLERANCE`.
fn match_runs(played: &[f32], expected: &[f32]) -> RunReport {
    let frame = |s: &[f32], i: usize| (s[i * CHANNELS], s[i * CHANNELS + 1]);
    let bits = |(l, r): (f32, f32)| (l.to_bits(), r.to_bits());
    let expected_frames = expected.len() / CHANNELS;
    let mut index: HashMap<(u32, u32), Option<usize>> = HashMap::new();
    for j in 0..expected_frames {
        let f = frame(expected, j);
        if audible(f) {
            // A frame seen twice cannot anchor a run.
            index
                .entry(bits(f))
                .and_modify(|e| *e = None)
                .or_insert(Some(j));
        }
    }
    let mut report = RunReport {
        runs: 0,
        matched_frames: 0,
        unmatched_frames: 0,
        out_of_order: 0,
        covered: vec![false; expected_frames],
        max_difference: 0.0,
    };
    let played_frames = played.len() / CHANNELS;
    let mut last_end = 0;
    let mut i = 0;
    while i < played_frames {
        let f = frame(played, i);
        if f == (0.0, 0.0) {
            i += 1;
            continue;
        }
        let Some(Some(start)) = index.get(&bits(f)).copied() else {
            report.unmatched_frames += 1;
            i += 1;
            continue;
        };
        report.runs += 1;
        if start < last_end {
            report.out_of_order += 1;
        }
        let mut j = start;
        while i < played_frames && j < expected_frames {
            let (pl, pr) = frame(played, i);
            let (el, er) = frame(expected, j);
            let diff = (pl - el).abs().max((pr - er).abs());
            let silent = (pl, pr) == (0.0, 0.0);
            if diff > TOLERANCE || (silent && audible((el, er))) {
                break;
            }
            report.max_difference = report.max_difference.max(diff);
            report.covered[j] = true;
            report.matched_frames += 1;
            i += 1;
            j += 1;
        }
        last_end = j;
    }
    report
}

fn scratch_dir() -> PathBuf {
    let dir = std::env::temp_dir().join(format!("redress-live-file-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("scratch dir");
    dir
}

#[test]
fn duplex_on_file_devices_plays_the_offline_result() {
    let conf = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/audio/alsa-file-device.conf");
    let dir = scratch_dir();
    let infile = dir.join("in.f32");
    let outfile = dir.join("out.f32");
    // Edition 2021: set_var is safe; this binary's only test sets it before any thread or ALSA
    // call exists.
    std::env::set_var("ALSA_CONFIG_PATH", &conf);
    std::env::set_var("EQ_TEST_INFILE", &infile);
    std::env::set_var("EQ_TEST_OUTFILE", &outfile);

    let mut input = noise(SIGNAL_FRAMES);
    input.resize((SIGNAL_FRAMES + PAD_FRAMES) * CHANNELS, 0.0);
    write_f32(&infile, &input);

    // The filter set, through the library's own pipeline.
    let plan = plan_link(&annex_line());
    assert!(plan.is_runnable(), "{:?}", plan.problems());
    let set = Equalizer::from_plan(&plan, 1).expect("equalizer");
    let mut offline = set.clone();
    let mut expected = vec![0.0f32; input.len()];
    offline.process_interleaved(&input, &mut expected);
    // The engine's fade-in of one sample silences frame 0 and nothing else.
    expected[..CHANNELS].fill(0.0);
    let peak = expected.iter().fold(0.0f32, |m, v| m.max(v.abs()));
    assert!(
        peak < 0.7,
        "test level too high for the soft limiter: peak {peak}"
    );

    // The device listing shows the test devices with what they support.
    let listing = list_devices(false).expect("listing");
    assert!(listing.contains("alsa:eq_in"), "{listing}");
    assert!(listing.contains("alsa:eq_out"), "{listing}");
    assert!(listing.contains("f32"), "{listing}");

    // A device that is not there is refused with the list of what is.
    let mut settings = EngineSettings::defaults(CHANNELS, f64::from(RATE));
    settings.fade_in_samples = 1;
    let (engine, refused_control) = engine_pair(settings, Some(set.clone()));
    let stats = refused_control.stats();
    let wrong = DeviceRequest {
        input: "quarry relay".to_string(),
        ..DeviceRequest::default()
    };
    match start_duplex(&wrong, engine, stats) {
        Err(e @ LiveError::NoSuchDevice { .. }) => {
            let text = e.to_string();
            assert!(
                text.contains("no capture device matches `quarry relay`"),
                "{text}"
            );
            assert!(text.contains("alsa:eq_in"), "{text}");
        }
        other => panic!("expected NoSuchDevice, got {other:?}"),
    }

    // The real run.
    let (engine, control) = engine_pair(settings, Some(set));
    let stats = control.stats();
    let request = DeviceRequest {
        buffer_frames: Some(PERIOD as u32),
        ..DeviceRequest::default()
    };
    let streams = start_duplex(&request, engine, stats.clone()).expect("start duplex");
    let config = streams.config().clone();
    assert_eq!(config.input_format, DeviceFormat::F32);
    assert_eq!(config.output_format, DeviceFormat::F32);
    let ring = config.ring.expect("ALSA devices run with a ring");
    assert_eq!(ring.prefill_frames(), 2 * PERIOD);

    // Stop once playback has certainly taken the prefill and the two signal periods out of the
    // ring: samples in the file minus silence inserted (read after the file size, so never an
    // overestimate). The deadline only guards against a hang.
    let needed = ((ring.prefill_frames() + 2 * PERIOD) * CHANNELS) as u64;
    let deadline = Instant::now() + Duration::from_secs(20);
    loop {
        let written = std::fs::metadata(&outfile).map_or(0, |m| m.len() / 4);
        let silence = stats.output_underruns.load(Ordering::Relaxed);
        if written.saturating_sub(silence) >= needed || Instant::now() > deadline {
            break;
        }
        std::thread::sleep(Duration::from_millis(1));
    }
    let errors = streams.stream_errors();
    streams.stop();

    let played = read_f32(&outfile);
    let snap = control.snapshot();
    let report = match_runs(&played, &expected);
    let signal_frames: Vec<usize> = (0..expected.len() / CHANNELS)
        .filter(|j| audible((expected[j * CHANNELS], expected[j * CHANNELS + 1])))
        .collect();
    let arrived = signal_frames.iter().filter(|j| report.covered[**j]).count();
    eprintln!(
        "{config}\nplayed {} frames in {} run(s); {arrived}/{} signal frames arrived; \
         max |live − offline| = {:e}; engine frames {}, overruns {} samples, underruns {} \
         samples; stream errors: capture {}, playback {}",
        played.len() / CHANNELS,
        report.runs,
        signal_frames.len(),
        report.max_difference,
        snap.frames,
        snap.input_overruns,
        snap.output_underruns,
        errors.input,
        errors.output,
    );
    let _ = std::fs::remove_dir_all(&dir);

    assert_eq!(
        report.unmatched_frames, 0,
        "output that is not the engine's"
    );
    assert_eq!(report.out_of_order, 0, "output runs out of order");
    assert!(report.runs >= 1 && report.matched_frames > 0);
    // The ring sizing above guarantees every signal frame fits; all of it must have arrived.
    assert_eq!(arrived, signal_frames.len(), "signal frames lost");
    assert!(
        report.max_difference <= TOLERANCE,
        "{}",
        report.max_difference
    );
}
