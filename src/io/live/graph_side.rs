//! The one-callback body for a graph host (JACK): the server hands the client its capture and
//! playback buffers in the same call, so the engine runs there and writes straight into the
//! playback buffers. No ring, no prefill: redress adds no buffering of its own.
//!
//! A graph gives one buffer per channel (a port), where the engine works on interleaved frames:
//! the caller copies each input port into the scratch ([`GraphSide::put_input`]), runs the
//! engine on it ([`GraphSide::run`]) and copies each channel out ([`GraphSide::take_output`]),
//! a chunk of at most [`GraphSide::chunk_frames`] frames at a time. A server may change its
//! block size while running; longer blocks are simply more chunks, so nothing is reallocated
//! on the audio thread.

use std::sync::Arc;

use super::playout::PlayoutProgress;
use super::realtime::{CallbackScheduling, LeftBecause, SchedulingRequest, SchedulingSlot};
use crate::engine::Engine;

/// Owns the engine; runs on the graph's process thread.
pub struct GraphSide {
    engine: Engine,
    channels: usize,
    chunk_frames: usize,
    /// The input ports' samples, interleaved.
    input: Box<[f32]>,
    /// The engine's output for them, interleaved.
    output: Box<[f32]>,
    playout: Arc<PlayoutProgress>,
    /// The server schedules the process thread; the first call records what it runs at.
    scheduling: CallbackScheduling,
}

impl GraphSide {
    /// Scratch for `chunk_frames` frames (allocates: control thread only).
    pub fn new(engine: Engine, chunk_frames: usize) -> Self {
        let channels = engine.channels().max(1);
        let chunk_frames = chunk_frames.max(1);
        Self {
            engine,
            channels,
            chunk_frames,
            input: vec![0.0; chunk_frames * channels].into_boxed_slice(),
            output: vec![0.0; chunk_frames * channels].into_boxed_slice(),
            playout: Arc::new(PlayoutProgress::default()),
            scheduling: CallbackScheduling::new(SchedulingRequest::LeaveAsIs(LeftBecause::Server)),
        }
    }

    pub fn channels(&self) -> usize {
        self.channels
    }

    /// Largest chunk one [`GraphSide::run`] takes.
    pub fn chunk_frames(&self) -> usize {
        self.chunk_frames
    }

    /// Where the process thread records its scheduling on the first call.
    pub fn scheduling_slot(&self) -> Arc<SchedulingSlot> {
        self.scheduling.slot()
    }

    /// How far the output has got (read by the control thread before a stop).
    pub fn playout(&self) -> Arc<PlayoutProgress> {
        Arc::clone(&self.playout)
    }

    /// Call at the top of every process callback (records the thread's schedule once).
    #[inline]
    pub fn begin_cycle(&mut self) {
        self.scheduling.on_callback();
    }

    /// Copies one channel's samples (at most a chunk; the rest is ignored) into the scratch.
    #[inline]
    pub fn put_input(&mut self, channel: usize, samples: &[f32]) {
        let frames = samples.len().min(self.chunk_frames);
        let slots = self.input.iter_mut().skip(channel).step_by(self.channels);
        for (slot, &x) in slots.zip(&samples[..frames]) {
            *slot = x;
        }
    }

    /// Runs the engine on the first `frames` frames of the scratch (clamped to a chunk). The
    /// input and output frames are the same frames: that is what makes it one callback.
    #[inline]
    pub fn run(&mut self, frames: usize) {
        let n = frames.min(self.chunk_frames) * self.channels;
        self.engine.process(&self.input[..n], &mut self.output[..n]);
        let frames = (n / self.channels) as u64;
        self.playout
            .record_pushed(frames, self.engine.fade_out_done());
        self.playout.record_played(frames);
    }

    /// Copies one channel of the last run's output into `samples` (at most a chunk).
    #[inline]
    pub fn take_output(&self, channel: usize, samples: &mut [f32]) {
        let frames = samples.len().min(self.chunk_frames);
        let slots = self.output.iter().skip(channel).step_by(self.channels);
        for (out, &y) in samples[..frames].iter_mut().zip(slots) {
            *out = y;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::{engine_pair, Equalizer};
    use crate::model::config::parse_link;
    use crate::pipeline::plan_link;

    const LINK: &str = "[link]\nsample_rate_hz = 48000\nchannel_count = 2\n\n[[path]]\n\
        channels = [0, 1]\ndifference_equation = { b = [1.0, -0.6, 0.25], a = [1.0, -0.3] }\n\n\
        [path.inverse]\ncorrection_band_hz = [0, 24000]\n";

    // Source: common practice — splitting a stream into blocks of any size must not change a
    // recursive filter's output; the reference is the same equalizer run offline in one go.
    #[test]
    fn per_port_buffers_of_changing_size_give_the_offline_result() {
        let link = parse_link(LINK, None).unwrap();
        let plan = plan_link(&link);
        let set = Equalizer::from_plan(&plan, 0).unwrap();
        let mut options = crate::engine::EngineSettings::from_options(
            &link.runtime.engine,
            link.channel_count,
            link.sample_rate,
        );
        options.fade_in_samples = 0;
        let (engine, _control) = engine_pair(options, Some(set));
        let mut side = GraphSide::new(engine, 64);

        let frames = 1000;
        let left: Vec<f32> = (0..frames)
            .map(|n| ((n * 37) % 101) as f32 / 200.0 - 0.25)
            .collect();
        let right: Vec<f32> = (0..frames)
            .map(|n| ((n * 13) % 29) as f32 / 80.0 - 0.18)
            .collect();
        let mut out = [vec![0.0f32; frames], vec![0.0f32; frames]];
        // Blocks as a server might hand them, changing size mid-stream (some longer than a
        // chunk, so they are split).
        let mut start = 0;
        for &block in [64usize, 64, 200, 32, 17, 128].iter().cycle() {
            if start >= frames {
                break;
            }
            let end = (start + block).min(frames);
            let mut at = start;
            while at < end {
                let len = (end - at).min(side.chunk_frames());
                side.begin_cycle();
                side.put_input(0, &left[at..at + len]);
                side.put_input(1, &right[at..at + len]);
                side.run(len);
                let [l, r] = &mut out;
                side.take_output(0, &mut l[at..at + len]);
                side.take_output(1, &mut r[at..at + len]);
                at += len;
            }
            start = end;
        }

        let interleaved: Vec<f32> = (0..frames).flat_map(|n| [left[n], right[n]]).collect();
        let mut reference = vec![0.0f32; interleaved.len()];
        Equalizer::from_plan(&plan, 0)
            .unwrap()
            .process_interleaved(&interleaved, &mut reference);
        for n in 0..frames {
            for (c, channel) in out.iter().enumerate() {
                let want = reference[n * 2 + c];
                assert!(
                    (channel[n] - want).abs() <= 1e-6,
                    "frame {n} channel {c}: {} against {want}",
                    channel[n]
                );
            }
        }
    }
}
