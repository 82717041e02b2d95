//! The playback callback's body: ring → device samples, silence where the ring ran dry.

use std::sync::atomic::Ordering;
use std::sync::Arc;

use ringbuf::traits::{Consumer, Observer};
use ringbuf::HeapCons;

use super::dither::TpdfDither;
use super::drift_stage::DriftStage;
use super::playout::PlayoutProgress;
use super::realtime::{CallbackScheduling, LeftBecause, SchedulingRequest, SchedulingSlot};
use super::samples::DeviceSample;
use crate::engine::EngineStats;

/// Runs on the playback stream's thread. Build it with [`super::duplex_sides`].
pub struct PlaybackSide {
    channels: usize,
    /// Samples taken from the ring, one chunk at a time, before conversion.
    scratch: Box<[f32]>,
    ring: HeapCons<f32>,
    stats: Arc<EngineStats>,
    playout: Arc<PlayoutProgress>,
    /// Asks for real-time scheduling on the first call, and records what the thread got.
    scheduling: CallbackScheduling,
    /// Dither for 16-bit devices (unused by the wider formats).
    dither: TpdfDither,
    /// Two clocks: the ring is read through the drift loop's resampler.
    drift: Option<Box<DriftStage>>,
}

impl PlaybackSide {
    pub(super) fn new(
        ring: HeapCons<f32>,
        stats: Arc<EngineStats>,
        playout: Arc<PlayoutProgress>,
        channels: usize,
        chunk_frames: usize,
    ) -> Self {
        let channels = channels.max(1);
        Self {
            channels,
            scratch: vec![0.0; chunk_frames.max(1) * channels].into_boxed_slice(),
            ring,
            stats,
            playout,
            scheduling: CallbackScheduling::new(SchedulingRequest::LeaveAsIs(LeftBecause::Config)),
            dither: TpdfDither::default(),
            drift: None,
        }
    }

    /// Reads the ring through `stage` from now on (two clocks).
    pub(super) fn set_drift_stage(&mut self, stage: DriftStage) {
        self.drift = Some(Box::new(stage));
    }

    /// What this callback's thread asks for on its first call (nothing, by default); returns
    /// where it records what it got. Call before the side is handed to a stream.
    pub fn set_scheduling(&mut self, request: SchedulingRequest) -> Arc<SchedulingSlot> {
        self.scheduling = CallbackScheduling::new(request);
        self.scheduling.slot()
    }

    /// Notes the delay the device reported for a callback (from its timestamps): how long
    /// until the first frame written in it plays. Allocates nothing.
    pub fn record_device_delay(&self, delay: std::time::Duration, sample_rate: u32) {
        let frames = (delay.as_secs_f64() * f64::from(sample_rate)).ceil();
        if frames.is_finite() && frames >= 0.0 {
            self.playout.record_device_delay(frames as u64);
        }
    }

    /// The playback callback: fills `data` (interleaved frames) from the ring, converting to
    /// the device format (16-bit samples dithered, see [`super::dither`]); with two clocks
    /// through the drift stage's resampler. When the ring holds less than asked for, the rest is
    /// silence, counted in `EngineStats::output_underruns` (samples). Allocates nothing, locks
    /// nothing.
    pub fn on_output<T: DeviceSample>(&mut self, data: &mut [T]) {
        self.scheduling.on_callback();
        self.stats
            .record_ring_fill((self.ring.occupied_len() / self.channels) as u64);
        let mut silence = 0usize;
        let mut taken = 0usize;
        for chunk in data.chunks_mut(self.scratch.len()) {
            let want = chunk.len() - chunk.len() % self.channels;
            let got = match self.drift.as_deref_mut() {
                None => {
                    let ready = self.ring.occupied_len();
                    let take = want.min(ready - ready % self.channels);
                    let got = self.ring.pop_slice(&mut self.scratch[..take]);
                    taken += got;
                    got
                }
                // Always a whole chunk: resampled audio, or silence counted below.
                Some(stage) => {
                    let filled = stage.fill(&mut self.ring, &mut self.scratch[..want], &self.stats);
                    taken += filled.taken_frames * self.channels;
                    silence += filled.underrun_samples;
                    want
                }
            };
            for (d, s) in chunk.iter_mut().zip(&self.scratch[..got]) {
                *d = T::from_f32_dithered(*s, &mut self.dither);
            }
            for d in &mut chunk[got..] {
                *d = T::SILENCE;
            }
            silence += chunk.len() - got;
        }
        self.playout.record_played((taken / self.channels) as u64);
        if silence > 0 {
            self.stats
                .output_underruns
                .fetch_add(silence as u64, Ordering::Relaxed);
        }
    }
}
