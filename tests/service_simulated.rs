//! The live service on its real-time simulated link (no sound card needed): reloads on SIGHUP,
//! good and bad; orderly and immediate stops; the status socket's protection and protocol.

mod service_support;

use std::io::{Read, Write};
use std::os::unix::fs::PermissionsExt;
use std::os::unix::net::UnixStream;

use service_support::{start, temp_dir, u, BROKEN, LINK_A, LINK_B};

// Source: common practice for services — a reload that fails must leave the running filters
// alone; a good one must take effect; TERM must end cleanly with status 0.
#[test]
fn good_reload_swaps_bad_reload_changes_nothing_and_term_exits_zero() {
    let dir = temp_dir("svc-reload");
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    let mut svc = start(
        &dir,
        &config,
        &["--simulate", "--true-link", &config.to_string_lossy()],
        &[],
    );
    let first = svc.wait_ready();
    assert_eq!(u(&first, "/config_generation"), 1);

    std::fs::write(&config, LINK_B).unwrap();
    svc.signal("HUP");
    let swapped = svc.wait_for("generation 2 to run", |d| {
        d.pointer("/engine/running_generation")
            .and_then(|v| v.as_u64())
            == Some(2)
    });
    assert_eq!(u(&swapped, "/reloads/succeeded"), 1);
    assert_eq!(u(&swapped, "/engine/swaps_completed"), 1);

    std::fs::write(&config, BROKEN).unwrap();
    svc.signal("HUP");
    let rejected = svc.wait_for("the bad reload to be rejected", |d| {
        d.pointer("/reloads/failed").and_then(|v| v.as_u64()) == Some(1)
    });
    assert_eq!(
        u(&rejected, "/config_generation"),
        2,
        "the bad config must not count"
    );
    assert_eq!(u(&rejected, "/engine/running_generation"), 2);
    let last_error = rejected["reloads"]["last_error"].as_str().unwrap_or("");
    assert!(
        last_error.contains("link.toml:7"),
        "error names file and line: {last_error}"
    );
    // The audio keeps flowing after the rejected reload.
    let frames = u(&rejected, "/engine/frames");
    let later = svc.wait_for("more audio", |d| {
        d.pointer("/engine/frames").and_then(|v| v.as_u64()) > Some(frames + 4800)
    });
    assert_eq!(u(&later, "/engine/instability_trips"), 0);

    svc.signal("TERM");
    let status = svc.wait_exit();
    assert_eq!(status.code(), Some(0), "{}", svc.log_text());
    let log = svc.log_text();
    assert!(
        log.contains("reload rejected, generation 2 keeps running"),
        "{log}"
    );
    assert!(log.contains("generation 2 is running"), "{log}");
    assert!(log.contains("stopped"), "{log}");
    assert!(!svc.socket.exists(), "the socket is removed on exit");
}

// Source: common practice — a second TERM while the first is being handled exits at once
// (here: during a 10 s fade-out, the second signal ends the process with status 130).
#[test]
fn second_term_exits_at_once() {
    let dir = temp_dir("svc-second-term");
    let config = dir.join("link.toml");
    std::fs::write(
        &config,
        format!("{LINK_A}\n[engine]\nfade_out_ms = 10000\n"),
    )
    .unwrap();
    let mut svc = start(&dir, &config, &["--simulate"], &[]);
    svc.wait_ready();
    svc.signal("TERM");
    svc.wait_for("nothing", |_| true); // still answering while it fades out
    std::thread::sleep(std::time::Duration::from_millis(200));
    svc.signal("TERM");
    let status = svc.wait_exit();
    assert_eq!(status.code(), Some(130), "{}", svc.log_text());
}

// Source: common practice for local control sockets — owner-only, one service per socket, and
// garbage answered with an error, not a crash.
#[test]
fn status_socket_is_private_single_and_robust() {
    let dir = temp_dir("svc-socket");
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    let mut svc = start(&dir, &config, &["--simulate"], &[]);
    svc.wait_ready();
    let mode = |p: &std::path::Path| std::fs::metadata(p).unwrap().permissions().mode() & 0o777;
    assert_eq!(mode(&svc.socket), 0o600, "socket owner-only");
    assert_eq!(
        mode(svc.socket.parent().unwrap()),
        0o700,
        "socket directory owner-only"
    );

    // A second instance on the same socket refuses with a clear message.
    let second = std::process::Command::new(env!("CARGO_BIN_EXE_redress"))
        .arg("run")
        .arg(&config)
        .arg("--simulate")
        .arg("--socket")
        .arg(&svc.socket)
        .stdin(std::process::Stdio::null())
        .output()
        .unwrap();
    assert_eq!(second.status.code(), Some(1));
    let err = String::from_utf8_lossy(&second.stderr);
    assert!(err.contains("already running"), "{err}");

    // Garbage and oversized requests get an error document; the service carries on.
    for request in [
        &b"hello\n"[..],
        &[0xffu8, 0xfe, b'\n'][..],
        &vec![b'x'; 4096][..],
    ] {
        let mut s = UnixStream::connect(&svc.socket).unwrap();
        let _ = s.write_all(request);
        let mut reply = String::new();
        s.read_to_string(&mut reply).unwrap();
        let doc: serde_json::Value = serde_json::from_str(reply.trim()).unwrap();
        assert!(doc["error"].is_string(), "{reply}");
    }
    // A client that connects and says nothing is cut off; others are still served.
    let _silent = UnixStream::connect(&svc.socket).unwrap();
    assert!(svc.status().is_some());

    svc.signal("TERM");
    assert_eq!(svc.wait_exit().code(), Some(0));
}

#[test]
fn stale_socket_is_taken_over() {
    let dir = temp_dir("svc-stale");
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    let run = dir.join("run");
    std::fs::create_dir_all(&run).unwrap();
    std::fs::set_permissions(&run, std::fs::Permissions::from_mode(0o700)).unwrap();
    // A socket file with no one listening: what a crashed service leaves behind.
    drop(std::os::unix::net::UnixListener::bind(run.join("status.sock")).unwrap());
    assert!(run.join("status.sock").exists());
    let mut svc = start(&dir, &config, &["--simulate"], &[]);
    svc.wait_ready();
    svc.signal("INT");
    assert_eq!(svc.wait_exit().code(), Some(0));
}

#[test]
fn bad_initial_config_refuses_to_start() {
    let dir = temp_dir("svc-bad-start");
    let config = dir.join("link.toml");
    std::fs::write(&config, BROKEN).unwrap();
    let mut svc = start(&dir, &config, &["--simulate"], &[]);
    let status = svc.wait_exit();
    assert_eq!(status.code(), Some(2));
    assert!(svc.log_text().contains("link.toml:7"), "{}", svc.log_text());
}

#[test]
fn status_command_reads_the_service() {
    let dir = temp_dir("svc-status-cmd");
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    let mut svc = start(&dir, &config, &["--simulate"], &[]);
    svc.wait_for("the first error measurement", |d| {
        d.pointer("/simulated/error_after_db")
            .is_some_and(|v| v.is_f64())
    });
    let text = std::process::Command::new(env!("CARGO_BIN_EXE_redress"))
        .args(["status", "--socket"])
        .arg(&svc.socket)
        .output()
        .unwrap();
    let out = String::from_utf8_lossy(&text.stdout);
    assert!(out.contains("generation 1 running"), "{out}");
    assert!(out.contains("link error"), "{out}");
    let json = std::process::Command::new(env!("CARGO_BIN_EXE_redress"))
        .args(["status", "--json", "--socket"])
        .arg(&svc.socket)
        .output()
        .unwrap();
    let doc: serde_json::Value = serde_json::from_slice(&json.stdout).unwrap();
    // The simulated link is equalized: the error after correction is far below the error before.
    let before = doc["simulated"]["error_before_db"].as_f64().unwrap();
    let after = doc["simulated"]["error_after_db"].as_f64().unwrap();
    assert!(
        after < before - 20.0,
        "before {before} dB, after {after} dB"
    );
    svc.signal("TERM");
    assert_eq!(svc.wait_exit().code(), Some(0));
}
