//! `redress run`: the state of the live service's control side, and what it does on each event.
//!
//! It owns every slow or fallible step — reading and checking the config, designing, rounding,
//! building filter sets, logging, answering status requests — and talks to the audio thread
//! only through the engine's queues and counters. Nothing that goes wrong after start-up stops
//! the audio: a bad reload is logged and the running filters carry on. The loop that drives it
//! is in `event_loop.rs`; what it publishes (status, figures, notifications) in `publish.rs`.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use crossbeam_channel::Receiver;
use log::{debug, error, info, warn};

use super::device_watch::{DeviceWatch, Health, RecoveryPacer};
use super::fault_drill::FaultDrill;
use super::metrics_file::MetricsFile;
use super::notify::Notifier;
use super::running::{AudioSource, RunningAudio};
use super::status::{path_summaries, AudioStatus, ReloadStatus};
use super::status_server::SharedDocument;
use super::totals::{PeakHold, RunningTotals};
use super::watchdog::WatchdogGate;
use crate::engine::{EngineEvent, Equalizer, StatsSnapshot};
use crate::io::paced_link::check_true_link;
use crate::model::config::load_link;
use crate::model::Link;
use crate::pipeline::{plan_link, LinkPlan};

/// What `redress run` was asked to do.
#[derive(Debug, Clone)]
pub struct ServiceOptions {
    pub config: PathBuf,
    /// The status socket; `None` for the default (see `default_socket_path`).
    pub socket: Option<PathBuf>,
    pub source: SourceChoice,
    /// Stop by itself after this long (demos and tests); `None` runs until TERM/INT.
    pub run_for: Option<Duration>,
    /// Rewrite this file with the figures (Prometheus text format) every few seconds.
    pub metrics_file: Option<PathBuf>,
}

/// Where the audio comes from.
#[derive(Debug, Clone)]
pub enum SourceChoice {
    Devices,
    /// A simulated link; `truth` names the config describing the real link (default: the
    /// config being run); `drill`, a fault to rehearse on it.
    Simulated {
        truth: Option<PathBuf>,
        seed: u64,
        drill: Option<FaultDrill>,
    },
}

/// The outcome of designing a reloaded config on the worker thread.
pub(super) type DesignOutcome = Result<(Link, LinkPlan), String>;

/// The service's state on the control thread.
pub(super) struct Service {
    pub(super) options: ServiceOptions,
    pub(super) source: AudioSource,
    pub(super) link: Link,
    pub(super) plan: LinkPlan,
    pub(super) generation: u64,
    pub(super) audio: Option<RunningAudio>,
    pub(super) reloads: ReloadStatus,
    pub(super) restarts: u64,
    /// Stream errors already logged, and when the last such line was written.
    pub(super) seen_stream_errors: u64,
    pub(super) last_error_log: Option<Instant>,
    /// Input faults already logged, and when the last such line was written.
    pub(super) seen_input_faults: u64,
    pub(super) last_fault_log: Option<Instant>,
    pub(super) started: Instant,
    pub(super) document: SharedDocument,
    /// A filter set accepted by a reload but not yet taken by the engine (its inbox was full:
    /// reloads came faster than crossfades). Replaced by a newer one; sent on a later tick.
    pub(super) pending: Option<Equalizer>,
    /// The design of a reloaded config, under way on a worker thread.
    pub(super) design: Option<Receiver<DesignOutcome>>,
    /// A HUP came while a design was under way: design again once it is done.
    pub(super) reload_again: bool,
    /// Watches the devices of the running streams for loss.
    pub(super) watch: DeviceWatch,
    /// Set while the devices are lost and being reopened.
    pub(super) recovery: Option<Recovery>,
    /// Paces the attempts to reopen, across losses.
    pub(super) pacer: RecoveryPacer,
    pub(super) device_losses: u64,
    pub(super) recoveries: u64,
    pub(super) last_loss: Option<String>,
    pub(super) last_retry_error: Option<String>,
    /// What was last published about the audio and the engine, shown while there is none.
    pub(super) last_audio: Option<AudioStatus>,
    pub(super) last_engine: Option<StatsSnapshot>,
    /// Counters of the engines retired so far (stream restarts, device losses).
    pub(super) totals: RunningTotals,
    /// Peak levels over at least one tick, per channel (linear).
    pub(super) input_peaks: PeakHold,
    pub(super) output_peaks: PeakHold,
    pub(super) notifier: Notifier,
    /// Present when the init system asked for watchdog pings.
    pub(super) watchdog: Option<WatchdogGate>,
    /// `RELOADING=1` was sent and its `READY=1` is still owed.
    pub(super) reloading: bool,
    /// The last tick saw something under way: look again soon rather than after the long tick.
    pub(super) busy: bool,
    pub(super) metrics_file: Option<MetricsFile>,
}

/// The devices are gone: when they went, when to try them again, and how many tries so far.
pub(super) struct Recovery {
    pub(super) since: Instant,
    pub(super) next_try: Instant,
    pub(super) attempts: u32,
}

impl Service {
    pub(super) fn audio_description(&self) -> String {
        self.audio
            .as_ref()
            .map(|a| a.status(self.restarts).description)
            .unwrap_or_default()
    }

    /// The running engine's final counters join the totals as it is stopped.
    fn retire(&mut self, counters: &super::totals::EngineCounters) {
        self.totals.retire(counters);
    }

    /// A HUP: starts reading and designing the config on a worker thread, so a long design
    /// (a high-order channel takes seconds) never stops the control loop from watching the
    /// devices, draining the engine's queues and answering status requests. A HUP that arrives
    /// while a design is under way asks for one more, of the file as it is then.
    pub(super) fn request_reload(&mut self) {
        if self.design.is_some() {
            debug!("reload requested while one is being designed: one more will follow");
            self.reload_again = true;
            return;
        }
        if !self.reloading {
            self.reloading = true;
            self.notifier.reloading();
        }
        let path = self.options.config.clone();
        info!("reload requested: reading {}", path.display());
        let (tx, rx) = crossbeam_channel::bounded(1);
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
                self.design_done(outcome);
            }
        }
    }

    /// A design finished (or its worker died): swap it in or reject it, start the next if
    /// another HUP came, and tell the init system the reload is over when none is left.
    pub(super) fn design_done(&mut self, outcome: DesignOutcome) {
        self.design = None;
        self.finish_reload(outcome);
        if std::mem::take(&mut self.reload_again) {
            self.request_reload();
        }
        if self.design.is_none() && self.reloading {
            self.reloading = false;
            let summary = self.summary();
            self.notifier.ready(&summary);
        }
    }

    /// Swaps in a designed configuration, or logs why it cannot be, keeping the running one.
    fn finish_reload(&mut self, outcome: DesignOutcome) {
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
                let last = old.fade_out_and_stop(fade * 2 + Duration::from_millis(200));
                self.retire(&last);
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
                    self.busy = true;
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
        // Look again soon: the crossfade's events, a set still waiting.
        self.busy = true;
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
    pub(super) fn send_pending(&mut self) {
        let (Some(set), Some(audio)) = (self.pending.take(), self.audio.as_mut()) else {
            return;
        };
        if let Err(set) = audio.control.send(set) {
            self.pending = Some(set);
        }
    }

    /// Notices lost devices (on a tick). The configuration, its plan and its generation stay
    /// as they are throughout; only the streams are rebuilt, by [`Service::retry_devices`].
    pub(super) fn watch_devices(&mut self) {
        let now = Instant::now();
        let Some(audio) = self.audio.as_mut() else {
            return;
        };
        if audio.rehearse_stall(now) {
            warn!("fault drill: the simulated stream stalls now, for good");
        }
        let Some(errors) = audio.device_errors() else {
            return;
        };
        let health = self.watch.observe(now, audio.frames(), errors);
        if !self.watch.settled() {
            self.busy = true;
        }
        let Health::Lost(why) = health else {
            return;
        };
        if let Some(audio) = self.audio.take() {
            self.last_audio = Some(audio.status(self.restarts));
            self.last_engine = Some(audio.control.snapshot());
            let last = audio.stop_now();
            self.retire(&last);
        }
        self.enter_recovery(why);
    }

    /// When the next attempt to reopen lost devices is due.
    pub(super) fn next_retry(&self) -> Option<Instant> {
        self.recovery.as_ref().map(|r| r.next_try)
    }

    /// Reopens lost devices once the back-off's wait is over.
    pub(super) fn retry_devices(&mut self) {
        let Some(recovery) = self.recovery.as_mut() else {
            return;
        };
        if Instant::now() < recovery.next_try {
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
                self.busy = true;
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
    pub(super) fn pump_events(&mut self) {
        let Some(audio) = self.audio.as_mut() else {
            return;
        };
        audio.control.collect_returned();
        let errors = audio.stream_error_count();
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
        let events = audio.control.drain_events();
        if !events.is_empty() {
            // Something is under way (a crossfade, a trip): look again soon.
            self.busy = true;
        }
        for event in events {
            log_event(event);
        }
    }
}

/// One log line per engine event.
fn log_event(event: EngineEvent) {
    match event {
        EngineEvent::SwapStarted { generation } => {
            info!("crossfade to generation {generation} started")
        }
        EngineEvent::SwapCompleted { generation } => {
            info!("generation {generation} is running")
        }
        EngineEvent::SwapAborted { generation } => warn!(
            "generation {generation} ran away during its crossfade and was dropped; the \
             previous filters keep running"
        ),
        EngineEvent::InstabilityTrip {
            generation,
            channel,
            non_finite,
            fallback,
            now_running,
        } => warn!(
            "instability guard: generation {generation} {} on channel {channel}; that \
             channel's linked group reset and fell back to {} (generation {now_running} \
             running)",
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

/// Reads, checks and designs the config at `path` (on the design worker thread).
pub(super) fn design_config(path: &Path) -> DesignOutcome {
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
