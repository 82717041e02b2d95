//! Identification against outside references: known channels (coefficients, impulse and
//! frequency responses from scipy.signal, in tests/fixtures/measure, written by
//! scripts/reference/make_measure_fixtures.py with numpy 2.4.6 / scipy 1.17.1) are recorded
//! through the simulated link with white noise at 60 dB and 30 dB SNR, and identified back.

use std::path::Path;

use num_complex::Complex64;
use redress::io::WavFormat;
use redress::measure::{
    generate_stimulus, identify_signals, simulate_recording, FirLength, IdentifySettings,
    IirOrders, MeasurementOutcome, NamedSignal, RecordingSimulation, StimulusKind, StimulusSpec,
};
use redress::model::config::parse_link;
use serde::Deserialize;

#[derive(Deserialize)]
struct Fixture {
    name: String,
    sample_rate: f64,
    b: Vec<f64>,
    a: Vec<f64>,
    numerator_order: usize,
    denominator_order: usize,
    impulse_response: Vec<f64>,
    frequencies_hz: Vec<f64>,
    response_re: Vec<f64>,
    response_im: Vec<f64>,
}

fn fixture(name: &str) -> Fixture {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/measure")
        .join(format!("{name}.json"));
    serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap()
}

/// Latency of the simulated playback and capture, in frames.
const LATENCY: usize = 300;

fn measure(
    f: &Fixture,
    kind: StimulusKind,
    snr_db: f64,
    settings: IdentifySettings,
) -> MeasurementOutcome {
    let fs = f.sample_rate as u32;
    let truth = parse_link(
        &format!(
            "[link]\nsample_rate_hz = {fs}\nchannel_count = 1\n[[path]]\nchannels = [0]\n\
             difference_equation = {{ b = {:?}, a = {:?} }}\n",
            f.b, f.a
        ),
        None,
    )
    .unwrap();
    let spec = StimulusSpec {
        kind,
        silence_seconds: 0.25,
        ..StimulusSpec::sweep(fs)
    };
    let stimulus = generate_stimulus(&spec).unwrap().interleaved();
    let recorded = simulate_recording(
        &truth,
        &stimulus,
        1,
        &RecordingSimulation {
            latency_frames: LATENCY,
            snr_db: Some(snr_db),
            seed: 2024,
        },
    )
    .unwrap();
    identify_signals(
        NamedSignal {
            name: "stimulus.wav",
            samples: &stimulus,
            format: WavFormat::float32(1, fs),
        },
        NamedSignal {
            name: "recorded.wav",
            samples: &recorded,
            format: WavFormat::float32(1, fs),
        },
        settings,
        None,
    )
    .unwrap()
}

fn sweep_1s(fs: f64) -> StimulusKind {
    StimulusKind::Sweep {
        start_hz: 20.0,
        end_hz: fs / 2.0,
        seconds: 1.0,
    }
}

fn bulk_delay(f: &Fixture) -> usize {
    f.b.iter().take_while(|&&v| v == 0.0).count()
}

/// Largest |estimated − true| over the fixture's frequencies, relative to the largest |true|,
/// in dB. The true response is scipy's with the bulk delay taken out (the identification
/// starts its model at the onset).
fn response_error_db(f: &Fixture, b: &[f64], a: &[f64]) -> f64 {
    let bulk = bulk_delay(f) as f64;
    let mut worst = 0.0f64;
    let mut largest = 0.0f64;
    for ((hz, re), im) in f
        .frequencies_hz
        .iter()
        .zip(&f.response_re)
        .zip(&f.response_im)
    {
        let w = std::f64::consts::TAU * hz / f.sample_rate;
        let truth = Complex64::new(*re, *im) * Complex64::from_polar(1.0, w * bulk);
        let z = Complex64::from_polar(1.0, -w);
        let eval = |c: &[f64]| {
            c.iter()
                .rev()
                .fold(Complex64::new(0.0, 0.0), |acc, &x| acc * z + x)
        };
        let estimate = eval(b) / eval(a);
        worst = worst.max((estimate - truth).norm());
        largest = largest.max(truth.norm());
    }
    20.0 * (worst / largest).log10()
}

fn coefficient_error(f: &Fixture, b: &[f64], a: &[f64]) -> f64 {
    let truth_b = &f.b[bulk_delay(f)..];
    assert_eq!(b.len(), truth_b.len(), "{}: numerator length", f.name);
    assert_eq!(a.len(), f.a.len(), "{}: denominator length", f.name);
    b.iter()
        .zip(truth_b)
        .chain(a.iter().zip(&f.a))
        .fold(0.0f64, |m, (x, y)| m.max((x - y).abs()))
}

fn iir_settings(f: &Fixture) -> IdentifySettings {
    IdentifySettings {
        fir_length: FirLength::Automatic { most: 256 },
        iir: Some(IirOrders {
            numerator: f.numerator_order,
            denominator: f.denominator_order,
        }),
        repeats: 1,
    }
}

/// Bound on a coefficient's or tap's error: the least-squares scatter σ/√(N·P) for white
/// noise 10^(−SNR/20) below the response over N = 16 000 frames, with a factor of 25 for the
/// stimulus's colour and the model's conditioning (common practice: estimation error falls as
/// 1/√N and scales with the noise amplitude).
fn coefficient_bound(snr_db: f64) -> f64 {
    25.0 * 10f64.powf(-snr_db / 20.0) / 16_000f64.sqrt()
}

fn check_channel(name: &str, snr_db: f64) {
    let f = fixture(name);
    let outcome = measure(&f, sweep_1s(f.sample_rate), snr_db, iir_settings(&f));
    let id = &outcome.identification;
    let fit = &id.channels[0];
    // The delay found is the simulated latency plus the channel's own bulk delay, exactly.
    assert_eq!(id.common_delay, LATENCY + bulk_delay(&f), "{name}");
    // Measured SNR within 1 dB of the SNR the noise was set to.
    assert!(
        (fit.snr_db - snr_db).abs() < 1.0,
        "{name}: SNR {:.2}",
        fit.snr_db
    );

    // IIR model (Steiglitz–McBride) against the true coefficients (the fixture's b and a).
    let (b, a) = fit.model();
    let coefficients = coefficient_error(&f, &b, &a);
    assert!(
        coefficients < coefficient_bound(snr_db),
        "{name} at {snr_db} dB: coefficient error {coefficients:.2e}, bound {:.2e}",
        coefficient_bound(snr_db)
    );
    // Its frequency response against scipy.signal.freqz of the true coefficients: within
    // SNR + 10 dB below the response's largest value.
    let response = response_error_db(&f, &b, &a);
    assert!(
        response < -(snr_db + 10.0),
        "{name} at {snr_db} dB: response error {response:.1} dB"
    );

    // FIR model (least squares, MDL length) against scipy.signal.lfilter's impulse response.
    let truth = &f.impulse_response[bulk_delay(&f)..];
    let taps = &fit.fir.taps;
    let fir_error = (0..taps.len().max(8))
        .map(|k| (taps.get(k).copied().unwrap_or(0.0) - truth[k]).abs())
        .fold(0.0f64, f64::max);
    assert!(
        fir_error < coefficient_bound(snr_db),
        "{name} at {snr_db} dB: FIR tap error {fir_error:.2e}"
    );
    let fir_response = response_error_db(&f, taps, &[1.0]);
    assert!(
        fir_response < -(snr_db - 5.0),
        "{name} at {snr_db} dB: FIR response error {fir_response:.1} dB"
    );
    // The trusted band reaches down to the sweep's start (20 Hz, third-octave smoothed), and
    // not below it: nothing under the sweep's first frequency was excited.
    let (low, high) = fit.trusted.band_hz.expect("a trusted band");
    assert!(
        (20.0..40.0).contains(&low) && high > 1_500.0,
        "{name}: {low}–{high} Hz"
    );
    // The fitted inverse undoes the link on the measurement itself inside the trusted band
    // (the fitted config's correction band); outside it the inverse has unity gain, and what the
    // link does there stays in this broadband error figure (common practice: noise passes
    // through the inverse, and an uncorrected band is left as it was).
    let equalized = outcome.equalized.as_ref().expect("runnable inverse");
    assert!(
        equalized.after.db < equalized.before.db - 4.0,
        "{name}: {equalized:?}"
    );
    eprintln!(
        "{name} at {snr_db} dB SNR, trusted {low:.0}-{high:.0} Hz: coefficients ±{coefficients:.1e}, response {response:.1} dB, \
         FIR taps ±{fir_error:.1e} ({} taps), measured SNR {:.2} dB, equalized {:.1} → {:.1} dB",
        taps.len(),
        fit.snr_db,
        equalized.before.db,
        equalized.after.db
    );
}

#[test]
fn chapel_feed_fir_is_recovered_at_60_and_30_db() {
    check_channel("chapel_feed_fir", 60.0);
    check_channel("chapel_feed_fir", 30.0);
}

#[test]
fn quarry_hop_ringing_is_recovered_at_60_and_30_db() {
    check_channel("quarry_hop_ringing", 60.0);
    check_channel("quarry_hop_ringing", 30.0);
}

#[test]
fn ferry_ramp_intercom_is_recovered_at_60_and_30_db() {
    check_channel("ferry_ramp_intercom", 60.0);
    check_channel("ferry_ramp_intercom", 30.0);
}

#[test]
fn a_maximum_length_sequence_measures_as_well() {
    let f = fixture("quarry_hop_ringing");
    let kind = StimulusKind::Mls {
        order: 14,
        periods: 1,
    };
    let outcome = measure(&f, kind, 30.0, iir_settings(&f));
    let (b, a) = outcome.identification.channels[0].model();
    let error = coefficient_error(&f, &b, &a);
    assert!(error < coefficient_bound(30.0), "{error:.2e}");
    assert!(response_error_db(&f, &b, &a) < -40.0);
}

#[test]
fn the_sweep_inverse_filter_deconvolves_the_impulse_response() {
    // Farina's deconvolution (recording ∗ inverse filter) of a noiseless recording, against
    // scipy.signal.lfilter's impulse response. The sweep covers 20 Hz – 8 kHz, so the result is
    // the true response seen through a band-limited impulse, compared within the band.
    let f = fixture("chapel_feed_fir");
    let spec = StimulusSpec {
        kind: sweep_1s(f.sample_rate),
        silence_seconds: 0.25,
        ..StimulusSpec::sweep(16_000)
    };
    let stimulus = generate_stimulus(&spec).unwrap();
    let truth = parse_link(
        &format!(
            "[link]\nsample_rate_hz = 16000\nchannel_count = 1\n[[path]]\nchannels = [0]\n\
             difference_equation = {{ b = {:?}, a = {:?} }}\n",
            f.b, f.a
        ),
        None,
    )
    .unwrap();
    let recorded = simulate_recording(
        &truth,
        &stimulus.interleaved(),
        1,
        &RecordingSimulation {
            latency_frames: 0,
            snr_db: None,
            seed: 0,
        },
    )
    .unwrap();
    let recorded: Vec<f64> = recorded.iter().map(|&v| f64::from(v)).collect();
    let inverse = stimulus.inverse_filter().unwrap();
    let before = 2_048;
    let h = redress::measure::deconvolve_sweep(&recorded, &inverse, before, 2 * before);
    // Compared in frequency over the swept band (50 Hz – 7.2 kHz), against scipy.signal.freqz;
    // h holds the bulk delay itself here, so it is compared with the response as it is.
    let mut worst = 0.0f64;
    for ((hz, re), im) in f
        .frequencies_hz
        .iter()
        .zip(&f.response_re)
        .zip(&f.response_im)
    {
        let w = std::f64::consts::TAU * hz / f.sample_rate;
        let estimate: Complex64 = h
            .iter()
            .enumerate()
            .map(|(n, &v)| Complex64::from_polar(v, -w * (n as f64 - before as f64)))
            .sum();
        worst = worst.max((estimate - Complex64::new(*re, *im)).norm());
    }
    let error_db = 20.0 * worst.log10();
    // −25 dB is a 5.6 % error: the ripple of a band-limited impulse made by a sweep that stops
    // at the band's edges (about ±0.5 dB, as the unit test in src/measure/sweep.rs checks).
    assert!(error_db < -25.0, "deconvolution error {error_db:.1} dB");
    eprintln!("sweep deconvolution: response error {error_db:.1} dB");
}

#[test]
fn the_fitted_config_reads_back_to_exactly_the_fitted_numbers() {
    // Shortest round-trip formatting of f64 (common practice: Rust's `{:?}` for f64) means the
    // config holds the fit bit for bit; `check` and `apply` run the model that was measured.
    let f = fixture("quarry_hop_ringing");
    let outcome = measure(
        &f,
        sweep_1s(f.sample_rate),
        30.0,
        IdentifySettings::default(),
    );
    let (b, a) = outcome.identification.channel_model(0);
    let path = &outcome.link.paths[0];
    assert_eq!(path.channel.b, b);
    assert_eq!(path.channel.a, a);
    assert!(outcome.plan.is_runnable(), "{:?}", outcome.plan.problems());
    assert!(outcome.config_text.contains("# delay     300 frames"));
}
