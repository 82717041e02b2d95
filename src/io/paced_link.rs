//! A simulated link that runs in real time: the live service's stand-in for sound cards.
//!
//! A thread generates programme material, passes it through the configured channel model (what
//! the real link would do to it), and hands it block by block, at the pace of the sample rate,
//! to the very same [`Engine`] the audio callback would run. It measures how far the link's
//! output and the engine's output are from the original, so a demo can show the correction.

use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::Arc;
use std::thread::JoinHandle;
use std::time::{Duration, Instant};

use super::live::{CallbackScheduling, MemoryLock, SchedulingRequest, SchedulingWatch};
use super::programme::{generate, ProgrammeSpec};
use super::simulated_link::{SimulatedLink, SimulationError};
use crate::engine::Engine;
use crate::model::Link;

/// Length of the generated programme, looped (seconds). Two seconds hold several of each of
/// the programme's clicks (every ~0.43 s) and noise bursts (every ~0.61 s), which is what the
/// error figures need; the loop is the service's largest allocation (8 channels at 48 kHz:
/// 3 MiB, where 8 s took 11.7 MiB of a 20 MiB budget).
const PROGRAMME_SECONDS: f64 = 2.0;

/// Time constant of the running error measures (seconds).
const ERROR_WINDOW_SECONDS: f64 = 0.25;

/// The error measures start after this long (seconds): the engine's start-up fade-in and the
/// filters' first transient are not what the link does to programme.
const SETTLE_SECONDS: f64 = 0.25;

/// Running figures of a paced link, readable from any thread.
#[derive(Debug)]
pub struct PacedFigures {
    /// f64 bits: error of the link's output against the original, dB (running, ~0.25 s window).
    error_before_db: AtomicU64,
    /// f64 bits: error of the equalized output against the original, dB.
    error_after_db: AtomicU64,
    pub frames: AtomicU64,
    /// Blocks that started later than their real-time deadline.
    pub late_blocks: AtomicU64,
}

impl Default for PacedFigures {
    fn default() -> Self {
        // NaN until the first measurement (after the settling time).
        Self {
            error_before_db: AtomicU64::new(f64::NAN.to_bits()),
            error_after_db: AtomicU64::new(f64::NAN.to_bits()),
            frames: AtomicU64::new(0),
            late_blocks: AtomicU64::new(0),
        }
    }
}

impl PacedFigures {
    pub fn error_before_db(&self) -> f64 {
        f64::from_bits(self.error_before_db.load(Ordering::Relaxed))
    }
    pub fn error_after_db(&self) -> f64 {
        f64::from_bits(self.error_after_db.load(Ordering::Relaxed))
    }
}

/// Compensation for delays neither the link model nor the inverse can remove, per channel.
#[derive(Debug, Clone)]
pub struct Alignment {
    /// Delay of the link's output relative to the original (the bulk delay), per channel.
    pub before: Vec<usize>,
    /// Delay of the equalized output relative to the original (bulk delay plus any latency the
    /// inverse adds), per channel.
    pub after: Vec<usize>,
}

/// Why a paced link could not start.
#[derive(Debug)]
pub enum PacedLinkError {
    /// The channel model cannot be simulated.
    Simulation(SimulationError),
    /// The operating system refused a thread.
    Thread(std::io::Error),
    /// The true link runs at another sample rate or channel count than the config being run:
    /// the simulation would feed the filters audio they were not designed for.
    Mismatch {
        truth: String,
        what: &'static str,
        truth_value: String,
        config_value: String,
    },
}

/// Refuses a true link whose sample rate or channel count differs from the running config's,
/// as `apply` refuses a WAV file of the wrong rate.
pub fn check_true_link(truth: &Link, config: &Link) -> Result<(), PacedLinkError> {
    let name = truth
        .source
        .as_ref()
        .map_or("the true link".to_string(), |p| p.display().to_string());
    let mismatch = |what, t: String, c: String| PacedLinkError::Mismatch {
        truth: name.clone(),
        what,
        truth_value: t,
        config_value: c,
    };
    if truth.sample_rate != config.sample_rate {
        return Err(mismatch(
            "sample rate",
            format!("{} Hz", truth.sample_rate),
            format!("{} Hz", config.sample_rate),
        ));
    }
    if truth.channel_count != config.channel_count {
        return Err(mismatch(
            "channel count",
            truth.channel_count.to_string(),
            config.channel_count.to_string(),
        ));
    }
    Ok(())
}

impl std::fmt::Display for PacedLinkError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            PacedLinkError::Simulation(e) => write!(f, "{e}"),
            PacedLinkError::Thread(e) => write!(
                f,
                "could not start the simulated link's thread: {}; check the process limits",
                crate::os_error::plain_os_error(e)
            ),
            PacedLinkError::Mismatch {
                truth,
                what,
                truth_value,
                config_value,
            } => write!(
                f,
                "{truth}: {what} {truth_value}, but the config being run has {config_value}\n  \
                 help: give --true-link a description of the same link at the config's {what} \
                 (the simulation plays the true link's audio into the config's filters)"
            ),
        }
    }
}

impl std::error::Error for PacedLinkError {}

/// A running paced link; dropping it (or [`PacedLink::stop`]) ends the thread.
pub struct PacedLink {
    stop: Arc<AtomicBool>,
    thread: Option<JoinHandle<()>>,
    figures: Arc<PacedFigures>,
    pub block_frames: usize,
    scheduling: SchedulingWatch,
}

impl PacedLink {
    /// Starts the thread. `block_frames` is the simulated device buffer. The thread stands in
    /// for a device's callback thread: it makes `request` on its first block, as one would
    /// (the memory lock, already taken or refused, is reported with it).
    pub fn start(
        link: &Link,
        engine: Engine,
        block_frames: usize,
        alignment: Alignment,
        seed: u64,
        request: SchedulingRequest,
        memory: MemoryLock,
    ) -> Result<Self, PacedLinkError> {
        let simulated = SimulatedLink::new(link).map_err(PacedLinkError::Simulation)?;
        let channels = link.channel_count;
        let programme = generate(&ProgrammeSpec::new(
            link.sample_rate,
            channels,
            PROGRAMME_SECONDS,
            seed,
        ));
        let stop = Arc::new(AtomicBool::new(false));
        let figures = Arc::new(PacedFigures::default());
        let callback = CallbackScheduling::new(request);
        let mut scheduling = SchedulingWatch::new(memory);
        scheduling.add("simulated link and engine", request, callback.slot());
        let runner = Runner {
            scheduling: callback,
            simulated,
            engine,
            programme,
            channels,
            block_frames: block_frames.max(1),
            period: Duration::from_secs_f64(block_frames.max(1) as f64 / link.sample_rate),
            decay: (-(block_frames.max(1) as f64) / (ERROR_WINDOW_SECONDS * link.sample_rate))
                .exp(),
            alignment,
            stop: Arc::clone(&stop),
            figures: Arc::clone(&figures),
        };
        let thread = std::thread::Builder::new()
            .name("redress-paced-link".into())
            .spawn(move || runner.run())
            .map_err(PacedLinkError::Thread)?;
        Ok(Self {
            stop,
            thread: Some(thread),
            figures,
            block_frames,
            scheduling,
        })
    }

    /// What the link's thread runs at, and whether memory is locked.
    pub fn realtime(&self) -> &SchedulingWatch {
        &self.scheduling
    }

    pub fn figures(&self) -> Arc<PacedFigures> {
        Arc::clone(&self.figures)
    }

    /// Stops the thread and waits for it.
    pub fn stop(&mut self) {
        self.stop.store(true, Ordering::Release);
        if let Some(t) = self.thread.take() {
            let _ = t.join();
        }
    }
}

impl Drop for PacedLink {
    fn drop(&mut self) {
        self.stop();
    }
}

struct Runner {
    scheduling: CallbackScheduling,
    simulated: SimulatedLink,
    engine: Engine,
    programme: Vec<f32>,
    channels: usize,
    block_frames: usize,
    period: Duration,
    decay: f64,
    alignment: Alignment,
    stop: Arc<AtomicBool>,
    figures: Arc<PacedFigures>,
}

impl Runner {
    fn run(mut self) {
        let width = self.block_frames * self.channels;
        let total_frames = self.programme.len() / self.channels.max(1);
        let mut original = vec![0.0f32; width];
        let mut through_link = vec![0.0f32; width];
        let mut equalized = vec![0.0f32; width];
        // Histories of the original, long enough for the largest alignment delay.
        let longest = self
            .alignment
            .before
            .iter()
            .chain(&self.alignment.after)
            .copied()
            .max()
            .unwrap_or(0);
        let history_frames = longest + self.block_frames + 1;
        let mut history = vec![0.0f32; history_frames * self.channels];
        let mut written: u64 = 0;
        let (mut err_before, mut err_after, mut reference) = (0.0f64, 0.0f64, 0.0f64);
        let mut position = 0usize;
        let settle_frames =
            (SETTLE_SECONDS / self.period.as_secs_f64()).ceil() as u64 * self.block_frames as u64;
        let mut deadline = Instant::now();
        while !self.stop.load(Ordering::Acquire) {
            self.scheduling.on_callback();
            for f in 0..self.block_frames {
                let src = ((position + f) % total_frames.max(1)) * self.channels;
                original[f * self.channels..(f + 1) * self.channels]
                    .copy_from_slice(&self.programme[src..src + self.channels]);
            }
            position = (position + self.block_frames) % total_frames.max(1);
            self.simulated
                .process_interleaved(&original, &mut through_link);
            self.engine.process(&through_link, &mut equalized);

            let (mut be, mut ae, mut re) = (0.0f64, 0.0f64, 0.0f64);
            for f in 0..self.block_frames {
                let frame = written + f as u64;
                let slot = (frame % history_frames as u64) as usize;
                history[slot * self.channels..(slot + 1) * self.channels]
                    .copy_from_slice(&original[f * self.channels..(f + 1) * self.channels]);
                for c in 0..self.channels {
                    let delayed = |d: usize| -> Option<f64> {
                        (frame >= d as u64).then(|| {
                            let s = ((frame - d as u64) % history_frames as u64) as usize;
                            f64::from(history[s * self.channels + c])
                        })
                    };
                    let i = f * self.channels + c;
                    if let Some(x) = delayed(self.alignment.before[c]) {
                        be += (f64::from(through_link[i]) - x).powi(2);
                    }
                    if let Some(x) = delayed(self.alignment.after[c]) {
                        ae += (f64::from(equalized[i]) - x).powi(2);
                        re += x * x;
                    }
                }
            }
            written += self.block_frames as u64;
            if written <= settle_frames {
                (be, ae, re) = (0.0, 0.0, 0.0);
            }
            err_before = err_before * self.decay + be;
            err_after = err_after * self.decay + ae;
            reference = reference * self.decay + re;
            if reference > 0.0 {
                let db = |e: f64| 10.0 * (e.max(1e-30) / reference).log10();
                self.figures
                    .error_before_db
                    .store(db(err_before).to_bits(), Ordering::Relaxed);
                self.figures
                    .error_after_db
                    .store(db(err_after).to_bits(), Ordering::Relaxed);
            }
            self.figures
                .frames
                .fetch_add(self.block_frames as u64, Ordering::Relaxed);

            deadline += self.period;
            let now = Instant::now();
            if deadline > now {
                std::thread::sleep(deadline - now);
            } else {
                self.figures.late_blocks.fetch_add(1, Ordering::Relaxed);
                if now - deadline > 10 * self.period {
                    // Far behind (the machine stalled): do not try to catch up in a burst.
                    deadline = now;
                }
            }
        }
    }
}
