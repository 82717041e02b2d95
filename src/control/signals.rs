//! Signals the service reacts to: HUP reloads, TERM/INT stop (a second one stops at once).

use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;

use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};

/// Flags set from signal handlers, read by the control loop.
#[derive(Debug, Clone, Default)]
pub struct SignalFlags {
    reload: Arc<AtomicBool>,
    stop: Arc<AtomicBool>,
}

impl SignalFlags {
    /// Registers the handlers. Order matters for TERM/INT: the conditional exit is registered
    /// first, so it sees the flag as it was before this delivery — the first signal only sets
    /// `stop`, a second one (flag already set) exits with status 130 at once.
    pub fn install() -> std::io::Result<Self> {
        let flags = Self::default();
        for signal in [SIGTERM, SIGINT] {
            signal_hook::flag::register_conditional_shutdown(signal, 130, Arc::clone(&flags.stop))?;
            signal_hook::flag::register(signal, Arc::clone(&flags.stop))?;
        }
        signal_hook::flag::register(SIGHUP, Arc::clone(&flags.reload))?;
        Ok(flags)
    }

    /// True once per HUP received (several HUPs between two looks count as one reload).
    pub fn take_reload(&self) -> bool {
        self.reload.swap(false, Ordering::AcqRel)
    }

    pub fn stop_requested(&self) -> bool {
        self.stop.load(Ordering::Acquire)
    }

    /// Asks the loop to stop as a TERM would (used when a bounded run ends).
    pub fn request_stop(&self) {
        self.stop.store(true, Ordering::Release);
    }
}
