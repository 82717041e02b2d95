//! End to end on the PipeWire host: a private `pipewire` daemon (its own XDG_RUNTIME_DIR) with
//! its session manager `wireplumber` (under a private D-Bus session: it configures the nodes'
//! ports and links streams to the node they ask for), two null-audio-sink nodes made with
//! `pw-cli`, the service capturing the first one's monitor and playing into the second, `pw-cat`
//! playing known programme into the first and `pw-record` recording the second's monitor. The
//! links are read back with `pw-link -l`. Ignored by default: scripts/test.sh runs it
//! (`cargo test --test service_pipewire -- --ignored`) once `pipewire`, `pipewire-bin`,
//! `wireplumber` and `dbus-daemon` are installed.
//!
//! The service runs about five seconds; in the middle it gets a SIGHUP with a re-measured link
//! (it must swap to it), then SIGTERM (exit 0). PipeWire opens capture and playback as two
//! streams, so the ring stays: the recording must equal the offline result of the first filter
//! before the reload and of the second after it at one alignment, every gap silence the
//! playback side inserted or frames the capture side dropped, each counted by the engine.

mod service_support;

use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use redress::io::{generate, ProgrammeSpec};
use service_support::settled::{align, count_step, offline, realign, walk, Gaps, CHANNELS};
use service_support::{frames_at_least, start, temp_dir, u, LINK_A, LINK_B};

const RATE: f64 = 48_000.0;

/// Runs a PipeWire tool against the private daemon; its output, or the panic says why not.
fn tool(runtime: &Path, args: &[&str]) -> String {
    let out = Command::new(args[0])
        .args(&args[1..])
        .env("XDG_RUNTIME_DIR", runtime)
        .stdin(Stdio::null())
        .output()
        .unwrap_or_else(|e| panic!("{} runs (Debian pipewire-bin): {e}", args[0]));
    String::from_utf8_lossy(&out.stdout).into_owned()
}

fn kill(pid: u32, signal: &str) {
    let _ = Command::new("kill")
        .arg(format!("-{signal}"))
        .arg(pid.to_string())
        .status();
}

/// Waits (at most 10 s) for `child` to exit after `signal`, then kills it.
fn stop(child: &mut Child, signal: &str) {
    kill(child.id(), signal);
    let started = Instant::now();
    while child.try_wait().ok().flatten().is_none() {
        if started.elapsed() > Duration::from_secs(10) {
            let _ = child.kill();
            let _ = child.wait();
            return;
        }
        std::thread::sleep(Duration::from_millis(20));
    }
}

/// The private daemon, its session manager and their private bus; stopped by PID.
struct PrivatePipeWire {
    runtime: PathBuf,
    daemon: Child,
    /// `dbus-run-session` (it ends the bus when the session manager exits).
    session: Child,
    /// The session manager's own PID, as it wrote it before `exec`.
    manager: u32,
}

impl PrivatePipeWire {
    fn start(dir: &Path) -> Self {
        let runtime = dir.join("xdg");
        std::fs::create_dir_all(&runtime).unwrap();
        let log = |name: &str| std::fs::File::create(dir.join(name)).expect("log file");
        // State (restored volumes, default nodes) stays in the scratch folder too.
        let spawn = |command: &mut Command, name: &str| {
            command
                .env("XDG_RUNTIME_DIR", &runtime)
                .env("XDG_STATE_HOME", dir.join("state"))
                .env("XDG_CONFIG_HOME", dir.join("config"))
                .stdin(Stdio::null())
                .stdout(log(name))
                .stderr(log(&format!("{name}.err")))
                .spawn()
                .unwrap_or_else(|e| panic!("{name} starts: {e}"))
        };
        let daemon = spawn(&mut Command::new("pipewire"), "pipewire.log");
        let socket = runtime.join("pipewire-0");
        let started = Instant::now();
        while !socket.exists() {
            assert!(
                started.elapsed() < Duration::from_secs(10),
                "pipewire did not open its socket"
            );
            std::thread::sleep(Duration::from_millis(50));
        }
        let pid_file = dir.join("wireplumber.pid");
        let session = spawn(
            Command::new("dbus-run-session").args([
                "--",
                "sh",
                "-c",
                &format!("echo $$ > '{}'; exec wireplumber", pid_file.display()),
            ]),
            "wireplumber.log",
        );
        let manager = loop {
            if let Some(pid) = std::fs::read_to_string(&pid_file)
                .ok()
                .and_then(|s| s.trim().parse().ok())
            {
                break pid;
            }
            assert!(
                started.elapsed() < Duration::from_secs(10),
                "wireplumber did not start"
            );
            std::thread::sleep(Duration::from_millis(50));
        };
        let server = Self {
            runtime,
            daemon,
            session,
            manager,
        };
        for name in ["feed_sink", "tap_sink"] {
            tool(
                &server.runtime,
                &[
                    "pw-cli",
                    "create-node",
                    "adapter",
                    &format!(
                        "{{ factory.name = support.null-audio-sink node.name = {name} \
                         media.class = Audio/Sink object.linger = true \
                         audio.position = [ FL FR ] audio.rate = 48000 }}"
                    ),
                ],
            );
        }
        // The session manager gives the nodes their ports.
        loop {
            let outputs = tool(&server.runtime, &["pw-link", "-o"]);
            if outputs.contains("feed_sink:monitor_FR") && outputs.contains("tap_sink:monitor_FR") {
                return server;
            }
            assert!(
                started.elapsed() < Duration::from_secs(20),
                "the null sinks got no ports: {outputs}"
            );
            std::thread::sleep(Duration::from_millis(100));
        }
    }
}

impl Drop for PrivatePipeWire {
    fn drop(&mut self) {
        kill(self.manager, "TERM");
        // `dbus-run-session` ends its bus once the session manager has exited; a signal to it
        // before then would leave the bus running.
        let started = Instant::now();
        while self.session.try_wait().ok().flatten().is_none()
            && started.elapsed() < Duration::from_secs(5)
        {
            std::thread::sleep(Duration::from_millis(20));
        }
        stop(&mut self.session, "TERM");
        stop(&mut self.daemon, "TERM");
    }
}

fn write_wav(path: &Path, samples: &[f32]) {
    let spec = hound::WavSpec {
        channels: CHANNELS as u16,
        sample_rate: RATE as u32,
        bits_per_sample: 32,
        sample_format: hound::SampleFormat::Float,
    };
    let mut w = hound::WavWriter::create(path, spec).unwrap();
    for &s in samples {
        w.write_sample(s).unwrap();
    }
    w.finalize().unwrap();
}

// Source: common practice for live audio services — the live result equals the offline one,
// and a reload swaps filters without losing or repeating a frame.
#[test]
#[ignore = "needs pipewire, wireplumber and dbus-daemon; scripts/test.sh runs it"]
fn pipewire_host_matches_offline_through_a_reload() {
    let dir = temp_dir("svc-pipewire");
    let pw = PrivatePipeWire::start(&dir);
    let runtime = pw.runtime.clone();

    let mut input = vec![0.0f32; 9_600 * CHANNELS];
    input.extend(generate(&ProgrammeSpec::new(RATE, CHANNELS, 8.0, 13)));
    input.resize(input.len() + 2 * 48_000 * CHANNELS, 0.0);
    let programme = dir.join("programme.wav");
    write_wav(&programme, &input);

    let audio = "\n[audio]\nhost = \"pipewire\"\ninput_device = \"feed_sink\"\n\
                 output_device = \"tap_sink\"\nbuffer_frames = 256\nlock_memory = false\n";
    let config = dir.join("link.toml");
    std::fs::write(&config, format!("{LINK_A}{audio}")).unwrap();
    let mut svc = start(&dir, &config, &[], &[("XDG_RUNTIME_DIR", &runtime)]);
    let first = svc.wait_ready();
    assert_eq!(
        first.pointer("/audio/host").and_then(|v| v.as_str()),
        Some("pipewire")
    );
    assert_eq!(
        first.pointer("/audio/runs_as").and_then(|v| v.as_str()),
        Some("ring"),
        "{first}"
    );
    eprintln!(
        "service: {}\nrealtime: {}",
        first["audio"]["description"], first["audio"]["realtime"]
    );
    svc.wait_for("0.2 s of audio", frames_at_least(9_600));
    let links = tool(&runtime, &["pw-link", "-l"]);
    for (ours, theirs) in [
        ("feed_sink:monitor_FL", "input_FL"),
        ("feed_sink:monitor_FR", "input_FR"),
    ] {
        let after = links.split(ours).nth(1).unwrap_or_default();
        let first_lines: String = after.lines().take(3).collect();
        assert!(
            first_lines.contains(theirs),
            "{ours} is not linked to the service's {theirs}:\n{links}"
        );
    }
    assert!(links.contains("tap_sink:playback_FL"), "{links}");

    let recorded = dir.join("tap.wav");
    let mut recorder = Command::new("pw-record")
        .args([
            "--target",
            "tap_sink",
            "-P",
            "{ stream.capture.sink = true }",
        ])
        .args(["--format", "f32", "--rate", "48000", "--channels", "2"])
        .arg(&recorded)
        .env("XDG_RUNTIME_DIR", &runtime)
        .stdin(Stdio::null())
        .stderr(std::fs::File::create(dir.join("pw-record.err")).unwrap())
        .spawn()
        .expect("pw-record starts");
    std::thread::sleep(Duration::from_millis(500));
    let feed_status = svc.status().expect("status");
    let start_frame = u(&feed_status, "/engine/frames");
    let mut player = Command::new("pw-cat")
        .args(["--playback", "--target", "feed_sink"])
        .arg(&programme)
        .env("XDG_RUNTIME_DIR", &runtime)
        .stdin(Stdio::null())
        .stderr(std::fs::File::create(dir.join("pw-cat.err")).unwrap())
        .spawn()
        .expect("pw-cat starts");

    let before = svc.wait_for("2 s of programme", frames_at_least(start_frame + 96_000));
    let hup_frame = u(&before, "/engine/frames");
    let swapped = svc.reload_to_generation(&config, &format!("{LINK_B}{audio}"), 2);
    assert_eq!(
        u(&swapped, "/audio/restarts"),
        0,
        "the reload restarted the streams"
    );
    let swap_frame = u(&swapped, "/engine/frames");
    let end = svc.wait_for("2 s after the swap", frames_at_least(swap_frame + 96_000));
    let end_frame = u(&end, "/engine/frames");
    svc.signal("TERM");
    assert_eq!(svc.wait_exit().code(), Some(0), "{}", svc.log_text());
    stop(&mut recorder, "INT");
    stop(&mut player, "INT");

    let mut reader = hound::WavReader::open(&recorded).expect("pw-record wrote a WAV file");
    let live: Vec<f32> = reader.samples::<f32>().map_while(Result::ok).collect();
    let expected_a = offline(LINK_A, &input);
    let expected_b = offline(LINK_B, &input);
    // Programme frames from engine frames: an upper bound, since pw-cat starts a little after
    // `start_frame` was read (allowed: up to half a second).
    let programme_at = |engine_frame: u64| (engine_frame - start_frame) as usize;
    let startup = 24_000;

    let probe = 9_600 + 4_800;
    let mut offset = align(&live, &expected_a, probe, 32)
        .expect("the equalized programme appears in the recording");
    let mut gaps = Gaps::default();
    let until = programme_at(hup_frame) - startup;
    assert!(until > probe + 48_000, "too little audio before the reload");
    offset = walk(
        &live,
        offset,
        probe,
        until,
        &expected_a,
        "the first filter's result",
        &mut gaps,
    );
    let after_from = programme_at(swap_frame) + 4_800;
    let after_to = programme_at(end_frame) - startup - 9_600;
    assert!(
        after_to > after_from + 48_000,
        "too little audio after the swap"
    );
    let realigned = realign(&live, &expected_b, after_from, offset, 32)
        .expect("the second filter's result appears after the swap");
    count_step(&mut gaps, offset, realigned);
    walk(
        &live,
        realigned,
        after_from,
        after_to,
        &expected_b,
        "the second filter's result",
        &mut gaps,
    );
    let compared = (until - probe) + (after_to - after_from);
    let f = |p: &str| end.pointer(p).and_then(|v| v.as_f64()).unwrap_or(f64::NAN);
    eprintln!(
        "pipewire run: {compared} frames ({CHANNELS} channels) checked against the offline \
         result; gaps: {} frames of silence inserted, {} dropped, at {:?}; engine: {} overrun \
         and {} underrun samples, {} stream errors; ring prefill 512 frames; engine time per \
         callback p50 {:.1} us, p99 {:.1} us, max {:.1} us",
        gaps.inserted,
        gaps.dropped,
        gaps.at,
        u(&end, "/engine/input_overruns"),
        u(&end, "/engine/output_underruns"),
        u(&end, "/audio/stream_errors"),
        f("/engine/callback_p50_us"),
        f("/engine/callback_p99_us"),
        f("/engine/callback_max_us"),
    );
    gaps.assert_counted(&end);
    drop(pw);
}

// Source: common practice — a host that cannot be reached is a clear error naming what is
// missing, never a panic or a hang. Runs everywhere: an empty runtime folder has no server.
#[test]
fn an_unreachable_pipewire_server_is_named_in_the_error() {
    let dir = temp_dir("svc-pipewire-absent");
    let runtime = dir.join("xdg");
    std::fs::create_dir_all(&runtime).unwrap();
    let config = dir.join("link.toml");
    std::fs::write(
        &config,
        format!("{LINK_A}\n[audio]\nhost = \"pipewire\"\nlock_memory = false\n"),
    )
    .unwrap();
    let mut svc = start(&dir, &config, &[], &[("XDG_RUNTIME_DIR", &runtime)]);
    let status = svc.wait_exit();
    let told = svc.log_text();
    assert_ne!(status.code(), Some(0), "{told}");
    assert!(!told.contains("panicked"), "{told}");
    assert!(
        told.contains("audio host `pipewire`: its server is not running"),
        "{told}"
    );
    assert!(
        told.contains(&format!("{}/pipewire-0", runtime.display())),
        "{told}"
    );
    assert!(told.contains("help: start it"), "{told}");
}
