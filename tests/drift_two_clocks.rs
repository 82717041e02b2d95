//! Two sample clocks, simulated: a capture device at 48 kHz and a playback device 100 ppm fast,
//! then, without a break, 100 ppm slow, joined by the live path's ring (four periods of 256 frames, two of them
//! silence up front), with the playback side resampling by `DriftLoop`'s ratio through
//! `DriftResampler`. The callbacks are events in simulated time, so minutes of audio take
//! seconds. After lock-in: no xrun, the ring's fill within a stated band, the drift estimate
//! within 5 ppm of the truth, and the output still the input sine. With the loop frozen at
//! ratio 1 the same pair must show the xruns, so the test can fail. (The ring here is held at
//! two and a half periods; see `PREFILL`.)
//!
//! `REDRESS_DRIFT_SECONDS` sets each direction's length (default 60 s; the long run is 600).

mod common;

use common::{echo_line, inverse_set};
use redress::engine::{engine_pair, EngineSettings};
use redress::io::live::drift::{DriftLoop, DriftResampler};
use redress::io::live::{duplex_sides_two_clocks_on, PushClock};
use ringbuf::traits::{Consumer, Observer, Producer, Split};
use ringbuf::HeapRb;

const RATE: f64 = 48_000.0;
const PERIOD: usize = 256;
const CHANNELS: usize = 2;
/// Silence up front, and the fill the loop holds: two and a half periods. Just before a pull
/// the ring holds between the fill and one period less (depending on where the capture side is
/// in its period), and a pull takes a period and a few frames: so at least two periods and a
/// margin; just after a push it holds up to a period more, and the four-period ring keeps half
/// a period spare above that.
const PREFILL: usize = 5 * PERIOD / 2;
const CAPACITY: usize = 4 * PERIOD;
/// Test tones of the two channels, Hz, and their level.
const TONES: [f64; CHANNELS] = [997.0, 1499.0];
const LEVEL: f64 = 0.5;
/// Lock-in allowance: the loop settles within about 15 s (io::live::drift).
const LOCK_SECONDS: f64 = 20.0;

struct Outcome {
    overruns: usize,
    underruns: usize,
    /// After each segment's lock-in: lowest and highest fill the loop saw, and how far its
    /// drift estimate was from the segment's truth, ppm (the largest).
    fill_range: (f64, f64),
    worst_drift_error_ppm: f64,
    /// Channel 0's output over the last second, and the ratio it was made at.
    tail: Vec<f32>,
    tail_ratio: f64,
}

/// Runs the pair through `segments` of (ppm the playback clock runs fast, negative slow;
/// seconds), one after the other without a break.
fn run_pair(segments: &[(f64, f64)], compensate: bool) -> Outcome {
    let seconds: f64 = segments.iter().map(|(_, s)| s).sum();
    // The playback clock's rate at time t, and when its segment began.
    let clock = |t: f64| {
        let mut start = 0.0;
        for (ppm, length) in segments {
            if t < start + length {
                return (RATE * (1.0 + ppm * 1e-6), *ppm, start);
            }
            start += length;
        }
        let (ppm, _) = segments[segments.len() - 1];
        (RATE * (1.0 + ppm * 1e-6), ppm, start)
    };
    let (mut producer, mut consumer) = HeapRb::<f32>::new(CAPACITY * CHANNELS).split();
    producer.push_slice(&vec![0.0; PREFILL * CHANNELS]);
    let mut control = DriftLoop::new(PREFILL as f64, RATE);
    let mut resampler = DriftResampler::new(CHANNELS, PERIOD).unwrap();
    let mut scratch = vec![0.0f32; resampler.input_frames_max() * CHANNELS];
    let mut block = vec![0.0f32; PERIOD * CHANNELS];
    let mut out = vec![0.0f32; PERIOD * CHANNELS];
    let mut captured = 0usize;
    let mut playback_at = 0.0f64;
    let (mut last_push, mut last_pull) = (0.0f64, 0.0f64);
    let mut outcome = Outcome {
        overruns: 0,
        underruns: 0,
        fill_range: (f64::INFINITY, f64::NEG_INFINITY),
        worst_drift_error_ppm: 0.0,
        tail: Vec::new(),
        tail_ratio: 1.0,
    };
    loop {
        // The next callback of each device: a capture callback once a period has been
        // recorded, a playback callback when a period's room has played out.
        let capture_at = (captured + PERIOD) as f64 / RATE;
        let now = capture_at.min(playback_at);
        if now > seconds {
            break;
        }
        if capture_at <= playback_at {
            for (i, frame) in block.chunks_mut(CHANNELS).enumerate() {
                let t = (captured + i) as f64 / RATE;
                for (c, s) in frame.iter_mut().enumerate() {
                    *s = (LEVEL * (std::f64::consts::TAU * TONES[c] * t).sin()) as f32;
                }
            }
            let room = producer.vacant_len();
            let pushed = producer.push_slice(&block[..block.len().min(room - room % CHANNELS)]);
            outcome.overruns += block.len() - pushed;
            captured += PERIOD;
            last_push = now;
            continue;
        }
        // Playback: the fill between pushes (frames captured since the last push added).
        let fill = (consumer.occupied_len() / CHANNELS) as f64 + (now - last_push) * RATE;
        let ratio = if compensate {
            control.update(fill, now - last_pull)
        } else {
            1.0
        };
        last_pull = now;
        resampler.set_ratio(ratio);
        let need = resampler.input_frames_next() * CHANNELS;
        if consumer.occupied_len() >= need {
            consumer.pop_slice(&mut scratch[..need]);
            assert!(resampler.process(&scratch[..need], &mut out));
        } else {
            outcome.underruns += out.len();
            out.fill(0.0);
        }
        let (rate, truth, segment_start) = clock(now);
        playback_at += PERIOD as f64 / rate;
        if now > segment_start + LOCK_SECONDS {
            outcome.fill_range.0 = outcome.fill_range.0.min(fill);
            outcome.fill_range.1 = outcome.fill_range.1.max(fill);
            let error = (control.drift_ppm() - truth).abs();
            outcome.worst_drift_error_ppm = outcome.worst_drift_error_ppm.max(error);
        }
        if now > seconds - 1.0 {
            outcome.tail.extend(out.iter().step_by(CHANNELS));
            outcome.tail_ratio = ratio;
        }
    }
    outcome
}

/// Level of what is left of `x` after the best sine at `frequency` (cycles per sample) and a
/// constant are taken out by least squares, relative to the sine, dB.
fn residual_db(x: &[f32], frequency: f64) -> f64 {
    let basis = |k: usize| {
        let p = std::f64::consts::TAU * frequency * k as f64;
        [p.sin(), p.cos(), 1.0]
    };
    // Normal equations of the 3-parameter fit (common practice: the IEEE 1057 three-parameter
    // sine fit).
    let (mut a, mut b) = ([[0.0f64; 3]; 3], [0.0f64; 3]);
    for (k, v) in x.iter().enumerate() {
        let g = basis(k);
        for i in 0..3 {
            b[i] += g[i] * f64::from(*v);
            for j in 0..3 {
                a[i][j] += g[i] * g[j];
            }
        }
    }
    let m = nalgebra::Matrix3::from_fn(|i, j| a[i][j]);
    let coef = m
        .lu()
        .solve(&nalgebra::Vector3::from(b))
        .expect("a well-posed fit");
    let (mut signal, mut error) = (0.0, 0.0);
    for (k, v) in x.iter().enumerate() {
        let g = basis(k);
        let fit = coef[0] * g[0] + coef[1] * g[1] + coef[2] * g[2];
        signal += (coef[0] * g[0] + coef[1] * g[1]).powi(2);
        error += (f64::from(*v) - fit).powi(2);
    }
    10.0 * (error / signal).log10()
}

fn seconds() -> f64 {
    std::env::var("REDRESS_DRIFT_SECONDS")
        .ok()
        .and_then(|v| v.parse().ok())
        .filter(|s: &f64| *s > 2.0 * LOCK_SECONDS)
        .unwrap_or(60.0)
}

// The truth is the simulated clocks' own offset; the output's reference is the input's closed-form
// sine (mathematics, not a library), played at the playback rate: after resampling by ratio r
// its frequency in output samples is f / (RATE · r).
#[test]
fn a_device_pair_100_ppm_fast_then_slow_locks_without_xruns() {
    let seconds = seconds();
    let o = run_pair(&[(100.0, seconds), (-100.0, seconds)], true);
    assert_eq!((o.overruns, o.underruns), (0, 0), "xruns (samples)");
    // The fill the loop steers stays within an eighth of a period of its target.
    let (low, high) = o.fill_range;
    let band = PERIOD as f64 / 8.0;
    assert!(
        low > PREFILL as f64 - band && high < PREFILL as f64 + band,
        "fill {low:.1} … {high:.1}"
    );
    let worst = o.worst_drift_error_ppm;
    assert!(worst < 5.0, "estimate off by up to {worst:.2} ppm");
    let frequency = TONES[0] / (RATE * o.tail_ratio);
    let db = residual_db(&o.tail[..24_000], frequency);
    let worst_window = o
        .tail
        .chunks_exact(2400)
        .map(|c| residual_db(c, frequency))
        .fold(f64::NEG_INFINITY, f64::max);
    // The loop's ratio moves a little from period to period: over 50 ms the output is a clean
    // sine to -80 dB, over half a second (where those moves add up) to -70 dB.
    assert!(worst_window < -80.0, "50 ms residual {worst_window:.1} dB");
    assert!(db < -70.0, "0.5 s residual {db:.1} dB");
    println!(
        "+100 ppm for {seconds} s, then -100 ppm for {seconds} s: no xrun; drift estimate off by \
         at most {worst:.3} ppm after each lock-in ({LOCK_SECONDS} s), fill {low:.1} … \
         {high:.1} frames (target {PREFILL}), output residual {worst_window:.1} dB over 50 ms, \
         {db:.1} dB over 0.5 s"
    );
}

#[test]
fn without_compensation_the_same_pair_runs_into_xruns() {
    // 100 ppm is 4.8 frames a second: 150 s moves the ring by 720 frames, past the 640 of the
    // prefill one way and past the 384 of room above it the other.
    let fast = run_pair(&[(100.0, 150.0)], false);
    assert!(fast.underruns > 0, "a fast playback clock drains the ring");
    let slow = run_pair(&[(-100.0, 150.0)], false);
    assert!(slow.overruns > 0, "a slow playback clock fills the ring");
    println!(
        "without compensation, 150 s: +100 ppm {} samples underrun, -100 ppm {} samples overrun",
        fast.underruns, slow.overruns
    );
}

#[derive(serde::Deserialize)]
struct ResampleFixture {
    input: FixtureInput,
    up: u32,
    down: u32,
    output_start: usize,
    output: Vec<Vec<f64>>,
}

#[derive(serde::Deserialize)]
struct FixtureInput {
    sample_rate_hz: f64,
    frames: usize,
    tones_hz: Vec<f64>,
    level: f64,
}

/// Power of `a − b` relative to that of `b`, dB.
fn difference_db(a: &[f64], b: &[f64]) -> f64 {
    let error: f64 = a.iter().zip(b).map(|(x, y)| (x - y).powi(2)).sum();
    let power: f64 = b.iter().map(|y| y * y).sum();
    10.0 * (error / power).log10()
}

// Source: scipy 1.17.1 scipy.signal.resample_poly(x, 10001, 10000) on the same two tones
// (scripts/reference/make_drift_fixtures.py, tests/fixtures/drift/resample_100ppm.json), and the
// tones' closed form at the resampled instants. The resampler alone, at the constant ratio of a
// playback clock 100 ppm fast, against the closed form, and resample_poly against the same: the
// two are compared through that exact reference (side by side they differ by scipy's own
// error, and by the interpolator's fractional delay).
#[test]
fn the_resampler_alone_is_nearer_the_closed_form_than_resample_poly() {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/drift/resample_100ppm.json"
    ))
    .unwrap();
    let f: ResampleFixture = serde_json::from_str(&text).unwrap();
    let channels = f.input.tones_hz.len();
    assert_eq!(channels, CHANNELS);
    let input: Vec<f32> = (0..f.input.frames)
        .flat_map(|n| {
            f.input.tones_hz.iter().map(move |tone| {
                (f.input.level
                    * (std::f64::consts::TAU * tone * n as f64 / f.input.sample_rate_hz).sin())
                    as f32
            })
        })
        .collect();
    let ratio = f64::from(f.up) / f64::from(f.down);
    let mut resampler = DriftResampler::new(CHANNELS, PERIOD).unwrap();
    let delay = resampler.delay_frames();
    let wanted = f.output_start + f.output[0].len() + delay;
    let mut out: Vec<f32> = Vec::new();
    let mut block = vec![0.0f32; PERIOD * CHANNELS];
    let mut at = 0;
    while out.len() < wanted * CHANNELS {
        resampler.set_ratio(ratio);
        let need = resampler.input_frames_next() * CHANNELS;
        assert!(resampler.process(&input[at..at + need], &mut block));
        at += need;
        out.extend_from_slice(&block);
    }
    // The interpolator's delay is not a whole number of frames (between the middle two of its
    // eight points): found once, on channel 0, as the delay that fits the closed form best.
    let ours = |c: usize, k: usize| f64::from(out[(f.output_start + k) * CHANNELS + c]);
    let ideal = |c: usize, k: usize, d: f64| {
        let t = ((f.output_start + k) as f64 - d) / ratio / f.input.sample_rate_hz;
        f.input.level * (std::f64::consts::TAU * f.input.tones_hz[c] * t).sin()
    };
    let len = f.output[0].len();
    let fit = |c: usize, d: f64| {
        let a: Vec<f64> = (0..len).map(|k| ours(c, k)).collect();
        let b: Vec<f64> = (0..len).map(|k| ideal(c, k, d)).collect();
        difference_db(&a, &b)
    };
    let mut d = delay as f64;
    for step in [0.1, 0.01, 0.001, 0.0001] {
        let centre = d;
        d = (-20..=20)
            .map(|i| centre + f64::from(i) * step)
            .min_by(|x, y| fit(0, *x).total_cmp(&fit(0, *y)))
            .unwrap();
    }
    for (c, reference) in f.output.iter().enumerate() {
        let exact: Vec<f64> = (0..len).map(|k| ideal(c, k, 0.0)).collect();
        let scipy_error = difference_db(reference, &exact);
        let our_error = fit(c, d);
        println!(
            "{} Hz: ours against the closed form {our_error:.1} dB (delay {d:.4} frames), \
             resample_poly against it {scipy_error:.1} dB",
            f.input.tones_hz[c]
        );
        // scipy's default filter leaves about -60 dB here (its passband ripple); the polynomial
        // interpolator at a ratio this near 1 does better, and must.
        assert!(
            scipy_error < -55.0,
            "the fixture itself: {scipy_error:.1} dB"
        );
        assert!(
            our_error < -90.0 && our_error < scipy_error - 10.0,
            "{our_error:.1} dB"
        );
    }
}

// The same pair through the service's own two-clock sides (the engine running the echo line's
// inverse in the capture callback, the ring, the drift stage in the playback callback), on a
// simulated clock both sides read: the real code's signs and units, not only the loop's. The
// equalized tone stays a clean sine after the resampler (an inverse turns a sine into a sine;
// common practice for an LTI filter).
#[test]
fn the_live_two_clock_sides_hold_a_pair_100_ppm_apart() {
    let seconds = 45.0;
    for ppm in [100.0, -100.0] {
        let settings = EngineSettings::defaults(CHANNELS, RATE);
        let (engine, control) = engine_pair(settings, Some(inverse_set(&echo_line(), CHANNELS, 1)));
        let clock = PushClock::simulated();
        let (mut capture, mut playback, plan) = duplex_sides_two_clocks_on(
            engine,
            control.stats(),
            PERIOD,
            RATE,
            std::sync::Arc::clone(&clock),
        )
        .unwrap();
        assert_eq!(plan.prefill_frames(), PREFILL);
        let playback_rate = RATE * (1.0 + ppm * 1e-6);
        let mut block = vec![0.0f32; PERIOD * CHANNELS];
        let mut out = vec![0.0f32; PERIOD * CHANNELS];
        let (mut captured, mut played) = (0usize, 0usize);
        let mut tail: Vec<f32> = Vec::new();
        let mut drift_after_lock: Vec<f64> = Vec::new();
        loop {
            let capture_at = (captured + PERIOD) as f64 / RATE;
            let playback_at = played as f64 / playback_rate;
            let now = capture_at.min(playback_at);
            if now > seconds {
                break;
            }
            clock.set_simulated_seconds(now);
            if capture_at <= playback_at {
                for (i, frame) in block.chunks_mut(CHANNELS).enumerate() {
                    let t = (captured + i) as f64 / RATE;
                    for (c, s) in frame.iter_mut().enumerate() {
                        *s = (LEVEL * (std::f64::consts::TAU * TONES[c] * t).sin()) as f32;
                    }
                }
                capture.on_input(&block);
                captured += PERIOD;
            } else {
                playback.on_output(&mut out);
                played += PERIOD;
                if now > LOCK_SECONDS {
                    let snap = control.snapshot();
                    drift_after_lock.push(snap.drift_ppm.expect("published"));
                }
                if now > seconds - 1.0 {
                    tail.extend(out.iter().step_by(CHANNELS));
                }
            }
        }
        let snap = control.snapshot();
        assert_eq!(
            (snap.input_overruns, snap.output_underruns),
            (0, 0),
            "{ppm} ppm: xruns"
        );
        let worst = drift_after_lock
            .iter()
            .map(|d| (d - ppm).abs())
            .fold(0.0, f64::max);
        assert!(
            worst < 5.0,
            "{ppm} ppm: estimate off by up to {worst:.2} ppm"
        );
        let frequency = TONES[0] / (RATE * (1.0 + ppm * 1e-6));
        let residual = tail
            .chunks_exact(2400)
            .map(|c| residual_db(c, frequency))
            .fold(f64::NEG_INFINITY, f64::max);
        assert!(residual < -70.0, "{ppm} ppm: residual {residual:.1} dB");
        println!(
            "live sides, {ppm:+} ppm for {seconds} s: no xrun, drift estimate off by at most \
             {worst:.3} ppm after lock-in, equalized tone residual {residual:.1} dB over 50 ms"
        );
    }
}
