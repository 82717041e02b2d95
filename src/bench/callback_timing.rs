//! How long the engine's callback takes, measured on the real path: the configured filters in
//! an [`Engine`] with the configured guards, fed generated programme one block at a time, each
//! call of the engine's processing timed on its own.

use std::time::Instant;

use serde::Serialize;

use crate::engine::{engine_pair, EngineSettings, Equalizer};
use crate::io::{generate, ProgrammeSpec};
use crate::model::EngineOptions;
use crate::realize::kernels::detected_vector_unit;

/// Blocks run before timing starts (caches, branch predictors, page faults of the buffers).
const WARM_UP_BLOCKS: usize = 50;
/// Seconds of programme generated; longer runs loop over it.
const PROGRAMME_SECONDS: f64 = 4.0;

/// The distribution of callback processing times at one block size.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CallbackTiming {
    pub block_frames: usize,
    pub channels: usize,
    pub sample_rate_hz: f64,
    /// Callbacks timed.
    pub blocks: usize,
    /// Time one block of audio lasts: the deadline of each callback.
    pub block_period_us: f64,
    pub p50_us: f64,
    pub p99_us: f64,
    pub p999_us: f64,
    pub max_us: f64,
    pub mean_us: f64,
    /// Share of the block period left over at p99 and at the slowest callback, in percent
    /// (100 · (1 − time / period)); negative means the deadline was missed.
    pub headroom_p99_pct: f64,
    pub headroom_max_pct: f64,
    /// Total processing time over the total audio duration (below 1: faster than real time;
    /// 0.01 means a hundredth of the time the audio lasts).
    pub real_time_factor: f64,
    /// Callbacks slower than the block period.
    pub deadline_misses: usize,
    /// Processor time the timing thread actually ran over the audio duration of the timed
    /// callbacks, in percent of one core (Linux: /proc/thread-self/schedstat). Unlike the
    /// wall-clock times above it leaves out time the thread waited while other programs ran,
    /// so on a shared machine it is the honest cost; `null` where the kernel does not say.
    pub cpu_share_pct: Option<f64>,
    /// The vector unit the kernels used ("baseline", "avx2", "avx512"; `vector_unit_name`
    /// spells it for people), and how many channels ran in vector lanes.
    pub vector_unit: &'static str,
    pub vector_unit_name: &'static str,
    pub channels_in_lanes: usize,
}

/// Runs `equalizer` through a fresh engine (settings from `options`) for `blocks` timed
/// callbacks of `block_frames` frames.
pub fn time_callbacks(
    equalizer: Equalizer,
    options: &EngineOptions,
    sample_rate: f64,
    block_frames: usize,
    blocks: usize,
) -> CallbackTiming {
    let channels = equalizer.channel_count();
    let channels_in_lanes = equalizer.channels_in_lanes();
    let settings = EngineSettings::from_options(options, channels, sample_rate);
    let (mut engine, _control) = engine_pair(settings, Some(equalizer));
    let spec = ProgrammeSpec::new(sample_rate, channels, PROGRAMME_SECONDS, 7);
    let mut programme = generate(&spec);
    let block_samples = block_frames * channels;
    if programme.len() < block_samples {
        programme.resize(block_samples, 0.0);
    }
    let mut output = vec![0.0f32; block_samples];
    let mut times_ns: Vec<u64> = Vec::with_capacity(blocks);
    let mut offset = 0;
    let mut cpu_at_start = None;
    for i in 0..WARM_UP_BLOCKS + blocks {
        if i == WARM_UP_BLOCKS {
            cpu_at_start = thread_cpu_ns();
        }
        if offset + block_samples > programme.len() {
            offset = 0;
        }
        let input = &programme[offset..offset + block_samples];
        offset += block_samples;
        let started = Instant::now();
        engine.process(input, &mut output);
        let elapsed = started.elapsed().as_nanos() as u64;
        std::hint::black_box(&output);
        if i >= WARM_UP_BLOCKS {
            times_ns.push(elapsed);
        }
    }
    let cpu_ns = match (cpu_at_start, thread_cpu_ns()) {
        (Some(a), Some(b)) => Some(b.saturating_sub(a)),
        _ => None,
    };
    let mut timing = summarize(
        &mut times_ns,
        block_frames,
        channels,
        sample_rate,
        channels_in_lanes,
    );
    let audio_ns = 1e9 * (blocks * block_frames) as f64 / sample_rate;
    timing.cpu_share_pct = cpu_ns.map(|ns| 100.0 * ns as f64 / audio_ns);
    timing
}

/// Nanoseconds this thread has run on a processor (the first field of Linux's schedstat,
/// brought up to date at scheduler ticks: good to a tick over a run of seconds).
fn thread_cpu_ns() -> Option<u64> {
    std::fs::read_to_string("/proc/thread-self/schedstat")
        .ok()?
        .split_whitespace()
        .next()?
        .parse()
        .ok()
}

fn summarize(
    times_ns: &mut [u64],
    block_frames: usize,
    channels: usize,
    sample_rate: f64,
    channels_in_lanes: usize,
) -> CallbackTiming {
    times_ns.sort_unstable();
    let us = |ns: u64| ns as f64 / 1000.0;
    let period_us = 1e6 * block_frames as f64 / sample_rate;
    let total_ns: u64 = times_ns.iter().sum();
    let n = times_ns.len();
    let mean_us = if n == 0 { 0.0 } else { us(total_ns) / n as f64 };
    let p50 = us(percentile(times_ns, 0.50));
    let p99 = us(percentile(times_ns, 0.99));
    let p999 = us(percentile(times_ns, 0.999));
    let max = us(times_ns.last().copied().unwrap_or(0));
    let headroom = |t: f64| 100.0 * (1.0 - t / period_us);
    CallbackTiming {
        block_frames,
        channels,
        sample_rate_hz: sample_rate,
        blocks: n,
        block_period_us: period_us,
        p50_us: p50,
        p99_us: p99,
        p999_us: p999,
        max_us: max,
        mean_us,
        headroom_p99_pct: headroom(p99),
        headroom_max_pct: headroom(max),
        real_time_factor: if n == 0 { 0.0 } else { mean_us / period_us },
        deadline_misses: times_ns.iter().filter(|&&t| us(t) > period_us).count(),
        cpu_share_pct: None,
        vector_unit: detected_vector_unit().key(),
        vector_unit_name: detected_vector_unit().name(),
        channels_in_lanes,
    }
}

/// The nearest-rank percentile of sorted values: the smallest value with at least a share `q`
/// of the values at or below it (common practice).
pub fn percentile(sorted: &[u64], q: f64) -> u64 {
    if sorted.is_empty() {
        return 0;
    }
    let rank = (q * sorted.len() as f64).ceil().max(1.0) as usize;
    sorted[rank.min(sorted.len()) - 1]
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — the nearest-rank definition: of 1 … 1000, p50 is 500, p99 is
    // 990, p99.9 is 999, and the 100th percentile is the maximum.
    #[test]
    fn nearest_rank_percentiles() {
        let v: Vec<u64> = (1..=1000).collect();
        assert_eq!(percentile(&v, 0.5), 500);
        assert_eq!(percentile(&v, 0.99), 990);
        assert_eq!(percentile(&v, 0.999), 999);
        assert_eq!(percentile(&v, 1.0), 1000);
        assert_eq!(percentile(&[7], 0.5), 7);
        assert_eq!(percentile(&[], 0.5), 0);
    }

    // Source: the definitions above — a 256-frame block at 48 kHz lasts 5333.3 µs; a callback
    // of 533.3 µs leaves 90 % of it and runs at a tenth of real time.
    #[test]
    fn headroom_and_real_time_factor_follow_the_block_period() {
        let mut times = vec![533_333u64; 10];
        let t = summarize(&mut times, 256, 2, 48_000.0, 0);
        assert!((t.block_period_us - 5333.333).abs() < 1e-2);
        assert!(
            (t.headroom_p99_pct - 90.0).abs() < 1e-3,
            "{}",
            t.headroom_p99_pct
        );
        assert!((t.real_time_factor - 0.1).abs() < 1e-6);
        assert_eq!(t.deadline_misses, 0);
    }
}
