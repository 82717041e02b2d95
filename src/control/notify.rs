//! Telling the init system how the service is doing (the sd_notify protocol: datagrams to the
//! socket named by `NOTIFY_SOCKET`). `READY=1` once the streams run, `STATUS=` with a one-line
//! summary whenever it changes, `RELOADING=1` … `READY=1` around a reload, `STOPPING=1` on the
//! way out, and `WATCHDOG=1` while healthy (`watchdog.rs` decides when). Without
//! `NOTIFY_SOCKET` (run by hand, by a test, by another supervisor) every call does nothing.

use std::time::Duration;

use log::debug;
use sd_notify::NotifyState;

#[derive(Debug, Default)]
pub struct Notifier {
    last_status: String,
}

impl Notifier {
    /// The watchdog period the init system asked for (`WATCHDOG_USEC`, for this process).
    pub fn watchdog_period() -> Option<Duration> {
        sd_notify::watchdog_enabled().filter(|p| !p.is_zero())
    }

    pub fn ready(&mut self, status: &str) {
        self.last_status = status.to_string();
        send(&[NotifyState::Ready, NotifyState::Status(status)]);
    }

    /// A reload begins. The monotonic time goes with it, as newer init systems require.
    pub fn reloading(&mut self) {
        match NotifyState::monotonic_usec_now() {
            Ok(now) => send(&[NotifyState::Reloading, now]),
            Err(_) => send(&[NotifyState::Reloading]),
        }
    }

    /// Sends `STATUS=` when the summary has changed since the last one sent.
    pub fn status(&mut self, status: &str) {
        if status != self.last_status {
            self.last_status = status.to_string();
            send(&[NotifyState::Status(status)]);
        }
    }

    pub fn stopping(&mut self) {
        send(&[
            NotifyState::Stopping,
            NotifyState::Status("stopping: fading out"),
        ]);
    }

    pub fn watchdog(&mut self) {
        send(&[NotifyState::Watchdog]);
    }
}

fn send(states: &[NotifyState]) {
    // A notification that cannot be sent changes nothing the service does; the init system
    // will notice a missing READY or WATCHDOG by itself.
    if let Err(e) = sd_notify::notify(states) {
        debug!("could not notify the init system: {e}");
    }
}
