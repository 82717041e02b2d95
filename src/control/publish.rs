//! What the control side tells the outside: the status document and the figures (for the
//! socket and the metrics file), and the one-line summary the init system shows.

use std::sync::Arc;
use std::time::Instant;

use log::warn;

use super::metrics::{render_metrics, Exposition, MetricsView};
use super::metrics_file::WriteFailure;
use super::realtime_threads::realtime_thread_count;
use super::service::Service;
use super::status::{path_summaries, ServiceStatus};
use super::status_server::{Published, RequestKind, StatusRequest};
use super::totals::EngineCounters;

/// dBFS of a linear peak (−∞ for silence, as the engine's own meters report it).
fn dbfs(peak: f64) -> f64 {
    20.0 * peak.log10()
}

impl Service {
    /// Renders the status document and the figures, keeps them for the socket's fallback, and
    /// returns them. Each call reads the engine's peak meters (which restart from there).
    pub(super) fn publish(&mut self) -> Published {
        let (mut audio_status, mut engine, simulated) = match self.audio.as_ref() {
            Some(audio) => (
                audio.status(self.restarts),
                audio.control.snapshot(),
                audio.simulated(),
            ),
            // Devices lost: the last known figures, marked as recovering.
            None => match (&self.last_audio, &self.last_engine) {
                (Some(a), Some(e)) => (a.clone(), e.clone(), None),
                _ => return self.published(),
            },
        };
        if self.audio.is_some() {
            let linear = |db: &[f64]| -> Vec<f64> {
                db.iter().map(|d| 10f64.powf(d / 20.0)).collect::<Vec<_>>()
            };
            self.input_peaks.add(&linear(&engine.input_peak_dbfs));
            self.output_peaks.add(&linear(&engine.output_peak_dbfs));
        }
        engine.input_peak_dbfs = self.input_peaks.levels().into_iter().map(dbfs).collect();
        engine.output_peak_dbfs = self.output_peaks.levels().into_iter().map(dbfs).collect();
        if self.recovery.is_some() {
            audio_status.state = "recovering".to_string();
        }
        audio_status.device_losses = self.device_losses;
        audio_status.recoveries = self.recoveries;
        audio_status.last_loss = self.last_loss.clone();
        audio_status.last_retry_error = self.last_retry_error.clone();
        let view = self.metrics_view(engine.running_generation, engine.channels_on_fallback);
        let status = ServiceStatus {
            schema: "redress-service-status",
            schema_version: super::status::STATUS_SCHEMA_VERSION,
            version: env!("CARGO_PKG_VERSION"),
            pid: std::process::id(),
            config_path: self.options.config.display().to_string(),
            config_generation: self.generation,
            uptime_seconds: self.started.elapsed().as_secs_f64(),
            audio: audio_status,
            reloads: self.reloads.clone(),
            paths: path_summaries(&self.plan),
            engine,
            simulated,
        };
        let status = match serde_json::to_string(&status) {
            Ok(text) => Arc::new(text),
            Err(e) => {
                warn!("could not render the status document: {e}");
                return self.published();
            }
        };
        let published = Published {
            status,
            openmetrics: Arc::new(render_metrics(&view, Exposition::OpenMetrics)),
        };
        if let Ok(mut doc) = self.document.lock() {
            *doc = published.clone();
        }
        let summary = self.summary();
        if !self.reloading {
            self.notifier.status(&summary);
        }
        published
    }

    /// The last answers published.
    fn published(&self) -> Published {
        match self.document.lock() {
            Ok(doc) => doc.clone(),
            Err(poisoned) => poisoned.into_inner().clone(),
        }
    }

    /// Answers a status request with fresh documents.
    pub(super) fn answer(&mut self, request: StatusRequest) {
        let published = self.publish();
        let text = match request.kind {
            RequestKind::Status => published.status,
            RequestKind::OpenMetrics => published.openmetrics,
        };
        // The client may have given up waiting: nothing to do then.
        let _ = request.reply.try_send(text);
    }

    /// The service's counters over its whole life.
    pub(super) fn lifetime_counters(&self) -> EngineCounters {
        let running = self.audio.as_ref().map(|a| a.counters());
        self.totals.with(running.as_ref())
    }

    fn metrics_view(&self, running_generation: u64, channels_on_fallback: u64) -> MetricsView {
        let callback_max_seconds = self.audio.as_ref().map_or(0.0, |a| {
            a.control
                .stats()
                .callback_time_max_ns
                .load(std::sync::atomic::Ordering::Relaxed) as f64
                / 1e9
        });
        MetricsView {
            totals: self.lifetime_counters(),
            uptime_seconds: self.started.elapsed().as_secs_f64(),
            config_generation: self.generation,
            running_generation,
            reloads_ok: self.reloads.succeeded,
            reloads_failed: self.reloads.failed,
            device_losses: self.device_losses,
            device_recoveries: self.recoveries,
            stream_restarts: self.restarts,
            recovering: self.recovery.is_some(),
            channels_on_fallback,
            input_peaks: self.input_peaks.levels(),
            output_peaks: self.output_peaks.levels(),
            callback_max_seconds,
            realtime_threads: realtime_thread_count(),
        }
    }

    /// The figures in the Prometheus text format (for the metrics file).
    fn prometheus_text(&self) -> String {
        let (running, on_fallback) = self.audio.as_ref().map_or((0, 0), |a| {
            let s = a.control.stats();
            let load =
                |x: &std::sync::atomic::AtomicU64| x.load(std::sync::atomic::Ordering::Relaxed);
            (load(&s.running_generation), load(&s.channels_on_fallback))
        });
        render_metrics(
            &self.metrics_view(running, on_fallback),
            Exposition::PrometheusText,
        )
    }

    /// Rewrites the metrics file if it is due (or regardless, with `force`).
    pub(super) fn write_metrics_file(
        &mut self,
        now: Instant,
        force: bool,
    ) -> Result<(), WriteFailure> {
        let due = self
            .metrics_file
            .as_ref()
            .is_some_and(|f| force || f.due(now));
        if !due {
            return Ok(());
        }
        let text = self.prometheus_text();
        match self.metrics_file.as_mut() {
            Some(file) => file.write(&text, now),
            None => Ok(()),
        }
    }

    /// One line for the init system: what runs, in what state, and the guards' record.
    pub(super) fn summary(&self) -> String {
        let totals = self.lifetime_counters();
        let running = self.audio.as_ref().map_or(0, |a| {
            a.control
                .stats()
                .running_generation
                .load(std::sync::atomic::Ordering::Relaxed)
        });
        let state = if self.recovery.is_some() {
            "devices lost, reopening with back-off".to_string()
        } else {
            format!("generation {running} running")
        };
        format!(
            "{state}; generation {} loaded; {} guard trip(s), {} fallback(s); reloads {} ok, {} \
             failed",
            self.generation,
            totals.instability_trips,
            totals.fallbacks_last_good + totals.fallbacks_bypass,
            self.reloads.succeeded,
            self.reloads.failed
        )
    }
}
