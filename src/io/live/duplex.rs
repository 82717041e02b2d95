//! Opening a capture and a playback stream with the engine between them.

use std::fmt;
use std::sync::Arc;

use cpal::traits::{DeviceTrait, StreamTrait};

use super::capture_side::CaptureSide;
use super::devices::{device_label, find_device, open_host, supported_configs, DEFAULT_DEVICE};
use super::error::{Direction, LiveError};
use super::jack_host::{start_jack, JackRequest, JackStreams};
use super::memory_lock::lock_process_memory;
use super::playback_side::PlaybackSide;
use super::playout::PlayoutProgress;
use super::realtime::{request_for_priority, LeftBecause, SchedulingRequest, SchedulingWatch};
use super::ring::{duplex_sides, duplex_sides_two_clocks, RingPlan};
use super::samples::{DeviceFormat, DeviceSample};
use super::stream_choice::{choose_config, Choice};
use super::stream_errors::{StreamErrorCounter, StreamErrorKind, StreamErrorTally};
use crate::engine::{Engine, EngineStats};
use crate::model::{AudioHost, Clocks, MAX_CHANNELS, SAMPLE_RATE_RANGE};

/// Which devices to open and how.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DeviceRequest {
    /// "default", a device id as listed ("alsa:hw:CARD=0,DEV=0"), or part of a device's name.
    pub input: String,
    /// Same forms as `input`.
    pub output: String,
    pub sample_rate: u32,
    /// Audio channels on both devices; must equal the engine's channel count.
    pub channels: u16,
    /// Frames per device period; `None` picks a default the devices accept.
    pub buffer_frames: Option<u32>,
    /// `SCHED_FIFO` priority both callback threads ask for on their first call (0: ask
    /// nothing; see [`super::realtime`]).
    pub callback_priority: u8,
    /// Lock the process's memory before the streams start, where the limits allow.
    pub lock_memory: bool,
    /// The audio system to open the devices on (ALSA devices, or a JACK client).
    pub host: AudioHost,
    /// Whether capture and playback share a sample clock; two clocks are resampled.
    pub clocks: Clocks,
    /// JACK: ports to connect the service's inputs from and its outputs to, in channel order.
    pub connect_inputs: Vec<String>,
    pub connect_outputs: Vec<String>,
}

impl Default for DeviceRequest {
    fn default() -> Self {
        Self {
            input: DEFAULT_DEVICE.to_string(),
            output: DEFAULT_DEVICE.to_string(),
            sample_rate: 48_000,
            channels: 2,
            buffer_frames: None,
            callback_priority: 0,
            lock_memory: false,
            host: AudioHost::Alsa,
            clocks: Clocks::Auto,
            connect_inputs: Vec::new(),
            connect_outputs: Vec::new(),
        }
    }
}

/// What was opened.
#[derive(Debug, Clone, PartialEq)]
pub struct DuplexConfig {
    pub input_device: String,
    pub output_device: String,
    pub sample_rate: u32,
    pub channels: u16,
    pub input_format: DeviceFormat,
    pub output_format: DeviceFormat,
    /// Periods the streams actually run with, as the backend reports them.
    pub input_period_frames: u32,
    pub output_period_frames: u32,
    /// The ring between the callbacks (sized from the requested periods); `None` on a graph
    /// host, where capture, engine and playback run in one callback.
    pub ring: Option<RingPlan>,
}

impl DuplexConfig {
    /// Delay added by the ring's silence prefill (device buffering, not filter delay); 0 with
    /// no ring.
    pub fn ring_latency_seconds(&self) -> f64 {
        self.ring
            .map_or(0.0, |r| r.added_latency_seconds(self.sample_rate))
    }

    /// True when a stream runs a longer period than the ring was sized for, so the prefill
    /// covers less than two of its periods and under/overruns become likely.
    pub fn ring_undersized(&self) -> bool {
        let longest = self.input_period_frames.max(self.output_period_frames) as usize;
        self.ring.is_some_and(|r| longest > r.period_frames)
    }

    /// "ring" (a capture and a playback callback with a ring between them) or "one_callback"
    /// (capture, engine and playback in the graph's one callback), as `status` spells it.
    pub fn runs_as(&self) -> &'static str {
        match self.ring {
            Some(_) => "ring",
            None => "one_callback",
        }
    }
}

impl fmt::Display for DuplexConfig {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let Some(ring) = self.ring else {
            return write!(
                f,
                "{} → {}, {} channel(s) at {} Hz, {}-frame blocks; capture, engine and playback \
                 in one callback, no ring (no buffering added by redress)",
                self.input_device,
                self.output_device,
                self.channels,
                self.sample_rate,
                self.input_period_frames,
            );
        };
        write!(
            f,
            "capture `{}` ({}, {}-frame period) → playback `{}` ({}, {}-frame period), \
             {} channel(s) at {} Hz; ring {} frames with {} frames of silence up front \
             ({:.1} ms of added buffering latency){}",
            self.input_device,
            self.input_format,
            self.input_period_frames,
            self.output_device,
            self.output_format,
            self.output_period_frames,
            self.channels,
            self.sample_rate,
            ring.capacity_frames(),
            ring.prefill_frames(),
            1000.0 * self.ring_latency_seconds(),
            match ring.two_clocks {
                true => "; two clocks: playback resampled to hold the ring",
                false => "",
            },
        )
    }
}

/// Error counts of both streams.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct StreamErrorCounts {
    pub input: StreamErrorTally,
    pub output: StreamErrorTally,
}

/// The running capture and playback streams. Dropping it stops both (capture first); the
/// engine is dropped with the capture stream.
pub struct DuplexStreams {
    running: Running,
    config: DuplexConfig,
    input_errors: Arc<StreamErrorCounter>,
    output_errors: Arc<StreamErrorCounter>,
    playout: Arc<PlayoutProgress>,
    scheduling: SchedulingWatch,
}

/// What runs the audio; held only to be dropped.
enum Running {
    // Field order is drop order: capture stops first, so the engine never runs while the
    // playback side is gone.
    Devices {
        _capture: cpal::Stream,
        _playback: cpal::Stream,
    },
    /// One JACK client: its process callback runs capture, engine and playback.
    Jack(Box<JackStreams>),
}

/// Device buffering assumed when the playback device reports no delay: the ALSA backend keeps
/// two periods per direction.
const ASSUMED_DEVICE_PERIODS: u64 = 2;

impl DuplexStreams {
    pub fn config(&self) -> &DuplexConfig {
        &self.config
    }

    /// Errors the backend reported on either stream so far (read by the control thread, which
    /// logs them; the error callbacks only count).
    pub fn stream_errors(&self) -> StreamErrorCounts {
        StreamErrorCounts {
            input: self.input_errors.tally(),
            output: self.output_errors.tally(),
        }
    }

    /// Waits (at most `timeout`) until the engine's fade-out has played: its last frame out of
    /// the ring and then the device's delay worth of frames after it, so that stopping now cuts
    /// nothing but silence. Returns whether it got there.
    pub fn wait_faded_out(&self, timeout: std::time::Duration) -> bool {
        let started = std::time::Instant::now();
        loop {
            let reported = self.playout.device_delay();
            let tail = if reported > 0 {
                reported
            } else {
                ASSUMED_DEVICE_PERIODS * u64::from(self.config.output_period_frames)
            };
            if self.playout.faded_out_through(tail) {
                return true;
            }
            if started.elapsed() >= timeout {
                return false;
            }
            std::thread::sleep(std::time::Duration::from_millis(5));
        }
    }

    /// The block size the host runs now, where it may change while running (a graph server);
    /// `None` for devices, which keep the period they were opened with.
    pub fn block_frames_now(&self) -> Option<u32> {
        match &self.running {
            Running::Devices { .. } => None,
            Running::Jack(jack) => Some(jack.block_frames()),
        }
    }

    /// What the callback threads run at and whether memory is locked.
    pub fn realtime(&self) -> &SchedulingWatch {
        &self.scheduling
    }

    /// Stops both streams (the same as dropping).
    pub fn stop(self) {
        drop(self);
    }
}

impl fmt::Debug for DuplexStreams {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("DuplexStreams")
            .field("config", &self.config)
            .field("errors", &self.stream_errors())
            .finish_non_exhaustive()
    }
}

/// Opens the requested devices and runs `engine` inside the capture callback, its output
/// crossing to the playback callback through a ring prefilled with two periods of silence.
/// `stats` must be the engine's own counters (`EngineControl::stats()`): overruns (samples
/// dropped because the ring was full) and underruns (samples of silence played because it was
/// empty) are counted there. Every check that can fail is made before `engine` is consumed;
/// should the backend still refuse to build or start a stream, the engine is dropped with it
/// and a new engine pair is needed for another try.
pub fn start_duplex(
    request: &DeviceRequest,
    engine: Engine,
    stats: Arc<EngineStats>,
) -> Result<DuplexStreams, LiveError> {
    check_request(request, &engine)?;
    if request.host == AudioHost::Jack {
        return start_on_jack(request, engine);
    }
    let host = open_host(request.host)?;
    let input_device = find_device(&host, &request.input, Direction::Capture)?;
    let output_device = find_device(&host, &request.output, Direction::Playback)?;
    let input_label = device_label(&input_device);
    let output_label = device_label(&output_device);
    let input_choice = choose_for(&input_device, &input_label, Direction::Capture, request)?;
    let output_choice = choose_for(&output_device, &output_label, Direction::Playback, request)?;

    let period = input_choice.period_frames.max(output_choice.period_frames) as usize;
    let (mut capture, mut playback, ring) = match request.clocks {
        // Two crystals: the playback side resamples by the drift loop's ratio.
        Clocks::Separate => {
            duplex_sides_two_clocks(engine, stats, period, f64::from(request.sample_rate)).map_err(
                |e| LiveError::InvalidRequest {
                    field: "clocks",
                    value: "separate".to_string(),
                    why: e.to_string(),
                    help: "leave clocks out (one clock) while this is looked into".to_string(),
                },
            )?
        }
        // One clock (one device, or devices that share one): nothing resampled, bit-exact.
        Clocks::Auto | Clocks::Shared => duplex_sides(engine, stats, period),
    };
    let playout = capture.playout();
    // Before the streams start: with the future pages locked, their threads' stacks are too.
    let mut scheduling = SchedulingWatch::new(lock_process_memory(request.lock_memory));
    // A PipeWire server schedules its clients' data threads (its real-time module or RTKit):
    // nothing is asked, what they run at is recorded.
    let asked = match request.host {
        AudioHost::PipeWire => SchedulingRequest::LeaveAsIs(LeftBecause::Server),
        AudioHost::Alsa | AudioHost::Jack => request_for_priority(request.callback_priority),
    };
    scheduling.add("capture and engine", asked, capture.set_scheduling(asked));
    scheduling.add("playback", asked, playback.set_scheduling(asked));

    let input_errors = Arc::new(StreamErrorCounter::default());
    let output_errors = Arc::new(StreamErrorCounter::default());
    let rate = request.sample_rate;
    let input = build_capture(&input_device, input_choice, capture, &input_errors)
        .map_err(|e| LiveError::backend(format!("opening capture device `{input_label}`"), e))?;
    let output = build_playback(
        &output_device,
        output_choice,
        playback,
        &output_errors,
        rate,
    )
    .map_err(|e| LiveError::backend(format!("opening playback device `{output_label}`"), e))?;
    input
        .play()
        .map_err(|e| LiveError::backend(format!("starting capture on `{input_label}`"), e))?;
    output
        .play()
        .map_err(|e| LiveError::backend(format!("starting playback on `{output_label}`"), e))?;

    let config = DuplexConfig {
        input_period_frames: input.buffer_size().unwrap_or(input_choice.period_frames),
        output_period_frames: output.buffer_size().unwrap_or(output_choice.period_frames),
        input_device: input_label,
        output_device: output_label,
        sample_rate: request.sample_rate,
        channels: request.channels,
        input_format: input_choice.format,
        output_format: output_choice.format,
        ring: Some(ring),
    };
    Ok(DuplexStreams {
        running: Running::Devices {
            _capture: input,
            _playback: output,
        },
        config,
        input_errors,
        output_errors,
        playout,
        scheduling,
    })
}

/// The JACK host: one client, the engine in its process callback (see [`super::jack_host`]).
fn start_on_jack(request: &DeviceRequest, engine: Engine) -> Result<DuplexStreams, LiveError> {
    // The memory is locked before the client's threads exist, so their stacks are too.
    let mut scheduling = SchedulingWatch::new(lock_process_memory(request.lock_memory));
    let jack = start_jack(
        &JackRequest {
            sample_rate: request.sample_rate,
            channels: request.channels,
            connect_inputs: &request.connect_inputs,
            connect_outputs: &request.connect_outputs,
        },
        engine,
    )?;
    let (asked, slot) = jack.scheduling();
    scheduling.add("jack process (capture, engine, playback)", asked, slot);
    let setup = jack.setup();
    let ports = |list: &[(String, Vec<String>)]| {
        list.iter()
            .map(|(port, peers)| match peers.as_slice() {
                [] => port.clone(),
                peers => format!("{port} ({})", peers.join(", ")),
            })
            .collect::<Vec<_>>()
            .join(", ")
    };
    let config = DuplexConfig {
        input_device: format!(
            "jack client `{}`: {}",
            setup.client_name,
            ports(&setup.inputs)
        ),
        output_device: ports(&setup.outputs),
        sample_rate: setup.sample_rate,
        channels: request.channels,
        input_format: DeviceFormat::F32,
        output_format: DeviceFormat::F32,
        input_period_frames: setup.block_frames,
        output_period_frames: setup.block_frames,
        ring: None,
    };
    let input_errors = Arc::clone(jack.errors());
    let playout = Arc::clone(jack.playout());
    Ok(DuplexStreams {
        running: Running::Jack(Box::new(jack)),
        config,
        input_errors,
        output_errors: Arc::new(StreamErrorCounter::default()),
        playout,
        scheduling,
    })
}

fn check_request(request: &DeviceRequest, engine: &Engine) -> Result<(), LiveError> {
    // Refused rather than run on ALSA under another name: `status` would report a host the
    // audio does not go through.
    if request.host != AudioHost::Alsa && request.clocks == Clocks::Separate {
        return Err(LiveError::InvalidRequest {
            field: "clocks",
            value: "separate".to_string(),
            why: format!(
                "a {} graph runs the service's capture and playback on the server's one clock \
                 (the server itself follows devices on other clocks); there is no second clock \
                 to follow",
                request.host.key()
            ),
            help: format!(
                "leave clocks out (or \"shared\") with host = \"{}\"",
                request.host.key()
            ),
        });
    }
    let (lo, hi) = SAMPLE_RATE_RANGE;
    if !(lo..=hi).contains(&f64::from(request.sample_rate)) {
        return Err(LiveError::InvalidRequest {
            field: "sample_rate",
            value: request.sample_rate.to_string(),
            why: format!("outside the {lo}–{hi} Hz this tool accepts"),
            help: "use the link's sample rate, e.g. 48000".to_string(),
        });
    }
    if request.channels == 0 || usize::from(request.channels) > MAX_CHANNELS {
        return Err(LiveError::InvalidRequest {
            field: "channels",
            value: request.channels.to_string(),
            why: format!("must be 1–{MAX_CHANNELS}"),
            help: "use the link's channel count".to_string(),
        });
    }
    if request.buffer_frames == Some(0) {
        return Err(LiveError::InvalidRequest {
            field: "buffer_frames",
            value: "0".to_string(),
            why: "a device period must hold at least one frame".to_string(),
            help: "leave it unset for the default, or give e.g. 256, 512 or 1024".to_string(),
        });
    }
    if engine.channels() != usize::from(request.channels) {
        return Err(LiveError::ChannelMismatch {
            engine_channels: engine.channels(),
            requested: request.channels,
        });
    }
    Ok(())
}

/// The stream configuration to ask `device` for, from what it offers and what `request` wants.
pub(super) fn choose_for(
    device: &cpal::Device,
    label: &str,
    direction: Direction,
    request: &DeviceRequest,
) -> Result<Choice, LiveError> {
    let offered = supported_configs(device, direction).map_err(|e| {
        LiveError::backend(
            format!("asking {direction} device `{label}` what it supports"),
            e,
        )
    })?;
    choose_config(
        direction,
        label,
        &offered,
        request.sample_rate,
        request.channels,
        request.buffer_frames,
    )
}

/// The error callback: counts and remembers the kind; the control thread does the logging.
fn on_error(counter: &Arc<StreamErrorCounter>) -> impl FnMut(cpal::Error) + Send + 'static {
    let counter = Arc::clone(counter);
    move |e: cpal::Error| counter.record(StreamErrorKind::from_backend(e.kind()))
}

fn build_capture(
    device: &cpal::Device,
    choice: Choice,
    capture: CaptureSide,
    errors: &Arc<StreamErrorCounter>,
) -> Result<cpal::Stream, cpal::Error> {
    fn build<T: DeviceSample>(
        device: &cpal::Device,
        choice: Choice,
        mut capture: CaptureSide,
        errors: &Arc<StreamErrorCounter>,
    ) -> Result<cpal::Stream, cpal::Error> {
        device.build_input_stream::<T, _, _>(
            choice.config,
            move |data: &[T], _: &cpal::InputCallbackInfo| capture.on_input(data),
            on_error(errors),
            None,
        )
    }
    match choice.format {
        DeviceFormat::F32 => build::<f32>(device, choice, capture, errors),
        DeviceFormat::I16 => build::<i16>(device, choice, capture, errors),
        DeviceFormat::I32 => build::<i32>(device, choice, capture, errors),
        DeviceFormat::I24 => build::<cpal::I24>(device, choice, capture, errors),
    }
}

fn build_playback(
    device: &cpal::Device,
    choice: Choice,
    playback: PlaybackSide,
    errors: &Arc<StreamErrorCounter>,
    rate: u32,
) -> Result<cpal::Stream, cpal::Error> {
    fn build<T: DeviceSample>(
        device: &cpal::Device,
        choice: Choice,
        mut playback: PlaybackSide,
        errors: &Arc<StreamErrorCounter>,
        rate: u32,
    ) -> Result<cpal::Stream, cpal::Error> {
        device.build_output_stream::<T, _, _>(
            choice.config,
            move |data: &mut [T], info: &cpal::OutputCallbackInfo| {
                playback.on_output(data);
                // How long until this callback's first frame plays: what a stop must wait for
                // after the fade-out's last frame has been written.
                let t = info.timestamp();
                if let Some(delay) = t.playback.checked_duration_since(t.callback) {
                    playback.record_device_delay(delay, rate);
                }
            },
            on_error(errors),
            None,
        )
    }
    match choice.format {
        DeviceFormat::F32 => build::<f32>(device, choice, playback, errors, rate),
        DeviceFormat::I16 => build::<i16>(device, choice, playback, errors, rate),
        DeviceFormat::I24 => build::<cpal::I24>(device, choice, playback, errors, rate),
        DeviceFormat::I32 => build::<i32>(device, choice, playback, errors, rate),
    }
}
