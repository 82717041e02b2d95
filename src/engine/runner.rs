//! The audio-thread engine: filters, warm-ups and crossfades, guards and meters,
//! allocation-free.
//!
//! Per channel, what is heard comes from one source: the running set, the last good set
//! standing in after a trip, or bypass (the input delayed by the running set's latency). A trip
//! moves the tripped channel's whole linked group to the next source, and only that group.

use std::sync::atomic::Ordering;
use std::time::Instant;

use ringbuf::traits::{Consumer, Producer};

use super::clip::ClipGuard;
use super::denormals::flush_denormals_on_this_thread;
use super::events::EngineEvent;
use super::handoff::EngineEnds;
use super::input_faults::silence_faults;
use super::runaway_watch::{RunawayCause, RunawayWatch};
use super::settings::{EngineSettings, Fallback, ENVELOPE_FLOOR};
use super::Equalizer;

/// Filter sets that could not be handed back yet (the return queue was full).
const PENDING_SLOTS: usize = 4;

/// Frames the filters run ahead of the guards at a time (one chunk of a callback's block).
pub const ENGINE_CHUNK_FRAMES: usize = 256;

/// Envelope release while no set says otherwise: 60 dB in one second at 48 kHz.
const BYPASS_RELEASE: f64 = 0.999_856;

/// Where a channel's output comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Source {
    /// The running set.
    Current,
    /// The last good set, standing in for the running one after a trip.
    Previous,
    /// The input, delayed by the running set's latency on that channel.
    Bypass,
}

/// Runs on the audio thread. Build it with [`super::engine_pair`].
pub struct Engine {
    settings: EngineSettings,
    /// The running set; `None` only before any set arrived (plain bypass, no delay).
    current: Option<Box<Equalizer>>,
    /// Some group of the running set ran away: it is not kept as the last good set.
    current_failed: bool,
    /// The set that ran before `current`: the fallback of a group that trips.
    previous: Option<Box<Equalizer>>,
    /// The previous set ran away too while standing in: it is not used again.
    previous_failed: bool,
    /// The set on its way in: warming up on the live input, then crossfaded to.
    incoming: Option<Box<Equalizer>>,
    /// Frames of warm-up left before the crossfade begins.
    warm_up_left: usize,
    crossfade_pos: usize,
    /// Per channel: this swap moves it by a dip (out, then in) instead of a crossfade, because
    /// its group's latency changes and two delays mixed would be a comb filter.
    dip: Vec<bool>,
    source: Vec<Source>,
    /// Channels whose source is the previous set.
    on_previous: usize,
    /// Per channel: frames of fade-in done (restarted by a trip of its group).
    fade_in_pos: Vec<usize>,
    /// Samples of fade-out left once a fade-out has been requested.
    fade_out_left: Option<usize>,
    /// Per-channel input envelope the runaway guard compares output against.
    envelope: Vec<f64>,
    /// Per channel: the guard's judgement of what is heard, and of the incoming set.
    audible_watch: Vec<RunawayWatch>,
    incoming_watch: Vec<RunawayWatch>,
    clip: ClipGuard,
    /// The chunk's input with faults silenced, and a copy with some channels silenced (the
    /// channels a set does not currently play are fed silence, so a reset runaway stays at
    /// rest).
    clean_in: Vec<f32>,
    masked_in: Vec<f32>,
    /// Samples in the current chunk.
    chunk_len: usize,
    /// Outputs of the current chunk, interleaved, computed by the block kernels ahead of the
    /// per-frame guards from the frame where a set is first needed to the end of the chunk;
    /// `*_ready` says they are there. A running set is never recomputed within a chunk (its
    /// delay lines advance once per frame); the previous set is computed when some channel
    /// needs it, and a channel that starts to need it mid-chunk catches up sample by sample.
    current_out: Vec<f64>,
    current_delayed: Vec<f64>,
    previous_out: Vec<f64>,
    incoming_out: Vec<f64>,
    incoming_delayed: Vec<f64>,
    current_ready: bool,
    previous_ready: bool,
    incoming_ready: bool,
    /// Per channel, this frame: what is heard before mixing, and the guard's verdict on it.
    audible: Vec<f64>,
    audible_trip: Vec<Option<RunawayCause>>,
    /// Peak |x| and |y| per channel over the callback, sent to the meters once per callback.
    peak_in: Vec<f32>,
    peak_out: Vec<f32>,
    pending_return: [Option<Box<Equalizer>>; PENDING_SLOTS],
    ends: EngineEnds,
}

/// Copies `clean` into `masked`, silencing the channels whose source is not `keep`.
fn mask(clean: &[f32], masked: &mut [f32], source: &[Source], keep: Source) {
    let channels = source.len().max(1);
    for (x, m) in clean
        .chunks_exact(channels)
        .zip(masked.chunks_exact_mut(channels))
    {
        for ((v, d), s) in x.iter().zip(m.iter_mut()).zip(source) {
            *d = if *s == keep { *v } else { 0.0 };
        }
    }
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
        let channels = settings.channels;
        let chunk = channels * ENGINE_CHUNK_FRAMES;
        let source = if initial.is_some() {
            Source::Current
        } else {
            Source::Bypass
        };
        Self {
            clip: ClipGuard::new(settings.clip, settings.gain_release_samples),
            envelope: vec![0.0; channels],
            dip: vec![false; channels],
            source: vec![source; channels],
            on_previous: 0,
            fade_in_pos: vec![0; channels],
            audible_watch: vec![RunawayWatch::default(); channels],
            incoming_watch: vec![RunawayWatch::default(); channels],
            clean_in: vec![0.0; chunk],
            masked_in: vec![0.0; chunk],
            chunk_len: 0,
            current_out: vec![0.0; chunk],
            current_delayed: vec![0.0; chunk],
            previous_out: vec![0.0; chunk],
            incoming_out: vec![0.0; chunk],
            incoming_delayed: vec![0.0; chunk],
            current_ready: false,
            previous_ready: false,
            incoming_ready: false,
            audible: vec![0.0; channels],
            audible_trip: vec![None; channels],
            peak_in: vec![0.0; channels],
            peak_out: vec![0.0; channels],
            settings,
            current: initial,
            current_failed: false,
            previous: None,
            previous_failed: false,
            incoming: None,
            warm_up_left: 0,
            crossfade_pos: 0,
            fade_out_left: None,
            pending_return: Default::default(),
            ends,
        }
    }

    pub fn channels(&self) -> usize {
        self.settings.channels
    }

    /// True once a requested fade-out is complete (the output is silent from then on).
    pub fn fade_out_done(&self) -> bool {
        self.ends.shared.fade_out_done.load(Ordering::Acquire)
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
            let len = n * channels;
            let chunk_out = &mut output[start * channels..start * channels + len];
            let faults = silence_faults(
                &input[start * channels..start * channels + len],
                &mut self.clean_in[..len],
            );
            if faults.replaced > 0 {
                let stats = &self.ends.stats;
                stats
                    .input_faults
                    .fetch_add(faults.replaced, Ordering::Relaxed);
                stats
                    .input_faults_non_finite
                    .fetch_add(faults.non_finite, Ordering::Relaxed);
            }
            self.chunk_len = len;
            self.current_ready = false;
            self.previous_ready = false;
            self.incoming_ready = false;
            for (f, frame_out) in chunk_out.chunks_exact_mut(channels).enumerate() {
                if self.incoming.is_none() {
                    self.accept_incoming();
                }
                self.run_sets_ahead(f);
                self.process_frame(f, frame_out);
            }
            start += n;
        }
        let stats = &self.ends.stats;
        for c in 0..self.settings.channels {
            stats.record_peak(c, self.peak_in[c], self.peak_out[c]);
        }
        stats.frames.fetch_add(frames as u64, Ordering::Relaxed);
        stats.passes.fetch_add(1, Ordering::Relaxed);
        stats.record_callback_time(started.elapsed().as_nanos() as u64);
    }

    /// Runs the sets that are needed through the block kernels from frame `f` to the end of the
    /// chunk, unless their outputs for this chunk are already there.
    fn run_sets_ahead(&mut self, f: usize) {
        let from = f * self.settings.channels;
        let len = self.chunk_len;
        let clean = &self.clean_in[from..len];
        if !self.current_ready {
            if let Some(eq) = self.current.as_mut() {
                let filter_in = if self.source.iter().all(|s| *s == Source::Current) {
                    clean
                } else {
                    mask(
                        clean,
                        &mut self.masked_in[from..len],
                        &self.source,
                        Source::Current,
                    );
                    &self.masked_in[from..len]
                };
                eq.process_frames_and_delay(
                    filter_in,
                    clean,
                    &mut self.current_out[from..len],
                    &mut self.current_delayed[from..len],
                );
            }
            self.current_ready = true;
        }
        if !self.previous_ready && self.on_previous > 0 {
            if let Some(eq) = self.previous.as_mut() {
                mask(
                    clean,
                    &mut self.masked_in[from..len],
                    &self.source,
                    Source::Previous,
                );
                eq.process_frames(
                    &self.masked_in[from..len],
                    &mut self.previous_out[from..len],
                );
            }
            self.previous_ready = true;
        }
        if !self.incoming_ready {
            if let Some(eq) = self.incoming.as_mut() {
                eq.process_frames_and_delay(
                    clean,
                    clean,
                    &mut self.incoming_out[from..len],
                    &mut self.incoming_delayed[from..len],
                );
            }
            self.incoming_ready = true;
        }
    }

    /// One frame: judge, mix, fade, guard. `f`: the frame's index in the chunk.
    fn process_frame(&mut self, f: usize, frame_out: &mut [f32]) {
        let channels = self.settings.channels;
        let at = f * channels;
        let margin = self.settings.instability_margin;
        let hold = self.settings.instability_hold_samples;
        let peak_hold = self.settings.runaway_peak_hold_samples;
        let crossfading = self.incoming.is_some() && self.warm_up_left == 0;
        let t = if crossfading {
            (self.crossfade_pos + 1) as f64 / self.settings.crossfade_samples.max(1) as f64
        } else {
            0.0
        };
        let fade_out = self.fade_out_gain();
        let mut incoming_trip: Option<RunawayCause> = None;
        for (c, y) in frame_out.iter_mut().enumerate() {
            let x = f64::from(self.clean_in[at + c]);
            let (a, judged_by) = match self.source[c] {
                Source::Current => (self.current_out[at + c], self.current.as_deref()),
                Source::Previous => (self.previous_out[at + c], self.previous.as_deref()),
                Source::Bypass if self.current.is_some() => (self.current_delayed[at + c], None),
                Source::Bypass => (x, None),
            };
            let release = judged_by
                .or(self.current.as_deref())
                .map_or(BYPASS_RELEASE, |e| e.envelope_release(c));
            // The envelope only ever sees audio: faults were silenced before it.
            let env = x.abs().max(self.envelope[c] * release);
            self.envelope[c] = env;
            let reference = env.max(ENVELOPE_FLOOR);
            self.audible_trip[c] = judged_by.and_then(|eq| {
                let limit = eq.output_bound(c) * reference * margin;
                self.audible_watch[c].observe(a, limit, hold, peak_hold)
            });
            self.audible[c] = a;
            let mut mixed = a;
            if let Some(eq) = self.incoming.as_deref() {
                let v = self.incoming_out[at + c];
                let limit = eq.output_bound(c) * reference * margin;
                if let Some(cause) = self.incoming_watch[c].observe(v, limit, hold, peak_hold) {
                    incoming_trip.get_or_insert(cause);
                }
                if crossfading {
                    // Linear crossfade where the latencies agree: the two outputs are strongly
                    // correlated (both undo the same link), so gains summing to one keep the
                    // level steady. Where they differ, a dip: one set at a time.
                    let (w_old, w_new) = if self.dip[c] {
                        ((1.0 - 2.0 * t).max(0.0), (2.0 * t - 1.0).max(0.0))
                    } else {
                        (1.0 - t, t)
                    };
                    mixed = w_old * a + w_new * v;
                }
            }
            *y = (mixed * self.fade_in_gain(c) * fade_out) as f32;
        }

        if let Some(cause) = incoming_trip {
            self.abort_incoming(cause);
            // This frame mixed in a runaway: it carries what is heard without it.
            for (c, y) in frame_out.iter_mut().enumerate() {
                *y = (self.audible[c] * self.fade_in_gain(c) * fade_out) as f32;
            }
        }
        for c in 0..channels {
            if let Some(cause) = self.audible_trip[c].take() {
                self.trip_group(f, c, cause, frame_out);
            }
        }
        if self.incoming.is_some() {
            if self.warm_up_left > 0 {
                self.warm_up_left -= 1;
                if self.warm_up_left == 0 {
                    self.decide_dips();
                }
            } else {
                self.crossfade_pos += 1;
                if self.crossfade_pos >= self.settings.crossfade_samples {
                    self.complete_swap();
                }
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
        for (c, y) in frame_out.iter().enumerate() {
            let x = self.clean_in[at + c];
            if let (Some(pi), Some(po)) = (self.peak_in.get_mut(c), self.peak_out.get_mut(c)) {
                *pi = pi.max(x.abs());
                *po = po.max(y.abs());
            }
        }
    }

    fn fade_in_gain(&self, channel: usize) -> f64 {
        let pos = self.fade_in_pos[channel];
        if pos >= self.settings.fade_in_samples {
            1.0
        } else {
            pos as f64 / self.settings.fade_in_samples.max(1) as f64
        }
    }

    fn fade_out_gain(&self) -> f64 {
        match self.fade_out_left {
            None => 1.0,
            Some(left) => left as f64 / self.settings.fade_out_samples.max(1) as f64,
        }
    }

    fn advance_fades(&mut self) {
        for pos in self.fade_in_pos.iter_mut() {
            if *pos < self.settings.fade_in_samples {
                *pos += 1;
            }
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

    /// The latency of what channel `c` plays now.
    fn source_latency(&self, c: usize) -> usize {
        match self.source[c] {
            Source::Previous => self.previous.as_ref().map_or(0, |e| e.latency(c)),
            Source::Current | Source::Bypass => self.current.as_ref().map_or(0, |e| e.latency(c)),
        }
    }

    /// Decides, per linked group of the incoming set, whether its crossfade is aligned (every
    /// channel's latency unchanged) or a dip. Bounded: channels² comparisons, on events only.
    fn decide_dips(&mut self) {
        let Some(next) = self.incoming.as_deref() else {
            return;
        };
        let channels = self.settings.channels;
        for c in 0..channels {
            let group = next.group_of(c);
            self.dip[c] = (0..channels)
                .any(|d| next.group_of(d) == group && self.source_latency(d) != next.latency(d));
        }
    }

    fn accept_incoming(&mut self) {
        if let Some(mut next) = self.ends.inbox.try_pop() {
            if next.channel_count() != self.settings.channels {
                self.hand_back(next);
                return;
            }
            next.reset();
            let generation = next.generation();
            self.warm_up_left = next
                .warm_up_samples()
                .min(self.settings.warm_up_cap_samples);
            self.incoming = Some(next);
            self.incoming_ready = false;
            self.crossfade_pos = 0;
            self.incoming_watch.iter_mut().for_each(RunawayWatch::reset);
            if self.warm_up_left == 0 {
                self.decide_dips();
            }
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
        // The incoming set becomes the running one, its computed outputs and its judge with it.
        std::mem::swap(&mut self.current_out, &mut self.incoming_out);
        std::mem::swap(&mut self.current_delayed, &mut self.incoming_delayed);
        std::mem::swap(&mut self.audible_watch, &mut self.incoming_watch);
        self.incoming_watch.iter_mut().for_each(RunawayWatch::reset);
        self.current_ready = self.incoming_ready;
        self.incoming_ready = false;
        if let Some(mut old) = self.current.replace(next) {
            if self.current_failed {
                // A set that ran away is not the last good one; the one before stays, if good.
                self.hand_back(old);
                if self.previous_failed {
                    if let Some(p) = self.previous.take() {
                        self.hand_back(p);
                    }
                } else if let Some(p) = self.previous.as_mut() {
                    p.reset();
                }
            } else {
                old.reset();
                if let Some(older) = self.previous.replace(old) {
                    self.hand_back(older);
                }
            }
        }
        self.current_failed = false;
        self.previous_failed = false;
        self.source.fill(Source::Current);
        self.on_previous = 0;
        self.previous_ready = false;
        self.dip.fill(false);
        let stats = &self.ends.stats;
        stats.swaps_completed.fetch_add(1, Ordering::Relaxed);
        stats.channels_on_fallback.store(0, Ordering::Relaxed);
        stats
            .running_generation
            .store(generation, Ordering::Relaxed);
        self.emit(EngineEvent::SwapCompleted { generation });
    }

    fn abort_incoming(&mut self, cause: RunawayCause) {
        self.incoming_ready = false;
        self.warm_up_left = 0;
        self.crossfade_pos = 0;
        self.incoming_watch.iter_mut().for_each(RunawayWatch::reset);
        self.dip.fill(false);
        if let Some(bad) = self.incoming.take() {
            let generation = bad.generation();
            self.hand_back(bad);
            let stats = &self.ends.stats;
            stats.instability_trips.fetch_add(1, Ordering::Relaxed);
            if cause == RunawayCause::NonFinite {
                stats.non_finite_trips.fetch_add(1, Ordering::Relaxed);
            }
            self.emit(EngineEvent::SwapAborted { generation });
        }
    }

    /// The runaway guard fires on channel `channel` in frame `f`: its whole linked group (as
    /// the running set groups the channels) moves to the next source: the last good set, else
    /// bypass. The group's frame is silenced, its state reset, its fade-in restarted.
    fn trip_group(&mut self, f: usize, channel: usize, cause: RunawayCause, frame: &mut [f32]) {
        let was = self.source[channel];
        let (failed_generation, fallback) = match was {
            Source::Current => {
                self.current_failed = true;
                let last_good = self.settings.fallback == Fallback::LastGood
                    && self.previous.is_some()
                    && !self.previous_failed;
                let fallback = if last_good {
                    Source::Previous
                } else {
                    Source::Bypass
                };
                (
                    self.current.as_ref().map_or(0, |e| e.generation()),
                    fallback,
                )
            }
            Source::Previous => {
                self.previous_failed = true;
                (
                    self.previous.as_ref().map_or(0, |e| e.generation()),
                    Source::Bypass,
                )
            }
            Source::Bypass => return,
        };
        let group = self.current.as_ref().map_or(0, |e| e.group_of(channel));
        for (d, out) in frame.iter_mut().enumerate() {
            if self.current.as_ref().map_or(0, |e| e.group_of(d)) != group {
                continue;
            }
            match self.source[d] {
                Source::Current => {
                    if let Some(eq) = self.current.as_mut() {
                        eq.reset_channel(d);
                    }
                }
                Source::Previous => {
                    self.on_previous -= 1;
                    if let Some(eq) = self.previous.as_mut() {
                        eq.reset_channel(d);
                    }
                }
                Source::Bypass => {}
            }
            self.source[d] = fallback;
            if fallback == Source::Previous {
                self.on_previous += 1;
                self.engage_previous(f, d);
            }
            self.fade_in_pos[d] = 0;
            self.envelope[d] = 0.0;
            self.audible_watch[d].reset();
            self.audible_trip[d] = None;
            *out = 0.0;
        }
        if self.incoming.is_some() && self.warm_up_left == 0 {
            self.decide_dips();
        }
        let on_fallback = self
            .source
            .iter()
            .filter(|s| **s != Source::Current)
            .count();
        let now_running = self.now_running();
        let stats = &self.ends.stats;
        stats.instability_trips.fetch_add(1, Ordering::Relaxed);
        if cause == RunawayCause::NonFinite {
            stats.non_finite_trips.fetch_add(1, Ordering::Relaxed);
        }
        let fallback_used = if fallback == Source::Previous {
            stats.fallbacks_last_good.fetch_add(1, Ordering::Relaxed);
            Fallback::LastGood
        } else {
            stats.fallbacks_bypass.fetch_add(1, Ordering::Relaxed);
            Fallback::Bypass
        };
        stats
            .channels_on_fallback
            .store(on_fallback as u64, Ordering::Relaxed);
        stats
            .running_generation
            .store(now_running, Ordering::Relaxed);
        self.emit(EngineEvent::InstabilityTrip {
            generation: failed_generation,
            channel,
            non_finite: cause == RunawayCause::NonFinite,
            fallback: fallback_used,
            now_running,
        });
    }

    /// Channel `d` starts to play the previous set after frame `f`: from rest, and if the
    /// set's outputs for this chunk were already computed (for other channels), this channel's
    /// are computed now, sample by sample, from frame `f + 1` to the end of the chunk.
    fn engage_previous(&mut self, f: usize, d: usize) {
        let Some(eq) = self.previous.as_mut() else {
            return;
        };
        eq.reset_channel(d);
        if !self.previous_ready {
            return;
        }
        let channels = self.settings.channels;
        let mut i = (f + 1) * channels + d;
        while i < self.chunk_len {
            self.previous_out[i] = eq.process_channel_sample(d, f64::from(self.clean_in[i]));
            i += channels;
        }
    }

    /// The generation heard: the running set's, the last good one's when every channel plays
    /// it, 0 when every channel is in bypass (or no set has arrived).
    fn now_running(&self) -> u64 {
        let all = |s: Source| self.source.iter().all(|x| *x == s);
        if all(Source::Bypass) {
            0
        } else if all(Source::Previous) {
            self.previous.as_ref().map_or(0, |e| e.generation())
        } else {
            self.current.as_ref().map_or(0, |e| e.generation())
        }
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
