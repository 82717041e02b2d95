//! The service's figures in the text exposition formats monitoring systems read: OpenMetrics
//! 1.0 (`redress status --openmetrics`) and the Prometheus text format 0.0.4 that the node
//! exporter's textfile collector reads (`redress run --metrics-file`). The two differ only in
//! how a counter's family is named in its `# TYPE` and `# HELP` lines, in `# UNIT` lines and in
//! the closing `# EOF`; the samples are the same.
//!
//! Names follow the formats' conventions: a `redress_` prefix, snake_case, base units (seconds,
//! ratios of full scale), `_total` on counters. Every counter is a running total over the
//! service's life (`totals.rs`): it never goes down across reloads, stream restarts or device
//! losses.

use std::fmt::Write;

use super::totals::EngineCounters;
use crate::engine::TIME_BUCKETS;

/// Which text format to write.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Exposition {
    /// OpenMetrics 1.0 (media type `application/openmetrics-text; version=1.0.0`).
    OpenMetrics,
    /// The Prometheus text format 0.0.4 (`text/plain; version=0.0.4`), for textfile collectors.
    PrometheusText,
}

/// Everything the metrics show, gathered by the control thread.
#[derive(Debug, Clone, Default)]
pub struct MetricsView {
    /// Totals over the service's life.
    pub totals: EngineCounters,
    pub uptime_seconds: f64,
    pub config_generation: u64,
    pub running_generation: u64,
    pub reloads_ok: u64,
    pub reloads_failed: u64,
    pub device_losses: u64,
    pub device_recoveries: u64,
    pub stream_restarts: u64,
    pub recovering: bool,
    pub channels_on_fallback: u64,
    /// Peak |x| and |y| per channel over the last second or so, relative to full scale.
    pub input_peaks: Vec<f64>,
    pub output_peaks: Vec<f64>,
    /// Longest callback of the running engine (seconds).
    pub callback_max_seconds: f64,
    /// Threads of the process under a real-time scheduling policy, where that could be read.
    pub realtime_threads: Option<u64>,
}

/// The histogram's bucket bounds: every fourth of the engine's quarter-octave buckets, so each
/// bound is an exact bucket edge (2, 4, 8 … 65 536 µs) and the counts are exact, not spread.
const OCTAVE: usize = 4;

/// Upper edge of the engine's bucket `i` (µs): bucket i holds [2^(i/4), 2^((i+1)/4)) µs.
fn bucket_edge_us(i: usize) -> f64 {
    2f64.powf((i + 1) as f64 / 4.0)
}

#[derive(Clone, Copy, PartialEq, Eq)]
enum Kind {
    Counter,
    Gauge,
    Histogram,
    Summary,
}

impl Kind {
    fn word(self) -> &'static str {
        match self {
            Kind::Counter => "counter",
            Kind::Gauge => "gauge",
            Kind::Histogram => "histogram",
            Kind::Summary => "summary",
        }
    }
}

struct Writer {
    out: String,
    format: Exposition,
}

impl Writer {
    /// Opens a family: its `# TYPE`, `# UNIT` (OpenMetrics) and `# HELP` lines.
    fn family(&mut self, name: &str, kind: Kind, help: &str) {
        let listed = match (self.format, kind) {
            (Exposition::PrometheusText, Kind::Counter) => format!("{name}_total"),
            _ => name.to_string(),
        };
        let _ = writeln!(self.out, "# TYPE {listed} {}", kind.word());
        if self.format == Exposition::OpenMetrics && name.ends_with("_seconds") {
            let _ = writeln!(self.out, "# UNIT {listed} seconds");
        }
        let _ = writeln!(self.out, "# HELP {listed} {help}");
    }

    fn sample(&mut self, name: &str, labels: &[(&str, &str)], value: f64) {
        self.out.push_str(name);
        if !labels.is_empty() {
            let list: Vec<String> = labels
                .iter()
                .map(|(k, v)| format!("{k}=\"{}\"", escape(v)))
                .collect();
            let _ = write!(self.out, "{{{}}}", list.join(","));
        }
        let _ = writeln!(self.out, " {}", number(value));
    }

    /// A counter family with one sample per label set.
    fn counter(&mut self, name: &str, help: &str, samples: &[(&[(&str, &str)], u64)]) {
        self.family(name, Kind::Counter, help);
        for (labels, v) in samples {
            self.sample(&format!("{name}_total"), labels, *v as f64);
        }
    }

    fn gauge(&mut self, name: &str, help: &str, value: f64) {
        self.family(name, Kind::Gauge, help);
        self.sample(name, &[], value);
    }

    fn per_channel(&mut self, name: &str, help: &str, values: &[f64]) {
        self.family(name, Kind::Gauge, help);
        for (c, v) in values.iter().enumerate() {
            self.sample(name, &[("channel", &c.to_string())], *v);
        }
    }
}

/// A sample value as both formats write it: integers without a fraction, `NaN`, `+Inf`.
fn number(v: f64) -> String {
    if v.is_nan() {
        "NaN".into()
    } else if v.is_infinite() {
        if v > 0.0 { "+Inf" } else { "-Inf" }.into()
    } else {
        format!("{v}")
    }
}

/// Label values escape backslash, double quote and line feed (both formats).
fn escape(v: &str) -> String {
    v.replace('\\', "\\\\")
        .replace('"', "\\\"")
        .replace('\n', "\\n")
}

/// A callback-time quantile from the histogram: the upper edge of the bucket it falls in (a
/// conservative reading), never above the longest callback seen when that is known.
fn quantile_seconds(counts: &[u64; TIME_BUCKETS], q: f64, max_seconds: f64) -> f64 {
    let total: u64 = counts.iter().sum();
    if total == 0 {
        return 0.0;
    }
    let target = ((q * total as f64).ceil() as u64).max(1);
    let mut seen = 0;
    let mut edge = bucket_edge_us(TIME_BUCKETS - 1);
    for (i, c) in counts.iter().enumerate() {
        seen += c;
        if seen >= target {
            edge = bucket_edge_us(i);
            break;
        }
    }
    let seconds = edge / 1e6;
    if max_seconds > 0.0 {
        seconds.min(max_seconds)
    } else {
        seconds
    }
}

/// Renders the figures in `format`.
pub fn render_metrics(view: &MetricsView, format: Exposition) -> String {
    let t = &view.totals;
    let mut w = Writer {
        out: String::with_capacity(8192),
        format,
    };
    w.gauge(
        "redress_uptime_seconds",
        "Time since the service started.",
        view.uptime_seconds,
    );
    w.gauge(
        "redress_config_generation",
        "Generation of the newest configuration that passed validation (1 at start).",
        view.config_generation as f64,
    );
    w.gauge(
        "redress_running_generation",
        "Generation of the filter set the engine runs now (0: bypass).",
        view.running_generation as f64,
    );
    w.counter(
        "redress_reloads",
        "Configuration reloads, by result.",
        &[
            (&[("result", "ok")], view.reloads_ok),
            (&[("result", "failed")], view.reloads_failed),
        ],
    );
    w.counter(
        "redress_processed_frames",
        "Audio frames the engine has processed.",
        &[(&[], t.frames)],
    );
    w.counter(
        "redress_xrun_samples",
        "Samples lost to device trouble: input overruns and output underruns.",
        &[
            (&[("direction", "input")], t.input_overruns),
            (&[("direction", "output")], t.output_underruns),
        ],
    );
    w.counter(
        "redress_stream_errors",
        "Errors the audio devices reported.",
        &[(&[], t.stream_errors)],
    );
    w.counter(
        "redress_clipped_samples",
        "Output samples at or beyond full scale before the clip guard acted.",
        &[(&[], t.clipped_samples)],
    );
    w.counter(
        "redress_limited_samples",
        "Output samples the clip guard changed (limited or gain-reduced).",
        &[(&[], t.limited_samples)],
    );
    let gain_bound = t.instability_trips.saturating_sub(t.non_finite_trips);
    w.counter(
        "redress_guard_trips",
        "Instability guard trips, by cause: output beyond the filter's own gain bound, or not finite.",
        &[
            (&[("cause", "gain_bound")], gain_bound),
            (&[("cause", "non_finite")], t.non_finite_trips),
        ],
    );
    w.counter(
        "redress_guard_fallbacks",
        "Linked groups moved to a fallback after a trip, by fallback.",
        &[
            (&[("fallback", "last_good")], t.fallbacks_last_good),
            (&[("fallback", "bypass")], t.fallbacks_bypass),
        ],
    );
    w.gauge(
        "redress_channels_on_fallback",
        "Audio channels playing a fallback (the last good filters or bypass) now.",
        view.channels_on_fallback as f64,
    );
    let out_of_range = t.input_faults.saturating_sub(t.input_faults_non_finite);
    w.counter(
        "redress_input_faults",
        "Input samples that were not audio, silenced before the filters, by kind.",
        &[
            (&[("kind", "non_finite")], t.input_faults_non_finite),
            (&[("kind", "out_of_range")], out_of_range),
        ],
    );
    w.counter(
        "redress_swaps",
        "Filter set swaps (warm-up and crossfade), started and completed.",
        &[
            (&[("stage", "started")], t.swaps_started),
            (&[("stage", "completed")], t.swaps_completed),
        ],
    );
    w.counter(
        "redress_engine_events_dropped",
        "Engine events lost because the control side did not collect them in time.",
        &[(&[], t.events_dropped)],
    );
    w.counter(
        "redress_device_losses",
        "Times the audio devices were found gone.",
        &[(&[], view.device_losses)],
    );
    w.counter(
        "redress_device_recoveries",
        "Times the audio devices were opened again after a loss.",
        &[(&[], view.device_recoveries)],
    );
    w.counter(
        "redress_stream_restarts",
        "Times the audio streams were restarted (device settings changed, or a recovery).",
        &[(&[], view.stream_restarts)],
    );
    w.gauge(
        "redress_devices_recovering",
        "1 while lost audio devices are being reopened with back-off, else 0.",
        if view.recovering { 1.0 } else { 0.0 },
    );
    if let Some(n) = view.realtime_threads {
        w.gauge(
            "redress_realtime_threads",
            "Threads of the service running under a real-time scheduling policy (0: no real-time grant).",
            n as f64,
        );
    }
    callback_time(&mut w, view);
    w.per_channel(
        "redress_input_peak_ratio",
        "Peak input level over the last second or so, relative to full scale, per audio channel.",
        &view.input_peaks,
    );
    w.per_channel(
        "redress_output_peak_ratio",
        "Peak output level over the last second or so, relative to full scale, per audio channel.",
        &view.output_peaks,
    );
    if format == Exposition::OpenMetrics {
        w.out.push_str("# EOF\n");
    }
    w.out
}

/// The callback time: a histogram with fixed bounds, a summary of its quantiles, and the
/// longest callback of the running engine.
fn callback_time(w: &mut Writer, view: &MetricsView) {
    let t = &view.totals;
    let count = t.callbacks();
    let sum = t.callback_time_ns as f64 / 1e9;
    let name = "redress_callback_duration_seconds";
    w.family(
        name,
        Kind::Histogram,
        "Time the engine took per audio callback (fixed octave buckets).",
    );
    let mut cumulative = 0;
    for (i, c) in t.callback_buckets.iter().enumerate() {
        cumulative += c;
        if (i + 1) % OCTAVE == 0 && i + 1 < TIME_BUCKETS {
            let le = number(bucket_edge_us(i) / 1e6);
            w.sample(&format!("{name}_bucket"), &[("le", &le)], cumulative as f64);
        }
    }
    w.sample(&format!("{name}_bucket"), &[("le", "+Inf")], count as f64);
    w.sample(&format!("{name}_count"), &[], count as f64);
    w.sample(&format!("{name}_sum"), &[], sum);

    let name = "redress_callback_quantiles_seconds";
    w.family(
        name,
        Kind::Summary,
        "Quantiles of the time per audio callback (upper edges of quarter-octave buckets).",
    );
    for (q, label) in [(0.5, "0.5"), (0.99, "0.99"), (0.999, "0.999")] {
        let v = quantile_seconds(&t.callback_buckets, q, view.callback_max_seconds);
        w.sample(name, &[("quantile", label)], v);
    }
    w.sample(&format!("{name}_count"), &[], count as f64);
    w.sample(&format!("{name}_sum"), &[], sum);
    w.gauge(
        "redress_callback_max_seconds",
        "Longest audio callback of the running engine.",
        view.callback_max_seconds,
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    fn view() -> MetricsView {
        let mut totals = EngineCounters {
            frames: 96_000,
            output_underruns: 12,
            ..EngineCounters::default()
        };
        // 10 callbacks in [1, 1.19) µs, 5 in [16, 19) µs (bucket 16), 1 in [4096, 4871) µs.
        totals.callback_buckets[0] = 10;
        totals.callback_buckets[16] = 5;
        totals.callback_buckets[48] = 1;
        totals.callback_time_ns = 10 * 1_100 + 5 * 17_000 + 4_500_000;
        MetricsView {
            totals,
            uptime_seconds: 2.0,
            config_generation: 1,
            running_generation: 1,
            input_peaks: vec![0.5, 0.25],
            output_peaks: vec![0.5, 0.25],
            callback_max_seconds: 0.0045,
            ..MetricsView::default()
        }
    }

    fn value(text: &str, sample: &str) -> f64 {
        text.lines()
            .find_map(|l| l.strip_prefix(sample)?.strip_prefix(' '))
            .unwrap_or_else(|| panic!("no {sample} in\n{text}"))
            .parse()
            .unwrap()
    }

    // Source: OpenMetrics 1.0 specification (histogram buckets are cumulative, the +Inf bucket
    // equals _count; counters' samples end in _total; the exposition ends with # EOF).
    #[test]
    fn the_histogram_is_cumulative_over_fixed_bounds() {
        let text = render_metrics(&view(), Exposition::OpenMetrics);
        let b = |le: &str| {
            value(
                &text,
                &format!("redress_callback_duration_seconds_bucket{{le=\"{le}\"}}"),
            )
        };
        assert_eq!(b("0.000002"), 10.0);
        assert_eq!(b("0.000016"), 10.0);
        assert_eq!(b("0.000032"), 15.0);
        assert_eq!(b("0.004096"), 15.0);
        assert_eq!(b("0.008192"), 16.0);
        assert_eq!(b("+Inf"), 16.0);
        assert_eq!(
            value(&text, "redress_callback_duration_seconds_count"),
            16.0
        );
        assert!(text.ends_with("# EOF\n"));
        assert!(text.contains("# TYPE redress_reloads counter\n"));
        assert!(text.contains("# UNIT redress_uptime_seconds seconds\n"));
    }

    // Source: Prometheus text exposition format 0.0.4 (a counter's TYPE line names the sample,
    // `_total` included; no UNIT lines, no EOF).
    #[test]
    fn the_prometheus_text_names_counters_with_their_suffix() {
        let text = render_metrics(&view(), Exposition::PrometheusText);
        assert!(text.contains("# TYPE redress_xrun_samples_total counter\n"));
        assert!(text.contains("redress_xrun_samples_total{direction=\"output\"} 12\n"));
        assert!(!text.contains("# EOF") && !text.contains("# UNIT"));
    }

    #[test]
    fn quantiles_come_from_the_buckets_and_never_exceed_the_longest_callback() {
        let text = render_metrics(&view(), Exposition::OpenMetrics);
        let q = |l: &str| {
            value(
                &text,
                &format!("redress_callback_quantiles_seconds{{quantile=\"{l}\"}}"),
            )
        };
        // 10 of 16 callbacks fall in bucket 0, whose upper edge is 2^(1/4) µs.
        assert!((q("0.5") - 2f64.powf(0.25) / 1e6).abs() < 1e-15);
        // The slowest callback's bucket edge (4871 µs) is above the measured 4.5 ms maximum.
        assert_eq!(q("0.999"), 0.0045);
    }
}
