//! Helpers for the tests that run the real service (`redress run`) as a child process: start it,
//! wait for its status socket, send it signals, read its status, stop it.

#![allow(dead_code)] // each test file uses its own subset

pub mod recording;
pub mod settled;

use std::path::{Path, PathBuf};
use std::process::{Child, Command, ExitStatus, Stdio};
use std::time::{Duration, Instant};

use serde_json::Value;

/// Longest wait for anything the service should do by itself (debug builds are slow to plan).
pub const PATIENCE: Duration = Duration::from_secs(60);

/// A stereo link whose inverse is a short IIR filter (quick to design in a debug build). Both
/// test links correct the whole axis: the service tests compare played frames with the offline
/// result exactly, which holds for a recursion whatever the callback's block size; under the
/// default band their inverses (which boost towards half the sample rate) would become long
/// FIRs run by partitioned convolution, whose rounding depends on how blocks fall, and which
/// have their own equality tests against the direct form (src/realize/partitioned_tests.rs).
pub const LINK_A: &str = r#"# Test link A: a short resonant line (invented).
[link]
sample_rate_hz = 48000
channel_count = 2

[[path]]
label = "test line A"
channels = [0, 1]
difference_equation = { b = [1.0, -0.6, 0.25], a = [1.0, -0.3] }

[path.inverse]
correction_band_hz = [0, 24000]
"#;

/// Link A re-measured: slightly different coefficients, so the swap changes the output.
pub const LINK_B: &str = r#"# Test link B: the same line, re-measured (invented).
[link]
sample_rate_hz = 48000
channel_count = 2

[[path]]
label = "test line B"
channels = [0, 1]
difference_equation = { b = [1.0, -0.5, 0.2], a = [1.0, -0.25] }

[path.inverse]
correction_band_hz = [0, 24000]
"#;

/// `[audio]` keys for ALSA's unpaced file devices: they run as fast as the processor allows,
/// so their callback threads must stay at ordinary priority (a real-time thread that never
/// waits would take a core from everything else until the kernel's throttle stops it).
pub const UNPACED: &str = "callback_priority = 0\nlock_memory = false\n";

/// A config that does not parse (the value of `b` is cut off).
pub const BROKEN: &str = "[link]\nsample_rate_hz = 48000\nchannel_count = 2\n\n[[path]]\nchannels = [0, 1]\ndifference_equation = { b = [1.0, \n";

pub struct Service {
    pub child: Child,
    pub socket: PathBuf,
    pub log: PathBuf,
}

/// Starts the service on the paced devices of the private PulseAudio (XDG_RUNTIME_DIR as
/// tests/audio/start-paced-audio.sh printed it): `input` (interleaved) is what the capture
/// device delivers; returns the service and the file the playback device records into.
pub fn start_paced(dir: &Path, config: &Path, input: &[f32]) -> (Service, PathBuf) {
    let runtime = PathBuf::from(
        std::env::var_os("XDG_RUNTIME_DIR").expect("XDG_RUNTIME_DIR of the PulseAudio"),
    );
    let raw_in = dir.join("capture.raw");
    let raw_out = dir.join("playback.raw");
    recording::write_raw(&raw_in, input);
    let alsa = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/audio/alsa-paced-device.conf");
    let svc = start(
        dir,
        config,
        &[],
        &[
            ("ALSA_CONFIG_PATH", &alsa),
            ("EQ_TEST_INFILE", &raw_in),
            ("EQ_TEST_OUTFILE", &raw_out),
            ("XDG_RUNTIME_DIR", &runtime),
        ],
    );
    (svc, raw_out)
}

/// Starts `redress run CONFIG ARGS… --socket DIR/status.sock`, stderr to DIR/service.log.
pub fn start(dir: &Path, config: &Path, args: &[&str], env: &[(&str, &Path)]) -> Service {
    let socket = dir.join("run").join("status.sock");
    let log = dir.join("service.log");
    let mut command = Command::new(env!("CARGO_BIN_EXE_redress"));
    command
        .arg("run")
        .arg(config)
        .args(args)
        .arg("--socket")
        .arg(&socket)
        .stdin(Stdio::null())
        .stdout(Stdio::null())
        .stderr(std::fs::File::create(&log).expect("log file"));
    for (k, v) in env {
        command.env(k, v);
    }
    let child = command.spawn().expect("redress run starts");
    Service { child, socket, log }
}

/// A status condition: the engine has run at least `n` frames.
pub fn frames_at_least(n: u64) -> impl Fn(&Value) -> bool {
    move |d: &Value| d.pointer("/engine/frames").and_then(Value::as_u64) >= Some(n)
}

impl Service {
    /// Waits until the status socket answers; panics with the log if the service died first.
    pub fn wait_ready(&mut self) -> Value {
        self.wait_for("the status socket", |_| true)
    }

    /// Polls the status until `condition` holds.
    pub fn wait_for(&mut self, what: &str, condition: impl Fn(&Value) -> bool) -> Value {
        let started = Instant::now();
        loop {
            if let Some(status) = self.child.try_wait().expect("child state") {
                panic!(
                    "the service exited ({status}) while waiting for {what}:\n{}",
                    self.log_text()
                );
            }
            if let Some(doc) = self.status() {
                if condition(&doc) {
                    return doc;
                }
            }
            assert!(
                started.elapsed() < PATIENCE,
                "gave up waiting for {what}:\n{}",
                self.log_text()
            );
            std::thread::sleep(Duration::from_millis(50));
        }
    }

    /// Writes `text` over `config`, sends HUP and waits until generation `generation` runs.
    pub fn reload_to_generation(&mut self, config: &Path, text: &str, generation: u64) -> Value {
        std::fs::write(config, text).unwrap();
        self.signal("HUP");
        self.wait_for(&format!("generation {generation} to run"), |d| {
            d.pointer("/engine/running_generation")
                .and_then(Value::as_u64)
                == Some(generation)
        })
    }

    /// The status document, if the socket answers.
    pub fn status(&self) -> Option<Value> {
        redress::control::query_status(&self.socket).ok()
    }

    pub fn signal(&self, name: &str) {
        let ok = Command::new("kill")
            .arg(format!("-{name}"))
            .arg(self.child.id().to_string())
            .status()
            .expect("kill runs")
            .success();
        assert!(ok, "kill -{name} failed");
    }

    /// Waits for the process to exit (panics after PATIENCE, killing it).
    pub fn wait_exit(&mut self) -> ExitStatus {
        let started = Instant::now();
        loop {
            if let Some(status) = self.child.try_wait().expect("child state") {
                return status;
            }
            if started.elapsed() > PATIENCE {
                let _ = self.child.kill();
                panic!("the service did not exit:\n{}", self.log_text());
            }
            std::thread::sleep(Duration::from_millis(20));
        }
    }

    pub fn log_text(&self) -> String {
        std::fs::read_to_string(&self.log).unwrap_or_default()
    }
}

impl Drop for Service {
    fn drop(&mut self) {
        // Never leave a service behind, whatever the test did.
        if self.child.try_wait().ok().flatten().is_none() {
            let _ = self.child.kill();
            let _ = self.child.wait();
        }
    }
}

pub fn u(doc: &Value, pointer: &str) -> u64 {
    doc.pointer(pointer)
        .and_then(Value::as_u64)
        .unwrap_or_else(|| panic!("{pointer} missing in {doc}"))
}

/// A fresh private temp directory, removed when the test passes (a service test leaves recorded
/// audio of hundreds of megabytes there; every run used to leave it behind). A failing test
/// keeps it and prints where, so the recording can be looked at.
pub struct ScratchDir(PathBuf);

impl std::ops::Deref for ScratchDir {
    type Target = Path;
    fn deref(&self) -> &Path {
        &self.0
    }
}

impl AsRef<Path> for ScratchDir {
    fn as_ref(&self) -> &Path {
        &self.0
    }
}

impl AsRef<std::ffi::OsStr> for ScratchDir {
    fn as_ref(&self) -> &std::ffi::OsStr {
        self.0.as_os_str()
    }
}

impl Drop for ScratchDir {
    fn drop(&mut self) {
        if std::thread::panicking() {
            eprintln!("kept for a look: {}", self.0.display());
        } else {
            let _ = std::fs::remove_dir_all(&self.0);
        }
    }
}

/// A fresh private temp directory named after the test (see [`ScratchDir`]).
pub fn temp_dir(name: &str) -> ScratchDir {
    let dir = std::env::temp_dir().join(format!("redress-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temp dir");
    ScratchDir(dir)
}

/// The value of `Key=` in the example systemd unit `configs/systemd/NAME`, if it is set.
pub fn example_unit_value(name: &str, key: &str) -> Option<String> {
    let unit = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("configs/systemd")
            .join(name),
    )
    .unwrap_or_else(|e| panic!("configs/systemd/{name}: {e}"));
    unit.lines()
        .map(str::trim)
        .find_map(|l| l.strip_prefix(&format!("{key}=")))
        .map(str::to_string)
}
