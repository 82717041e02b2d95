//! `redress run`: the control thread of the live service.
//!
//! It owns every slow or fallible step — reading and checking the config, designing, rounding,
//! building filter sets, logging, answering status requests — and talks to the audio thread
//! only through the engine's queues and counters. Nothing that goes wrong after start-up stops
//! the audio: a bad reload is logged and the running filters carry on.

use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use log::{debug, error, info, warn};

use super::device_watch::{DeviceWatch, Health, RecoveryPacer};
use super::running::{AudioSource, RunningAudio};
use super::signals::SignalFlags;
use super::socket_path::{current_uid, prepare_default_socket};
use super::status::{path_summaries, AudioStatus, ReloadStatus, ServiceStatus};
use super::status_server::{SharedDocument, StatusServer};
use super::ServiceError;
use crate::engine::{EngineEvent, Equalizer, StatsSnapshot};
use crate::io::paced_link::check_true_link;
use crate::model::config::load_link;
use crate::model::Link;
use crate::pipeline::{plan_link, LinkPlan};

/// How often the control loop wakes.
const TICK: Duration = Duration::from_millis(20);
/// How often the status document is refreshed.
const STATUS_EVERY: Duration = Duration::from_millis(250);

/// What `redress run` was asked to do.
#[derive(Debug, Clone)]
pub struct ServiceOptions {
    pub config: PathBuf,
    /// The status socket; `None` for the default (see `default_socket_path`).
    pub socket: Option<PathBuf>,
    pub source: SourceChoice,
    /// Stop by itself after this long (demos and tests); `None` runs until TERM/INT.
    pub run_for: Option<Duration>,
}

/// Where the audio comes from.
#[derive(Debug, Clone)]
pub enum SourceChoice {
    Devices,
    /// A simulated link; `truth` names the config describing the real link (default: the
    /// config being run).
    Simulated {
        truth: Option<PathBuf>,
        seed: u64,
    },
}

/// The service's state on the control thread.
struct Service {
    options: ServiceOptions,
    source: AudioSource,
    link: Link,
    plan: LinkPlan,
    generation: u64,
    audio: Option<RunningAudio>,
    reloads: ReloadStatus,
    restarts: u64,
    /// Stream errors already logged, and when the last such line was written.
    seen_stream_errors: u64,
    last_error_log: Option<Instant>,
    /// Input faults already logged, and when the last such line was written.
    seen_input_faults: u64,
    last_fault_log: Option<Instant>,
    started: Instant,
    document: SharedDocument,
    /// A filter set accepted by a reload but not yet taken by the engine (its inbox was full:
    /// reloads came faster than crossfades). Replaced by a newer one; sent on a later tick.
    pending: Option<Equalizer>,
    /// The design of a reloaded config, under way on a worker thread.
    design: Option<std::sync::mpsc::Receiver<Result<(Link, LinkPlan), String>>>,
    /// A HUP came while a design was under way: design again once it is done.
    reload_again: bool,
    /// Watches the devices of the running streams for loss.
    watch: DeviceWatch,
    /// Set while the devices are lost and being reopened.
    recovery: Option<Recovery>,
    /// Paces the attempts to reopen, across losses.
    pacer: RecoveryPacer,
    device_losses: u64,
    recoveries: u64,
    last_loss: Option<String>,
    last_retry_error: Option<String>,
    /// What was last published about the audio and the engine, shown while there is none.
    last_audio: Option<AudioStatus>,
    last_engine: Option<StatsSnapshot>,
}

/// The devices are gone: when they went, when to try them again, and how many tries so far.
struct Recovery {
    since: Instant,
    next_try: Instant,
    attempts: u32,
}

/// Runs the service until TERM/INT (or `run_for`). Returns once the audio has faded out and
/// stopped. Errors only at start-up.
pub fn run_service(options: ServiceOptions) -> Result<(), ServiceError> {
    let signals = SignalFlags::install().map_err(ServiceError::Signals)?;
    if current_uid() == Some(0) {
        warn!(
            "running as root: a service like this needs no privileges; run it as an ordinary \
             user (see the example systemd unit)"
        );
    }
    let link = load_link(&options.config).map_err(|e| ServiceError::Config(Box::new(e)))?;
    let plan = plan_link(&link);
    if !plan.is_runnable() {
        return Err(ServiceError::NotRunnable(
            crate::engine::EngineError::NotRunnable(plan.problems()),
        ));
    }
    let source = match &options.source {
        SourceChoice::Devices => AudioSource::Devices,
        SourceChoice::Simulated { truth, seed } => {
            let truth = match truth {
                Some(p) => load_link(p).map_err(|e| ServiceError::Config(Box::new(e)))?,
                None => link.clone(),
            };
            check_true_link(&truth, &link).map_err(ServiceError::Simulation)?;
            AudioSource::Simulated {
                truth: Box::new(truth),
                seed: *seed,
            }
        }
    };
    // Until the first real document is published, clients are told to wait.
    let starting = serde_json::json!({ "error": "the service is starting; ask again shortly" });
    let document: SharedDocument = Arc::new(Mutex::new(Arc::new(starting.to_string())));
    let socket = match &options.socket {
        Some(path) => path.clone(),
        None => {
            let (path, fell_back) =
                prepare_default_socket().map_err(|why| ServiceError::Socket {
                    path: super::socket_path::default_socket_path(),
                    why,
                })?;
            if let Some(why) = fell_back {
                warn!("{why}: the status socket is {} instead", path.display());
            }
            path
        }
    };
    let server = StatusServer::start(&socket, Arc::clone(&document))?;
    if matches!(source, AudioSource::Devices) {
        // Once, before the first sound; device recoveries and restarts do not repeat it.
        warn!("{}", super::caution::start_up_caution(&plan));
    }
    let audio = RunningAudio::start(&link, &plan, 1, &source)?;
    let mut service = Service {
        options,
        source,
        link,
        plan,
        generation: 1,
        audio: Some(audio),
        reloads: ReloadStatus::default(),
        restarts: 0,
        seen_stream_errors: 0,
        last_error_log: None,
        seen_input_faults: 0,
        last_fault_log: None,
        started: Instant::now(),
        document,
        pending: None,
        design: None,
        reload_again: false,
        watch: DeviceWatch::new(Instant::now()),
        recovery: None,
        pacer: RecoveryPacer::default(),
        device_losses: 0,
        recoveries: 0,
        last_loss: None,
        last_retry_error: None,
        last_audio: None,
        last_engine: None,
    };
    info!(
        "running {} (generation 1) on {}; status on {}",
        service.options.config.display(),
        service.audio_description(),
        server.path().display()
    );

    for p in path_summaries(&service.plan) {
        info!(
            "path `{}`: {} in {}; gives up: {}",
            p.label, p.method_name, p.structure_name, p.gives_up
        );
    }
    super::plan_details::log_plan_details(&service.plan);
    service.publish();
    let mut last_status = Instant::now();
    loop {
        std::thread::sleep(TICK);
        if signals.stop_requested() {
            info!("stop requested: fading out");
            break;
        }
        if signals.take_reload() {
            service.request_reload();
        }
        service.poll_design();
        service.send_pending();
        service.watch_devices();
        service.pump_events();
        if let Some(limit) = service.options.run_for {
            if service.started.elapsed() >= limit {
                info!("run time of {:.1} s reached", limit.as_secs_f64());
                signals.request_stop();
            }
        }
        if last_status.elapsed() >= STATUS_EVERY {
            service.publish();
            last_status = Instant::now();
        }
    }
    let fade = Duration::from_secs_f64(service.link.runtime.engine.fade_out_ms / 1000.0);
    if let Some(audio) = service.audio.take() {
        audio.fade_out_and_stop(fade * 2 + Duration::from_millis(200));
    }
    drop(server);
    info!("stopped");
    Ok(())
}

impl Service {
    fn audio_description(&self) -> String {
        self.audio
            .as_ref()
            .map(|a| a.status(self.restarts).description)
            .unwrap_or_default()
    }

    /// Re-reads the config; on any problem logs it and keeps the running filters.
    /// A HUP: starts reading and designing the config on a worker thread, so a long design
    /// (a high-order channel takes seconds) never stops the control loop from watching the
    /// devices, draining the engine's queues and keeping the status fresh. A HUP that arrives
    /// while a design is under way asks for one more, of the file as it is then.
    fn request_reload(&mut self) {
        if self.design.is_some() {
            debug!("reload requested while one is being designed: one more will follow");
            self.reload_again = true;
            return;
        }
        let path = self.options.config.clone();
        info!("reload requested: reading {}", path.display());
        let (tx, rx) = std::sync::mpsc::channel();
        let worker = path.clone();
        let spawned = std::thread::Builder::new()
            .name("redress-design".into())
            .spawn(move || {
                let _ = tx.send(design_config(&worker));
            });
        match spawned {
            Ok(_) => self.design = Some(rx),
            // No thread to be had: design here, as the loop would wait for it anyway.
            Err(_) => {
                let outcome = design_config(&path);
                self.finish_reload(outcome);
            }
        }
    }

    /// Takes a finished design, if there is one, and starts the next if another HUP came.
    fn poll_design(&mut self) {
        let Some(rx) = self.design.as_ref() else {
            return;
        };
        let outcome = match rx.try_recv() {
            Ok(outcome) => outcome,
            Err(std::sync::mpsc::TryRecvError::Empty) => return,
            Err(std::sync::mpsc::TryRecvError::Disconnected) => {
                Err("the design of the new configuration failed unexpectedly".to_string())
            }
        };
        self.design = None;
        self.finish_reload(outcome);
        if std::mem::take(&mut self.reload_again) {
            self.request_reload();
        }
    }

    /// Swaps in a designed configuration, or logs why it cannot be, keeping the running one.
    fn finish_reload(&mut self, outcome: Result<(Link, LinkPlan), String>) {
        let (link, plan) = match outcome {
            Ok(designed) => designed,
            Err(why) => return self.reject(why),
        };
        if let AudioSource::Simulated { truth, .. } = &self.source {
            if let Err(e) = check_true_link(truth, &link) {
                return self.reject(e.to_string());
            }
        }
        let generation = self.generation + 1;
        let restart = self.audio.as_ref().and_then(|a| a.restart_reason(&link));
        if let Some(reason) = restart {
            warn!("{reason}: restarting the audio streams for generation {generation}");
            let fade = Duration::from_secs_f64(self.link.runtime.engine.fade_out_ms / 1000.0);
            if let Some(old) = self.audio.take() {
                self.last_audio = Some(old.status(self.restarts));
                self.last_engine = Some(old.control.snapshot());
                old.fade_out_and_stop(fade * 2 + Duration::from_millis(200));
            }
            self.seen_stream_errors = 0;
            self.pending = None;
            self.watch = DeviceWatch::new(Instant::now());
            match RunningAudio::start(&link, &plan, generation, &self.source) {
                Ok(audio) => self.audio = Some(audio),
                Err(e) => {
                    // Bring the previous configuration back rather than leave the link silent.
                    error!("restart with the new configuration failed: {e}; restoring the previous one");
                    match RunningAudio::start(&self.link, &self.plan, self.generation, &self.source)
                    {
                        Ok(audio) => self.audio = Some(audio),
                        Err(e2) => {
                            error!(
                                "restoring the previous configuration failed too: {e2}; \
                                 retrying with back-off"
                            );
                            self.enter_recovery(format!("{e2}"));
                        }
                    }
                    return self.reject(format!("{e}"));
                }
            }
            self.restarts += 1;
        } else {
            let set = match Equalizer::from_plan(&plan, generation) {
                Ok(set) => set,
                Err(e) => return self.reject(format!("{e}")),
            };
            // While the devices are lost there is no engine: the set is built (so the config is
            // known to run) and dropped; the restart builds the engine from the new plan.
            if let Some(audio) = self.audio.as_mut() {
                if let Err(set) = audio.control.send(set) {
                    // Reloads are coming faster than crossfades: this set waits here and
                    // replaces any older one still waiting, so the newest always runs last.
                    if self.pending.replace(set).is_some() {
                        debug!("a reload was superseded before the engine took it");
                    }
                }
            }
        }
        self.generation = generation;
        self.link = link;
        self.plan = plan;
        self.reloads.succeeded += 1;
        info!("reloaded: generation {generation} accepted, crossfading to it");
        for p in path_summaries(&self.plan) {
            info!(
                "path `{}`: {} in {}; gives up: {}",
                p.label, p.method_name, p.structure_name, p.gives_up
            );
        }
        super::plan_details::log_plan_details(&self.plan);
        self.publish();
    }

    /// The streams are down (already stopped): log it and schedule the first attempt to reopen.
    fn enter_recovery(&mut self, why: String) {
        let now = Instant::now();
        self.device_losses += 1;
        let wait = self.pacer.lost(now);
        warn!(
            "audio devices lost ({why}); generation {} stays loaded; reopening in {:.1} s",
            self.generation,
            wait.as_secs_f64()
        );
        self.last_loss = Some(why);
        self.pending = None;
        self.seen_stream_errors = 0;
        self.recovery = Some(Recovery {
            since: now,
            next_try: now + wait,
            attempts: 0,
        });
        self.publish();
    }

    /// Hands the engine a filter set that was waiting for room in its inbox.
    fn send_pending(&mut self) {
        let (Some(set), Some(audio)) = (self.pending.take(), self.audio.as_mut()) else {
            return;
        };
        if let Err(set) = audio.control.send(set) {
            self.pending = Some(set);
        }
    }

    /// Notices lost devices, and reopens them with exponential back-off. The configuration,
    /// its plan and its generation stay as they are throughout; only the streams are rebuilt.
    fn watch_devices(&mut self) {
        let now = Instant::now();
        if let Some(audio) = self.audio.as_ref() {
            let Some(errors) = audio.device_errors() else {
                return;
            };
            let Health::Lost(why) = self.watch.observe(now, audio.frames(), errors) else {
                return;
            };
            if let Some(audio) = self.audio.take() {
                self.last_audio = Some(audio.status(self.restarts));
                self.last_engine = Some(audio.control.snapshot());
                audio.stop_now();
            }
            self.enter_recovery(why);
            return;
        }
        let Some(recovery) = self.recovery.as_mut() else {
            return;
        };
        if now < recovery.next_try {
            return;
        }
        recovery.attempts += 1;
        match RunningAudio::start(&self.link, &self.plan, self.generation, &self.source) {
            Ok(audio) => {
                let attempts = recovery.attempts;
                self.pacer.opened(Instant::now());
                info!(
                    "audio devices back after {:.1} s and {attempts} attempt(s): generation {} \
                     running on {}",
                    recovery.since.elapsed().as_secs_f64(),
                    self.generation,
                    audio.status(self.restarts).description
                );
                self.audio = Some(audio);
                self.recovery = None;
                self.recoveries += 1;
                self.restarts += 1;
                self.watch = DeviceWatch::new(Instant::now());
            }
            Err(e) => {
                let wait = self.pacer.failed();
                recovery.next_try = Instant::now() + wait;
                warn!(
                    "reopening the audio devices failed (attempt {}): {e}; next try in {:.1} s",
                    recovery.attempts,
                    wait.as_secs_f64()
                );
                self.last_retry_error = Some(e.to_string());
            }
        }
        self.publish();
    }

    fn reject(&mut self, why: String) {
        error!(
            "reload rejected, generation {} keeps running: {why}",
            self.generation
        );
        self.reloads.failed += 1;
        self.reloads.last_error = Some(why);
        self.publish();
    }

    /// Logs the engine's events and frees the filter sets it has finished with.
    fn pump_events(&mut self) {
        let Some(audio) = self.audio.as_mut() else {
            return;
        };
        audio.control.collect_returned();
        audio.log_realtime_once();
        let errors = audio.status(self.restarts).stream_errors;
        // At most one line a second: a failing backend can report thousands of errors a tick.
        let quiet = self
            .last_error_log
            .is_some_and(|t| t.elapsed() < Duration::from_secs(1));
        if errors > self.seen_stream_errors && !quiet {
            self.last_error_log = Some(Instant::now());
            warn!(
                "the audio device reported {} more stream error(s) ({} in all)",
                errors - self.seen_stream_errors,
                errors
            );
            self.seen_stream_errors = errors;
        }
        let faults = audio
            .control
            .stats()
            .input_faults
            .load(std::sync::atomic::Ordering::Relaxed);
        let quiet = self
            .last_fault_log
            .is_some_and(|t| t.elapsed() < Duration::from_secs(1));
        if faults < self.seen_input_faults {
            // The streams were restarted: the engine's counters begin again.
            self.seen_input_faults = 0;
        }
        if faults > self.seen_input_faults && !quiet {
            self.last_fault_log = Some(Instant::now());
            warn!(
                "the input carried {} more sample(s) that are not audio (NaN, ∞ or beyond \
                 ±1000; {faults} in all): silenced before the filters, which keep running",
                faults - self.seen_input_faults
            );
            self.seen_input_faults = faults;
        }
        for event in audio.control.drain_events() {
            match event {
                EngineEvent::SwapStarted { generation } => {
                    info!("crossfade to generation {generation} started")
                }
                EngineEvent::SwapCompleted { generation } => {
                    info!("generation {generation} is running")
                }
                EngineEvent::SwapAborted { generation } => warn!(
                    "generation {generation} ran away during its crossfade and was dropped; \
                     the previous filters keep running"
                ),
                EngineEvent::InstabilityTrip {
                    generation,
                    channel,
                    non_finite,
                    fallback,
                    now_running,
                } => warn!(
                    "instability guard: generation {generation} {} on channel {channel}; that \
                     channel's linked group reset and fell back to {} (generation \
                     {now_running} running)",
                    if non_finite {
                        "produced a non-finite sample"
                    } else {
                        "ran beyond its own gain bound"
                    },
                    match fallback {
                        crate::engine::Fallback::LastGood => "the last good filters",
                        crate::engine::Fallback::Bypass => "bypass",
                    }
                ),
                EngineEvent::FadeOutComplete => {}
            }
        }
    }

    /// Renders the status document for the socket.
    fn publish(&self) {
        let (mut audio_status, engine, simulated) = match self.audio.as_ref() {
            Some(audio) => (
                audio.status(self.restarts),
                audio.control.snapshot(),
                audio.simulated(),
            ),
            // Devices lost: the last known figures, marked as recovering.
            None => match (&self.last_audio, &self.last_engine) {
                (Some(a), Some(e)) => (a.clone(), e.clone(), None),
                _ => return,
            },
        };
        if self.recovery.is_some() {
            audio_status.state = "recovering".to_string();
        }
        audio_status.device_losses = self.device_losses;
        audio_status.recoveries = self.recoveries;
        audio_status.last_loss = self.last_loss.clone();
        audio_status.last_retry_error = self.last_retry_error.clone();
        let status = ServiceStatus {
            schema: "redress-service-status",
            schema_version: super::status::STATUS_SCHEMA_VERSION,
            version: env!("CARGO_PKG_VERSION"),
            pid: std::process::id(),
            config_path: display(&self.options.config),
            config_generation: self.generation,
            uptime_seconds: self.started.elapsed().as_secs_f64(),
            audio: audio_status,
            reloads: self.reloads.clone(),
            paths: path_summaries(&self.plan),
            engine,
            simulated,
        };
        match serde_json::to_string(&status) {
            Ok(text) => {
                if let Ok(mut doc) = self.document.lock() {
                    *doc = Arc::new(text);
                }
            }
            Err(e) => warn!("could not render the status document: {e}"),
        }
    }
}

/// Reads, checks and designs the config at `path` (on the design worker thread).
fn design_config(path: &Path) -> Result<(Link, LinkPlan), String> {
    let link = load_link(path).map_err(|e| e.to_string())?;
    let plan = plan_link(&link);
    if !plan.is_runnable() {
        return Err(format!(
            "the new configuration cannot run: {}",
            plan.problems().join("; ")
        ));
    }
    Ok((link, plan))
}

fn display(path: &Path) -> String {
    path.display().to_string()
}
