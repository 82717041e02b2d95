//! Faults while the service runs, on its real-time simulated link (no sound card needed): the
//! config file going bad in every way a file can, a storm of SIGHUPs, and a status socket under
//! load from many, silent, oversized and never-reading clients. In every case the running
//! filters keep running, the audio keeps flowing, and the control thread keeps answering.

mod service_support;

use std::io::{Read, Write};
use std::os::unix::fs::PermissionsExt;
use std::os::unix::net::UnixStream;
use std::path::Path;
use std::process::Command;
use std::time::Duration;

use serde_json::Value;
use service_support::{example_unit_value, start, temp_dir, u, Service, BROKEN, LINK_A, LINK_B};

fn generation_running(d: &Value) -> u64 {
    d.pointer("/engine/running_generation")
        .and_then(Value::as_u64)
        .unwrap_or(0)
}

/// Waits until the engine has run `frames` more frames than in `doc`: the audio still flows.
fn audio_flows_on(svc: &mut Service, doc: &Value, what: &str) -> Value {
    let frames = u(doc, "/engine/frames");
    svc.wait_for(what, move |d| {
        d.pointer("/engine/frames").and_then(Value::as_u64) > Some(frames + 4800)
    })
}

/// Sends HUP and waits for the reload to be rejected; returns the status and the error text.
fn rejected_reload(svc: &mut Service, failed_before: u64) -> (Value, String) {
    svc.signal("HUP");
    let doc = svc.wait_for("the reload to be rejected", move |d| {
        d.pointer("/reloads/failed").and_then(Value::as_u64) == Some(failed_before + 1)
    });
    let why = doc["reloads"]["last_error"]
        .as_str()
        .unwrap_or_default()
        .to_string();
    (doc, why)
}

/// Replaces `path` (whatever it is now) with `text`, atomically, as a careful editor would.
fn replace_atomically(path: &Path, text: &str) {
    let tmp = path.with_extension("toml.new");
    std::fs::write(&tmp, text).unwrap();
    std::fs::rename(&tmp, path).unwrap();
}

fn remove_any(path: &Path) {
    match std::fs::symlink_metadata(path) {
        Ok(m) if m.is_dir() => std::fs::remove_dir_all(path).unwrap(),
        Ok(_) => std::fs::remove_file(path).unwrap(),
        Err(_) => {}
    }
}

// Source: common practice for services that reload on SIGHUP — whatever the config file has
// become, a failed reload leaves the running filters alone and says why. Each case below is
// something that happens to real config files: an editor caught mid-write, a file deleted,
// replaced by a directory, by a named pipe (which a naive reader would wait on forever), by a
// symbolic link loop (unreadable even for root), by bytes that are not text, by something huge.
#[test]
fn a_config_gone_bad_in_any_way_leaves_the_running_filter_alone() {
    let dir = temp_dir("faults-config");
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    let mut svc = start(&dir, &config, &["--simulate"], &[]);
    let mut doc = svc.wait_ready();
    assert_eq!(generation_running(&doc), 1);

    type Damage = Box<dyn Fn(&Path)>;
    let cases: Vec<(&str, Damage, &str)> = vec![
        (
            "caught mid-write",
            // The first 150 bytes of a good config: the file as an editor leaves it half-way.
            Box::new(|p: &Path| std::fs::write(p, &LINK_B.as_bytes()[..150]).unwrap()),
            "link.toml:",
        ),
        (
            "deleted",
            // Already removed before each case.
            Box::new(|_: &Path| {}),
            "no such file",
        ),
        (
            "turned into a directory",
            Box::new(|p: &Path| std::fs::create_dir(p).unwrap()),
            "directory",
        ),
        (
            "turned into a named pipe",
            Box::new(|p: &Path| {
                let ok = Command::new("mkfifo").arg(p).status().unwrap().success();
                assert!(ok, "mkfifo");
            }),
            "named pipe",
        ),
        (
            "a symbolic link loop (unreadable, even for root)",
            Box::new(|p: &Path| std::os::unix::fs::symlink(p, p).unwrap()),
            "symbolic links",
        ),
        (
            "not text",
            Box::new(|p: &Path| std::fs::write(p, b"[link]\nsample_rate_hz = \xff\xfe\n").unwrap()),
            "not UTF-8",
        ),
        (
            "far too large",
            Box::new(|p: &Path| {
                let f = std::fs::File::create(p).unwrap();
                f.set_len(redress::model::config::MAX_CONFIG_BYTES + 1)
                    .unwrap();
            }),
            "more than the",
        ),
    ];
    let mut failed = 0;
    for (what, damage, cause) in &cases {
        remove_any(&config);
        damage(&config);
        let (after, why) = rejected_reload(&mut svc, failed);
        failed += 1;
        assert!(
            why.contains(cause),
            "{what}: the error names the cause: {why}"
        );
        assert_eq!(u(&after, "/config_generation"), 1, "{what}");
        assert_eq!(generation_running(&after), 1, "{what}");
        doc = audio_flows_on(&mut svc, &after, what);
        assert_eq!(u(&doc, "/engine/instability_trips"), 0, "{what}");
    }
    // Unreadable by permission: root reads through any mode bits, so this only bites for an
    // ordinary user (the symbolic link loop above is the unreadable file root cannot read).
    if redress::control::current_uid() != Some(0) {
        remove_any(&config);
        std::fs::write(&config, LINK_B).unwrap();
        std::fs::set_permissions(&config, std::fs::Permissions::from_mode(0o000)).unwrap();
        let (_, why) = rejected_reload(&mut svc, failed);
        failed += 1;
        assert!(why.contains("permission"), "{why}");
    }

    // A good config again: it is taken, and the log told every story on the way.
    remove_any(&config);
    replace_atomically(&config, LINK_B);
    svc.signal("HUP");
    let done = svc.wait_for("generation 2 to run", |d| generation_running(d) == 2);
    assert_eq!(u(&done, "/reloads/failed"), failed);
    assert_eq!(u(&done, "/reloads/succeeded"), 1);
    svc.signal("TERM");
    assert_eq!(svc.wait_exit().code(), Some(0), "{}", svc.log_text());
    let log = svc.log_text();
    assert_eq!(
        log.matches("reload rejected, generation 1 keeps running")
            .count() as u64,
        failed,
        "{log}"
    );
}

/// A good config of the storm: link B under its own label, so the status shows which one won.
fn labelled(label: &str) -> String {
    LINK_B.replace("test line B", label)
}

// Source: common practice for SIGHUP handling — signals of one kind that arrive before the
// first is handled coalesce (POSIX delivers a pending signal once); every reload the service
// does perform reads the file as it is then, and the one after the last HUP decides.
#[test]
fn a_storm_of_a_hundred_reloads_ends_on_the_last_good_config() {
    let dir = temp_dir("faults-storm");
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    let mut svc = start(&dir, &config, &["--simulate"], &[]);
    let first = svc.wait_ready();
    let frames_before = u(&first, "/engine/frames");

    for i in 0..100 {
        // A mix of good configs (two kinds), broken ones, and files caught half-written.
        let good = labelled(&format!("storm config {i}"));
        match i % 4 {
            0 | 2 => std::fs::write(&config, &good).unwrap(),
            1 => std::fs::write(&config, BROKEN).unwrap(),
            _ => std::fs::write(&config, &good.as_bytes()[..good.len() / 2]).unwrap(),
        }
        svc.signal("HUP");
        // About 100 signals in a second.
        std::thread::sleep(Duration::from_millis(9));
    }
    let last = "storm config, the last good one";
    replace_atomically(&config, &labelled(last));
    svc.signal("HUP");

    let done = svc.wait_for("the last good config to run", |d| {
        d["paths"][0]["label"].as_str() == Some(last)
            && generation_running(d) == d["config_generation"].as_u64().unwrap_or(0)
    });
    let succeeded = u(&done, "/reloads/succeeded");
    let failed = u(&done, "/reloads/failed");
    eprintln!(
        "storm: 101 HUPs sent, {} reloads done ({succeeded} good, {failed} rejected), \
         generation {} running, {} swaps completed, {} frames",
        succeeded + failed,
        u(&done, "/config_generation"),
        u(&done, "/engine/swaps_completed"),
        u(&done, "/engine/frames")
    );
    assert!(succeeded >= 1 && succeeded + failed <= 101);
    assert_eq!(u(&done, "/config_generation"), 1 + succeeded);
    assert!(u(&done, "/engine/frames") > frames_before);
    assert_eq!(u(&done, "/engine/instability_trips"), 0);
    assert_eq!(u(&done, "/engine/return_queue_full"), 0);
    assert_eq!(u(&done, "/engine/events_dropped"), 0);
    audio_flows_on(&mut svc, &done, "audio after the storm");
    svc.signal("TERM");
    assert_eq!(svc.wait_exit().code(), Some(0), "{}", svc.log_text());
}

fn raw_request(socket: &Path, request: &[u8]) -> Option<Value> {
    let mut s = UnixStream::connect(socket).ok()?;
    s.set_read_timeout(Some(Duration::from_secs(10))).ok()?;
    let _ = s.write_all(request);
    let mut reply = String::new();
    s.read_to_string(&mut reply).ok()?;
    serde_json::from_str(reply.trim()).ok()
}

// Source: common practice for local control sockets — a hostile or broken client may waste its
// own time, never the service's: the audio and the control thread go on, other clients are
// served, and the socket stays owner-only.
#[test]
fn the_status_socket_survives_crowds_silence_floods_and_clients_that_never_read() {
    let dir = temp_dir("faults-socket");
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    let mut svc = start(&dir, &config, &["--simulate"], &[]);
    let first = svc.wait_ready();
    let socket = svc.socket.clone();

    // Clients that connect and say nothing, and clients that ask and never read the answer,
    // all held open while everything else happens.
    let mut hostile: Vec<UnixStream> = (0..12)
        .map(|_| UnixStream::connect(&socket).unwrap())
        .collect();
    for _ in 0..12 {
        let mut s = UnixStream::connect(&socket).unwrap();
        s.write_all(b"status\n").unwrap();
        hostile.push(s);
    }
    // A flood: a megabyte where a line of six bytes is expected.
    let flood = {
        let socket = socket.clone();
        std::thread::spawn(move || {
            let mut s = UnixStream::connect(&socket).unwrap();
            s.set_write_timeout(Some(Duration::from_secs(10))).unwrap();
            let _ = s.write_all(&vec![b'x'; 1 << 20]);
        })
    };
    // A crowd: 48 clients at once, each asking five times; garbage from some of them.
    let crowd: Vec<_> = (0..48)
        .map(|i| {
            let socket = socket.clone();
            std::thread::spawn(move || {
                let (mut documents, mut busy) = (0, 0);
                for k in 0..5 {
                    let garbage = (i + k) % 7 == 0;
                    let request: &[u8] = if garbage {
                        b"\x00\x01garbage\n"
                    } else {
                        b"status\n"
                    };
                    let doc = raw_request(&socket, request).expect("every client gets an answer");
                    match doc["error"].as_str() {
                        None if !garbage => documents += 1,
                        Some(e) if e.contains("busy") => busy += 1,
                        Some(_) if garbage => {}
                        _ => panic!("unexpected answer to {request:?}: {doc}"),
                    }
                }
                (documents, busy)
            })
        })
        .collect();

    // Meanwhile the control thread reloads as asked, and the audio flows.
    std::fs::write(&config, LINK_B).unwrap();
    svc.signal("HUP");
    let swapped = svc.wait_for("generation 2 to run despite the clients", |d| {
        generation_running(d) == 2
    });
    audio_flows_on(&mut svc, &swapped, "audio with the socket under load");
    let (documents, busy) = crowd
        .into_iter()
        .map(|t| t.join().unwrap())
        .fold((0, 0), |(d, b), (d1, b1)| (d + d1, b + b1));
    flood.join().unwrap();
    eprintln!(
        "socket under load: 240 crowd requests beside 24 hostile clients and a 1 MiB flood: \
         {documents} status documents, {busy} told busy, the rest garbage answered with an error"
    );
    assert!(documents > 0);
    assert!(u(&swapped, "/engine/frames") > u(&first, "/engine/frames"));

    // Every kind of garbage gets an error document, never a crash.
    for request in [
        &b"\n"[..],
        &b"STATUS\n"[..],
        &b"status please\n"[..],
        &b"{\"request\": \"status\"}\n"[..],
        &[0u8; 64][..],
    ] {
        let doc = raw_request(&socket, request).expect("an answer");
        assert!(doc["error"].is_string(), "{request:?}: {doc}");
    }
    drop(hostile);
    let mode = std::fs::metadata(&socket).unwrap().permissions().mode() & 0o777;
    assert_eq!(mode, 0o600, "the socket stays owner-only");
    assert!(svc.status().is_some());
    svc.signal("TERM");
    assert_eq!(svc.wait_exit().code(), Some(0), "{}", svc.log_text());
}

// Source: common practice — a service that needs no privileges says so when started as root.
#[test]
fn running_as_root_is_warned_about() {
    let dir = temp_dir("faults-root");
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    let mut svc = start(&dir, &config, &["--simulate", "--for", "0.5"], &[]);
    assert_eq!(svc.wait_exit().code(), Some(0), "{}", svc.log_text());
    let warned = svc.log_text().contains("running as root");
    assert_eq!(
        warned,
        redress::control::current_uid() == Some(0),
        "{}",
        svc.log_text()
    );
}

// Source: systemd.exec(5) — the unit's hardening options; common practice for audio daemons
// to run as an ordinary user in the audio group.
#[test]
fn the_example_unit_runs_unprivileged_and_hardened() {
    let value = |key: &str| example_unit_value("redress.service", key);
    let user = value("User").expect("User=");
    assert!(!user.is_empty() && user != "root" && user != "0", "{user}");
    for (key, expected) in [
        ("NoNewPrivileges", "yes"),
        ("ProtectSystem", "strict"),
        ("ProtectHome", "yes"),
        ("PrivateTmp", "yes"),
        ("PrivateNetwork", "yes"),
        ("RestrictAddressFamilies", "AF_UNIX"),
        ("CapabilityBoundingSet", ""),
        ("RuntimeDirectoryMode", "0700"),
        ("UMask", "0077"),
        ("RestrictSUIDSGID", "yes"),
        ("ExecReload", "/bin/kill -HUP $MAINPID"),
    ] {
        assert_eq!(value(key).as_deref(), Some(expected), "{key}");
    }
}

// Source: systemd.exec(5) — LimitRTPRIO= and LimitMEMLOCK= set RLIMIT_RTPRIO and
// RLIMIT_MEMLOCK, and RestrictRealtime=yes refuses real-time scheduling whatever the limit;
// sched(7) — an unprivileged thread may take SCHED_FIFO up to RLIMIT_RTPRIO.
#[test]
fn every_example_unit_allows_the_default_callback_priority_and_locked_memory() {
    for name in [
        "redress.service",
        "redress-user.service",
        "redress@.service",
    ] {
        let value = |key: &str| example_unit_value(name, key);
        let rtprio: u8 = value("LimitRTPRIO")
            .and_then(|v| v.parse().ok())
            .unwrap_or_else(|| panic!("{name}: LimitRTPRIO= missing or not a number"));
        assert!(
            rtprio >= redress::model::DEFAULT_CALLBACK_PRIORITY,
            "{name}: LimitRTPRIO={rtprio}"
        );
        assert_eq!(value("LimitMEMLOCK").as_deref(), Some("infinity"), "{name}");
        assert_ne!(value("RestrictRealtime").as_deref(), Some("yes"), "{name}");
    }
}
