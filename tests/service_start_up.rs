//! The first minutes with the live service: the caution it logs before driving devices, where
//! `redress status` finds it without `--socket` (as each example systemd unit sets it up), the
//! status document's schema and keys, the whole reload error in the status text, and what
//! `-v` adds.

mod service_support;

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use serde_json::Value;

use service_support::{start, temp_dir, u, Service, BROKEN, LINK_A, UNPACED};

fn redress(args: &[&str], env: &[(&str, &Path)]) -> std::process::Output {
    let mut command = Command::new(env!("CARGO_BIN_EXE_redress"));
    command.args(args).stdin(Stdio::null());
    for (k, v) in env {
        command.env(k, v);
    }
    command.output().expect("the binary runs")
}

// Source: the README's cautions (start quietly, protect hearing and equipment, local rules
// first); 1/(1 − 0.6 z⁻¹ + 0.25 z⁻²)·(1 − 0.3 z⁻¹) is test link A's inverse, whose peak boost the
// log must quote as `check` reports it.
#[test]
fn the_caution_is_logged_once_before_devices_and_not_for_a_simulation() {
    let dir = temp_dir("caution");
    let config = dir.join("link.toml");
    std::fs::write(
        &config,
        format!("{LINK_A}\n[audio]\nbuffer_frames = 4096\n{UNPACED}\n[engine]\nfade_in_ms = 0.1\n"),
    )
    .unwrap();
    let silence = dir.join("capture.raw");
    std::fs::write(&silence, vec![0u8; 4 * 2 * 3 * 4096]).unwrap();
    let alsa = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/audio/alsa-file-device.conf");
    let mut devices = start(
        &dir,
        &config,
        &["--for", "0.3"],
        &[
            ("ALSA_CONFIG_PATH", &alsa),
            ("EQ_TEST_INFILE", &silence),
            ("EQ_TEST_OUTFILE", &dir.join("playback.raw")),
        ],
    );
    assert_eq!(
        devices.wait_exit().code(),
        Some(0),
        "{}",
        devices.log_text()
    );
    let log = devices.log_text();
    assert_eq!(log.matches("caution:").count(), 1, "{log}");
    let check = redress(&["check", config.to_str().unwrap(), "--json"], &[]);
    let report: Value = serde_json::from_slice(&check.stdout).unwrap();
    let boost = report["paths"][0]["inverse"]["peak_boost_db"]
        .as_f64()
        .unwrap();
    let expected = format!("path 1 `test line A` up to {boost:.1} dB");
    assert!(log.contains(&expected), "{expected}\n{log}");
    let caution = log.find("caution:").unwrap();
    let opened = log.find("capture `").unwrap_or(log.len());
    assert!(
        caution < opened,
        "the caution comes before the devices open:\n{log}"
    );

    let sim_dir = temp_dir("caution-sim");
    let mut simulated = start(&sim_dir, &config, &["--simulate", "--for", "0.3"], &[]);
    assert_eq!(simulated.wait_exit().code(), Some(0));
    assert!(
        !simulated.log_text().contains("caution:"),
        "{}",
        simulated.log_text()
    );
}

/// Polls `redress status ARGS` until it answers.
fn status_when_ready(args: &[&str], env: &[(&str, &Path)]) -> std::process::Output {
    let started = Instant::now();
    loop {
        let out = redress(args, env);
        if out.status.success() || started.elapsed() > service_support::PATIENCE {
            return out;
        }
        std::thread::sleep(Duration::from_millis(100));
    }
}

// Source: systemd.exec(5) — a user manager sets XDG_RUNTIME_DIR=/run/user/UID for its units,
// which is what a login session has too; RuntimeDirectory= creates /run/NAME for a system unit.
#[test]
fn status_finds_the_service_as_the_user_unit_runs_it_and_shows_schema_and_errors() {
    let dir = temp_dir("status-find");
    let runtime = dir.join("xdg");
    std::fs::create_dir_all(&runtime).unwrap();
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    // As the user unit starts it: no --socket, the user manager's XDG_RUNTIME_DIR.
    let child = Command::new(env!("CARGO_BIN_EXE_redress"))
        .args(["run", config.to_str().unwrap(), "--simulate", "-v"])
        .env("XDG_RUNTIME_DIR", &runtime)
        .stdin(Stdio::null())
        .stdout(Stdio::null())
        .stderr(std::fs::File::create(dir.join("log")).unwrap())
        .spawn()
        .unwrap();
    // Held as a Service so that it is killed if an assertion fails on the way.
    let mut service = Service {
        child,
        socket: runtime.join("redress/status.sock"),
        log: dir.join("log"),
    };
    let env = [("XDG_RUNTIME_DIR", runtime.as_path())];
    let found = status_when_ready(&["status", "--json"], &env);
    let log = || std::fs::read_to_string(dir.join("log")).unwrap_or_default();
    assert!(found.status.success(), "{found:?}\n{}", log());
    let doc: Value = serde_json::from_slice(&found.stdout).unwrap();
    assert_eq!(doc["schema"], "redress-service-status");
    assert_eq!(doc["schema_version"], 2);
    let path = &doc["paths"][0];
    // Keys as `check --json` spells them, words beside them.
    assert_eq!(path["method"], "exact");
    assert_eq!(path["method_name"], "exact inverse");
    assert!(
        ["direct_form_2t", "sections", "lattice_ladder"]
            .contains(&path["structure"].as_str().unwrap()),
        "{path}"
    );
    assert!(
        path["structure_name"].as_str().unwrap().contains(' '),
        "{path}"
    );
    // -v: the design in figures.
    assert!(log().contains("debug: path 1 `test line A`"), "{}", log());

    // A broken reload: the status text gives the whole error, help line included.
    std::fs::write(&config, BROKEN).unwrap();
    service.signal("HUP");
    let started = Instant::now();
    let text = loop {
        let out = redress(&["status"], &env);
        let text = String::from_utf8_lossy(&out.stdout).into_owned();
        if text.contains("1 failed") || started.elapsed() > service_support::PATIENCE {
            break text;
        }
        std::thread::sleep(Duration::from_millis(100));
    };
    assert!(text.contains("1 failed"), "{text}\n{}", log());
    assert!(text.contains("\nlast error   /"), "{text}");
    assert!(text.contains("link.toml:7:"), "{text}");
    assert!(text.contains("problem:"), "{text}");
    assert!(text.contains("help:"), "{text}");
    assert!(text.contains("exact inverse in"), "{text}");

    // A client that connects and hangs up at once costs the service nothing.
    drop(std::os::unix::net::UnixStream::connect(&service.socket).unwrap());
    let again = redress(&["status", "--json"], &env);
    assert!(again.status.success());
    assert!(
        u(
            &serde_json::from_slice(&again.stdout).unwrap(),
            "/reloads/failed"
        ) >= 1
    );
    service.signal("TERM");
    assert_eq!(service.wait_exit().code(), Some(0));
}

fn unit(name: &str) -> String {
    std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("configs/systemd")
            .join(name),
    )
    .unwrap()
}

fn unit_value(text: &str, key: &str) -> Option<String> {
    text.lines()
        .map(str::trim)
        .find_map(|l| l.strip_prefix(&format!("{key}=")))
        .map(str::to_string)
}

// Source: systemd.unit(5), systemd.exec(5) — a user unit cannot set User= and is wanted by
// default.target; a system unit's RuntimeDirectory=redress is /run/redress.
#[test]
fn the_two_units_put_the_socket_where_status_looks() {
    let user = unit("redress-user.service");
    assert_eq!(unit_value(&user, "User"), None, "a user unit has no User=");
    assert_eq!(
        unit_value(&user, "WantedBy").as_deref(),
        Some("default.target")
    );
    let start = unit_value(&user, "ExecStart").unwrap();
    assert!(
        !start.contains("--socket"),
        "the user unit uses the default socket: {start}"
    );
    assert!(
        !user.contains("XDG_RUNTIME_DIR="),
        "the user manager sets it"
    );

    let system = unit("redress.service");
    assert_eq!(
        unit_value(&system, "WantedBy").as_deref(),
        Some("multi-user.target")
    );
    assert_eq!(
        unit_value(&system, "RuntimeDirectory").as_deref(),
        Some("redress")
    );
    assert!(!system.contains("Environment=XDG_RUNTIME_DIR"), "{system}");
    let start = unit_value(&system, "ExecStart").unwrap();
    let socket = start
        .split_once("--socket ")
        .map(|(_, s)| PathBuf::from(s.split_whitespace().next().unwrap()))
        .expect("the system unit names its socket");
    assert_eq!(socket, PathBuf::from(redress::control::SYSTEM_SOCKET));
    assert!(socket.starts_with("/run/redress"));
    assert!(redress::control::status_socket_candidates().contains(&socket));
}

// Source: common practice — a simulation must feed the filters audio at the rate and channel
// count they were designed for (as `apply` refuses a WAV of the wrong rate); a reload that
// breaks that is refused and the running filters stay.
#[test]
fn a_reload_that_no_longer_matches_the_true_link_is_refused() {
    let dir = temp_dir("true-link-reload");
    let truth = dir.join("truth.toml");
    std::fs::write(&truth, LINK_A).unwrap();
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    let mut service = start(
        &dir,
        &config,
        &["--simulate", "--true-link", truth.to_str().unwrap()],
        &[],
    );
    service.wait_ready();
    // At 16 kHz the whole axis ends at 8 kHz: the band moves with the rate, so the only
    // mismatch left is the one against the true link.
    let at_16k = LINK_A.replace("48000", "16000").replace("24000", "8000");
    std::fs::write(&config, at_16k).unwrap();
    service.signal("HUP");
    let doc = service.wait_for("the reload to be refused", |d| {
        d.pointer("/reloads/failed").and_then(Value::as_u64) == Some(1)
    });
    let why = doc["reloads"]["last_error"].as_str().unwrap_or_default();
    assert!(why.contains("sample rate 48000 Hz"), "{why}");
    assert!(why.contains("16000 Hz"), "{why}");
    assert_eq!(u(&doc, "/config_generation"), 1);
    service.signal("TERM");
    assert_eq!(service.wait_exit().code(), Some(0));
}
