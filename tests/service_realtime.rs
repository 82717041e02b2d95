//! Real-time scheduling of the service's audio thread, on the real binary (`redress run
//! --simulate`: the simulated link's thread stands in for a device callback thread and asks
//! for the same `SCHED_FIFO` priority).
//!
//! Granted: where the process may (root here, or a user with RLIMIT_RTPRIO), `status` reports
//! the policy and priority the kernel says the thread runs at. Refused: an unprivileged user
//! with RLIMIT_RTPRIO 0 gets a warning naming the limit and what to change, and the audio runs
//! on at ordinary priority.

mod service_support;

use std::path::Path;
use std::process::Command;

use serde_json::Value;
use service_support::{example_unit_value, temp_dir, u, Service, LINK_A};

fn thread(doc: &Value) -> &Value {
    doc.pointer("/audio/realtime/threads/0")
        .unwrap_or_else(|| panic!("no real-time report in {doc}"))
}

fn effective_uid() -> u32 {
    let status = std::fs::read_to_string("/proc/self/status").expect("/proc/self/status");
    status
        .lines()
        .find_map(|l| l.strip_prefix("Uid:"))
        .and_then(|l| l.split_whitespace().nth(1))
        .and_then(|v| v.parse().ok())
        .expect("effective uid")
}

fn write_config(dir: &Path, audio: &str) -> std::path::PathBuf {
    let config = dir.join("link.toml");
    std::fs::write(&config, format!("{LINK_A}\n[audio]\n{audio}")).unwrap();
    config
}

/// Starts `redress run CONFIG --simulate` through `wrapper` (a command and its arguments put in
/// front of the binary: setpriv, prlimit).
fn start_wrapped(dir: &Path, config: &Path, wrapper: &[&str]) -> Service {
    let socket = dir.join("run").join("status.sock");
    let log = dir.join("service.log");
    let binary = env!("CARGO_BIN_EXE_redress");
    let mut command = Command::new(wrapper[0]);
    command
        .args(&wrapper[1..])
        .arg(binary)
        .arg("run")
        .arg(config)
        .arg("--simulate")
        .arg("--socket")
        .arg(&socket)
        .stdin(std::process::Stdio::null())
        .stdout(std::process::Stdio::null())
        .stderr(std::fs::File::create(&log).expect("log file"));
    let child = command.spawn().expect("the wrapped service starts");
    Service { child, socket, log }
}

/// The wrapper that runs the service as `nobody` (from root), after giving `nobody` the test
/// folder: the service must reach its config and create its socket there.
fn as_nobody(dir: &Path) -> [&'static str; 4] {
    let ok = Command::new("chown")
        .args(["-R", "nobody"])
        .arg(dir)
        .status()
        .is_ok_and(|s| s.success());
    assert!(ok, "chown nobody failed");
    [
        "setpriv",
        "--reuid=nobody",
        "--regid=nogroup",
        "--clear-groups",
    ]
}

/// `Key=value` of the example system unit.
fn unit_value(key: &str) -> String {
    example_unit_value("redress.service", key)
        .unwrap_or_else(|| panic!("no {key}= in the example unit"))
}

// Source: sched(7), getrlimit(2), mlockall(2) — an unprivileged process may take SCHED_FIFO up
// to RLIMIT_RTPRIO and lock memory up to RLIMIT_MEMLOCK (all of it when unlimited); systemd.exec(5)
// — LimitRTPRIO= and LimitMEMLOCK= set those limits. So an ordinary user given the example
// unit's limits must get the default priority and every page locked, with no warning.
//
// Ignored by default: setting the unit's limits needs what systemd has when it starts a unit,
// CAP_SYS_RESOURCE (or hard limits already that high), and a container usually withholds it
// (this one does: root's hard RLIMIT_RTPRIO is 0 and cannot be raised). Run it where the
// limits can be set: `cargo test --test service_realtime -- --ignored`.
#[test]
#[ignore = "needs CAP_SYS_RESOURCE or hard limits at the unit's values"]
fn an_ordinary_user_with_the_units_limits_gets_real_time_and_locked_memory() {
    let rtprio = unit_value("LimitRTPRIO");
    let memlock = unit_value("LimitMEMLOCK").replace("infinity", "unlimited");
    let dir = temp_dir("svc-rt-unit-limits");
    let config = write_config(&dir, "");
    let rtprio_arg = format!("--rtprio={rtprio}:{rtprio}");
    let memlock_arg = format!("--memlock={memlock}:{memlock}");
    let can_set = Command::new("prlimit")
        .args([&rtprio_arg, &memlock_arg, "--", "true"])
        .status()
        .is_ok_and(|s| s.success());
    assert!(
        can_set,
        "this machine cannot set {rtprio_arg} {memlock_arg} (no CAP_SYS_RESOURCE): the test \
         cannot make the unit's conditions here"
    );
    let root = effective_uid() == 0;
    // Raising a hard limit needs root: as root the limits are set first, then the user
    // dropped to `nobody`; otherwise this user's own hard limits must already allow them.
    let mut wrapper = vec!["prlimit", &rtprio_arg, &memlock_arg, "--"];
    if root {
        wrapper.extend(as_nobody(&dir));
    }
    let mut svc = start_wrapped(&dir, &config, &wrapper);
    let doc = svc.wait_for("the audio thread at the unit's limits", |d| {
        d.pointer("/audio/realtime/threads/0/policy")
            .is_some_and(|p| !p.is_null())
            && d.pointer("/engine/frames").and_then(Value::as_u64) >= Some(4_800)
    });
    let t = thread(&doc);
    assert_eq!(t["asked_priority"], 70, "{doc}");
    assert_eq!(t["policy"], "fifo", "{doc}");
    assert_eq!(t["priority"], 70, "{doc}");
    assert!(t["refused"].is_null(), "{doc}");
    assert_eq!(
        doc.pointer("/audio/realtime/memory/locked"),
        Some(&Value::from("current_and_future")),
        "{doc}"
    );
    svc.signal("TERM");
    assert_eq!(svc.wait_exit().code(), Some(0), "{}", svc.log_text());
    let log = svc.log_text();
    assert!(!log.contains("warning: real-time"), "{log}");
}

// Source: sched(7) — a thread may take SCHED_FIFO when it has CAP_SYS_NICE (root) or when
// RLIMIT_RTPRIO allows the priority; pthread_getschedparam reports what it then runs at.
#[test]
fn the_audio_thread_gets_the_priority_it_asks_for_where_allowed_and_says_so() {
    let dir = temp_dir("svc-rt-granted");
    let config = write_config(&dir, "callback_priority = 61\n");
    let mut svc = service_support::start(&dir, &config, &["--simulate"], &[]);
    let doc = svc.wait_for("the audio thread's first block", |d| {
        d.pointer("/audio/realtime/threads/0/policy")
            .is_some_and(|p| !p.is_null())
    });
    let t = thread(&doc);
    assert_eq!(t["asked_priority"], 61);
    assert_eq!(t["decided_by"], "redress");
    if effective_uid() == 0 {
        assert_eq!(t["policy"], "fifo", "{doc}");
        assert_eq!(t["priority"], 61, "{doc}");
        assert_eq!(t["real_time"], true);
        assert!(t["refused"].is_null());
        assert_eq!(
            doc.pointer("/audio/realtime/memory/locked"),
            Some(&Value::from("current_and_future"))
        );
    } else if t["refused"].is_null() {
        // An ordinary user whose RLIMIT_RTPRIO allows it.
        assert_eq!((&t["policy"], &t["priority"]), (&"fifo".into(), &61.into()));
    } else {
        assert_eq!(t["policy"], "other");
        assert!(t["help"].as_str().unwrap().contains("LimitRTPRIO"));
    }
    let text = Command::new(env!("CARGO_BIN_EXE_redress"))
        .args(["status", "--socket"])
        .arg(&svc.socket)
        .output()
        .expect("status runs");
    let text = String::from_utf8_lossy(&text.stdout);
    if effective_uid() == 0 {
        assert!(
            text.contains("simulated link and engine: fifo at priority 61 (asked for 61)"),
            "{text}"
        );
    }
    assert!(text.contains("host         simulated"), "{text}");
    svc.signal("TERM");
    assert_eq!(svc.wait_exit().code(), Some(0), "{}", svc.log_text());
}

// Source: sched(7) and getrlimit(2) — with RLIMIT_RTPRIO 0 an unprivileged thread's request for
// SCHED_FIFO fails with EPERM. Common practice for audio services: that is a warning, and the
// audio runs on at ordinary priority.
#[test]
fn an_unprivileged_user_without_rtprio_is_warned_and_the_audio_runs_on() {
    let dir = temp_dir("svc-rt-refused");
    let config = write_config(&dir, "");
    let root = effective_uid() == 0;
    let mut wrapper = vec![];
    if root {
        wrapper.extend(as_nobody(&dir));
    }
    wrapper.extend(["prlimit", "--rtprio=0:0", "--"]);
    let mut svc = start_wrapped(&dir, &config, &wrapper);
    let doc = svc.wait_for("a second of audio at ordinary priority", |d| {
        d.pointer("/engine/frames").and_then(Value::as_u64) >= Some(48_000)
            && d.pointer("/audio/realtime/threads/0/policy")
                .is_some_and(|p| !p.is_null())
    });
    let t = thread(&doc);
    assert_eq!(t["asked_priority"], 70, "{doc}");
    assert_eq!(t["policy"], "other", "{doc}");
    assert_eq!(t["real_time"], false);
    assert_eq!(t["refused"], "RLIMIT_RTPRIO is 0 for this process", "{doc}");
    assert!(
        t["help"].as_str().unwrap().contains("LimitRTPRIO=70"),
        "{doc}"
    );
    assert_eq!(doc.pointer("/audio/state"), Some(&Value::from("running")));
    // The audio keeps running: more frames a moment later.
    let before = u(&doc, "/engine/frames");
    let later = svc.wait_for("more audio", |d| {
        d.pointer("/engine/frames").and_then(Value::as_u64) > Some(before + 24_000)
    });
    assert_eq!(u(&later, "/engine/output_underruns"), 0);
    svc.signal("TERM");
    assert_eq!(svc.wait_exit().code(), Some(0), "{}", svc.log_text());
    let log = svc.log_text();
    let warning = log
        .lines()
        .find(|l| l.contains("warning: real-time: simulated link and engine"))
        .unwrap_or_else(|| panic!("no real-time warning in the log:\n{log}"));
    assert!(warning.contains("RLIMIT_RTPRIO is 0"), "{warning}");
    assert!(
        warning.contains("help: allow it: LimitRTPRIO=70"),
        "{warning}"
    );
}
