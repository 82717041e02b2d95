//! When the service may tell the init system it is alive (`WATCHDOG=1`).
//!
//! A ping is sent from the control loop itself, so a wedged control thread sends none. And it is
//! sent only while the audio is healthy: the engine's frame count has moved since the last ping,
//! or the service is in its declared device-recovery state (a device that is away and being
//! retried with back-off must not get the service killed and restarted in a storm; the back-off
//! is the better cure). A stream that stalls outside recovery stops the pings, and the init
//! system restarts the service when its watchdog time runs out. The verdict is a pure function
//! of the times and counts given, so it is tested without a clock.

use std::time::{Duration, Instant};

/// Pings per watchdog period: half the period, as sd_watchdog_enabled(3) advises.
const PINGS_PER_PERIOD: u32 = 2;

#[derive(Debug, Clone)]
pub struct WatchdogGate {
    interval: Duration,
    last_ping: Instant,
    frames_at_last_ping: u64,
}

impl WatchdogGate {
    /// A gate for a watchdog of `period`, armed at `now` with the engine at `frames`.
    pub fn new(period: Duration, now: Instant, frames: u64) -> Self {
        Self {
            interval: period / PINGS_PER_PERIOD,
            last_ping: now,
            frames_at_last_ping: frames,
        }
    }

    /// When the next ping is due.
    pub fn due(&self) -> Instant {
        self.last_ping + self.interval
    }

    /// Whether to ping now. `frames` is the service's running total of processed frames (never
    /// smaller than before); `recovering` says the devices are declared lost and being reopened.
    pub fn should_ping(&mut self, now: Instant, frames: u64, recovering: bool) -> bool {
        if now < self.due() {
            return false;
        }
        if frames == self.frames_at_last_ping && !recovering {
            return false;
        }
        self.last_ping = now;
        self.frames_at_last_ping = frames;
        true
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ms(t0: Instant, n: u64) -> Instant {
        t0 + Duration::from_millis(n)
    }

    // Source: sd_watchdog_enabled(3) — ping at half the watchdog period.
    #[test]
    fn flowing_audio_is_pinged_every_half_period() {
        let t0 = Instant::now();
        let mut gate = WatchdogGate::new(Duration::from_secs(2), t0, 0);
        assert!(!gate.should_ping(ms(t0, 999), 1000, false));
        assert!(gate.should_ping(ms(t0, 1000), 1000, false));
        assert_eq!(gate.due(), ms(t0, 2000));
        assert!(gate.should_ping(ms(t0, 2000), 2000, false));
    }

    #[test]
    fn a_stalled_stream_outside_recovery_stops_the_pings() {
        let t0 = Instant::now();
        let mut gate = WatchdogGate::new(Duration::from_secs(2), t0, 0);
        assert!(gate.should_ping(ms(t0, 1000), 48_000, false));
        for n in 2..10 {
            assert!(!gate.should_ping(ms(t0, 1000 * n), 48_000, false));
        }
        // Audio flowing again brings the pings back.
        assert!(gate.should_ping(ms(t0, 10_000), 48_256, false));
    }

    #[test]
    fn a_declared_recovery_keeps_the_pings_without_audio() {
        let t0 = Instant::now();
        let mut gate = WatchdogGate::new(Duration::from_secs(2), t0, 0);
        assert!(gate.should_ping(ms(t0, 1000), 48_000, false));
        for n in 2..10 {
            assert!(gate.should_ping(ms(t0, 1000 * n), 48_000, true));
        }
    }
}
