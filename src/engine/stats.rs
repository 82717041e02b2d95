//! Lock-free counters the audio thread writes and the control thread reads.
//!
//! Every field is an atomic written with relaxed ordering: each is an independent tally, and the
//! control thread only ever reports them, so no ordering between them is needed.

use std::sync::atomic::{AtomicU32, AtomicU64, Ordering};

use serde::Serialize;

use crate::model::MAX_CHANNELS;

/// Number of buckets of the callback-time histogram (each a quarter octave, from 1 µs).
pub const TIME_BUCKETS: usize = 64;

#[derive(Debug)]
pub struct EngineStats {
    pub frames: AtomicU64,
    pub passes: AtomicU64,
    /// Samples at or beyond full scale before the clip guard acted.
    pub clipped_samples: AtomicU64,
    /// Samples changed by the clip guard (limited or gain-reduced).
    pub limited_samples: AtomicU64,
    pub instability_trips: AtomicU64,
    pub non_finite_trips: AtomicU64,
    pub fallbacks_last_good: AtomicU64,
    pub fallbacks_bypass: AtomicU64,
    /// Input samples that were not audio (NaN, ±∞, or beyond ±[`super::INPUT_CEILING`]) and
    /// were replaced by silence before the filters saw them; of those, the non-finite ones.
    pub input_faults: AtomicU64,
    pub input_faults_non_finite: AtomicU64,
    /// Channels now playing a fallback (the last good set or bypass) after a guard trip.
    pub channels_on_fallback: AtomicU64,
    pub swaps_started: AtomicU64,
    pub swaps_completed: AtomicU64,
    /// Filter sets that could not be handed back (return queue full) and were kept for later.
    pub return_queue_full: AtomicU64,
    /// Events dropped because the event queue was full.
    pub events_dropped: AtomicU64,
    /// Generation of the filter set now running (0: bypass).
    pub running_generation: AtomicU64,
    /// Input-side and output-side device trouble, counted by the I/O layer.
    pub input_overruns: AtomicU64,
    pub output_underruns: AtomicU64,
    /// Per-channel peak |x| and |y| since the control thread last read them (f32 bits; for
    /// non-negative floats the bit patterns order like the values, so fetch_max works).
    pub input_peak: [AtomicU32; MAX_CHANNELS],
    pub output_peak: [AtomicU32; MAX_CHANNELS],
    /// Histogram of callback processing time: bucket i counts times in [2^(i/4), 2^((i+1)/4)) µs.
    pub callback_time: [AtomicU64; TIME_BUCKETS],
    pub callback_time_max_ns: AtomicU64,
    /// Sum of the callback times (ns): with the histogram's count, the mean; monitoring wants it.
    pub callback_time_total_ns: AtomicU64,
}

impl Default for EngineStats {
    fn default() -> Self {
        Self {
            frames: AtomicU64::new(0),
            passes: AtomicU64::new(0),
            clipped_samples: AtomicU64::new(0),
            limited_samples: AtomicU64::new(0),
            instability_trips: AtomicU64::new(0),
            non_finite_trips: AtomicU64::new(0),
            fallbacks_last_good: AtomicU64::new(0),
            fallbacks_bypass: AtomicU64::new(0),
            input_faults: AtomicU64::new(0),
            input_faults_non_finite: AtomicU64::new(0),
            channels_on_fallback: AtomicU64::new(0),
            swaps_started: AtomicU64::new(0),
            swaps_completed: AtomicU64::new(0),
            return_queue_full: AtomicU64::new(0),
            events_dropped: AtomicU64::new(0),
            running_generation: AtomicU64::new(0),
            input_overruns: AtomicU64::new(0),
            output_underruns: AtomicU64::new(0),
            input_peak: std::array::from_fn(|_| AtomicU32::new(0)),
            output_peak: std::array::from_fn(|_| AtomicU32::new(0)),
            callback_time: std::array::from_fn(|_| AtomicU64::new(0)),
            callback_time_max_ns: AtomicU64::new(0),
            callback_time_total_ns: AtomicU64::new(0),
        }
    }
}

/// A plain copy of the counters, for reports.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StatsSnapshot {
    pub frames: u64,
    pub clipped_samples: u64,
    pub limited_samples: u64,
    pub instability_trips: u64,
    pub non_finite_trips: u64,
    pub fallbacks_last_good: u64,
    pub fallbacks_bypass: u64,
    pub input_faults: u64,
    pub input_faults_non_finite: u64,
    pub channels_on_fallback: u64,
    pub swaps_started: u64,
    pub swaps_completed: u64,
    pub return_queue_full: u64,
    pub events_dropped: u64,
    pub running_generation: u64,
    pub input_overruns: u64,
    pub output_underruns: u64,
    /// Peak levels since the previous snapshot, dBFS, per channel.
    pub input_peak_dbfs: Vec<f64>,
    pub output_peak_dbfs: Vec<f64>,
    /// Callback processing time percentiles (µs): p50, p99, and the maximum.
    pub callback_p50_us: f64,
    pub callback_p99_us: f64,
    pub callback_max_us: f64,
}

impl EngineStats {
    /// Adds one measured callback time.
    pub fn record_callback_time(&self, nanos: u64) {
        let micros = nanos as f64 / 1000.0;
        let bucket = if micros < 1.0 {
            0
        } else {
            ((micros.log2() * 4.0) as usize).min(TIME_BUCKETS - 1)
        };
        self.callback_time[bucket].fetch_add(1, Ordering::Relaxed);
        self.callback_time_max_ns
            .fetch_max(nanos, Ordering::Relaxed);
        self.callback_time_total_ns
            .fetch_add(nanos, Ordering::Relaxed);
    }

    /// Raises the per-channel peak meters.
    pub fn record_peak(&self, channel: usize, input: f32, output: f32) {
        if let (Some(i), Some(o)) = (self.input_peak.get(channel), self.output_peak.get(channel)) {
            i.fetch_max(input.abs().to_bits(), Ordering::Relaxed);
            o.fetch_max(output.abs().to_bits(), Ordering::Relaxed);
        }
    }

    /// Reads every counter; peak meters are reset by the read (they show "since last time").
    pub fn snapshot(&self, channels: usize) -> StatsSnapshot {
        let load = |a: &AtomicU64| a.load(Ordering::Relaxed);
        let dbfs = |bits: u32| 20.0 * f64::from(f32::from_bits(bits)).log10();
        let channels = channels.min(MAX_CHANNELS);
        let counts: Vec<u64> = self.callback_time.iter().map(load).collect();
        let percentile = |q: f64| -> f64 {
            let total: u64 = counts.iter().sum();
            if total == 0 {
                return 0.0;
            }
            let target = (q * total as f64).ceil() as u64;
            let mut seen = 0;
            for (i, c) in counts.iter().enumerate() {
                seen += c;
                if seen >= target.max(1) {
                    // Upper edge of the bucket: a conservative reading.
                    return 2f64.powf((i + 1) as f64 / 4.0);
                }
            }
            2f64.powf(TIME_BUCKETS as f64 / 4.0)
        };
        // Bucket upper edges can overshoot the exact maximum: never report a percentile above it.
        let max_us = load(&self.callback_time_max_ns) as f64 / 1000.0;
        StatsSnapshot {
            frames: load(&self.frames),
            clipped_samples: load(&self.clipped_samples),
            limited_samples: load(&self.limited_samples),
            instability_trips: load(&self.instability_trips),
            non_finite_trips: load(&self.non_finite_trips),
            fallbacks_last_good: load(&self.fallbacks_last_good),
            fallbacks_bypass: load(&self.fallbacks_bypass),
            input_faults: load(&self.input_faults),
            input_faults_non_finite: load(&self.input_faults_non_finite),
            channels_on_fallback: load(&self.channels_on_fallback),
            swaps_started: load(&self.swaps_started),
            swaps_completed: load(&self.swaps_completed),
            return_queue_full: load(&self.return_queue_full),
            events_dropped: load(&self.events_dropped),
            running_generation: load(&self.running_generation),
            input_overruns: load(&self.input_overruns),
            output_underruns: load(&self.output_underruns),
            input_peak_dbfs: (0..channels)
                .map(|c| dbfs(self.input_peak[c].swap(0, Ordering::Relaxed)))
                .collect(),
            output_peak_dbfs: (0..channels)
                .map(|c| dbfs(self.output_peak[c].swap(0, Ordering::Relaxed)))
                .collect(),
            callback_p50_us: percentile(0.5).min(max_us),
            callback_p99_us: percentile(0.99).min(max_us),
            callback_max_us: max_us,
        }
    }
}
