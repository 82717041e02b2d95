//! The audio-thread engine: filters, crossfades, guards and meters, allocation-free.

use std::sync::atomic::Ordering;
use std::time::Instant;

use ringbuf::traits::{Consumer, Producer};

use super::clip::ClipGuard;
use super::denormals::flush_denormals_on_this_thread;
use super::events::EngineEvent;
use super::handoff::EngineEnds;
use super::settings::{EngineSettings, Fallback, ENVELOPE_FLOOR};
use super::Equalizer;

/// Above bound × envelope × margin × this, output is a runaway at once, without waiting for the
/// hold time (an unstable recursion grows by orders of magnitude within a block).
const IMMEDIATE_FACTOR: f64 = 1000.0;

/// Filter sets that could not be handed back yet (the return queue was full).
const PENDING_SLOTS: usize = 4;

/// Frames the filters run ahead of the guards at a time (one chunk of a callback's block).
pub const ENGINE_CHUNK_FRAMES: usize = 256;

/// Runs on the audio thread. Build it with [`super::engine_pair`].
pub struct Engine {
    settings: EngineSettings,
    /// The running set; `None` is bypass.
    current: Option<Box<Equalizer>>,
    /// The set that ran before `current`, state cleared: the instability guard's fallback.
    previous: Option<Box<Equalizer>>,
    /// The set being crossfaded to.
    incoming: Option<Box<Equalizer>>,
    crossfade_pos: usize,
    fade_in_pos: usize,
    /// Samples of fade-out left once a fade-out has been requested.
    fade_out_left: Option<usize>,
    /// Per-channel input envelope the instability guard compares output against.
    envelope: Vec<f64>,
    current_over: usize,
    incoming_over: usize,
    clip: ClipGuard,
    /// Output of the incoming set during a crossfade, one frame.
    incoming_frame: Vec<f64>,
    /// Filter outputs of the current chunk, interleaved, computed by the block kernels ahead
    /// of the per-frame guards. A set's outputs are computed from the frame where it is first
    /// needed to the end of the chunk; `*_ready` says they are there. They stay valid while the
    /// set keeps running (a set whose state is reset or that leaves is recomputed or dropped),
    /// so the guards see exactly what the per-sample path would give.
    current_out: Vec<f64>,
    incoming_out: Vec<f64>,
    current_ready: bool,
    incoming_ready: bool,
    /// Peak |x| and |y| per channel over the callback, sent to the meters once per callback.
    peak_in: Vec<f32>,
    peak_out: Vec<f32>,
    pending_return: [Option<Box<Equalizer>>; PENDING_SLOTS],
    ends: EngineEnds,
}

impl Engine {
    pub(super) fn new(
        settings: EngineSettings,
        initial: Option<Box<Equalizer>>,
        ends: EngineEnds,
    ) -> Self {
        let generation = initial.as_ref().map_or(0, |e| e.generation());
        ends.stats
            .running_generation
            .store(generation, Ordering::Relaxed);
        Self {
            clip: ClipGuard::new(settings.clip, settings.gain_release_samples),
            envelope: vec![0.0; settings.channels],
            incoming_frame: vec![0.0; settings.channels],
            current_out: vec![0.0; settings.channels * ENGINE_CHUNK_FRAMES],
            incoming_out: vec![0.0; settings.channels * ENGINE_CHUNK_FRAMES],
            current_ready: false,
            incoming_ready: false,
            peak_in: vec![0.0; settings.channels],
            peak_out: vec![0.0; settings.channels],
            settings,
            current: initial,
            previous: None,
            incoming: None,
            crossfade_pos: 0,
            fade_in_pos: 0,
            fade_out_left: None,
            current_over: 0,
            incoming_over: 0,
            pending_return: Default::default(),
            ends,
        }
    }

    pub fn channels(&self) -> usize {
        self.settings.channels
    }

    /// Processes interleaved audio: `min(input.len(), output.len())` samples, whole frames only
    /// (a trailing partial frame of `output` is zeroed). Allocates nothing, locks nothing.
    pub fn process(&mut self, input: &[f32], output: &mut [f32]) {
        let started = Instant::now();
        flush_denormals_on_this_thread();
        let channels = self.settings.channels.max(1);
        let frames = input.len().min(output.len()) / channels;
        let used = frames * channels;
        output[used..].fill(0.0);
        self.retry_pending_returns();
        if self.ends.shared.fade_out_requested.load(Ordering::Acquire)
            && self.fade_out_left.is_none()
        {
            self.fade_out_left = Some(self.settings.fade_out_samples);
        }
        self.peak_in.fill(0.0);
        self.peak_out.fill(0.0);
        let mut start = 0;
        while start < frames {
            let n = (frames - start).min(ENGINE_CHUNK_FRAMES);
            let chunk_in = &input[start * channels..(start + n) * channels];
            let chunk_out = &mut output[start * channels..(start + n) * channels];
            self.current_ready = false;
            self.incoming_ready = false;
            for (f, (frame_in, frame_out)) in chunk_in
                .chunks_exact(channels)
                .zip(chunk_out.chunks_exact_mut(channels))
                .enumerate()
            {
                if self.incoming.is_none() {
                    self.accept_incoming();
                }
                self.run_filters_ahead(chunk_in, f);
                self.process_frame(f * channels, frame_in, frame_out);
            }
            start += n;
        }
        let stats = &self.ends.stats;
        for c in 0..self.settings.channels {
            stats.record_peak(c, self.peak_in[c], self.peak_out[c]);
        }
        let stats = &self.ends.stats;
        stats.frames.fetch_add(frames as u64, Ordering::Relaxed);
        stats.passes.fetch_add(1, Ordering::Relaxed);
        stats.record_callback_time(started.elapsed().as_nanos() as u64);
    }

    /// Runs the current and incoming sets through the block kernels from frame `f` to the end
    /// of the chunk, unless their outputs for this chunk are already there.
    fn run_filters_ahead(&mut self, chunk_in: &[f32], f: usize) {
        let channels = self.settings.channels;
        let from = f * channels;
        let len = chunk_in.len();
        if !self.current_ready {
            if let Some(eq) = self.current.as_mut() {
                eq.process_frames(&chunk_in[from..], &mut self.current_out[from..len]);
            }
            self.current_ready = true;
        }
        if !self.incoming_ready {
            if let Some(eq) = self.incoming.as_mut() {
                eq.process_frames(&chunk_in[from..], &mut self.incoming_out[from..len]);
            }
            self.incoming_ready = true;
        }
    }

    /// The incoming set becomes the current one, its computed outputs with it.
    fn promote_incoming_outputs(&mut self) {
        std::mem::swap(&mut self.current_out, &mut self.incoming_out);
        self.current_ready = self.incoming_ready;
        self.incoming_ready = false;
    }

    /// `at`: index of this frame's first sample in the chunk's output buffers.
    fn process_frame(&mut self, at: usize, frame_in: &[f32], frame_out: &mut [f32]) {
        let margin = self.settings.instability_margin;
        let mut trip: Option<(usize, bool)> = None;
        let mut incoming_trip: Option<usize> = None;
        let mut current_over_now = false;
        let mut incoming_over_now = false;
        let crossfade_t = if self.incoming.is_some() {
            (self.crossfade_pos + 1) as f64 / self.settings.crossfade_samples.max(1) as f64
        } else {
            0.0
        };
        let gain = self.output_gain();
        for (c, (x, y)) in frame_in.iter().zip(frame_out.iter_mut()).enumerate() {
            let x = f64::from(*x);
            let release = self
                .current
                .as_ref()
                .map_or(0.999, |e| e.envelope_release(c));
            let env = (x.abs()).max(self.envelope[c] * release);
            self.envelope[c] = env;
            let reference = env.max(ENVELOPE_FLOOR);

            let y_current = match self.current.as_ref() {
                Some(eq) => {
                    let v = self.current_out[at + c];
                    let limit = eq.output_bound(c) * reference * margin;
                    if !v.is_finite() {
                        trip.get_or_insert((c, true));
                    } else if v.abs() > limit * IMMEDIATE_FACTOR {
                        trip.get_or_insert((c, false));
                    } else if v.abs() > limit {
                        current_over_now = true;
                    }
                    v
                }
                None => x,
            };
            let mixed = match self.incoming.as_ref() {
                Some(eq) => {
                    let v = self.incoming_out[at + c];
                    let limit = eq.output_bound(c) * reference * margin;
                    if !v.is_finite() || v.abs() > limit * IMMEDIATE_FACTOR {
                        incoming_trip.get_or_insert(c);
                    } else if v.abs() > limit {
                        incoming_over_now = true;
                    }
                    self.incoming_frame[c] = v;
                    // Linear crossfade: the two outputs are strongly correlated (both undo the
                    // same link), so gains summing to one keep the level steady.
                    (1.0 - crossfade_t) * y_current + crossfade_t * v
                }
                None => y_current,
            };
            *y = (mixed * gain) as f32;
        }

        self.current_over = if current_over_now {
            self.current_over + 1
        } else {
            0
        };
        self.incoming_over = if incoming_over_now {
            self.incoming_over + 1
        } else {
            0
        };
        let hold = self.settings.instability_hold_samples;
        if trip.is_none() && self.current_over > hold {
            trip = Some((self.worst_channel(), false));
        }
        if incoming_trip.is_none() && self.incoming_over > hold {
            incoming_trip = Some(0);
        }

        if let Some(_channel) = incoming_trip {
            self.abort_incoming();
            // This frame mixed in a runaway: output the current set's share alone, silenced
            // by the clip guard if it was not finite.
        }
        if let Some((channel, non_finite)) = trip {
            self.trip(channel, non_finite);
            // Replace this frame: the fallback starts from silence (fade-in restarted).
            for y in frame_out.iter_mut() {
                *y = 0.0;
            }
        }
        if self.incoming.is_some() {
            self.crossfade_pos += 1;
            if self.crossfade_pos >= self.settings.crossfade_samples {
                self.complete_swap();
            }
        }
        self.advance_fades();

        let counted = self.clip.guard_frame(frame_out);
        let stats = &self.ends.stats;
        if counted.clipped > 0 {
            stats
                .clipped_samples
                .fetch_add(u64::from(counted.clipped), Ordering::Relaxed);
        }
        if counted.limited > 0 {
            stats
                .limited_samples
                .fetch_add(u64::from(counted.limited), Ordering::Relaxed);
        }
        for (c, (x, y)) in frame_in.iter().zip(frame_out.iter()).enumerate() {
            if let (Some(pi), Some(po)) = (self.peak_in.get_mut(c), self.peak_out.get_mut(c)) {
                *pi = pi.max(x.abs());
                *po = po.max(y.abs());
            }
        }
    }

    /// Fade-in and fade-out gain for the current frame.
    fn output_gain(&self) -> f64 {
        let fade_in = if self.fade_in_pos >= self.settings.fade_in_samples {
            1.0
        } else {
            self.fade_in_pos as f64 / self.settings.fade_in_samples.max(1) as f64
        };
        let fade_out = match self.fade_out_left {
            None => 1.0,
            Some(left) => left as f64 / self.settings.fade_out_samples.max(1) as f64,
        };
        fade_in * fade_out
    }

    fn advance_fades(&mut self) {
        if self.fade_in_pos < self.settings.fade_in_samples {
            self.fade_in_pos += 1;
        }
        if let Some(left) = self.fade_out_left {
            if left == 0 {
                if !self.ends.shared.fade_out_done.swap(true, Ordering::AcqRel) {
                    self.emit(EngineEvent::FadeOutComplete);
                }
            } else {
                self.fade_out_left = Some(left - 1);
            }
        }
    }

    fn worst_channel(&self) -> usize {
        (0..self.settings.channels)
            .max_by(|&a, &b| self.envelope[a].total_cmp(&self.envelope[b]))
            .unwrap_or(0)
    }

    fn accept_incoming(&mut self) {
        if let Some(mut next) = self.ends.inbox.try_pop() {
            if next.channel_count() != self.settings.channels {
                self.hand_back(next);
                return;
            }
            next.reset();
            let generation = next.generation();
            self.incoming = Some(next);
            self.incoming_ready = false;
            self.crossfade_pos = 0;
            self.incoming_over = 0;
            self.ends
                .stats
                .swaps_started
                .fetch_add(1, Ordering::Relaxed);
            self.emit(EngineEvent::SwapStarted { generation });
        }
    }

    fn complete_swap(&mut self) {
        let Some(next) = self.incoming.take() else {
            return;
        };
        let generation = next.generation();
        self.promote_incoming_outputs();
        if let Some(mut old) = self.current.replace(next) {
            old.reset();
            if let Some(older) = self.previous.replace(old) {
                self.hand_back(older);
            }
        }
        self.current_over = 0;
        let stats = &self.ends.stats;
        stats.swaps_completed.fetch_add(1, Ordering::Relaxed);
        stats
            .running_generation
            .store(generation, Ordering::Relaxed);
        self.emit(EngineEvent::SwapCompleted { generation });
    }

    fn abort_incoming(&mut self) {
        self.incoming_ready = false;
        if let Some(bad) = self.incoming.take() {
            let generation = bad.generation();
            self.hand_back(bad);
            self.ends
                .stats
                .instability_trips
                .fetch_add(1, Ordering::Relaxed);
            self.emit(EngineEvent::SwapAborted { generation });
        }
        self.incoming_over = 0;
    }

    /// The instability guard fires: reset, fall back, restart the fade-in, report.
    fn trip(&mut self, channel: usize, non_finite: bool) {
        let stats = &self.ends.stats;
        stats.instability_trips.fetch_add(1, Ordering::Relaxed);
        if non_finite {
            stats.non_finite_trips.fetch_add(1, Ordering::Relaxed);
        }
        let tripped = self.current.take();
        let tripped_generation = tripped.as_ref().map_or(0, |e| e.generation());
        let mut fallback_used = Fallback::Bypass;
        self.current_ready = false;
        if let Some(next) = self.incoming.take() {
            // A newer set was already on its way in: go straight to it.
            self.current = Some(next);
            self.promote_incoming_outputs();
            fallback_used = Fallback::LastGood;
        } else if self.settings.fallback == Fallback::LastGood {
            if let Some(mut last) = self.previous.take() {
                last.reset();
                self.current = Some(last);
                fallback_used = Fallback::LastGood;
            }
        }
        let stats = &self.ends.stats;
        match fallback_used {
            Fallback::LastGood => stats.fallbacks_last_good.fetch_add(1, Ordering::Relaxed),
            Fallback::Bypass => stats.fallbacks_bypass.fetch_add(1, Ordering::Relaxed),
        };
        let now_running = self.current.as_ref().map_or(0, |e| e.generation());
        stats
            .running_generation
            .store(now_running, Ordering::Relaxed);
        if let Some(mut bad) = tripped {
            bad.reset();
            self.hand_back(bad);
        }
        self.fade_in_pos = 0;
        self.current_over = 0;
        self.incoming_over = 0;
        self.emit(EngineEvent::InstabilityTrip {
            generation: tripped_generation,
            channel,
            non_finite,
            fallback: fallback_used,
            now_running,
        });
    }

    /// Sends a finished set to the control thread to be freed there. If the queue is full it
    /// waits in a pending slot.
    ///
    /// The queue cannot fill while the control side drains it before each send (see
    /// `RETURN_CAPACITY`); should it ever fill and the slots too, the set is leaked rather
    /// than freed here — a bounded leak is better than a deallocation on the audio thread.
    fn hand_back(&mut self, set: Box<Equalizer>) {
        let Err(set) = self.ends.outbox.try_push(set) else {
            return;
        };
        self.ends
            .stats
            .return_queue_full
            .fetch_add(1, Ordering::Relaxed);
        match self.pending_return.iter_mut().find(|s| s.is_none()) {
            Some(slot) => *slot = Some(set),
            None => std::mem::forget(set),
        }
    }

    fn retry_pending_returns(&mut self) {
        for i in 0..PENDING_SLOTS {
            if let Some(set) = self.pending_return[i].take() {
                if let Err(set) = self.ends.outbox.try_push(set) {
                    self.pending_return[i] = Some(set);
                    return;
                }
            }
        }
    }

    fn emit(&mut self, event: EngineEvent) {
        if self.ends.events.try_push(event).is_err() {
            self.ends
                .stats
                .events_dropped
                .fetch_add(1, Ordering::Relaxed);
        }
    }
}
