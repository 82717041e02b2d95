//! The playback callback's body: ring → device samples, silence where the ring ran dry.

use std::sync::atomic::Ordering;
use std::sync::Arc;

use ringbuf::traits::{Consumer, Observer};
use ringbuf::HeapCons;

use super::samples::DeviceSample;
use crate::engine::EngineStats;

/// Runs on the playback stream's thread. Build it with [`super::duplex_sides`].
pub struct PlaybackSide {
    channels: usize,
    /// Samples taken from the ring, one chunk at a time, before conversion.
    scratch: Box<[f32]>,
    ring: HeapCons<f32>,
    stats: Arc<EngineStats>,
}

impl PlaybackSide {
    pub(super) fn new(
        ring: HeapCons<f32>,
        stats: Arc<EngineStats>,
        channels: usize,
        chunk_frames: usize,
    ) -> Self {
        let channels = channels.max(1);
        Self {
            channels,
            scratch: vec![0.0; chunk_frames.max(1) * channels].into_boxed_slice(),
            ring,
            stats,
        }
    }

    /// The playback callback: fills `data` (interleaved frames) from the ring, converting to
    /// the device format. When the ring holds less than asked for, the rest is silence,
    /// counted in `EngineStats::output_underruns` (samples). Allocates nothing, locks nothing.
    pub fn on_output<T: DeviceSample>(&mut self, data: &mut [T]) {
        let mut silence = 0usize;
        for chunk in data.chunks_mut(self.scratch.len()) {
            let want = chunk.len() - chunk.len() % self.channels;
            let ready = self.ring.occupied_len();
            let take = want.min(ready - ready % self.channels);
            let got = self.ring.pop_slice(&mut self.scratch[..take]);
            for (d, s) in chunk.iter_mut().zip(&self.scratch[..got]) {
                *d = T::from_f32(*s);
            }
            for d in &mut chunk[got..] {
                *d = T::SILENCE;
            }
            silence += chunk.len() - got;
        }
        if silence > 0 {
            self.stats
                .output_underruns
                .fetch_add(silence as u64, Ordering::Relaxed);
        }
    }
}
