//! The service's figures for monitoring: `redress status --openmetrics` and the file
//! `--metrics-file` rewrites. A counter must never go down — not across a reload, not across a
//! reload that restarts the streams (a new engine counting from zero), not across a device loss
//! and reopening — and the callback time is a histogram with fixed, cumulative buckets.
//!
//! Source for the format rules checked here: the OpenMetrics 1.0 specification and the
//! Prometheus text exposition format 0.0.4 (counters end in `_total` and never decrease;
//! histogram buckets are cumulative, ordered by `le`, end with `+Inf`, which equals `_count`).
//! An outside parser reads the same samples in scripts/test.sh: with REDRESS_METRICS_SAMPLES_DIR
//! set, this test leaves each sample there (`NN-what.om`, and `metrics-file.prom`) for
//! prometheus_client (scripts/reference/check_metrics.py) and promtool.

mod service_support;

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::time::Duration;

use service_support::{start, temp_dir, Service, LINK_A, LINK_B};

/// LINK_B with other [engine] settings: taking it restarts the streams (a new engine).
fn link_b_restarting() -> String {
    format!("{LINK_B}\n[engine]\nfade_out_ms = 40\n")
}

/// The samples of one exposition: `name{labels}` → value.
fn samples(text: &str) -> BTreeMap<String, f64> {
    text.lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
        .map(|l| {
            let (key, value) = l.rsplit_once(' ').unwrap_or_else(|| panic!("{l:?}"));
            let value = match value {
                "+Inf" => f64::INFINITY,
                v => v.parse().unwrap_or_else(|_| panic!("{l:?}")),
            };
            (key.to_string(), value)
        })
        .collect()
}

/// Samples that must never decrease: counters, and a histogram's or summary's count and sum.
fn monotone(key: &str) -> bool {
    let name = key.split('{').next().unwrap();
    name.ends_with("_total")
        || name.ends_with("_bucket")
        || name.ends_with("_count")
        || name.ends_with("_sum")
}

struct Sampler {
    taken: Vec<(String, BTreeMap<String, f64>)>,
    keep: Option<PathBuf>,
}

impl Sampler {
    fn take(&mut self, svc: &Service, what: &str) -> BTreeMap<String, f64> {
        let text = redress::control::query_openmetrics(&svc.socket).expect("figures");
        assert!(text.ends_with("# EOF\n"), "{text}");
        if let Some(dir) = &self.keep {
            let name = format!("{:02}-{what}.om", self.taken.len());
            std::fs::write(dir.join(name), &text).unwrap();
        }
        let now = samples(&text);
        check_histogram(&now);
        if let Some((before_what, before)) = self.taken.last() {
            for (key, old) in before.iter().filter(|(k, _)| monotone(k)) {
                let new = now
                    .get(key)
                    .unwrap_or_else(|| panic!("{key} vanished after {what}"));
                assert!(
                    new >= old,
                    "{key} went down from {old} ({before_what}) to {new} ({what})"
                );
            }
        }
        self.taken.push((what.to_string(), now.clone()));
        now
    }
}

/// The callback-time histogram: cumulative over increasing bounds, +Inf last and equal to the
/// count.
fn check_histogram(s: &BTreeMap<String, f64>) {
    let prefix = "redress_callback_duration_seconds_bucket{le=\"";
    let mut buckets: Vec<(f64, f64)> = s
        .iter()
        .filter_map(|(k, v)| {
            let le = k.strip_prefix(prefix)?.strip_suffix("\"}")?;
            let le = if le == "+Inf" {
                f64::INFINITY
            } else {
                le.parse().unwrap()
            };
            Some((le, *v))
        })
        .collect();
    buckets.sort_by(|a, b| a.0.total_cmp(&b.0));
    assert!(buckets.len() >= 10, "{buckets:?}");
    assert!(buckets.windows(2).all(|w| w[0].1 <= w[1].1), "{buckets:?}");
    let (last_le, last) = *buckets.last().unwrap();
    assert!(last_le.is_infinite());
    assert_eq!(last, s["redress_callback_duration_seconds_count"]);
}

fn value(s: &BTreeMap<String, f64>, key: &str) -> f64 {
    *s.get(key).unwrap_or_else(|| panic!("no {key}"))
}

fn engine_frames(svc: &Service) -> u64 {
    svc.status().unwrap()["engine"]["frames"].as_u64().unwrap()
}

#[test]
fn counters_never_go_down_across_reloads_restarts_and_device_loss() {
    let dir = temp_dir("metrics-monotone");
    let config = dir.join("link.toml");
    let metrics_file = dir.join("redress.prom");
    std::fs::write(&config, LINK_A).unwrap();
    let keep = std::env::var_os("REDRESS_METRICS_SAMPLES_DIR").map(PathBuf::from);
    if let Some(k) = &keep {
        std::fs::create_dir_all(k).unwrap();
    }
    let mut svc = start(
        &dir,
        &config,
        &[
            "--simulate",
            "--fault-drill",
            "loss@8+2",
            "--metrics-file",
            metrics_file.to_str().unwrap(),
        ],
        &[],
    );
    let mut sampler = Sampler {
        taken: Vec::new(),
        keep: keep.clone(),
    };
    svc.wait_for("1 s of audio", |d| {
        d["engine"]["frames"].as_u64() >= Some(48_000)
    });
    let first = sampler.take(&svc, "start");
    assert!(value(&first, "redress_processed_frames_total") >= 48_000.0);
    assert!(value(&first, "redress_callback_duration_seconds_count") > 0.0);
    // The command a user types prints the same exposition.
    let printed = std::process::Command::new(env!("CARGO_BIN_EXE_redress"))
        .args(["status", "--openmetrics", "--socket"])
        .arg(&svc.socket)
        .output()
        .unwrap();
    assert_eq!(printed.status.code(), Some(0));
    let printed = String::from_utf8(printed.stdout).unwrap();
    assert!(printed.ends_with("# EOF\n"), "{printed}");
    assert!(
        samples(&printed)["redress_processed_frames_total"]
            >= value(&first, "redress_processed_frames_total")
    );

    // A reload that swaps filters in the running engine.
    std::fs::write(&config, LINK_B).unwrap();
    svc.signal("HUP");
    svc.wait_for("generation 2", |d| d["engine"]["running_generation"] == 2);
    let swapped = sampler.take(&svc, "swap");
    assert_eq!(value(&swapped, "redress_reloads_total{result=\"ok\"}"), 1.0);
    assert!(value(&swapped, "redress_swaps_total{stage=\"started\"}") >= 1.0);

    // A reload that restarts the streams: the new engine counts from zero, the figures do not.
    let frames_before_restart = engine_frames(&svc);
    std::fs::write(&config, link_b_restarting()).unwrap();
    svc.signal("HUP");
    let restarted = svc.wait_for("the restart for generation 3", |d| {
        d["config_generation"] == 3 && d["audio"]["restarts"].as_u64() >= Some(1)
    });
    assert!(
        restarted["engine"]["frames"].as_u64().unwrap() < frames_before_restart,
        "the restarted engine counts afresh (so this test exercises the running totals)"
    );
    sampler.take(&svc, "restart");

    // The drill's device loss, and the reopening after back-off.
    svc.wait_for("the device loss", |d| d["audio"]["device_losses"] == 1);
    let lost = sampler.take(&svc, "loss");
    assert_eq!(value(&lost, "redress_device_losses_total"), 1.0);
    svc.wait_for("the recovery", |d| {
        d["audio"]["recoveries"] == 1 && d["engine"]["frames"].as_u64() >= Some(24_000)
    });
    let back = sampler.take(&svc, "recovered");
    assert_eq!(value(&back, "redress_device_recoveries_total"), 1.0);
    assert!(
        value(&back, "redress_processed_frames_total")
            > value(&lost, "redress_processed_frames_total")
    );

    // The metrics file: the same figures in the textfile collector's format, rewritten.
    std::thread::sleep(redress::control::METRICS_FILE_EVERY + Duration::from_secs(1));
    let file_text = std::fs::read_to_string(&metrics_file).unwrap();
    assert!(file_text.contains("# TYPE redress_processed_frames_total counter\n"));
    let from_file = samples(&file_text);
    check_histogram(&from_file);
    assert_eq!(value(&from_file, "redress_device_recoveries_total"), 1.0);
    if let Some(k) = &keep {
        std::fs::write(k.join("metrics-file.prom"), &file_text).unwrap();
    }
    svc.signal("TERM");
    assert_eq!(svc.wait_exit().code(), Some(0), "{}", svc.log_text());
    leaves_only_the_file(&dir, &metrics_file);
}

/// No temporary file is left beside the metrics file.
fn leaves_only_the_file(dir: &Path, file: &Path) {
    let strays: Vec<_> = std::fs::read_dir(dir)
        .unwrap()
        .flatten()
        .map(|e| e.path())
        .filter(|p| p.to_string_lossy().contains(".tmp"))
        .collect();
    assert!(strays.is_empty(), "{strays:?}");
    assert!(file.exists());
}

#[test]
fn openmetrics_without_a_service_is_an_error_naming_the_socket() {
    let dir = temp_dir("metrics-no-service");
    let socket = dir.join("nobody.sock");
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_redress"))
        .args(["status", "--openmetrics", "--socket"])
        .arg(&socket)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    assert!(out.stdout.is_empty());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("nobody.sock"), "{err}");
}

#[test]
fn a_metrics_file_that_cannot_be_written_is_refused_at_start() {
    let dir = temp_dir("metrics-refused");
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_redress"))
        .args(["run", config.to_str().unwrap(), "--simulate", "--socket"])
        .arg(dir.join("s.sock"))
        .arg("--metrics-file")
        .arg(dir.join("no/such/folder/redress.prom"))
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("no/such/folder/redress.prom") && err.contains("help:"),
        "{err}"
    );
}
