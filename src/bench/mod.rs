//! `redress bench`: how much of each callback's deadline the configured filters use, and how
//! much delay the chain adds — the design's own (algorithmic) latency per channel, the live
//! path's buffering, and, with a loop from output to input, the measured device round trip.
//!
//! Timing runs the real engine (`Engine::process`, guards and all) on generated programme; no
//! device is needed for it. The round trip needs the configured (or named) devices with the
//! output looped back to the input.

mod algorithmic_latency;
mod callback_timing;
mod render;
mod round_trip;

use serde::Serialize;

pub use algorithmic_latency::{channel_latencies, ChannelLatency};
pub use callback_timing::{percentile, time_callbacks, CallbackTiming};
pub use render::render_text;
pub use round_trip::{analyse, measure_round_trip, RoundTrip, RoundTripOptions};

use crate::engine::{EngineError, Equalizer};
use crate::io::live::{RingPlan, PREFILL_PERIODS};
use crate::model::Link;
use crate::pipeline::LinkPlan;

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
}

/// The delay the live path adds besides the filters' own, for the timed block size.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LivePathLatency {
    /// Silence the ring between the capture and playback callbacks starts with.
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
    pub channels: Vec<ChannelLatency>,
    pub live_path: LivePathLatency,
    pub round_trip: Option<RoundTrip>,
    /// Why the round trip could not be measured, when it was asked for and failed.
    pub round_trip_error: Option<String>,
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
    let callback = time_callbacks(
        equalizer,
        &link.runtime.engine,
        link.sample_rate,
        block_frames,
        options.blocks.max(1),
    );
    let channels = channel_latencies(plan);
    let ring = RingPlan {
        period_frames: block_frames,
        channels: link.channel_count,
    };
    let max_latency = channels
        .iter()
        .filter_map(|c| c.algorithmic_latency_samples)
        .max()
        .unwrap_or(0);
    let ms = |frames: usize| 1000.0 * frames as f64 / link.sample_rate;
    let live_path = LivePathLatency {
        ring_prefill_frames: ring.prefill_frames(),
        ring_prefill_ms: ms(ring.prefill_frames()),
        max_algorithmic_latency_samples: max_latency,
        added_by_redress_ms: ms(ring.prefill_frames() + max_latency),
    };
    debug_assert_eq!(ring.prefill_frames(), PREFILL_PERIODS * block_frames);
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
        channels,
        live_path,
        round_trip,
        round_trip_error,
    })
}
