//! The status document the service publishes, and its human-readable rendering.

use serde::Serialize;
use serde_json::Value;

use crate::engine::StatsSnapshot;
use crate::pipeline::LinkPlan;

/// Everything `redress status` shows. Rendered to JSON by the control thread; the socket only
/// hands the rendered text out.
/// Bumped when a field is renamed, removed or changes meaning. Version 2 (the first with
/// `schema_version`; the unversioned document before it counts as 1): a path's `method` and
/// `structure` are keys, as in `check --json` and `bench --json`, with the plain words in
/// `method_name` and `structure_name` (version 1 had the plain words in `method` and
/// `structure`).
pub const STATUS_SCHEMA_VERSION: u32 = 2;

#[derive(Debug, Clone, Serialize)]
pub struct ServiceStatus {
    /// Always "redress-service-status".
    pub schema: &'static str,
    pub schema_version: u32,
    pub version: &'static str,
    pub pid: u32,
    pub config_path: String,
    /// Generation of the newest configuration that passed validation (1 at start).
    pub config_generation: u64,
    pub uptime_seconds: f64,
    pub audio: AudioStatus,
    pub reloads: ReloadStatus,
    pub paths: Vec<PathStatus>,
    pub engine: StatsSnapshot,
    /// Present when the audio is a simulated link.
    pub simulated: Option<SimulatedStatus>,
}

#[derive(Debug, Clone, Serialize)]
pub struct AudioStatus {
    /// "devices" or "simulated link".
    pub kind: String,
    pub description: String,
    pub sample_rate_hz: f64,
    pub channels: usize,
    pub block_frames: Option<usize>,
    /// Time one block lasts: the budget a callback must stay under (µs).
    pub block_period_us: Option<f64>,
    pub stream_errors: u64,
    /// Times the streams were restarted (device settings changed on reload).
    pub restarts: u64,
    /// "running", or "recovering" while lost devices are being reopened.
    pub state: String,
    /// Times the devices were found gone, and times they were got back.
    pub device_losses: u64,
    pub recoveries: u64,
    /// How the last loss was seen, and the last failed attempt to reopen, if any.
    pub last_loss: Option<String>,
    pub last_retry_error: Option<String>,
}

#[derive(Debug, Clone, Default, Serialize)]
pub struct ReloadStatus {
    pub succeeded: u64,
    pub failed: u64,
    pub last_error: Option<String>,
}

#[derive(Debug, Clone, Serialize)]
pub struct PathStatus {
    pub label: String,
    pub channels: Vec<usize>,
    /// "exact", "minimum_phase" or "least_squares_fir", and the same in plain words.
    pub method: String,
    pub method_name: String,
    /// "direct_form_2t", "sections" or "lattice_ladder", and the same in plain words.
    pub structure: String,
    pub structure_name: String,
    pub peak_boost_db: f64,
    pub added_latency_samples: usize,
    pub residual_delay_samples: usize,
    pub gives_up: String,
}

#[derive(Debug, Clone, Serialize)]
pub struct SimulatedStatus {
    pub error_before_db: f64,
    pub error_after_db: f64,
    pub late_blocks: u64,
}

/// One line per path of a runnable plan.
pub fn path_summaries(plan: &LinkPlan) -> Vec<PathStatus> {
    plan.paths
        .iter()
        .filter_map(|p| {
            let realization = p.runnable()?;
            let design = p.design.as_ref()?.as_ref().ok()?;
            Some(PathStatus {
                label: p.path.label.clone(),
                channels: p.path.channels.clone(),
                method: key(design.method),
                method_name: design.method.name().to_string(),
                structure: key(realization.structure),
                structure_name: realization.structure.name().to_string(),
                peak_boost_db: design.peak_boost_db,
                added_latency_samples: design.added_latency_samples,
                residual_delay_samples: design.residual_delay_samples,
                gives_up: design.gives_up(),
            })
        })
        .collect()
}

/// The JSON key of a choice: its serde spelling, the one `check --json` uses too.
fn key<T: Serialize>(choice: T) -> String {
    serde_json::to_value(choice)
        .ok()
        .and_then(|v| v.as_str().map(str::to_string))
        .unwrap_or_default()
}

/// Human-readable text of a status document (as received over the socket).
pub fn render_status_text(doc: &Value) -> String {
    let s = |v: &Value| v.as_str().unwrap_or("?").to_string();
    let f = |v: &Value| v.as_f64().unwrap_or(f64::NAN);
    let u = |v: &Value| v.as_u64().unwrap_or(0);
    let mut out = String::new();
    let audio = &doc["audio"];
    let engine = &doc["engine"];
    out.push_str(&format!(
        "redress {} (pid {}), up {:.1} s\n",
        s(&doc["version"]),
        u(&doc["pid"]),
        f(&doc["uptime_seconds"])
    ));
    out.push_str(&format!(
        "config       {} — generation {} loaded, generation {} running\n",
        s(&doc["config_path"]),
        u(&doc["config_generation"]),
        u(&engine["running_generation"])
    ));
    out.push_str(&format!(
        "reloads      {} succeeded, {} failed\n",
        u(&doc["reloads"]["succeeded"]),
        u(&doc["reloads"]["failed"]),
    ));
    if let Some(error) = doc["reloads"]["last_error"].as_str() {
        // The whole error: where, why and the help line, indented under its heading.
        out.push_str(&format!(
            "last error   {}\n",
            error.replace('\n', "\n             ")
        ));
    }
    out.push_str(&format!(
        "audio        {}: {}, {} Hz, {} channel(s){}\n",
        s(&audio["kind"]),
        s(&audio["description"]),
        f(&audio["sample_rate_hz"]),
        u(&audio["channels"]),
        audio["block_frames"]
            .as_u64()
            .map(|b| format!(", {b}-frame blocks"))
            .unwrap_or_default()
    ));
    if audio["state"].as_str() == Some("recovering") {
        out.push_str(&format!(
            "             DEVICES LOST, reopening with back-off: {}{}\n",
            s(&audio["last_loss"]),
            audio["last_retry_error"]
                .as_str()
                .map(|e| format!(" (last try: {e})"))
                .unwrap_or_default()
        ));
    }
    if u(&audio["device_losses"]) > 0 {
        out.push_str(&format!(
            "             devices lost {} time(s), recovered {} time(s)\n",
            u(&audio["device_losses"]),
            u(&audio["recoveries"])
        ));
    }
    let period = audio["block_period_us"].as_f64();
    out.push_str(&format!(
        "callback     p50 {:.1} µs, p99 {:.1} µs, max {:.1} µs{}\n",
        f(&engine["callback_p50_us"]),
        f(&engine["callback_p99_us"]),
        f(&engine["callback_max_us"]),
        period
            .map(|p| format!(
                " of a {p:.0} µs block ({:.1}% at p99)",
                100.0 * f(&engine["callback_p99_us"]) / p
            ))
            .unwrap_or_default()
    ));
    out.push_str(&format!(
        "xruns        {} input overrun(s), {} output underrun(s), {} stream error(s)\n",
        u(&engine["input_overruns"]),
        u(&engine["output_underruns"]),
        u(&audio["stream_errors"])
    ));
    out.push_str(&format!(
        "guards       {} clipped sample(s), {} limited, {} instability trip(s) ({} non-finite), \
         fallbacks: {} to last good, {} to bypass{}\n",
        u(&engine["clipped_samples"]),
        u(&engine["limited_samples"]),
        u(&engine["instability_trips"]),
        u(&engine["non_finite_trips"]),
        u(&engine["fallbacks_last_good"]),
        u(&engine["fallbacks_bypass"]),
        match u(&engine["channels_on_fallback"]) {
            0 => String::new(),
            n => format!("; {n} channel(s) on a fallback now"),
        }
    ));
    out.push_str(&format!(
        "input        {} fault(s) silenced ({} NaN or ∞, the rest beyond ±1000)\n",
        u(&engine["input_faults"]),
        u(&engine["input_faults_non_finite"])
    ));
    out.push_str(&format!(
        "swaps        {} started, {} completed\n",
        u(&engine["swaps_started"]),
        u(&engine["swaps_completed"])
    ));
    let levels = |key: &str| -> String {
        engine[key]
            .as_array()
            .map(|a| {
                a.iter()
                    .map(|v| match v.as_f64() {
                        Some(db) if db.is_finite() => format!("{db:.1}"),
                        _ => "silent".to_string(),
                    })
                    .collect::<Vec<_>>()
                    .join(" / ")
            })
            .unwrap_or_default()
    };
    out.push_str(&format!(
        "levels       in {} dBFS, out {} dBFS (peaks over the last second or so)\n",
        levels("input_peak_dbfs"),
        levels("output_peak_dbfs")
    ));
    if let Some(sim) = doc["simulated"].as_object() {
        let before = sim.get("error_before_db").map_or(f64::NAN, f);
        let after = sim.get("error_after_db").map_or(f64::NAN, f);
        if before.is_finite() && after.is_finite() {
            out.push_str(&format!(
                "link error   {before:.1} dB before correction, {after:.1} dB after (running, \
                 0.25 s window)\n"
            ));
        } else {
            out.push_str("link error   not measured yet (settling)\n");
        }
    }
    if let Some(paths) = doc["paths"].as_array() {
        for p in paths {
            let channels: Vec<String> = p["channels"]
                .as_array()
                .map(|c| {
                    c.iter()
                        .map(|x| x.as_u64().unwrap_or(0).to_string())
                        .collect()
                })
                .unwrap_or_default();
            out.push_str(&format!(
                "path         {} (audio channel{} {}): {} in {}, peak boost {:.1} dB, added \
                 latency {} sample(s)\n",
                s(&p["label"]),
                if channels.len() == 1 { "" } else { "s" },
                channels.join(", "),
                s(&p["method_name"]),
                s(&p["structure_name"]),
                f(&p["peak_boost_db"]),
                u(&p["added_latency_samples"])
            ));
            out.push_str(&format!("               gives up: {}\n", s(&p["gives_up"])));
        }
    }
    out
}
