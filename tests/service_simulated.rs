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

    let swapped = svc.reload_to_generation(&config, LINK_B, 2);
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

/// `redress run CONFIG --simulate` with no --socket, in an environment of the test's making
/// (no XDG_RUNTIME_DIR; TMPDIR and HOME given), stderr to DIR/service.log.
fn start_default_socket(
    dir: &std::path::Path,
    config: &std::path::Path,
    tmp: &std::path::Path,
    home: &std::path::Path,
) -> service_support::Service {
    let log = dir.join("service.log");
    let child = std::process::Command::new(env!("CARGO_BIN_EXE_redress"))
        .arg("run")
        .arg(config)
        .arg("--simulate")
        .env_remove("XDG_RUNTIME_DIR")
        .env_remove("XDG_CACHE_HOME")
        .env("TMPDIR", tmp)
        .env("HOME", home)
        .stdin(std::process::Stdio::null())
        .stdout(std::process::Stdio::null())
        .stderr(std::fs::File::create(&log).unwrap())
        .spawn()
        .unwrap();
    service_support::Service {
        child,
        socket: home.join(".cache/redress/status.sock"),
        log,
    }
}

/// Puts something in the way at a path.
type Plant = Box<dyn Fn(&std::path::Path)>;

// Source: common practice for sockets in a shared temporary directory (anyone may create a
// name there first, or plant a symbolic link): the folder is created or checked without
// following links, must be the user's own and closed to others, and otherwise the service
// falls back to a folder in the user's home instead of refusing to start or following the link.
#[test]
fn default_socket_falls_back_when_the_shared_folder_is_not_safe() {
    use std::os::unix::fs::MetadataExt;
    let dir = temp_dir("svc-socket-fallback");
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    let uid = redress::control::current_uid().unwrap();
    let mut plants: Vec<(&str, Plant)> = Vec::new();
    // A link to a folder of someone else's choosing.
    let elsewhere = dir.join("elsewhere");
    std::fs::create_dir(&elsewhere).unwrap();
    std::fs::set_permissions(&elsewhere, std::fs::Permissions::from_mode(0o700)).unwrap();
    let target = elsewhere.clone();
    plants.push((
        "a symbolic link",
        Box::new(move |p| std::os::unix::fs::symlink(&target, p).unwrap()),
    ));
    // A folder open to everyone (what another user could have made, but owned by us here).
    plants.push((
        "a folder open to others",
        Box::new(|p| {
            std::fs::create_dir(p).unwrap();
            std::fs::set_permissions(p, std::fs::Permissions::from_mode(0o777)).unwrap();
        }),
    ));
    if uid == 0 {
        // Running as root: a folder that really belongs to another user.
        plants.push((
            "another user's folder",
            Box::new(|p| {
                std::fs::create_dir(p).unwrap();
                std::fs::set_permissions(p, std::fs::Permissions::from_mode(0o700)).unwrap();
                std::os::unix::fs::chown(p, Some(1), Some(1)).unwrap();
            }),
        ));
    }
    for (i, (what, plant)) in plants.iter().enumerate() {
        let tmp = dir.join(format!("tmp{i}"));
        let home = dir.join(format!("home{i}"));
        std::fs::create_dir_all(&tmp).unwrap();
        std::fs::create_dir_all(&home).unwrap();
        let shared = tmp.join(format!("redress-{uid}"));
        plant(&shared);
        let mut svc = start_default_socket(&dir, &config, &tmp, &home);
        svc.wait_ready();
        let meta = std::fs::symlink_metadata(&svc.socket).unwrap();
        assert!(
            std::os::unix::fs::FileTypeExt::is_socket(&meta.file_type()),
            "{what}"
        );
        let folder = std::fs::metadata(svc.socket.parent().unwrap()).unwrap();
        assert_eq!(
            (folder.uid(), folder.permissions().mode() & 0o777),
            (uid, 0o700),
            "{what}"
        );
        assert_eq!(
            std::fs::read_dir(&elsewhere).unwrap().count(),
            0,
            "{what}: something was created through the link"
        );
        // `redress status` finds it by the same rules.
        let status = std::process::Command::new(env!("CARGO_BIN_EXE_redress"))
            .args(["status", "--json"])
            .env_remove("XDG_RUNTIME_DIR")
            .env_remove("XDG_CACHE_HOME")
            .env("TMPDIR", &tmp)
            .env("HOME", &home)
            .output()
            .unwrap();
        assert!(
            status.status.success(),
            "{what}: {}",
            String::from_utf8_lossy(&status.stderr)
        );
        svc.signal("TERM");
        assert_eq!(svc.wait_exit().code(), Some(0), "{what}");
        assert!(
            svc.log_text().contains("instead"),
            "{what}: {}",
            svc.log_text()
        );
    }
}

// Source: common practice for single-instance services — a lock beside the socket, taken before
// a stale socket is removed and a new one bound, decides which of two services owns it.
#[test]
fn the_socket_lock_lets_exactly_one_instance_run() {
    let dir = temp_dir("svc-lock");
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    let run = dir.join("run");
    std::fs::create_dir_all(&run).unwrap();
    std::fs::set_permissions(&run, std::fs::Permissions::from_mode(0o700)).unwrap();
    let socket = run.join("status.sock");

    // Whoever holds the lock owns the socket path, even before a socket exists.
    let held = std::fs::File::create(run.join("status.sock.lock")).unwrap();
    held.try_lock().unwrap();
    let refused = std::process::Command::new(env!("CARGO_BIN_EXE_redress"))
        .arg("run")
        .arg(&config)
        .arg("--simulate")
        .args(["--for", "10"]) // should it start after all, it stops by itself
        .arg("--socket")
        .arg(&socket)
        .stdin(std::process::Stdio::null())
        .output()
        .unwrap();
    assert_eq!(
        refused.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&refused.stderr)
    );
    assert!(String::from_utf8_lossy(&refused.stderr).contains("already running"));
    assert!(!socket.exists(), "the refused instance touched the socket");
    drop(held);

    // Several started together over a stale socket: one runs, the others refuse.
    drop(std::os::unix::net::UnixListener::bind(&socket).unwrap());
    let mut services: Vec<_> = (0..4)
        .map(|_| start(&dir, &config, &["--simulate"], &[]))
        .collect();
    let survivor = loop {
        let running: Vec<usize> = (0..services.len())
            .filter(|&i| services[i].child.try_wait().unwrap().is_none())
            .collect();
        if running.len() == 1 && services[running[0]].status().is_some() {
            break running[0];
        }
        assert!(!running.is_empty(), "every instance exited");
        std::thread::sleep(std::time::Duration::from_millis(50));
    };
    let doc = services[survivor].status().unwrap();
    assert_eq!(u(&doc, "/pid"), u64::from(services[survivor].child.id()));
    for (i, svc) in services.iter_mut().enumerate() {
        if i != survivor {
            assert_eq!(svc.wait_exit().code(), Some(1));
        }
    }
    services[survivor].signal("TERM");
    assert_eq!(services[survivor].wait_exit().code(), Some(0));
}
