//! `redress bench`: how much of each callback's deadline the configured filters use, and how
//! much delay the chain adds — the design's own (algorithmic) latency per channel, the live
//! path's buffering, and, with a loop from output to input, the measured device round trip.
//!
//! Timing runs the real engine (`Engine::process`, guards and all) on generated programme; no
//! device is needed for it. The round trip needs the configured (or named) devices with the
//! output looped back to the input.
//!
//! Besides a config's own figures: its callback time per channel against another config's in
//! the same run ([`BaselineComparison`]), long FIRs both ways ([`bench_long_firs`]), and the
//! recursive kernels against the floor of their recurrence ([`measure_recursion_limits`]).

mod algorithmic_latency;
mod callback_timing;
mod chain_calibration;
mod cpu_load;
mod long_fir;
mod recursion_limits;
mod render;
mod round_trip;

use serde::Serialize;

pub use algorithmic_latency::{channel_latencies, ChannelLatency};
pub use callback_timing::{percentile, time_callbacks, CallbackTiming};
pub use chain_calibration::{calibrate_chains, ChainCalibration};
pub use cpu_load::{run_timed, CpuLoad, TimingConditions};
pub use long_fir::{bench_long_firs, invented_long_fir, render_long_firs, LongFirTiming};
pub use recursion_limits::{
    bench_noise, invented_inverse, measure_recursion_limits, render_recursion_limits,
    RecursionCost, RecursionLimits,
};
pub use render::render_text;
pub use round_trip::{analyse, measure_round_trip, RoundTrip, RoundTripOptions};

use crate::engine::{EngineError, Equalizer};
use crate::io::live::{RingPlan, PREFILL_PERIODS};
use crate::model::{AudioHost, Link};
use crate::pipeline::{plan_link, LinkPlan};

/// Block size when the config names none (`[audio] buffer_frames`).
pub const DEFAULT_BENCH_BLOCK_FRAMES: usize = 256;
/// Callbacks timed by default.
pub const DEFAULT_BENCH_BLOCKS: usize = 2000;

#[derive(Debug, Clone, PartialEq)]
pub struct BenchOptions {
    pub blocks: usize,
    /// Overrides the config's block size.
    pub block_frames: Option<usize>,
    /// Measure the device round trip too.
    pub round_trip: Option<RoundTripOptions>,
    /// Another link to time in the same run, at the same block size, per channel.
    pub baseline: Option<Link>,
    /// Busy threads at ordinary priority beside every timed run (0: none).
    pub cpu_load_threads: usize,
    /// `SCHED_FIFO` priority the timed thread asks for, as a device callback thread would
    /// (0: none).
    pub callback_priority: u8,
}

/// The config's callback time per channel against another config's, timed in the same run
/// (each timed twice, alternately; the faster run of each kept).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BaselineComparison {
    pub source: Option<String>,
    pub callback: CallbackTiming,
    /// (this config's p50 / its channels) / (the baseline's p50 / its channels).
    pub per_channel_ratio_p50: f64,
    /// The same with mean times.
    pub per_channel_ratio_mean: f64,
}

/// The delay the live path adds besides the filters' own, for the timed block size.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LivePathLatency {
    /// The config's `[audio] host`.
    pub host: &'static str,
    /// "ring" (capture and playback callbacks with a ring between them, ALSA) or
    /// "one_callback" (capture, engine and playback in the graph's one callback, JACK: no ring).
    pub runs_as: &'static str,
    /// Silence the ring between the capture and playback callbacks starts with (0: no ring).
    pub ring_prefill_frames: usize,
    pub ring_prefill_ms: f64,
    /// Largest algorithmic latency over the channels.
    pub max_algorithmic_latency_samples: usize,
    /// Ring prefill plus the largest algorithmic latency (before device buffering), ms.
    pub added_by_redress_ms: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BenchReport {
    pub schema: &'static str,
    pub schema_version: u32,
    pub source: Option<String>,
    /// Where the block size came from: `config`, `option` or `default`.
    pub block_frames_from: &'static str,
    pub callback: CallbackTiming,
    /// The load beside the timed runs and the timed thread's scheduling.
    pub conditions: TimingConditions,
    pub channels: Vec<ChannelLatency>,
    pub live_path: LivePathLatency,
    pub round_trip: Option<RoundTrip>,
    /// Why the round trip could not be measured, when it was asked for and failed.
    pub round_trip_error: Option<String>,
    pub baseline: Option<BaselineComparison>,
}

/// Times the configured filters and collects the latencies (and the round trip when asked).
pub fn bench_link(
    link: &Link,
    plan: &LinkPlan,
    options: &BenchOptions,
) -> Result<BenchReport, EngineError> {
    let equalizer = Equalizer::from_plan(plan, 1)?;
    let (block_frames, from) = match (options.block_frames, link.runtime.audio.buffer_frames) {
        (Some(b), _) => (b, "option"),
        (None, Some(b)) => (b as usize, "config"),
        (None, None) => (DEFAULT_BENCH_BLOCK_FRAMES, "default"),
    };
    let block_frames = block_frames.max(1);
    let blocks = options.blocks.max(1);
    let time_with_conditions = |eq: &Equalizer, l: &Link| {
        let (eq, engine, rate) = (eq.clone(), l.runtime.engine.clone(), l.sample_rate);
        run_timed(
            options.callback_priority,
            options.cpu_load_threads,
            move || time_callbacks(eq, &engine, rate, block_frames, blocks),
        )
    };
    let time = |eq: &Equalizer, l: &Link| time_with_conditions(eq, l).0;
    let (mut callback, conditions) = time_with_conditions(&equalizer, link);
    let baseline = match &options.baseline {
        None => None,
        Some(other) => {
            let other_eq = Equalizer::from_plan(&plan_link(other), 1)?;
            let first = time(&other_eq, other);
            let again = time(&equalizer, link);
            let second = time(&other_eq, other);
            if again.p50_us < callback.p50_us {
                callback = again;
            }
            let theirs = if second.p50_us < first.p50_us {
                second
            } else {
                first
            };
            let per = |t: &CallbackTiming, v: f64| v / t.channels.max(1) as f64;
            Some(BaselineComparison {
                source: other.source.as_ref().map(|p| p.display().to_string()),
                per_channel_ratio_p50: per(&callback, callback.p50_us)
                    / per(&theirs, theirs.p50_us).max(1e-9),
                per_channel_ratio_mean: per(&callback, callback.mean_us)
                    / per(&theirs, theirs.mean_us).max(1e-9),
                callback: theirs,
            })
        }
    };
    let channels = channel_latencies(plan);
    let ring = RingPlan {
        period_frames: block_frames,
        channels: link.channel_count,
        two_clocks: false,
    };
    let max_latency = channels
        .iter()
        .filter_map(|c| c.algorithmic_latency_samples)
        .max()
        .unwrap_or(0);
    let ms = |frames: usize| 1000.0 * frames as f64 / link.sample_rate;
    debug_assert_eq!(ring.prefill_frames(), PREFILL_PERIODS * block_frames);
    // JACK hands the client capture and playback in one callback: no ring, no prefill.
    let host = link.runtime.audio.host;
    let (runs_as, prefill) = match host {
        AudioHost::Jack => ("one_callback", 0),
        AudioHost::Alsa | AudioHost::PipeWire => ("ring", ring.prefill_frames()),
    };
    let live_path = LivePathLatency {
        host: host.key(),
        runs_as,
        ring_prefill_frames: prefill,
        ring_prefill_ms: ms(prefill),
        max_algorithmic_latency_samples: max_latency,
        added_by_redress_ms: ms(prefill + max_latency),
    };
    let (round_trip, round_trip_error) = match &options.round_trip {
        None => (None, None),
        Some(rt) => match measure_round_trip(rt) {
            Ok(r) => (Some(r), None),
            Err(e) => (None, Some(e.to_string())),
        },
    };
    Ok(BenchReport {
        schema: "redress-bench-report",
        schema_version: 1,
        source: link.source.as_ref().map(|p| p.display().to_string()),
        block_frames_from: from,
        callback,
        conditions,
        channels,
        live_path,
        round_trip,
        round_trip_error,
        baseline,
    })
}
