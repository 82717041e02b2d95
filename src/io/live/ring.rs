//! The ring between the two callbacks, and the pair of callback sides it joins.
//!
//! The engine runs in the capture callback, so what crosses the ring is finished output. The
//! playback device asks for samples on its own clock; the ring starts with
//! [`PREFILL_PERIODS`] periods of silence so that the two clocks may wander against each other
//! by that much before the playback side finds it empty, and has as much room again above the
//! prefill before the capture side finds it full.
//!
//! Latency: the prefill delays the output by `PREFILL_PERIODS × period` frames (2 × 512 frames
//! ≈ 21 ms at 48 kHz by default). This is buffering between two device clocks, not part of the
//! filter: the inverse's own delay (bulk and design latency) comes on top, and so does each
//! device's own buffer (the ALSA backend keeps two periods per direction).

use std::sync::Arc;

use ringbuf::traits::{Producer, Split};
use ringbuf::HeapRb;

use super::capture_side::CaptureSide;
use super::drift::DriftResamplerError;
use super::drift_stage::{DriftStage, PushClock};
use super::playback_side::PlaybackSide;
use super::playout::PlayoutProgress;
use crate::engine::{Engine, EngineStats};

/// Periods of silence the ring starts with.
pub const PREFILL_PERIODS: usize = 2;
/// With two clocks, the fill the drift loop holds, in half periods (2.5 periods): just before a
/// playback pull the ring holds between that and a period less, depending on where the capture
/// side is in its period, and a pull takes a period and a few frames; the four-period ring keeps
/// half a period spare above the fill after a push (`tests/drift_two_clocks.rs` shows it holds).
pub const TWO_CLOCK_TARGET_HALF_PERIODS: usize = 5;
/// Ring capacity in periods: the prefill, and as much room again above it.
pub const RING_PERIODS: usize = 2 * PREFILL_PERIODS;

/// How the ring between the callbacks is sized.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct RingPlan {
    /// The period the ring was sized for (the larger of the two streams' requested periods).
    pub period_frames: usize,
    pub channels: usize,
    /// Capture and playback on two clocks: the playback side resamples (see `drift_stage`).
    pub two_clocks: bool,
}

impl RingPlan {
    pub fn prefill_frames(&self) -> usize {
        match self.two_clocks {
            false => PREFILL_PERIODS * self.period_frames,
            true => TWO_CLOCK_TARGET_HALF_PERIODS * self.period_frames / 2,
        }
    }

    pub fn capacity_frames(&self) -> usize {
        RING_PERIODS * self.period_frames
    }

    /// Delay the prefill adds between input and output, in seconds at `sample_rate`.
    pub fn added_latency_seconds(&self, sample_rate: u32) -> f64 {
        self.prefill_frames() as f64 / f64::from(sample_rate.max(1))
    }
}

/// Builds the capture side (owning `engine`) and the playback side, joined by a ring sized for
/// `period_frames` and prefilled with silence. Allocates (control thread only); the sides'
/// callbacks never do. Overruns and underruns are counted into `stats`.
pub fn duplex_sides(
    engine: Engine,
    stats: Arc<EngineStats>,
    period_frames: usize,
) -> (CaptureSide, PlaybackSide, RingPlan) {
    sides(engine, stats, period_frames, false)
}

/// As [`duplex_sides`], for capture and playback on two clocks: the playback side reads the
/// ring through the drift loop's resampler at `sample_rate`, and the ring starts at the fill
/// the loop holds.
pub fn duplex_sides_two_clocks(
    engine: Engine,
    stats: Arc<EngineStats>,
    period_frames: usize,
    sample_rate: f64,
) -> Result<(CaptureSide, PlaybackSide, RingPlan), DriftResamplerError> {
    two_clock_sides(engine, stats, period_frames, sample_rate, PushClock::new())
}

/// As [`duplex_sides_two_clocks`], with both sides reading `clock` (tests: a simulated one).
#[cfg(any(test, feature = "test-door"))]
pub fn duplex_sides_two_clocks_on(
    engine: Engine,
    stats: Arc<EngineStats>,
    period_frames: usize,
    sample_rate: f64,
    clock: Arc<PushClock>,
) -> Result<(CaptureSide, PlaybackSide, RingPlan), DriftResamplerError> {
    two_clock_sides(engine, stats, period_frames, sample_rate, clock)
}

fn two_clock_sides(
    engine: Engine,
    stats: Arc<EngineStats>,
    period_frames: usize,
    sample_rate: f64,
    clock: Arc<PushClock>,
) -> Result<(CaptureSide, PlaybackSide, RingPlan), DriftResamplerError> {
    let (mut capture, mut playback, plan) = sides(engine, stats, period_frames, true);
    let stage = DriftStage::new(
        Arc::clone(&clock),
        plan.channels,
        plan.period_frames,
        plan.prefill_frames(),
        sample_rate,
    )?;
    capture.set_push_clock(clock);
    playback.set_drift_stage(stage);
    Ok((capture, playback, plan))
}

fn sides(
    engine: Engine,
    stats: Arc<EngineStats>,
    period_frames: usize,
    two_clocks: bool,
) -> (CaptureSide, PlaybackSide, RingPlan) {
    let plan = RingPlan {
        period_frames: period_frames.max(1),
        channels: engine.channels().max(1),
        two_clocks,
    };
    let (mut producer, consumer) =
        HeapRb::<f32>::new(plan.capacity_frames() * plan.channels).split();
    let silence = vec![0.0f32; plan.prefill_frames() * plan.channels];
    let prefilled = producer.push_slice(&silence);
    debug_assert_eq!(prefilled, silence.len());
    let playout = Arc::new(PlayoutProgress::default());
    playout.record_pushed(plan.prefill_frames() as u64, false);
    let capture = CaptureSide::new(
        engine,
        producer,
        Arc::clone(&stats),
        Arc::clone(&playout),
        plan.period_frames,
    );
    let playback = PlaybackSide::new(consumer, stats, playout, plan.channels, plan.period_frames);
    (capture, playback, plan)
}
