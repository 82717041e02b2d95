//! The service and the init system: the real `redress run --simulate` with `NOTIFY_SOCKET`
//! pointing at a datagram socket this test owns (as systemd's would be) and `WATCHDOG_USEC` set.
//! It must say READY once the streams run, STATUS lines, RELOADING … READY around a reload,
//! STOPPING on the way out, and WATCHDOG pings while healthy — not while the stream is stalled,
//! and still while lost devices are being reopened with back-off.
//!
//! Source for the protocol: sd_notify(3) and sd_watchdog_enabled(3) (the variables, the
//! messages, pinging at half the watchdog period); systemd.service(5) (Type=notify,
//! WatchdogSec=).

mod service_support;

use std::os::unix::net::UnixDatagram;
use std::path::Path;
use std::sync::mpsc;
use std::time::{Duration, Instant};

use service_support::{start, temp_dir, Service, LINK_A, LINK_B};

/// A watchdog period short enough to see several pings in a few seconds.
const WATCHDOG_USEC: &str = "1000000";

/// Every datagram the service sends, with the moment it arrived.
struct NotifyListener {
    messages: mpsc::Receiver<(Instant, String)>,
    seen: Vec<(Instant, String)>,
}

impl NotifyListener {
    fn bind(path: &Path) -> Self {
        let socket = UnixDatagram::bind(path).expect("the test's notify socket");
        let (tx, rx) = mpsc::channel();
        std::thread::spawn(move || {
            let mut buf = [0u8; 4096];
            while let Ok(n) = socket.recv(&mut buf) {
                let text = String::from_utf8_lossy(&buf[..n]).into_owned();
                if tx.send((Instant::now(), text)).is_err() {
                    return;
                }
            }
        });
        Self {
            messages: rx,
            seen: Vec::new(),
        }
    }

    /// Collects datagrams until one contains `line` (as a whole line); panics after `patience`.
    fn wait_for(&mut self, line: &str, patience: Duration, svc: &mut Service) -> Instant {
        let until = Instant::now() + patience;
        loop {
            if let Some(status) = svc.child.try_wait().unwrap() {
                panic!("the service exited ({status}):\n{}", svc.log_text());
            }
            match self.messages.recv_timeout(Duration::from_millis(100)) {
                Ok((at, text)) => {
                    self.seen.push((at, text.clone()));
                    if text.lines().any(|l| l == line) {
                        return at;
                    }
                }
                Err(_) if Instant::now() < until => {}
                Err(_) => panic!(
                    "no {line:?} within {patience:?}; seen: {:?}\n{}",
                    self.texts(),
                    svc.log_text()
                ),
            }
        }
    }

    /// Collects everything that arrives in the next `span`.
    fn collect(&mut self, span: Duration) {
        let until = Instant::now() + span;
        while let Some(left) = until.checked_duration_since(Instant::now()) {
            if let Ok(m) = self.messages.recv_timeout(left) {
                self.seen.push(m);
            }
        }
    }

    /// Watchdog pings that arrived in [from, to).
    fn pings(&self, from: Instant, to: Instant) -> usize {
        self.seen
            .iter()
            .filter(|(at, text)| *at >= from && *at < to && text.lines().any(|l| l == "WATCHDOG=1"))
            .count()
    }

    fn texts(&self) -> Vec<&str> {
        self.seen.iter().map(|(_, t)| t.as_str()).collect()
    }
}

fn start_notified(dir: &Path, config: &Path, args: &[&str]) -> (Service, NotifyListener) {
    let notify = dir.join("notify.sock");
    let listener = NotifyListener::bind(&notify);
    let mut all = vec!["--simulate"];
    all.extend_from_slice(args);
    let svc = start(
        dir,
        config,
        &all,
        &[
            ("NOTIFY_SOCKET", &notify),
            ("WATCHDOG_USEC", Path::new(WATCHDOG_USEC)),
        ],
    );
    (svc, listener)
}

const PATIENCE: Duration = Duration::from_secs(60);

#[test]
fn ready_status_reloading_stopping_and_watchdog_reach_the_init_system() {
    let dir = temp_dir("notify-protocol");
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    let (mut svc, mut notify) = start_notified(&dir, &config, &[]);

    let ready = notify.wait_for("READY=1", PATIENCE, &mut svc);
    let first = notify.seen.last().unwrap().1.clone();
    assert!(
        first
            .lines()
            .any(|l| l.starts_with("STATUS=generation 1 running")),
        "READY comes with a one-line status: {first:?}"
    );
    // The streams run by the time READY is sent.
    let doc = svc.wait_ready();
    assert_eq!(doc["audio"]["state"], "running");

    // Pings at half the period (0.5 s) while audio flows: at least 3 in 2.5 s.
    notify.collect(Duration::from_millis(2500));
    let pings = notify.pings(ready, Instant::now());
    assert!(pings >= 3, "{pings} pings: {:?}", notify.texts());

    std::fs::write(&config, LINK_B).unwrap();
    svc.signal("HUP");
    let reloading = notify.wait_for("RELOADING=1", PATIENCE, &mut svc);
    let message = notify.seen.last().unwrap().1.clone();
    assert!(
        message.lines().any(|l| l.starts_with("MONOTONIC_USEC=")),
        "RELOADING=1 carries the monotonic time newer init systems require: {message:?}"
    );
    let back = notify.wait_for("READY=1", PATIENCE, &mut svc);
    assert!(back > reloading);
    let summary = &notify.seen.last().unwrap().1;
    assert!(
        summary.contains("generation 2 loaded") && summary.contains("reloads 1 ok"),
        "{summary:?}"
    );

    svc.signal("TERM");
    notify.wait_for("STOPPING=1", PATIENCE, &mut svc);
    assert_eq!(svc.wait_exit().code(), Some(0), "{}", svc.log_text());
}

#[test]
fn a_stalled_stream_stops_the_watchdog_pings() {
    let dir = temp_dir("notify-stall");
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    let (mut svc, mut notify) = start_notified(&dir, &config, &["--fault-drill", "stall@3"]);
    let ready = notify.wait_for("READY=1", PATIENCE, &mut svc);
    notify.wait_for("WATCHDOG=1", PATIENCE, &mut svc);
    wait_log(&mut svc, "the simulated stream stalls now");
    let since = Instant::now();
    let frames = svc.status().unwrap()["engine"]["frames"].as_u64().unwrap();
    // A ping already due when the stall came may still go out; after a whole period none may.
    notify.collect(Duration::from_secs(4));
    let late = notify.pings(since + Duration::from_millis(1000), Instant::now());
    assert_eq!(
        late,
        0,
        "pings while the stream stands still (started {:?} before the stall): {:?}",
        since - ready,
        notify.texts()
    );
    // The stream really stands still, and the service is otherwise alive: it still answers.
    let doc = svc.status().expect("the control side still answers");
    assert_eq!(doc["engine"]["frames"].as_u64().unwrap(), frames);
    svc.signal("TERM");
    assert_eq!(svc.wait_exit().code(), Some(0), "{}", svc.log_text());
}

/// Waits until the service's log holds `text`.
fn wait_log(svc: &mut Service, text: &str) {
    let started = Instant::now();
    while !svc.log_text().contains(text) {
        if let Some(status) = svc.child.try_wait().unwrap() {
            panic!("the service exited ({status}):\n{}", svc.log_text());
        }
        assert!(
            started.elapsed() < PATIENCE,
            "no {text:?} in\n{}",
            svc.log_text()
        );
        std::thread::sleep(Duration::from_millis(50));
    }
}

#[test]
fn a_device_lost_under_back_off_keeps_the_watchdog_fed() {
    let dir = temp_dir("notify-loss");
    let config = dir.join("link.toml");
    std::fs::write(&config, LINK_A).unwrap();
    let (mut svc, mut notify) = start_notified(&dir, &config, &["--fault-drill", "loss@2+5"]);
    notify.wait_for("READY=1", PATIENCE, &mut svc);
    let lost = svc.wait_for("the drill's device loss", |d| {
        d["audio"]["state"] == "recovering"
    });
    assert_eq!(lost["audio"]["device_losses"], 1);
    let since = Instant::now();
    notify.collect(Duration::from_millis(2500));
    let still = svc.status().unwrap();
    assert_eq!(
        still["audio"]["state"], "recovering",
        "the device is still away (it comes back 5 s after the loss)"
    );
    let pings = notify.pings(since, Instant::now());
    assert!(
        pings >= 3,
        "{pings} pings in 2.5 s of declared recovery: {:?}",
        notify.texts()
    );
    // The devices come back; pings go on with the audio.
    svc.wait_for("the recovery", |d| {
        d["audio"]["recoveries"] == 1 && d["audio"]["state"] == "running"
    });
    let log = svc.log_text();
    assert!(log.contains("next try in"), "retried with back-off:\n{log}");
    let back = Instant::now();
    notify.collect(Duration::from_millis(1500));
    assert!(
        notify.pings(back, Instant::now()) >= 2,
        "{:?}",
        notify.texts()
    );
    svc.signal("TERM");
    assert_eq!(svc.wait_exit().code(), Some(0), "{}", svc.log_text());
}
