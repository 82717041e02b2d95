//! The round-trip figure from a loop recording: find the test signal, turn its position into
//! time, and split it into the shares the backend reports.

use std::time::Duration;

use serde::Serialize;

use crate::io::live::{record_loop, LiveError, LoopRecording, LoopRequest};

use super::test_signal::{find_delay, mls};

/// MLS order of the test signal: 8191 samples, 0.17 s at 48 kHz.
const MLS_ORDER: u32 = 13;
/// Test level: −20 dBFS, gentle on real loudspeakers should a loop be acoustic.
const LEVEL: f32 = 0.1;
/// Below this clarity (correlation peak over the largest other value) the signal counts as
/// not found.
const MIN_CLARITY_DB: f64 = 6.0;

/// Where and how to measure.
#[derive(Debug, Clone, PartialEq)]
pub struct RoundTripOptions {
    pub input_device: String,
    pub output_device: String,
    pub sample_rate: u32,
    pub channels: u16,
    pub buffer_frames: Option<u32>,
    pub settle: Duration,
    pub max_round_trip: Duration,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RoundTrip {
    pub input_device: String,
    pub output_device: String,
    pub sample_rate_hz: u32,
    pub input_period_frames: u32,
    pub output_period_frames: u32,
    pub signal: String,
    /// Whether the test signal came back.
    pub found: bool,
    /// Correlation peak over the largest other value, dB.
    pub clarity_db: Option<f64>,
    /// Output callback → input callback delivering the same frame, ms.
    pub round_trip_ms: Option<f64>,
    pub round_trip_frames: Option<f64>,
    /// Backend-reported output share (callback → playback) and input share (capture →
    /// callback), ms; null when the backend reports nothing.
    pub output_share_ms: Option<f64>,
    pub input_share_ms: Option<f64>,
    /// Round trip less the reported shares: the loop itself and unreported buffering, ms.
    pub unreported_ms: Option<f64>,
    /// What went wrong or what to keep in mind, in words.
    pub note: String,
}

/// Plays the test signal, records, and analyses.
pub fn measure_round_trip(options: &RoundTripOptions) -> Result<RoundTrip, LiveError> {
    let signal = mls(MLS_ORDER);
    let request = LoopRequest {
        input: options.input_device.clone(),
        output: options.output_device.clone(),
        sample_rate: options.sample_rate,
        channels: options.channels,
        buffer_frames: options.buffer_frames,
        signal: signal.clone(),
        level: LEVEL,
        settle: options.settle,
        max_round_trip: options.max_round_trip,
    };
    let recording = record_loop(&request)?;
    Ok(analyse(&recording, &signal, options))
}

/// The figures from a recording (separate from the devices so it can be tested).
pub fn analyse(recording: &LoopRecording, signal: &[f32], options: &RoundTripOptions) -> RoundTrip {
    let rate = f64::from(options.sample_rate);
    let mut out = RoundTrip {
        input_device: recording.input_device.clone(),
        output_device: recording.output_device.clone(),
        sample_rate_hz: options.sample_rate,
        input_period_frames: recording.input_period_frames,
        output_period_frames: recording.output_period_frames,
        signal: format!(
            "maximum-length sequence of {} samples at {:.0} dBFS",
            signal.len(),
            20.0 * f64::from(LEVEL).log10()
        ),
        found: false,
        clarity_db: None,
        round_trip_ms: None,
        round_trip_frames: None,
        output_share_ms: recording.output_latency_s.map(|s| 1000.0 * s),
        input_share_ms: recording.input_latency_s.map(|s| 1000.0 * s),
        unreported_ms: None,
        note: String::new(),
    };
    let Some(sent_at) = recording.signal_sent_at else {
        out.note = "the output stream never ran its callback: nothing was played".into();
        return out;
    };
    // Look only at what was captured after the signal was sent.
    let first = recording
        .input_callbacks
        .iter()
        .find(|(t, _, _)| *t >= sent_at)
        .map_or(recording.captured.len(), |(_, before, _)| *before);
    let max_lag = (options.max_round_trip.as_secs_f64() * rate) as usize;
    let Some((lag, clarity)) = find_delay(
        &recording.captured[first.min(recording.captured.len())..],
        signal,
        max_lag,
    ) else {
        out.note = "the recording after the signal was sent is too short or silent: is the \
                    output looped back to the input?"
            .into();
        return out;
    };
    out.clarity_db = Some(clarity);
    if clarity < MIN_CLARITY_DB {
        out.note = format!(
            "the test signal was not found clearly ({clarity:.1} dB over the next correlation \
             peak): is the output looped back to the input?"
        );
        return out;
    }
    let frame = first + lag;
    let Some(&(t, before, n)) = recording
        .input_callbacks
        .iter()
        .find(|(_, before, n)| frame >= *before && frame < before + n)
    else {
        out.note = "the frame found lies outside every input callback".into();
        return out;
    };
    // The callback hands over frames before..before+n at time t; frame `frame` was there
    // (before + n − 1 − frame) sample periods before the newest one.
    let delivered_at = t - (before + n - 1 - frame) as f64 / rate;
    let seconds = delivered_at - sent_at;
    out.found = true;
    out.round_trip_ms = Some(1000.0 * seconds);
    out.round_trip_frames = Some(seconds * rate);
    if let (Some(o), Some(i)) = (out.output_share_ms, out.input_share_ms) {
        out.unreported_ms = Some(1000.0 * seconds - o - i);
    }
    out.note = "measured from the output callback to the input callback; accurate to about one \
                period of either stream (callback timing)"
        .into();
    out
}
