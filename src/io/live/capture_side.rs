//! The capture callback's body: device samples → f32 → engine → ring.

use std::sync::atomic::Ordering;
use std::sync::Arc;

use ringbuf::traits::{Observer, Producer};
use ringbuf::HeapProd;

use super::drift_stage::PushClock;
use super::playout::PlayoutProgress;
use super::realtime::{CallbackScheduling, LeftBecause, SchedulingRequest, SchedulingSlot};
use super::samples::DeviceSample;
use crate::engine::{Engine, EngineStats};

/// Owns the engine; runs on the capture stream's thread. Build it with
/// [`super::duplex_sides`].
pub struct CaptureSide {
    engine: Engine,
    channels: usize,
    /// Device samples converted to f32, one chunk at a time.
    input: Box<[f32]>,
    /// The engine's output for that chunk.
    output: Box<[f32]>,
    ring: HeapProd<f32>,
    stats: Arc<EngineStats>,
    playout: Arc<PlayoutProgress>,
    /// Asks for real-time scheduling on the first call, and records what the thread got.
    scheduling: CallbackScheduling,
    /// Stamped after every push when the playback side resamples for two clocks.
    push_clock: Option<Arc<PushClock>>,
}

impl CaptureSide {
    pub(super) fn new(
        engine: Engine,
        ring: HeapProd<f32>,
        stats: Arc<EngineStats>,
        playout: Arc<PlayoutProgress>,
        chunk_frames: usize,
    ) -> Self {
        let channels = engine.channels().max(1);
        let len = chunk_frames.max(1) * channels;
        Self {
            engine,
            channels,
            input: vec![0.0; len].into_boxed_slice(),
            output: vec![0.0; len].into_boxed_slice(),
            ring,
            stats,
            playout,
            scheduling: CallbackScheduling::new(SchedulingRequest::LeaveAsIs(LeftBecause::Config)),
            push_clock: None,
        }
    }

    /// Stamps `clock` after every push (two clocks: the playback side's loop reads it).
    pub(super) fn set_push_clock(&mut self, clock: Arc<PushClock>) {
        self.push_clock = Some(clock);
    }

    /// What this callback's thread asks for on its first call (nothing, by default); returns
    /// where it records what it got. Call before the side is handed to a stream.
    pub fn set_scheduling(&mut self, request: SchedulingRequest) -> Arc<SchedulingSlot> {
        self.scheduling = CallbackScheduling::new(request);
        self.scheduling.slot()
    }

    /// How far the output has got (shared with the playback side and the control thread).
    pub fn playout(&self) -> Arc<PlayoutProgress> {
        Arc::clone(&self.playout)
    }

    /// The capture callback: converts `data` (interleaved frames), runs the engine on it and
    /// pushes the result towards playback. Buffers longer than the scratch are handled in
    /// chunks; a trailing partial frame is ignored (backends deliver whole frames). Whatever
    /// does not fit in the ring is dropped, newest first, and counted in
    /// `EngineStats::input_overruns` (samples). Allocates nothing, locks nothing.
    pub fn on_input<T: DeviceSample>(&mut self, data: &[T]) {
        self.scheduling.on_callback();
        let whole = data.len() - data.len() % self.channels;
        for chunk in data[..whole].chunks(self.input.len()) {
            let n = chunk.len();
            for (x, s) in self.input[..n].iter_mut().zip(chunk) {
                *x = s.to_f32();
            }
            self.engine.process(&self.input[..n], &mut self.output[..n]);
            // Whole frames only, so the ring never splits a frame across a drop.
            let room = self.ring.vacant_len();
            let fits = n.min(room - room % self.channels);
            let pushed = self.ring.push_slice(&self.output[..fits]);
            if let Some(clock) = &self.push_clock {
                clock.mark_push();
            }
            self.playout
                .record_pushed((pushed / self.channels) as u64, self.engine.fade_out_done());
            let dropped = n - pushed;
            if dropped > 0 {
                self.stats
                    .input_overruns
                    .fetch_add(dropped as u64, Ordering::Relaxed);
            }
        }
    }
}
