//! Signals the service reacts to: HUP reloads, TERM/INT stop (a second one stops at once).
//!
//! The handlers only write to signal-hook's self-pipe; a thread blocked on it forwards each
//! signal into a channel the control loop selects on, so the loop sleeps until something
//! happens instead of polling flags.

use std::sync::atomic::AtomicBool;
use std::sync::Arc;

use crossbeam_channel::{Receiver, Sender};
use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};
use signal_hook::iterator::Signals;

/// What a signal asks of the control loop.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ControlSignal {
    Reload,
    Stop,
}

/// Signals forwarded so far wait here; a burst of HUPs is taken as one reload by the loop.
const QUEUE: usize = 64;

/// Registers the handlers and starts the forwarding thread; returns the channel to select on.
///
/// Order matters for TERM/INT: the conditional exit is registered first, so it sees the flag
/// as it was before this delivery — the first signal only sets the flag (and is forwarded), a
/// second one (flag already set) exits with status 130 at once, even if the loop is stuck.
pub fn forward_signals() -> std::io::Result<Receiver<ControlSignal>> {
    let stopping = Arc::new(AtomicBool::new(false));
    for signal in [SIGTERM, SIGINT] {
        signal_hook::flag::register_conditional_shutdown(signal, 130, Arc::clone(&stopping))?;
        signal_hook::flag::register(signal, Arc::clone(&stopping))?;
    }
    let mut signals = Signals::new([SIGHUP, SIGTERM, SIGINT])?;
    let (tx, rx) = crossbeam_channel::bounded(QUEUE);
    std::thread::Builder::new()
        .name("redress-signals".into())
        .spawn(move || forward(&mut signals, &tx))?;
    Ok(rx)
}

fn forward(signals: &mut Signals, tx: &Sender<ControlSignal>) {
    for signal in signals.forever() {
        let delivered = if signal == SIGHUP {
            // A full queue already holds reloads: the loop takes a burst of HUPs as one anyway.
            !matches!(
                tx.try_send(ControlSignal::Reload),
                Err(crossbeam_channel::TrySendError::Disconnected(_))
            )
        } else {
            // A stop must not be lost behind HUPs: it waits for room.
            tx.send(ControlSignal::Stop).is_ok()
        };
        if !delivered {
            return; // the control loop has ended
        }
    }
}
