//! Is the link linear and time-invariant? Harmonic distortion by Farina's method against the
//! analytic levels of a memoryless polynomial and against numpy (tests/fixtures/linearity,
//! written by scripts/reference/make_linearity_fixtures.py with numpy 2.4.6 / scipy 1.17.1);
//! the change between repeated captures of an invented fading link against its closed form; and
//! the SNR gain of averaging repeated sweeps against 10·log10 N.

use std::path::Path;

use redress::io::WavFormat;
use redress::measure::{
    generate_stimulus, harmonic_distortion, identify_signals, simulate_recording, sweep_law,
    BandDistortion, FirLength, GaussianNoise, IdentifySettings, MeasurementOutcome, NamedSignal,
    RecordingSimulation, StimulusKind, StimulusSpec, CHANGE_LIMIT_DB, DISTORTION_LIMIT_DB,
};
use redress::model::config::parse_link;
use redress::model::Link;
use serde::Deserialize;

#[derive(Deserialize)]
struct SweepSettings {
    start_hz: f64,
    end_hz: f64,
    seconds: f64,
    level_dbfs: f64,
    fade_ms: f64,
    silence_seconds: f64,
}

#[derive(Deserialize)]
struct Analytic {
    second_db: f64,
    third_db: f64,
    total_db: f64,
}

#[derive(Deserialize)]
struct SweptBand {
    mid_hz: f64,
    second_db: Option<f64>,
    third_db: Option<f64>,
    total_db: Option<f64>,
}

#[derive(Deserialize)]
struct Swept {
    bands: Vec<SweptBand>,
}

#[derive(Deserialize)]
struct Fixture {
    sample_rate_hz: u32,
    sweep: SweepSettings,
    latency_frames: usize,
    a: f64,
    b: f64,
    analytic: Analytic,
    swept: Swept,
}

fn fixture() -> Fixture {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/linearity/line_driver_polynomial.json");
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn fixture_stimulus(f: &Fixture) -> Vec<f64> {
    let spec = StimulusSpec {
        kind: StimulusKind::Sweep {
            start_hz: f.sweep.start_hz,
            end_hz: f.sweep.end_hz,
            seconds: f.sweep.seconds,
        },
        level_dbfs: f.sweep.level_dbfs,
        fade_ms: f.sweep.fade_ms,
        silence_seconds: f.sweep.silence_seconds,
        ..StimulusSpec::sweep(f.sample_rate_hz)
    };
    generate_stimulus(&spec).unwrap().samples
}

/// A link config of one channel with difference equation b/a.
fn link(fs: u32, b: &[f64], a: &[f64]) -> Link {
    parse_link(
        &format!(
            "[link]\nsample_rate_hz = {fs}\nchannel_count = 1\n[[path]]\nchannels = [0]\n\
             difference_equation = {{ b = {b:?}, a = {a:?} }}\n"
        ),
        None,
    )
    .unwrap()
}

fn as_f32(x: &[f64]) -> Vec<f32> {
    x.iter().map(|&v| v as f32).collect()
}

fn identify(
    stimulus: &[f32],
    recorded: &[f32],
    fs: u32,
    settings: IdentifySettings,
) -> MeasurementOutcome {
    identify_signals(
        NamedSignal {
            name: "stimulus.wav",
            samples: stimulus,
            format: WavFormat::float32(1, fs),
        },
        NamedSignal {
            name: "recorded.wav",
            samples: recorded,
            format: WavFormat::float32(1, fs),
        },
        settings,
        None,
    )
    .unwrap()
}

/// The same sweep as the fixture's, through y = x + a·x² + b·x³ then the simulated link (a flat
/// line, gain 1) after the fixture's latency, with white noise 70 dB below the signal.
fn distorted_recording(f: &Fixture, stimulus: &[f64]) -> Vec<f32> {
    let bent: Vec<f32> = stimulus
        .iter()
        .map(|&x| (x + f.a * x * x + f.b * x * x * x) as f32)
        .collect();
    simulate_recording(
        &link(f.sample_rate_hz, &[1.0], &[1.0]),
        &bent,
        1,
        &RecordingSimulation {
            latency_frames: f.latency_frames,
            snr_db: Some(70.0),
            seed: 14,
        },
    )
    .unwrap()
}

fn band_at(bands: &[BandDistortion], hz: f64) -> &BandDistortion {
    bands
        .iter()
        .find(|b| (b.band.exact_mid_hz / hz - 1.0).abs() < 1e-6)
        .unwrap_or_else(|| panic!("no band at {hz} Hz"))
}

#[test]
fn harmonics_of_a_bent_line_driver_match_the_analytic_levels_and_numpy() {
    let f = fixture();
    let fs = f64::from(f.sample_rate_hz);
    let stimulus = fixture_stimulus(&f);
    let recorded: Vec<f64> = distorted_recording(&f, &stimulus)
        .iter()
        .map(|&v| f64::from(v))
        .collect();
    let law = sweep_law(&stimulus, fs).expect("the stimulus is an exponential sweep");
    let found = harmonic_distortion(&stimulus, &law, &recorded, fs, 3).unwrap();
    // The same bands as numpy's (IEC 61260-1 one-third octaves within the sweep's lower half).
    assert_eq!(found.bands.len(), f.swept.bands.len());
    let mut worst_analytic = 0.0f64;
    let mut worst_numpy = 0.0f64;
    for reference in &f.swept.bands {
        let ours = band_at(&found.bands, reference.mid_hz);
        let pairs = [
            (ours.second, reference.second_db, f.analytic.second_db),
            (ours.third, reference.third_db, f.analytic.third_db),
            (ours.total, reference.total_db, f.analytic.total_db),
        ];
        for (level, numpy, analytic) in pairs {
            assert_eq!(
                level.is_some(),
                numpy.is_some(),
                "{} Hz: the same harmonics fall inside the sweep",
                reference.mid_hz
            );
            let (Some(level), Some(numpy)) = (level, numpy) else {
                continue;
            };
            // Against numpy's Farina deconvolution of the same swept signal (numpy 2.4.6,
            // scipy 1.17.1): redress reads the sweep's law back from the samples and records
            // through f32 with noise 70 dB down, numpy uses the law as generated in f64 without
            // noise; 0.2 dB covers both.
            let to_numpy = (level.level_db - numpy).abs();
            assert!(
                to_numpy < 0.2,
                "{} Hz: {:.3} dB against numpy's {numpy:.3} dB",
                reference.mid_hz,
                level.level_db
            );
            worst_numpy = worst_numpy.max(to_numpy);
            // Against the analytic levels from sin² = (1 − cos 2θ)/2 and
            // sin³ = (3 sin θ − sin 3θ)/4 (trigonometric identities): within 0.3 dB from the
            // 63 Hz band up; below it, within about 1.5 octaves of the sweep's start, its
            // fade-in and the DC step the x² term makes disturb the figures (numpy's as much: 1 dB
            // at 50 Hz, 10 dB at 25 Hz).
            if reference.mid_hz > 60.0 {
                assert!(level.measured(), "{} Hz: {level:?}", reference.mid_hz);
                let to_analytic = (level.level_db - analytic).abs();
                assert!(
                    to_analytic < 0.3,
                    "{} Hz: {:.3} dB against the analytic {analytic:.3} dB",
                    reference.mid_hz,
                    level.level_db
                );
                worst_analytic = worst_analytic.max(to_analytic);
            }
        }
    }
    eprintln!(
        "largest error: {worst_analytic:.3} dB against the analytic levels, {worst_numpy:.3} dB \
         against numpy"
    );
}

#[test]
fn identify_flags_the_bent_line_driver_and_records_it_in_the_config() {
    let f = fixture();
    let stimulus = fixture_stimulus(&f);
    let recorded = distorted_recording(&f, &stimulus);
    let outcome = identify(
        &as_f32(&stimulus),
        &recorded,
        f.sample_rate_hz,
        IdentifySettings {
            fir_length: FirLength::Fixed(32),
            ..IdentifySettings::default()
        },
    );
    let channel = &outcome.linearity[0];
    // Total distortion −36.4 dB (analytic, from the identities above) is above the −40 dB
    // (1 %) limit: every judged octave band is flagged.
    assert!(f.analytic.total_db > DISTORTION_LIMIT_DB);
    let flagged = channel.distorted_bands();
    assert!(flagged.len() >= 5, "{} bands flagged", flagged.len());
    for b in &flagged {
        let total = b.total.unwrap().level_db;
        // Octave bands: the same analytic level, within 0.3 dB.
        assert!(
            (total - f.analytic.total_db).abs() < 0.3,
            "{} Hz: {total:.2} dB",
            b.band.nominal_mid_hz()
        );
    }
    let warning = outcome
        .identification
        .warnings
        .iter()
        .find(|w| w.contains("distorts"))
        .expect("a distortion warning");
    eprintln!("{warning}");
    assert!(warning.contains("cannot undo"), "{warning}");
    // The fitted config carries the table and the warning as comments, and still reads back.
    assert!(outcome
        .config_text
        .contains("# channel 0 harmonic distortion"));
    assert!(outcome
        .config_text
        .contains("# warning   channel 0: the link distorts"));
    assert!(parse_link(&outcome.config_text, None).is_ok());
}

#[test]
fn a_clean_line_is_not_flagged() {
    let f = fixture();
    let stimulus = fixture_stimulus(&f);
    let recorded = simulate_recording(
        &link(f.sample_rate_hz, &[0.5, 0.3, -0.1], &[1.0]),
        &as_f32(&stimulus),
        1,
        &RecordingSimulation {
            latency_frames: 200,
            snr_db: Some(60.0),
            seed: 3,
        },
    )
    .unwrap();
    let outcome = identify(
        &as_f32(&stimulus),
        &recorded,
        f.sample_rate_hz,
        IdentifySettings {
            fir_length: FirLength::Fixed(32),
            ..IdentifySettings::default()
        },
    );
    let channel = &outcome.linearity[0];
    assert!(channel.distortion.is_some());
    assert!(channel.distorted_bands().is_empty());
    assert!(channel.warnings().is_empty(), "{:?}", channel.warnings());
}

/// `repeats` captures of a link whose path is the direct sound plus one reflection `delay`
/// frames later with gain `gains[i]` in capture i (the gain steady within a capture), after a
/// latency, with white noise of standard deviation `sigma`.
fn fading_recording(
    period: &[f64],
    gains: &[f64],
    delay: usize,
    latency: usize,
    sigma: f64,
    seed: u64,
) -> Vec<f32> {
    let frames = period.len();
    let mut out = vec![0.0f64; latency + frames * gains.len()];
    for (i, g) in gains.iter().enumerate() {
        for (n, &x) in period.iter().enumerate() {
            let at = latency + i * frames + n;
            out[at] += x;
            if let Some(slot) = out.get_mut(at + delay) {
                *slot += g * x;
            }
        }
    }
    let mut noise = GaussianNoise::new(seed);
    out.iter()
        .map(|&v| (v + sigma * noise.sample()) as f32)
        .collect()
}

fn short_sweep(fs: u32, seconds: f64) -> Vec<f64> {
    generate_stimulus(&StimulusSpec {
        kind: StimulusKind::Sweep {
            start_hz: 20.0,
            end_hz: f64::from(fs) / 2.0,
            seconds,
        },
        silence_seconds: 0.5,
        ..StimulusSpec::sweep(fs)
    })
    .unwrap()
    .samples
}

fn repeated(period: &[f64], repeats: usize) -> Vec<f32> {
    as_f32(&period.repeat(repeats))
}

#[test]
fn a_fading_reflection_is_seen_as_change_and_a_steady_link_is_not() {
    // An invented radio hop: the direct path and a reflection 10 ms later whose gain drifts
    // 0.3, 0.6, 0.2, 0.5 over four captures. Closed form (from the definition of the spread):
    // H_i = 1 + g_i·e^{−jωD}, the spread is var(g) / mean|1 + ḡ·e^{−jωD}|² = 0.025 / (1 + ḡ²)
    // over whole periods of the comb, −16.7 dB, above the −20 dB limit.
    let fs = 16_000;
    let period = short_sweep(fs, 1.0);
    let gains = [0.3, 0.6, 0.2, 0.5];
    let mean = gains.iter().sum::<f64>() / 4.0;
    let variance = gains.iter().map(|g| (g - mean).powi(2)).sum::<f64>() / 4.0;
    let expected = 10.0 * (variance / (1.0 + mean * mean)).log10();
    assert!(expected > CHANGE_LIMIT_DB);
    let settings = IdentifySettings {
        fir_length: FirLength::Fixed(200),
        repeats: 4,
        ..IdentifySettings::default()
    };
    let fading = fading_recording(&period, &gains, 160, 100, 1e-4, 5);
    let outcome = identify(&repeated(&period, 4), &fading, fs, settings);
    let channel = &outcome.linearity[0];
    let change = channel.change.as_ref().expect("four captures compared");
    assert_eq!(change.captures, 4);
    // Octave bands from 1 kHz up hold at least seven periods of the 100 Hz comb: within 0.5 dB.
    for b in change.bands.iter().filter(|b| b.band.exact_mid_hz > 900.0) {
        assert!(
            (b.spread_db - expected).abs() < 0.5,
            "{} Hz: {:.2} dB against {expected:.2} dB",
            b.band.nominal_mid_hz(),
            b.spread_db
        );
    }
    // The magnitude-squared coherence over the same bands: 1 / (1 + var(g) / (1 + ḡ²)), the
    // estimate over repeated records with one stimulus (Bendat & Piersol, from memory).
    let coherence = 1.0 / (1.0 + variance / (1.0 + mean * mean));
    for b in change.bands.iter().filter(|b| b.band.exact_mid_hz > 900.0) {
        assert!(
            (b.coherence() - coherence).abs() < 0.005,
            "{} Hz: coherence {:.4} against {coherence:.4}",
            b.band.nominal_mid_hz(),
            b.coherence()
        );
    }
    assert!(!channel.changed_bands().is_empty());
    assert!(outcome
        .identification
        .warnings
        .iter()
        .any(|w| w.contains("changed between the 4 captures") && w.contains("cannot follow")));
    assert!(outcome.config_text.contains("the link CHANGED"));

    // The same hop with the reflection held at 0.4: the captures differ by noise only.
    let steady = fading_recording(&period, &[0.4; 4], 160, 100, 1e-4, 5);
    let outcome = identify(&repeated(&period, 4), &steady, fs, settings);
    let channel = &outcome.linearity[0];
    assert!(channel.changed_bands().is_empty());
    for b in &channel.change.as_ref().unwrap().bands {
        assert!(b.spread_db < CHANGE_LIMIT_DB - 20.0, "{b:?}");
    }
    assert!(outcome.config_text.contains("the link held still"));
}

/// An invented short line with a little ringing, recorded `repeats` times after a latency with
/// white noise of standard deviation `sigma` (the same in every capture, independent between
/// them).
fn quiet_line_recording(period: &[f64], repeats: usize, sigma: f64, seed: u64) -> Vec<f32> {
    let line = [0.8, 0.25, -0.1, 0.05];
    let latency = 120;
    let played = period.repeat(repeats);
    let mut out = vec![0.0f64; latency + played.len()];
    for (n, &x) in played.iter().enumerate() {
        for (k, h) in line.iter().enumerate() {
            if let Some(slot) = out.get_mut(latency + n + k) {
                *slot += h * x;
            }
        }
    }
    let mut noise = GaussianNoise::new(seed);
    out.iter()
        .map(|&v| (v + sigma * noise.sample()) as f32)
        .collect()
}

fn averaged_measurement(
    period: &[f64],
    fs: u32,
    repeats: usize,
    sigma: f64,
    seed: u64,
) -> (f64, f64) {
    let outcome = identify(
        &repeated(period, repeats),
        &quiet_line_recording(period, repeats, sigma, seed),
        fs,
        IdentifySettings {
            fir_length: FirLength::Fixed(16),
            repeats,
            ..IdentifySettings::default()
        },
    );
    let snr = outcome.identification.channels[0].snr_db;
    let range = outcome.linearity[0]
        .distortion
        .as_ref()
        .and_then(|d| d.dynamic_range_db)
        .expect("the dynamic range is measured");
    (snr, range)
}

#[test]
fn averaging_n_captures_raises_the_snr_by_10_log10_n() {
    // N captures of independent noise average to 1/N of its power while the response stays:
    // +10·log10 N dB (common practice). Measured as the identification's SNR (model output
    // against the residual) and as the impulse response's peak-to-noise ratio, on a 0.5 s sweep
    // at 16 kHz over noise about 37 dB below it, for three seeds.
    let fs = 16_000;
    let period = short_sweep(fs, 0.5);
    for seed in [1, 2, 3] {
        let (snr_1, range_1) = averaged_measurement(&period, fs, 1, 1e-3, seed);
        for repeats in [4usize, 16] {
            let (snr_n, range_n) = averaged_measurement(&period, fs, repeats, 1e-3, seed + 100);
            let expected = 10.0 * (repeats as f64).log10();
            eprintln!(
                "seed {seed}, N = {repeats}: SNR {snr_1:.2} -> {snr_n:.2} dB (+{:.2}), dynamic \
                 range {range_1:.2} -> {range_n:.2} dB (+{:.2}), expected +{expected:.2}",
                snr_n - snr_1,
                range_n - range_1
            );
            // The SNR averages the residual over every frame: within 0.5 dB. The peak-to-noise
            // ratio reads the noise from one stretch of about 2 400 frames: within 1 dB.
            assert!(
                (snr_n - snr_1 - expected).abs() < 0.5,
                "seed {seed}, N = {repeats}: SNR gain {:.2} dB",
                snr_n - snr_1
            );
            assert!(
                (range_n - range_1 - expected).abs() < 1.0,
                "seed {seed}, N = {repeats}: dynamic range gain {:.2} dB",
                range_n - range_1
            );
        }
    }
}

#[test]
fn averaging_reaches_80_db_of_dynamic_range_on_a_quiet_link() {
    // A 1 s sweep at 48 kHz, peak -20 dBFS, over white noise at -56.5 dBFS (sigma 1.5e-3):
    // one capture falls short of 80 dB peak-to-noise; sixteen averaged pass it.
    let fs = 48_000;
    let period = short_sweep(fs, 1.0);
    let (_, single) = averaged_measurement(&period, fs, 1, 1.5e-3, 7);
    let (_, averaged) = averaged_measurement(&period, fs, 16, 1.5e-3, 8);
    eprintln!("dynamic range: one capture {single:.1} dB, sixteen averaged {averaged:.1} dB");
    assert!(single < 80.0, "{single:.1} dB");
    assert!(averaged >= 80.0, "{averaged:.1} dB");
}
