//! How far the output has got on its way to the speaker, so a stop can wait until the fade-out
//! has played instead of cutting it off in the ring or in the device's buffer.
//!
//! The capture side counts the frames it pushes into the ring (the silence prefill included)
//! and notes that count when the engine's fade-out is complete: every frame of the fade is
//! before it. The playback side counts the frames it takes out of the ring and notes the delay
//! the device reports between a callback and the moment its first frame plays. The fade-out
//! has played once the playback side has taken the fade's last frame out of the ring and then
//! written the device's delay worth of frames after it (the engine keeps producing silence
//! after the fade, so those are silence pushing the fade out of the device buffer).
//! Plain counters in atomics: the callbacks allocate and lock nothing to keep them.

use std::sync::atomic::{AtomicU64, Ordering};

/// Marks "not yet" in [`PlayoutProgress::fade_end`].
const NONE: u64 = u64::MAX;

#[derive(Debug)]
pub struct PlayoutProgress {
    /// Frames pushed into the ring so far, the prefill included.
    pushed: AtomicU64,
    /// Frames the playback side took out of the ring so far.
    played: AtomicU64,
    /// `pushed` when the engine's fade-out was complete (or [`NONE`]).
    fade_end: AtomicU64,
    /// Largest delay the playback device reported, in frames (0: none reported).
    device_delay: AtomicU64,
}

impl Default for PlayoutProgress {
    fn default() -> Self {
        Self {
            pushed: AtomicU64::new(0),
            played: AtomicU64::new(0),
            fade_end: AtomicU64::new(NONE),
            device_delay: AtomicU64::new(0),
        }
    }
}

impl PlayoutProgress {
    /// The capture side pushed `frames` more; `faded` says the engine's fade-out is complete.
    pub fn record_pushed(&self, frames: u64, faded: bool) {
        let total = self.pushed.fetch_add(frames, Ordering::Relaxed) + frames;
        if faded && self.fade_end.load(Ordering::Relaxed) == NONE {
            self.fade_end.store(total, Ordering::Relaxed);
        }
    }

    /// The playback side took `frames` out of the ring.
    pub fn record_played(&self, frames: u64) {
        self.played.fetch_add(frames, Ordering::Relaxed);
    }

    /// The playback device reported `frames` of delay before a callback's first frame plays.
    pub fn record_device_delay(&self, frames: u64) {
        self.device_delay.fetch_max(frames, Ordering::Relaxed);
    }

    /// The device delay reported so far, in frames (0 when none was).
    pub fn device_delay(&self) -> u64 {
        self.device_delay.load(Ordering::Relaxed)
    }

    /// True once the fade-out's last frame has been followed into the device by `tail` frames
    /// (the device's delay) of what came after it.
    pub fn faded_out_through(&self, tail: u64) -> bool {
        let end = self.fade_end.load(Ordering::Relaxed);
        end != NONE && self.played.load(Ordering::Relaxed) >= end.saturating_add(tail)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_fade_has_played_once_its_last_frame_and_the_delay_after_it_are_out() {
        let p = PlayoutProgress::default();
        p.record_pushed(1024, false); // prefill
        p.record_pushed(256, false);
        p.record_pushed(256, true); // the fade ends in this block
        p.record_pushed(256, true);
        assert!(!p.faded_out_through(0));
        p.record_played(1536);
        assert!(p.faded_out_through(0));
        assert!(!p.faded_out_through(300));
        p.record_played(300);
        assert!(p.faded_out_through(300));
    }
}
