//! The audio side of the service as the control thread sees it: the engine's control end plus
//! whatever drives the engine (sound devices, or a simulated link in real time).

use std::time::{Duration, Instant};

use super::fault_drill::FaultDrill;
use super::status::{AudioStatus, SimulatedStatus};
use super::totals::EngineCounters;
use super::ServiceError;
use crate::engine::{engine_pair, EngineControl, EngineSettings, Equalizer};
use crate::io::live::{
    lock_process_memory, request_for_priority, start_duplex, DeviceRequest, DuplexStreams,
    RealtimeStatus, StreamErrorCounts, StreamErrorKind, StreamErrorTally,
};
use crate::io::paced_link::{Alignment, PacedLink};
use crate::model::{AudioSettings, EngineOptions, Link};
use crate::numeric::poly::leading_zeros;
use crate::pipeline::LinkPlan;

/// Block size of the simulated link when the config names none (frames).
pub const DEFAULT_SIMULATED_BLOCK: usize = 256;

/// Longest wait, once the engine has faded out, for the fade to play through the ring and the
/// device (normally a few periods: tens of milliseconds).
pub const PLAYOUT_WAIT: Duration = Duration::from_secs(2);

/// What drives the engine.
#[derive(Debug, Clone)]
pub enum AudioSource {
    /// The sound devices named in the config's [audio] table.
    Devices,
    /// A simulated link running in real time: `truth` is what the link really does (the config
    /// being run is the user's model of it, possibly a rough one); `drill`, a fault rehearsed on
    /// it.
    Simulated {
        truth: Box<Link>,
        seed: u64,
        drill: Option<ArmedDrill>,
    },
}

/// A fault drill with the moment its times count from (the service's start).
#[derive(Debug, Clone, Copy)]
pub struct ArmedDrill {
    pub drill: FaultDrill,
    pub origin: Instant,
}

impl ArmedDrill {
    fn begins(&self) -> Instant {
        self.origin + self.drill.at()
    }
}

enum Driver {
    Devices(Box<DuplexStreams>),
    Simulated(PacedLink),
}

pub struct RunningAudio {
    pub control: EngineControl,
    driver: Driver,
    pub sample_rate: f64,
    pub channels: usize,
    pub audio: AudioSettings,
    pub engine_options: EngineOptions,
    description: String,
    block_frames: Option<usize>,
    /// Whether what the audio threads got has been logged.
    realtime_logged: bool,
    /// When these streams were opened, and the drill they run under, if any.
    opened: Instant,
    drill: Option<ArmedDrill>,
    /// A stall drill has stopped the simulated stream.
    stalled: bool,
}

impl RunningAudio {
    /// Builds the engine around generation `generation` of `plan` and starts the driver.
    pub fn start(
        link: &Link,
        plan: &LinkPlan,
        generation: u64,
        source: &AudioSource,
    ) -> Result<Self, ServiceError> {
        let opened = Instant::now();
        let drill = match source {
            AudioSource::Simulated { drill, .. } => *drill,
            AudioSource::Devices => None,
        };
        if let Some(armed) = drill {
            if !armed
                .drill
                .device_present(opened.saturating_duration_since(armed.origin))
            {
                return Err(ServiceError::Audio(
                    "the simulated device is away (fault drill `loss`)".to_string(),
                ));
            }
        }
        let set = Equalizer::from_plan(plan, generation).map_err(ServiceError::NotRunnable)?;
        let settings = EngineSettings::from_options(
            &link.runtime.engine,
            link.channel_count,
            link.sample_rate,
        );
        let (engine, control) = engine_pair(settings, Some(set));
        let (driver, description, block_frames) = match source {
            AudioSource::Simulated { truth, seed, .. } => {
                let block = link
                    .runtime
                    .audio
                    .buffer_frames
                    .map_or(DEFAULT_SIMULATED_BLOCK, |b| b as usize);
                let alignment = alignment(truth, plan);
                let audio = &link.runtime.audio;
                let paced = PacedLink::start(
                    truth,
                    engine,
                    block,
                    alignment,
                    *seed,
                    request_for_priority(audio.callback_priority),
                    lock_process_memory(audio.lock_memory),
                )
                .map_err(ServiceError::Simulation)?;
                let description = match &truth.source {
                    Some(p) => format!("real-time simulation of the link in {}", p.display()),
                    None => "real-time simulation of the configured link".to_string(),
                };
                (Driver::Simulated(paced), description, Some(block))
            }
            AudioSource::Devices => {
                let request = DeviceRequest {
                    input: link.runtime.audio.input_device.clone(),
                    output: link.runtime.audio.output_device.clone(),
                    sample_rate: link.sample_rate.round() as u32,
                    channels: link.channel_count as u16,
                    buffer_frames: link.runtime.audio.buffer_frames,
                    callback_priority: link.runtime.audio.callback_priority,
                    lock_memory: link.runtime.audio.lock_memory,
                    host: link.runtime.audio.host,
                    clocks: link.runtime.audio.clocks,
                    connect_inputs: link.runtime.audio.connect_inputs.clone(),
                    connect_outputs: link.runtime.audio.connect_outputs.clone(),
                };
                let streams = start_duplex(&request, engine, control.stats())
                    .map_err(|e| ServiceError::Audio(e.to_string()))?;
                let config = streams.config().clone();
                if config.ring_undersized() {
                    log::warn!(
                        "the devices run longer periods than requested; expect under- or \
                         overruns, or set [audio] buffer_frames to {}",
                        config.input_period_frames.max(config.output_period_frames)
                    );
                }
                let block = config.input_period_frames as usize;
                (
                    Driver::Devices(Box::new(streams)),
                    config.to_string(),
                    Some(block),
                )
            }
        };
        Ok(Self {
            control,
            driver,
            sample_rate: link.sample_rate,
            channels: link.channel_count,
            audio: link.runtime.audio.clone(),
            engine_options: link.runtime.engine.clone(),
            description,
            block_frames,
            realtime_logged: false,
            opened,
            drill,
            stalled: false,
        })
    }

    /// Why `link` cannot be swapped in without restarting the streams, if it cannot.
    pub fn restart_reason(&self, link: &Link) -> Option<String> {
        if link.sample_rate != self.sample_rate {
            return Some(format!(
                "the sample rate changed from {} to {} Hz",
                self.sample_rate, link.sample_rate
            ));
        }
        if link.channel_count != self.channels {
            return Some(format!(
                "the channel count changed from {} to {}",
                self.channels, link.channel_count
            ));
        }
        if link.runtime.audio != self.audio {
            return Some("the [audio] device settings changed".to_string());
        }
        if link.runtime.engine != self.engine_options {
            return Some("the [engine] settings changed".to_string());
        }
        None
    }

    pub fn status(&self, restarts: u64) -> AudioStatus {
        let kind = match &self.driver {
            Driver::Devices(_) => "devices",
            Driver::Simulated(_) => "simulated link",
        };
        let stream_errors = self.stream_error_count();
        // A graph server may change its block size while running: report the one it runs now.
        let block_frames = match &self.driver {
            Driver::Devices(d) => d.block_frames_now().map(|b| b as usize),
            Driver::Simulated(_) => None,
        }
        .or(self.block_frames);
        AudioStatus {
            kind: kind.to_string(),
            description: self.description.clone(),
            sample_rate_hz: self.sample_rate,
            channels: self.channels,
            block_frames,
            block_period_us: block_frames.map(|b| 1e6 * b as f64 / self.sample_rate),
            stream_errors,
            restarts,
            state: "running".to_string(),
            device_losses: 0,
            recoveries: 0,
            last_loss: None,
            last_retry_error: None,
            host: self.host().to_string(),
            runs_as: self.runs_as().to_string(),
            realtime: Some(self.realtime()),
        }
    }

    /// The audio system driving the engine: the config's host key, or "simulated".
    fn host(&self) -> &'static str {
        match &self.driver {
            Driver::Devices(_) => self.audio.host.key(),
            Driver::Simulated(_) => "simulated",
        }
    }

    /// How the engine meets the devices: "ring" (a capture and a playback callback with a
    /// ring between them) or "one_callback" (capture, engine and playback in one call).
    fn runs_as(&self) -> &'static str {
        match &self.driver {
            Driver::Devices(d) => d.config().runs_as(),
            Driver::Simulated(_) => "one_callback",
        }
    }

    /// What the audio threads run at, and whether memory is locked.
    pub fn realtime(&self) -> RealtimeStatus {
        match &self.driver {
            Driver::Devices(d) => d.realtime().status(),
            Driver::Simulated(p) => p.realtime().status(),
        }
    }

    /// Logs what the audio threads got, once all of them have run: a refusal as a warning with
    /// what to change (the audio runs on regardless).
    pub fn log_realtime_once(&mut self) {
        if self.realtime_logged {
            return;
        }
        let started = match &self.driver {
            Driver::Devices(d) => d.realtime().all_started(),
            Driver::Simulated(p) => p.realtime().all_started(),
        };
        if !started {
            return;
        }
        self.realtime_logged = true;
        let status = self.realtime();
        for (line, warn) in status.log_lines() {
            if warn {
                log::warn!("real-time: {line}");
            } else {
                log::info!("real-time: {line}");
            }
        }
    }

    /// Frames the engine has processed since this start (advances only while audio flows).
    pub fn frames(&self) -> u64 {
        self.control
            .stats()
            .frames
            .load(std::sync::atomic::Ordering::Relaxed)
    }

    /// Both streams' error tallies; `None` for the simulated link, which has no device to lose
    /// (unless a `loss` drill is rehearsed on it: then its device is reported gone when the
    /// drill begins).
    pub fn device_errors(&self) -> Option<StreamErrorCounts> {
        match &self.driver {
            Driver::Devices(d) => Some(d.stream_errors()),
            Driver::Simulated(_) => {
                let armed = self.drill?;
                let FaultDrill::Loss { .. } = armed.drill else {
                    return None;
                };
                let begins = armed.begins();
                let gone = self.opened < begins && Instant::now() >= begins;
                let mut errors = StreamErrorCounts::default();
                if gone {
                    errors.input = StreamErrorTally {
                        count: 1,
                        last_kind: Some(StreamErrorKind::DeviceNotAvailable),
                    };
                }
                Some(errors)
            }
        }
    }

    /// Carries out a `stall` drill once its time has come: the simulated stream stops for good
    /// (its thread ends; the engine's frame count stops). Returns whether it stalled just now.
    pub fn rehearse_stall(&mut self, now: Instant) -> bool {
        let Some(armed) = self.drill else {
            return false;
        };
        if self.stalled || !matches!(armed.drill, FaultDrill::Stall { .. }) || now < armed.begins()
        {
            return false;
        }
        if let Driver::Simulated(p) = &mut self.driver {
            p.stop();
        }
        self.stalled = true;
        true
    }

    /// Errors the streams have reported so far (0 for the simulated link).
    pub fn stream_error_count(&self) -> u64 {
        match &self.driver {
            Driver::Devices(d) => {
                let e = d.stream_errors();
                e.input.count + e.output.count
            }
            Driver::Simulated(_) => 0,
        }
    }

    /// The engine's counters as of now, with the streams' error count.
    pub fn counters(&self) -> EngineCounters {
        EngineCounters::read(&self.control.stats(), self.stream_error_count())
    }

    /// Stops the driver at once, without a fade (the devices are gone: nothing would play it).
    /// Returns the engine's final counters.
    pub fn stop_now(mut self) -> EngineCounters {
        let stream_errors = self.stream_error_count();
        match self.driver {
            Driver::Devices(d) => d.stop(),
            Driver::Simulated(mut p) => p.stop(),
        }
        self.control.collect_returned();
        EngineCounters::read(&self.control.stats(), stream_errors)
    }

    pub fn simulated(&self) -> Option<SimulatedStatus> {
        match &self.driver {
            Driver::Devices(_) => None,
            Driver::Simulated(p) => {
                let fig = p.figures();
                Some(SimulatedStatus {
                    error_before_db: fig.error_before_db(),
                    error_after_db: fig.error_after_db(),
                    late_blocks: fig.late_blocks.load(std::sync::atomic::Ordering::Relaxed),
                })
            }
        }
    }

    /// Fades the output to silence (waiting at most `timeout` for the engine to finish it),
    /// waits until the fade has played through the ring and the device's buffer (at most
    /// [`PLAYOUT_WAIT`]), then stops the driver: a stop cuts nothing but silence. Returns the
    /// engine's final counters.
    pub fn fade_out_and_stop(mut self, timeout: Duration) -> EngineCounters {
        let stream_errors = self.stream_error_count();
        self.control.request_fade_out();
        let started = Instant::now();
        while !self.control.fade_out_done() && started.elapsed() < timeout {
            std::thread::sleep(Duration::from_millis(5));
        }
        match self.driver {
            Driver::Devices(d) => {
                if !d.wait_faded_out(PLAYOUT_WAIT) {
                    log::warn!(
                        "the fade-out had not played out after {:.1} s; stopping anyway",
                        PLAYOUT_WAIT.as_secs_f64()
                    );
                }
                d.stop()
            }
            Driver::Simulated(mut p) => p.stop(),
        }
        self.control.collect_returned();
        EngineCounters::read(&self.control.stats(), stream_errors)
    }
}

/// Delays to line the original up with the link's output (its bulk delay) and with the
/// equalized output (bulk delay plus any latency the inverse adds), per channel.
fn alignment(truth: &Link, plan: &LinkPlan) -> Alignment {
    let channels = truth.channel_count;
    let before: Vec<usize> = (0..channels)
        .map(|c| {
            truth
                .path_for_channel(c)
                .map_or(0, |p| leading_zeros(&p.channel.b))
        })
        .collect();
    let after = (0..channels)
        .map(|c| {
            plan.path_for_channel(c)
                .and_then(|p| p.design.as_ref())
                .and_then(|d| d.as_ref().ok())
                .map_or(before[c], |d| {
                    d.residual_delay_samples + d.added_latency_samples
                })
        })
        .collect();
    Alignment { before, after }
}
