//! A closed pipe ends a printing command quietly (`redress demo | head -1`): no panic, no
//! backtrace; the command is ended by SIGPIPE, as a Unix tool is, or finishes by itself.
//!
//! Each command is started with its standard output (or error) on a pipe whose reading end is
//! closed at once, so every write it makes after starting finds the reader gone.

mod cli_support;

use std::io::Read;
use std::os::unix::process::ExitStatusExt;
use std::path::Path;
use std::process::{Command, Stdio};

use cli_support::repo;

/// SIGPIPE's number on Linux (signal(7)).
const SIGPIPE: i32 = 13;

#[derive(Clone, Copy)]
enum Closed {
    Stdout,
    Stderr,
}

/// Runs `redress ARGS` with `closed` on a pipe nobody reads; returns how it ended and what it
/// wrote on the other stream.
fn run_into_closed_pipe(args: &[&str], closed: Closed, dir: &Path) -> (String, String) {
    let mut command = Command::new(env!("CARGO_BIN_EXE_redress"));
    command.args(args).current_dir(dir).stdin(Stdio::null());
    match closed {
        Closed::Stdout => command.stdout(Stdio::piped()).stderr(Stdio::piped()),
        Closed::Stderr => command.stderr(Stdio::piped()).stdout(Stdio::piped()),
    };
    let mut child = command.spawn().expect("the binary runs");
    let other: Option<Box<dyn Read>> = match closed {
        Closed::Stdout => {
            drop(child.stdout.take());
            child.stderr.take().map(|s| Box::new(s) as Box<dyn Read>)
        }
        Closed::Stderr => {
            drop(child.stderr.take());
            child.stdout.take().map(|s| Box::new(s) as Box<dyn Read>)
        }
    };
    let mut text = String::new();
    if let Some(mut stream) = other {
        let _ = stream.read_to_string(&mut text);
    }
    let status = child.wait().expect("the command ends");
    let how = match (status.code(), status.signal()) {
        (Some(code), _) => format!("exit {code}"),
        (None, Some(SIGPIPE)) => "SIGPIPE".to_string(),
        (None, Some(other)) => format!("signal {other}"),
        (None, None) => "unknown".to_string(),
    };
    (how, text)
}

// Source: POSIX write(2) and signal(7) — writing to a pipe with no reader raises SIGPIPE, whose
// default action ends the process; common practice for command-line tools (`yes | head -1`).
#[test]
fn every_printing_command_ends_quietly_on_a_closed_pipe() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let config = repo().join("configs/paging_delay.toml");
    let config = config.to_str().unwrap();
    let ok = |args: &[&str]| {
        let out = Command::new(env!("CARGO_BIN_EXE_redress"))
            .args(args)
            .current_dir(d)
            .output()
            .unwrap();
        assert!(out.status.success(), "{args:?}: {out:?}");
    };
    ok(&[
        "stimulus",
        "sweep.wav",
        "--rate",
        "16000",
        "--seconds",
        "0.5",
    ]);
    ok(&[
        "simulate-recording",
        config,
        "sweep.wav",
        "heard.wav",
        "--snr-db",
        "60",
    ]);
    let cases: Vec<(&str, Vec<&str>, Closed)> = vec![
        ("demo", vec!["demo", "--seconds", "0.2"], Closed::Stdout),
        (
            "check --json",
            vec!["check", config, "--json"],
            Closed::Stdout,
        ),
        ("check", vec!["check", config], Closed::Stdout),
        (
            "compare",
            vec!["compare", "sweep.wav", "heard.wav"],
            Closed::Stdout,
        ),
        (
            "apply",
            vec!["apply", config, "heard.wav", "eq.wav"],
            Closed::Stdout,
        ),
        (
            "distort",
            vec!["distort", config, "sweep.wav", "d.wav"],
            Closed::Stdout,
        ),
        (
            "identify",
            vec!["identify", "sweep.wav", "heard.wav", "fit.toml"],
            Closed::Stdout,
        ),
        (
            "bench --json",
            vec!["bench", config, "--json", "--blocks", "20"],
            Closed::Stdout,
        ),
        ("stimulus", vec!["stimulus", "s2.wav"], Closed::Stdout),
        ("plot", vec!["plot", config, "pictures"], Closed::Stdout),
        ("devices", vec!["devices"], Closed::Stdout),
        (
            "status",
            vec!["status", "--socket", "nobody.sock"],
            Closed::Stderr,
        ),
        ("an error", vec!["check", "missing.toml"], Closed::Stderr),
        ("help", vec!["--help"], Closed::Stdout),
    ];
    let mut wrong = Vec::new();
    for (name, args, closed) in &cases {
        let (how, other) = run_into_closed_pipe(args, *closed, d);
        let quiet = !other.contains("panicked") && !other.contains("Broken pipe");
        let ended = how == "SIGPIPE" || how.starts_with("exit ");
        if !(quiet && ended) || how == "exit 101" {
            wrong.push(format!("{name}: {how}\n{other}"));
        }
    }
    assert!(wrong.is_empty(), "{}", wrong.join("\n"));
}

// Source: common practice for daemons — a client or a log reader going away must never end a
// service; the live service keeps SIGPIPE ignored and treats the failed write as lost.
#[test]
fn the_service_outlives_a_closed_log_pipe() {
    let dir = tempfile::tempdir().unwrap();
    let config = repo().join("configs/paging_delay.toml");
    let socket = dir.path().join("run/status.sock");
    let (how, _) = run_into_closed_pipe(
        &[
            "run",
            config.to_str().unwrap(),
            "--simulate",
            "--for",
            "0.5",
            "--socket",
            socket.to_str().unwrap(),
        ],
        Closed::Stderr,
        dir.path(),
    );
    assert_eq!(how, "exit 0", "the service must finish its run");
}
