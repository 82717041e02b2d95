//! `redress run`: start-up, then one event loop on the control thread until TERM/INT.
//!
//! The loop sleeps in crossbeam-channel's `select!` until something happens: a signal
//! (forwarded by `signals.rs`), a finished design from the worker thread, a status request from
//! the socket's client threads, or a timer — the next tick, the next attempt to reopen lost
//! devices, the next watchdog ping, the end of a bounded run. The tick drains the engine's
//! wait-free queues (events, finished filter sets), looks at the devices and refreshes what is
//! published. It comes every second while all is well ([`IDLE_TICK`]) and every
//! [`BUSY_TICK`] while something is under way (a crossfade, a set waiting for room, devices
//! that stopped delivering), so an idle service costs about one wake-up a second.

use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use crossbeam_channel::{never, select};
use log::{debug, info, warn};

use super::device_watch::{DeviceWatch, RecoveryPacer};
use super::metrics_file::MetricsFile;
use super::notify::Notifier;
use super::running::{ArmedDrill, AudioSource, RunningAudio};
use super::service::{Service, ServiceOptions, SourceChoice};
use super::signals::{forward_signals, ControlSignal};
use super::socket_path::{current_uid, prepare_default_socket};
use super::status::{path_summaries, ReloadStatus};
use super::status_server::{Published, SharedDocument, StatusServer, MAX_CLIENTS};
use super::totals::{PeakHold, RunningTotals};
use super::watchdog::WatchdogGate;
use super::ServiceError;
use crate::io::paced_link::check_true_link;
use crate::model::config::load_link;
use crate::pipeline::plan_link;

/// The tick while all is well.
pub const IDLE_TICK: Duration = Duration::from_secs(1);
/// The tick while something is under way.
pub const BUSY_TICK: Duration = Duration::from_millis(20);

/// Runs the service until TERM/INT (or `run_for`). Returns once the audio has faded out and
/// stopped. Errors only at start-up.
pub fn run_service(options: ServiceOptions) -> Result<(), ServiceError> {
    // Before any thread starts: with memory locked, glibc's per-thread arenas and moving
    // thresholds would keep design working sets locked (resident memory climbing by reloads).
    let tuned = crate::io::live::tune_allocator_for_locking();
    let signals = forward_signals().map_err(ServiceError::Signals)?;
    if current_uid() == Some(0) {
        warn!(
            "running as root: a service like this needs no privileges; run it as an ordinary \
             user (see the example systemd unit)"
        );
    }
    if !tuned {
        debug!("the C allocator took no tuning (not glibc): memory may climb across reloads");
    }
    let started = Instant::now();
    let link = load_link(&options.config).map_err(|e| ServiceError::Config(Box::new(e)))?;
    let plan = plan_link(&link);
    if !plan.is_runnable() {
        return Err(ServiceError::NotRunnable(
            crate::engine::EngineError::NotRunnable(plan.problems()),
        ));
    }
    let source = match &options.source {
        SourceChoice::Devices => AudioSource::Devices,
        SourceChoice::Simulated { truth, seed, drill } => {
            let truth = match truth {
                Some(p) => load_link(p).map_err(|e| ServiceError::Config(Box::new(e)))?,
                None => link.clone(),
            };
            check_true_link(&truth, &link).map_err(ServiceError::Simulation)?;
            AudioSource::Simulated {
                truth: Box::new(truth),
                seed: *seed,
                drill: drill.map(|drill| ArmedDrill {
                    drill,
                    origin: started,
                }),
            }
        }
    };
    // Until the first real document is published, clients are told to wait.
    let starting = Arc::new(
        serde_json::json!({ "error": "the service is starting; ask again shortly" }).to_string(),
    );
    let document: SharedDocument = Arc::new(Mutex::new(Published {
        status: Arc::clone(&starting),
        openmetrics: starting,
    }));
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
    let (request_tx, requests) = crossbeam_channel::bounded(MAX_CLIENTS);
    let server = StatusServer::start(&socket, Arc::clone(&document), request_tx)?;
    if matches!(source, AudioSource::Devices) {
        // Once, before the first sound; device recoveries and restarts do not repeat it.
        warn!("{}", super::caution::start_up_caution(&plan));
    }
    let audio = RunningAudio::start(&link, &plan, 1, &source)?;
    let metrics_file = options.metrics_file.as_deref().map(MetricsFile::new);
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
        started,
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
        totals: RunningTotals::default(),
        input_peaks: PeakHold::default(),
        output_peaks: PeakHold::default(),
        notifier: Notifier::default(),
        watchdog: None,
        reloading: false,
        busy: true,
        metrics_file,
    };
    // A metrics file that cannot be written is found now, not after months of empty graphs.
    if let Err(failure) = service.write_metrics_file(Instant::now(), true) {
        if let Some(audio) = service.audio.take() {
            audio.stop_now();
        }
        return Err(ServiceError::MetricsFile(failure.why));
    }
    info!(
        "running {} (generation 1) on {}; status on {}{}",
        service.options.config.display(),
        service.audio_description(),
        server.path().display(),
        service
            .metrics_file
            .as_ref()
            .map(|f| format!("; figures in {}", f.path().display()))
            .unwrap_or_default()
    );
    for p in path_summaries(&service.plan) {
        info!(
            "path `{}`: {} in {}; gives up: {}",
            p.label, p.method_name, p.structure_name, p.gives_up
        );
    }
    super::plan_details::log_plan_details(&service.plan);
    service.publish();
    let summary = service.summary();
    service.notifier.ready(&summary);
    if let Some(period) = Notifier::watchdog_period() {
        info!(
            "watchdog: the init system expects a sign of life every {:.1} s",
            period.as_secs_f64()
        );
        service.watchdog = Some(WatchdogGate::new(
            period,
            Instant::now(),
            service.lifetime_counters().frames,
        ));
    }

    let deadline = service.options.run_for.map(|d| started + d);
    let mut next_tick = Instant::now() + BUSY_TICK;
    loop {
        let now = Instant::now();
        let wake = [
            Some(next_tick),
            service.next_retry(),
            service.watchdog.as_ref().map(WatchdogGate::due),
            deadline,
        ]
        .into_iter()
        .flatten()
        // A watchdog ping held back (stalled audio) is looked at again on the next tick.
        .filter(|t| *t > now)
        .min()
        .unwrap_or(next_tick);
        let design = service.design.clone().unwrap_or_else(never);
        select! {
            recv(signals) -> signal => match signal {
                Ok(ControlSignal::Reload) => service.request_reload(),
                Ok(ControlSignal::Stop) | Err(_) => {
                    info!("stop requested: fading out");
                    break;
                }
            },
            recv(design) -> outcome => service.design_done(outcome.unwrap_or_else(|_| {
                Err("the design of the new configuration failed unexpectedly".to_string())
            })),
            recv(requests) -> request => {
                if let Ok(request) = request {
                    service.answer(request);
                }
            }
            default(wake.saturating_duration_since(now)) => {}
        }
        let now = Instant::now();
        // Something set under way by this event (a reload's crossfade, a set waiting for room)
        // is looked at soon, not after the rest of a long tick.
        if service.busy {
            next_tick = next_tick.min(now + BUSY_TICK);
        }
        if deadline.is_some_and(|d| now >= d) {
            if let Some(limit) = service.options.run_for {
                info!("run time of {:.1} s reached", limit.as_secs_f64());
            }
            break;
        }
        if now >= next_tick {
            service.tick(now);
            next_tick = now + if service.busy { BUSY_TICK } else { IDLE_TICK };
        }
        service.retry_devices();
        service.ping_watchdog(now);
    }
    service.notifier.stopping();
    // The engine's last events (a crossfade that finished since the last tick) reach the log.
    service.pump_events();
    let fade = Duration::from_secs_f64(service.link.runtime.engine.fade_out_ms / 1000.0);
    if let Some(audio) = service.audio.take() {
        let last = audio.fade_out_and_stop(fade * 2 + Duration::from_millis(200));
        service.totals.retire(&last);
    }
    // The figures as the service leaves them.
    let _ = service.write_metrics_file(Instant::now(), true);
    drop(server);
    info!("stopped");
    Ok(())
}

impl Service {
    /// Drains the engine's queues, looks at the devices and refreshes what is published.
    fn tick(&mut self, now: Instant) {
        self.busy = false;
        self.send_pending();
        if self.pending.is_some() {
            self.busy = true;
        }
        self.watch_devices();
        self.pump_events();
        self.publish();
        self.input_peaks.roll();
        self.output_peaks.roll();
        if let Err(failure) = self.write_metrics_file(now, false) {
            if failure.news {
                warn!("{}; the service carries on", failure.why);
            }
        }
    }

    /// Sends `WATCHDOG=1` when one is due and the audio is healthy (`watchdog.rs`).
    fn ping_watchdog(&mut self, now: Instant) {
        let Some(gate) = self.watchdog.as_ref() else {
            return;
        };
        if now < gate.due() {
            return;
        }
        let frames = self.lifetime_counters().frames;
        let recovering = self.recovery.is_some();
        if let Some(gate) = self.watchdog.as_mut() {
            if gate.should_ping(now, frames, recovering) {
                self.notifier.watchdog();
            }
        }
    }
}
