//! Round-trip latency of a device path: play a test signal on the output device while the
//! input device records, with the output looped back to the input (a cable, or a sound
//! server's monitor source), then find the signal in the recording.
//!
//! Measured from the output callback that hands the signal's first frame to the device until
//! the input callback that hands it back, placed within that callback's buffer at the sample
//! rate. Where the backend reports them, the output side's share (callback → playback) and the
//! input side's (capture → callback) are reported too; the rest is the loop itself plus what
//! the backend does not report.
//!
//! This is a measuring tool, not the service: its callbacks take an uncontended lock on the
//! recording (only the measuring thread takes it, after the streams are stopped).

use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use cpal::traits::{DeviceTrait, StreamTrait};

use super::devices::{device_label, find_device};
use super::duplex::{choose_for, DeviceRequest};
use super::error::{Direction, LiveError};
use super::samples::{DeviceFormat, DeviceSample};
use super::stream_choice::Choice;

/// What to measure with.
#[derive(Debug, Clone, PartialEq)]
pub struct LoopRequest {
    /// The devices, opened the way the service opens them.
    pub devices: DeviceRequest,
    /// Test signal, one period, ±1 (scaled by `level` when played on every channel).
    pub signal: Vec<f32>,
    pub level: f32,
    /// Time to let both streams settle before the signal is played.
    pub settle: Duration,
    /// Longest round trip looked for.
    pub max_round_trip: Duration,
}

/// What the streams recorded (analysed by `redress::bench`).
#[derive(Debug, Clone, Default)]
pub struct LoopRecording {
    pub input_device: String,
    pub output_device: String,
    pub input_period_frames: u32,
    pub output_period_frames: u32,
    /// Channel 0 of everything the input delivered, from the first input callback on.
    pub captured: Vec<f32>,
    /// Per input callback: (seconds since the measurement began, frames delivered before it,
    /// frames in it).
    pub input_callbacks: Vec<(f64, usize, usize)>,
    /// Seconds since the measurement began when the output callback that wrote the signal's
    /// first frame ran (None: it never ran).
    pub signal_sent_at: Option<f64>,
    /// Backend-reported shares, medians over the callbacks (None where not reported).
    pub output_latency_s: Option<f64>,
    pub input_latency_s: Option<f64>,
}

#[derive(Default)]
struct InputLog {
    captured: Vec<f32>,
    callbacks: Vec<(f64, usize, usize)>,
    latencies: Vec<f64>,
}

#[derive(Default)]
struct OutputLog {
    sent_at: Option<f64>,
    latencies: Vec<f64>,
}

/// Plays `request.signal` once on every output channel and records the input, then stops
/// both streams. Allocation happens before the streams start (buffers sized for the run).
pub fn record_loop(request: &LoopRequest) -> Result<LoopRecording, LiveError> {
    let host = super::devices::open_host(crate::model::AudioHost::Alsa)?;
    let devices = &request.devices;
    let input_device = find_device(&host, &devices.input, Direction::Capture)?;
    let output_device = find_device(&host, &devices.output, Direction::Playback)?;
    let input_label = device_label(&input_device);
    let output_label = device_label(&output_device);
    let input_choice = choose_for(&input_device, &input_label, Direction::Capture, devices)?;
    let output_choice = choose_for(&output_device, &output_label, Direction::Playback, devices)?;

    let total = request.settle
        + request.max_round_trip
        + Duration::from_secs_f64(request.signal.len() as f64 / f64::from(devices.sample_rate))
        + Duration::from_millis(500);
    let frames_expected = (total.as_secs_f64() * f64::from(devices.sample_rate) * 1.5) as usize;
    let input_log = Arc::new(Mutex::new(InputLog {
        captured: Vec::with_capacity(frames_expected),
        callbacks: Vec::with_capacity(frames_expected / 16 + 64),
        latencies: Vec::with_capacity(frames_expected / 16 + 64),
    }));
    let output_log = Arc::new(Mutex::new(OutputLog {
        sent_at: None,
        latencies: Vec::with_capacity(frames_expected / 16 + 64),
    }));
    let armed = Arc::new(AtomicBool::new(false));
    let began = Instant::now();
    let channels = usize::from(devices.channels);

    let input_stream = build_input(&input_device, input_choice, channels, began, &input_log)
        .map_err(|e| LiveError::backend(format!("opening capture device `{input_label}`"), e))?;
    let output_stream = build_output(
        &output_device,
        output_choice,
        channels,
        began,
        request.signal.iter().map(|v| v * request.level).collect(),
        Arc::clone(&armed),
        &output_log,
    )
    .map_err(|e| LiveError::backend(format!("opening playback device `{output_label}`"), e))?;
    input_stream
        .play()
        .map_err(|e| LiveError::backend(format!("starting capture on `{input_label}`"), e))?;
    output_stream
        .play()
        .map_err(|e| LiveError::backend(format!("starting playback on `{output_label}`"), e))?;
    std::thread::sleep(request.settle);
    armed.store(true, Ordering::Release);
    std::thread::sleep(total.saturating_sub(request.settle));
    let input_period_frames = input_stream
        .buffer_size()
        .unwrap_or(input_choice.period_frames);
    let output_period_frames = output_stream
        .buffer_size()
        .unwrap_or(output_choice.period_frames);
    drop(input_stream);
    drop(output_stream);

    let input_log = std::mem::take(&mut *input_log.lock().unwrap_or_else(|p| p.into_inner()));
    let output_log = std::mem::take(&mut *output_log.lock().unwrap_or_else(|p| p.into_inner()));
    Ok(LoopRecording {
        input_device: input_label,
        output_device: output_label,
        input_period_frames,
        output_period_frames,
        captured: input_log.captured,
        input_callbacks: input_log.callbacks,
        signal_sent_at: output_log.sent_at,
        output_latency_s: median(output_log.latencies),
        input_latency_s: median(input_log.latencies),
    })
}

fn median(mut v: Vec<f64>) -> Option<f64> {
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    Some(v[v.len() / 2])
}

fn build_input(
    device: &cpal::Device,
    choice: Choice,
    channels: usize,
    began: Instant,
    log: &Arc<Mutex<InputLog>>,
) -> Result<cpal::Stream, cpal::Error> {
    fn build<T: DeviceSample>(
        device: &cpal::Device,
        choice: Choice,
        channels: usize,
        began: Instant,
        log: Arc<Mutex<InputLog>>,
    ) -> Result<cpal::Stream, cpal::Error> {
        device.build_input_stream::<T, _, _>(
            choice.config,
            move |data: &[T], info: &cpal::InputCallbackInfo| {
                let now = began.elapsed().as_secs_f64();
                let Ok(mut log) = log.try_lock() else { return };
                let before = log.captured.len();
                let frames = data.len() / channels.max(1);
                // Keep within the capacity reserved up front: no reallocation here.
                let room = log.captured.capacity() - before;
                for frame in data.chunks_exact(channels.max(1)).take(room) {
                    log.captured.push(frame[0].to_f32());
                }
                if log.callbacks.len() < log.callbacks.capacity() {
                    log.callbacks.push((now, before, frames.min(room)));
                }
                let t = info.timestamp();
                if let Some(d) = t.callback.checked_duration_since(t.capture) {
                    if log.latencies.len() < log.latencies.capacity() {
                        log.latencies.push(d.as_secs_f64());
                    }
                }
            },
            |_| {},
            None,
        )
    }
    let log = Arc::clone(log);
    match choice.format {
        DeviceFormat::F32 => build::<f32>(device, choice, channels, began, log),
        DeviceFormat::I16 => build::<i16>(device, choice, channels, began, log),
        DeviceFormat::I32 => build::<i32>(device, choice, channels, began, log),
        DeviceFormat::I24 => build::<cpal::I24>(device, choice, channels, began, log),
    }
}

fn build_output(
    device: &cpal::Device,
    choice: Choice,
    channels: usize,
    began: Instant,
    signal: Vec<f32>,
    armed: Arc<AtomicBool>,
    log: &Arc<Mutex<OutputLog>>,
) -> Result<cpal::Stream, cpal::Error> {
    fn build<T: DeviceSample>(
        device: &cpal::Device,
        choice: Choice,
        channels: usize,
        began: Instant,
        signal: Vec<f32>,
        armed: Arc<AtomicBool>,
        log: Arc<Mutex<OutputLog>>,
    ) -> Result<cpal::Stream, cpal::Error> {
        let mut position: Option<usize> = None;
        device.build_output_stream::<T, _, _>(
            choice.config,
            move |data: &mut [T], info: &cpal::OutputCallbackInfo| {
                let now = began.elapsed().as_secs_f64();
                if position.is_none() && armed.load(Ordering::Acquire) {
                    position = Some(0);
                    if let Ok(mut log) = log.try_lock() {
                        log.sent_at = Some(now);
                    }
                }
                for frame in data.chunks_exact_mut(channels.max(1)) {
                    let v = match position {
                        Some(p) if p < signal.len() => {
                            position = Some(p + 1);
                            signal[p]
                        }
                        _ => 0.0,
                    };
                    frame.fill(T::from_f32(v));
                }
                let t = info.timestamp();
                if let Some(d) = t.playback.checked_duration_since(t.callback) {
                    if let Ok(mut log) = log.try_lock() {
                        if log.latencies.len() < log.latencies.capacity() {
                            log.latencies.push(d.as_secs_f64());
                        }
                    }
                }
            },
            |_| {},
            None,
        )
    }
    let log = Arc::clone(log);
    match choice.format {
        DeviceFormat::F32 => build::<f32>(device, choice, channels, began, signal, armed, log),
        DeviceFormat::I16 => build::<i16>(device, choice, channels, began, signal, armed, log),
        DeviceFormat::I32 => build::<i32>(device, choice, channels, began, signal, armed, log),
        DeviceFormat::I24 => {
            build::<cpal::I24>(device, choice, channels, began, signal, armed, log)
        }
    }
}
