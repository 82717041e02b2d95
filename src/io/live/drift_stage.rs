//! The playback side's two-clock stage: ring → resampler → device, steered by the drift loop
//! (`[audio] clocks = "separate"`; see [`super::drift`] for the loop and the resampler).
//!
//! The capture side stamps each push on a shared [`PushClock`]; the playback side adds the
//! frames captured since then (elapsed time × nominal rate) to the ring's fill, updates the
//! loop once per resampled period and publishes the drift estimate for `status`. No
//! allocation: every buffer is made when the stage is built. Reading the monotonic clock is a
//! vDSO call on Linux, no system call and no lock.

use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Arc;
use std::time::Instant;

use ringbuf::traits::{Consumer, Observer};
use ringbuf::HeapCons;

use super::drift::{DriftLoop, DriftResampler, DriftResamplerError};
use crate::engine::EngineStats;

/// When the capture side last pushed into the ring, as nanoseconds since a shared start, and
/// the clock both sides read: the monotonic clock, or (tests only) a simulated one that the
/// test moves, so a drifting device pair can be run through the real sides in simulated time.
#[derive(Debug)]
pub struct PushClock {
    epoch: Instant,
    last_push_ns: AtomicU64,
    /// `Some` when simulated: the current time, ns, as the test last set it.
    simulated_ns: Option<AtomicU64>,
}

impl PushClock {
    pub fn new() -> Arc<Self> {
        Arc::new(Self {
            epoch: Instant::now(),
            last_push_ns: AtomicU64::new(0),
            simulated_ns: None,
        })
    }

    /// A clock that stands still until [`Self::set_simulated_seconds`] moves it.
    #[cfg(any(test, feature = "test-door"))]
    pub fn simulated() -> Arc<Self> {
        Arc::new(Self {
            epoch: Instant::now(),
            last_push_ns: AtomicU64::new(0),
            simulated_ns: Some(AtomicU64::new(0)),
        })
    }

    /// Moves a simulated clock to `seconds` after its start (no effect on a real one).
    #[cfg(any(test, feature = "test-door"))]
    pub fn set_simulated_seconds(&self, seconds: f64) {
        if let Some(now) = &self.simulated_ns {
            now.store((seconds * 1e9) as u64, Ordering::Relaxed);
        }
    }

    /// Nanoseconds since the start.
    #[inline]
    fn now_ns(&self) -> u64 {
        match &self.simulated_ns {
            Some(now) => now.load(Ordering::Relaxed),
            None => self.epoch.elapsed().as_nanos() as u64,
        }
    }

    /// Called by the capture side right after a push.
    #[inline]
    pub fn mark_push(&self) {
        self.last_push_ns.store(self.now_ns(), Ordering::Relaxed);
    }
}

/// What one `fill` call did, in samples (interleaved) and frames.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) struct Filled {
    /// Frames taken out of the ring.
    pub taken_frames: usize,
    /// Samples of silence played because the ring held too little for a period.
    pub underrun_samples: usize,
}

/// Owned by the playback side when the two directions run on two clocks.
pub(super) struct DriftStage {
    control: DriftLoop,
    resampler: DriftResampler,
    clock: Arc<PushClock>,
    sample_rate: f64,
    channels: usize,
    /// Captured frames for the next period, and one resampled period with how much of it has
    /// gone to the device.
    input: Box<[f32]>,
    period: Box<[f32]>,
    served: usize,
    /// When the loop last updated, ns on the push clock.
    last_update_ns: Option<u64>,
}

impl DriftStage {
    /// Built on the control thread: `period_frames` resampled per step, the loop holding the
    /// ring at `target_frames`.
    pub fn new(
        clock: Arc<PushClock>,
        channels: usize,
        period_frames: usize,
        target_frames: usize,
        sample_rate: f64,
    ) -> Result<Self, DriftResamplerError> {
        let resampler = DriftResampler::new(channels, period_frames)?;
        let input = vec![0.0; resampler.input_frames_max() * channels].into_boxed_slice();
        let period = vec![0.0; period_frames * channels].into_boxed_slice();
        let served = period.len();
        Ok(Self {
            control: DriftLoop::new(target_frames as f64, sample_rate),
            resampler,
            clock,
            sample_rate,
            channels,
            input,
            period,
            served,
            last_update_ns: None,
        })
    }

    /// Fills all of `out` (interleaved, whole frames) with resampled audio from `ring`,
    /// resampling a new period whenever the last one is used up.
    pub fn fill(
        &mut self,
        ring: &mut HeapCons<f32>,
        out: &mut [f32],
        stats: &EngineStats,
    ) -> Filled {
        let mut done = Filled {
            taken_frames: 0,
            underrun_samples: 0,
        };
        let mut at = 0;
        while at < out.len() {
            if self.served == self.period.len() {
                self.next_period(ring, stats, &mut done);
            }
            let n = (out.len() - at).min(self.period.len() - self.served);
            out[at..at + n].copy_from_slice(&self.period[self.served..self.served + n]);
            self.served += n;
            at += n;
        }
        done
    }

    fn next_period(&mut self, ring: &mut HeapCons<f32>, stats: &EngineStats, done: &mut Filled) {
        let now = self.clock.now_ns();
        let since_push = now.saturating_sub(self.clock.last_push_ns.load(Ordering::Relaxed));
        let occupied = (ring.occupied_len() / self.channels) as f64;
        let fill = occupied + since_push as f64 * 1e-9 * self.sample_rate;
        let dt = self
            .last_update_ns
            .map_or(0.0, |t| now.saturating_sub(t) as f64 * 1e-9);
        self.last_update_ns = Some(now);
        let ratio = self.control.update(fill, dt);
        stats.record_drift_ppm(self.control.drift_ppm());
        self.resampler.set_ratio(ratio);
        let need = self.resampler.input_frames_next() * self.channels;
        if ring.occupied_len() >= need && need <= self.input.len() {
            let got = ring.pop_slice(&mut self.input[..need]);
            done.taken_frames += got / self.channels;
            if !self
                .resampler
                .process(&self.input[..need], &mut self.period)
            {
                done.underrun_samples += self.period.len();
            }
        } else {
            self.period.fill(0.0);
            done.underrun_samples += self.period.len();
        }
        self.served = 0;
    }
}
