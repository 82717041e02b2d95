//! The round-trip figure from a loop recording: find the test signal, turn its position into
//! time, and split it into the shares the backend reports.

use std::time::Duration;

use serde::Serialize;

use crate::io::live::{record_loop, DeviceRequest, LiveError, LoopRecording, LoopRequest};
use crate::measure::{find_delay, maximum_length_sequence};

/// MLS order of the test signal: 8191 samples, 0.17 s at 48 kHz.
const MLS_ORDER: u32 = 13;
/// Test level: −20 dBFS, gentle on real loudspeakers should a loop be acoustic.
const LEVEL: f32 = 0.1;

/// One period of the test signal, ±1.
pub fn test_signal() -> Vec<f32> {
    maximum_length_sequence(MLS_ORDER)
        .unwrap_or_default()
        .into_iter()
        .map(|v| v as f32)
        .collect()
}

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
    /// Correlation peak over the correlation's RMS, dB (the measure stage's prominence).
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
    let signal = test_signal();
    let request = LoopRequest {
        devices: DeviceRequest {
            input: options.input_device.clone(),
            output: options.output_device.clone(),
            sample_rate: options.sample_rate,
            channels: options.channels,
            buffer_frames: options.buffer_frames,
            ..DeviceRequest::default()
        },
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
    let start = first.min(recording.captured.len());
    let end = (start + max_lag + signal.len()).min(recording.captured.len());
    let recorded: Vec<f64> = recording.captured[start..end]
        .iter()
        .map(|&v| f64::from(v))
        .collect();
    let reference: Vec<f64> = signal.iter().map(|&v| f64::from(v)).collect();
    if recorded.len() < reference.len() {
        out.note = "the recording after the signal was sent is too short: is the output looped \
                    back to the input?"
            .into();
        return out;
    }
    let lag = match find_delay(&reference, &recorded, "the loop recording", 0) {
        Ok(found) => {
            out.clarity_db = Some(found.prominence_db);
            found.peak_lag
        }
        Err(e) => {
            out.note = format!(
                "the test signal was not found ({e}): is the output looped back to the input?"
            );
            return out;
        }
    };
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
    out.note = "measured from the output callback to the input callback; accurate to about one \
                period of either stream (callback timing)"
        .into();
    if let (Some(o), Some(i)) = (out.output_share_ms, out.input_share_ms) {
        let rest = 1000.0 * seconds - o - i;
        out.unreported_ms = Some(rest);
        if rest < 0.0 {
            out.note.push_str(
                "; the backend's reported shares add up to more than the measured total: they \
                 are its own estimates (buffer fill levels), not measurements",
            );
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn options() -> RoundTripOptions {
        RoundTripOptions {
            input_device: "in".into(),
            output_device: "out".into(),
            sample_rate: 48_000,
            channels: 1,
            buffer_frames: Some(256),
            settle: Duration::from_millis(0),
            max_round_trip: Duration::from_secs(1),
        }
    }

    // Source: the definition above, worked by hand on a synthetic recording — the signal is
    // sent at 1.000 s and starts at capture frame 48 960; input callbacks of 256 frames at
    // 48 kHz, callback k delivering frames 256k … 256k + 255 at (k + 1)·256/48 000 s. Frame
    // 48 960 comes with callback 191 (frames 48 896 … 49 151) at 1.024 s, 191 frames before
    // that buffer's newest, so it is handed back at 1.024 − 191/48 000 = 1.020 021 s: a round
    // trip of 20.02 ms, of which 8 + 5 ms are the reported shares.
    #[test]
    fn round_trip_from_a_synthetic_loop() {
        let signal = test_signal();
        let frames = 96_000;
        let mut captured = vec![0.0f32; frames];
        let start = 48_960;
        for (i, v) in signal.iter().enumerate() {
            captured[start + i] = 0.1 * v;
        }
        let input_callbacks = (0..frames / 256)
            .map(|k| ((k + 1) as f64 * 256.0 / 48_000.0, k * 256, 256))
            .collect();
        let recording = LoopRecording {
            input_device: "in".into(),
            output_device: "out".into(),
            input_period_frames: 256,
            output_period_frames: 256,
            captured,
            input_callbacks,
            signal_sent_at: Some(1.0),
            output_latency_s: Some(0.008),
            input_latency_s: Some(0.005),
        };
        let r = analyse(&recording, &signal, &options());
        assert!(r.found, "{}", r.note);
        let expected_ms = 1000.0 * (49_152.0 / 48_000.0 - 191.0 / 48_000.0 - 1.0);
        assert!((r.round_trip_ms.unwrap() - expected_ms).abs() < 1e-9);
        assert!((expected_ms - 20.020_833).abs() < 1e-5);
        assert!((r.unreported_ms.unwrap() - (expected_ms - 13.0)).abs() < 1e-9);

        // Nothing came back: said so, no figure.
        let silent = LoopRecording {
            captured: vec![0.0; frames],
            ..recording
        };
        let r = analyse(&silent, &signal, &options());
        assert!(!r.found);
        assert!(r.round_trip_ms.is_none());
        assert!(r.note.contains("looped back"), "{}", r.note);
    }
}
