//! The service's running totals: counters that never go down over its whole life.
//!
//! The engine's counters live as long as the engine: when the streams are restarted (device
//! settings changed on reload) or reopened after a device loss, a new engine counts from zero.
//! Monitoring needs counters that only grow (a scraper takes a drop for a restart of the whole
//! service), so the control side folds each retired engine's final counts into a base and
//! reports base + the running engine's counts.

use std::sync::atomic::{AtomicU64, Ordering};

use crate::engine::{EngineStats, TIME_BUCKETS};

/// One engine's counters (or a sum of several), read from its lock-free statistics.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct EngineCounters {
    pub frames: u64,
    pub clipped_samples: u64,
    pub limited_samples: u64,
    pub instability_trips: u64,
    pub non_finite_trips: u64,
    pub fallbacks_last_good: u64,
    pub fallbacks_bypass: u64,
    pub input_faults: u64,
    pub input_faults_non_finite: u64,
    pub swaps_started: u64,
    pub swaps_completed: u64,
    pub input_overruns: u64,
    pub output_underruns: u64,
    pub events_dropped: u64,
    /// Errors the audio devices reported (not counted by the engine but by the streams).
    pub stream_errors: u64,
    /// The engine's callback-time histogram (quarter-octave buckets from 1 µs, as
    /// `EngineStats::callback_time`) and the sum of the times.
    pub callback_buckets: [u64; TIME_BUCKETS],
    pub callback_time_ns: u64,
}

impl Default for EngineCounters {
    fn default() -> Self {
        Self {
            frames: 0,
            clipped_samples: 0,
            limited_samples: 0,
            instability_trips: 0,
            non_finite_trips: 0,
            fallbacks_last_good: 0,
            fallbacks_bypass: 0,
            input_faults: 0,
            input_faults_non_finite: 0,
            swaps_started: 0,
            swaps_completed: 0,
            input_overruns: 0,
            output_underruns: 0,
            events_dropped: 0,
            stream_errors: 0,
            callback_buckets: [0; TIME_BUCKETS],
            callback_time_ns: 0,
        }
    }
}

impl EngineCounters {
    /// Reads an engine's counters (the peak meters are left alone); `stream_errors` comes from
    /// the streams that drive it.
    pub fn read(stats: &EngineStats, stream_errors: u64) -> Self {
        let load = |a: &AtomicU64| a.load(Ordering::Relaxed);
        Self {
            frames: load(&stats.frames),
            clipped_samples: load(&stats.clipped_samples),
            limited_samples: load(&stats.limited_samples),
            instability_trips: load(&stats.instability_trips),
            non_finite_trips: load(&stats.non_finite_trips),
            fallbacks_last_good: load(&stats.fallbacks_last_good),
            fallbacks_bypass: load(&stats.fallbacks_bypass),
            input_faults: load(&stats.input_faults),
            input_faults_non_finite: load(&stats.input_faults_non_finite),
            swaps_started: load(&stats.swaps_started),
            swaps_completed: load(&stats.swaps_completed),
            input_overruns: load(&stats.input_overruns),
            output_underruns: load(&stats.output_underruns),
            events_dropped: load(&stats.events_dropped),
            stream_errors,
            callback_buckets: std::array::from_fn(|i| load(&stats.callback_time[i])),
            callback_time_ns: load(&stats.callback_time_total_ns),
        }
    }

    /// The sum of two sets of counts.
    pub fn plus(&self, other: &Self) -> Self {
        Self {
            frames: self.frames + other.frames,
            clipped_samples: self.clipped_samples + other.clipped_samples,
            limited_samples: self.limited_samples + other.limited_samples,
            instability_trips: self.instability_trips + other.instability_trips,
            non_finite_trips: self.non_finite_trips + other.non_finite_trips,
            fallbacks_last_good: self.fallbacks_last_good + other.fallbacks_last_good,
            fallbacks_bypass: self.fallbacks_bypass + other.fallbacks_bypass,
            input_faults: self.input_faults + other.input_faults,
            input_faults_non_finite: self.input_faults_non_finite + other.input_faults_non_finite,
            swaps_started: self.swaps_started + other.swaps_started,
            swaps_completed: self.swaps_completed + other.swaps_completed,
            input_overruns: self.input_overruns + other.input_overruns,
            output_underruns: self.output_underruns + other.output_underruns,
            events_dropped: self.events_dropped + other.events_dropped,
            stream_errors: self.stream_errors + other.stream_errors,
            callback_buckets: std::array::from_fn(|i| {
                self.callback_buckets[i] + other.callback_buckets[i]
            }),
            callback_time_ns: self.callback_time_ns + other.callback_time_ns,
        }
    }

    /// Callbacks timed.
    pub fn callbacks(&self) -> u64 {
        self.callback_buckets.iter().sum()
    }
}

/// Counts of the engines that have been retired, and the one running now.
#[derive(Debug, Clone, Default)]
pub struct RunningTotals {
    retired: EngineCounters,
}

impl RunningTotals {
    /// An engine is being stopped: its final counts join the base.
    pub fn retire(&mut self, last: &EngineCounters) {
        self.retired = self.retired.plus(last);
    }

    /// Totals over the service's life: the retired engines plus the running one, if any.
    pub fn with(&self, running: Option<&EngineCounters>) -> EngineCounters {
        match running {
            Some(r) => self.retired.plus(r),
            None => self.retired.clone(),
        }
    }
}

/// Per-channel peak levels over a window of at least one tick: the engine's meters reset on
/// every read, and reads come at every tick and every status request, so the level reported is
/// the larger of the last whole window and the one under way.
#[derive(Debug, Clone, Default)]
pub struct PeakHold {
    finished: Vec<f64>,
    current: Vec<f64>,
}

impl PeakHold {
    /// Adds one read of the meters (linear peak |x| per channel).
    pub fn add(&mut self, peaks: &[f64]) {
        if self.current.len() != peaks.len() {
            self.current = vec![0.0; peaks.len()];
        }
        for (held, p) in self.current.iter_mut().zip(peaks) {
            *held = held.max(*p);
        }
    }

    /// Ends a window (at a tick).
    pub fn roll(&mut self) {
        self.finished = std::mem::take(&mut self.current);
    }

    /// The peaks to report, per channel.
    pub fn levels(&self) -> Vec<f64> {
        let n = self.current.len().max(self.finished.len());
        (0..n)
            .map(|c| {
                let a = self.current.get(c).copied().unwrap_or(0.0);
                let b = self.finished.get(c).copied().unwrap_or(0.0);
                a.max(b)
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn counts(frames: u64, xruns: u64) -> EngineCounters {
        EngineCounters {
            frames,
            output_underruns: xruns,
            ..EngineCounters::default()
        }
    }

    #[test]
    fn totals_never_go_down_when_an_engine_is_replaced() {
        let mut totals = RunningTotals::default();
        let first = counts(48_000, 3);
        assert_eq!(totals.with(Some(&first)).frames, 48_000);
        totals.retire(&first);
        // The new engine starts from zero; the totals carry on from the old one's last counts.
        let second = counts(256, 0);
        let t = totals.with(Some(&second));
        assert_eq!((t.frames, t.output_underruns), (48_256, 3));
        // While no engine runs (devices lost), the retired counts stand.
        assert_eq!(totals.with(None).frames, 48_000);
    }

    #[test]
    fn peaks_cover_the_last_whole_window_and_the_one_under_way() {
        let mut hold = PeakHold::default();
        hold.add(&[0.5, 0.1]);
        hold.add(&[0.2, 0.3]);
        assert_eq!(hold.levels(), vec![0.5, 0.3]);
        hold.roll();
        hold.add(&[0.1, 0.0]);
        assert_eq!(hold.levels(), vec![0.5, 0.3]);
        hold.roll();
        assert_eq!(hold.levels(), vec![0.1, 0.0]);
    }
}
