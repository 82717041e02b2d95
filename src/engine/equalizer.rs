use super::delay_lines::DelayLines;
use crate::design::InverseDesign;
use crate::numeric::impulse::decayed_impulse_response;
use crate::pipeline::LinkPlan;
use crate::realize::kernels::ChannelBank;
use crate::realize::Filter;

/// One running inverse filter per audio channel, plus what the guards need to know about each.
///
/// Built on the control side (it allocates); on the audio thread it is only run, reset and
/// handed back.
#[derive(Debug, Clone)]
pub struct Equalizer {
    /// The channels' filters, arranged for block processing (vector lanes where they fit);
    /// boxed so an `Equalizer` stays small when it is moved through the queues.
    bank: Box<ChannelBank>,
    /// Per channel: Σ|g[n]| of the inverse's impulse response — the exact bound on |y|/max|x|
    /// (common practice: ‖g∗x‖∞ ≤ ‖g‖₁·‖x‖∞). It is at least the peak gain over frequency.
    output_bound: Vec<f64>,
    /// Per channel: per-sample factor by which the input envelope may fall, matched to the
    /// inverse's own 60 dB decay so a ringing tail never looks like a runaway.
    envelope_release: Vec<f64>,
    /// Per channel: its linked group (channels the guards act on together), numbered from 0.
    group_of: Vec<usize>,
    /// Samples the set runs on the live input before it is crossfaded in: the slowest
    /// channel's 60 dB decay, so its start-up transient has died away (the engine caps it).
    warm_up: usize,
    /// What bypass plays after this set: each channel's input delayed by its latency (the delay
    /// the inverse adds on purpose, a least-squares FIR's D); boxed, as the bank is.
    delay: Box<DelayLines>,
    /// Configuration generation this set was built from (0 for sets built outside a service).
    generation: u64,
}

/// Why an equalizer could not be built from a plan.
#[derive(Debug, Clone, PartialEq)]
pub enum EngineError {
    /// Some path has no realization to run; each entry is "label: why".
    NotRunnable(Vec<String>),
    /// Audio channel `channel` is covered by no path.
    UncoveredChannel { channel: usize },
}

impl std::fmt::Display for EngineError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            EngineError::NotRunnable(problems) => {
                write!(f, "the configuration cannot run:")?;
                for p in problems {
                    write!(f, "\n  {p}")?;
                }
                write!(
                    f,
                    "\n  run `redress check` on the configuration for the full analysis"
                )
            }
            EngineError::UncoveredChannel { channel } => write!(
                f,
                "audio channel {channel} has no path in the configuration; add it to a path's channels"
            ),
        }
    }
}

impl std::error::Error for EngineError {}

impl Equalizer {
    /// Builds one filter per audio channel from a runnable plan (fresh state for each).
    pub fn from_plan(plan: &LinkPlan, generation: u64) -> Result<Self, EngineError> {
        if !plan.is_runnable() {
            return Err(EngineError::NotRunnable(plan.problems()));
        }
        let mut filters = Vec::with_capacity(plan.channel_count);
        let mut output_bound = Vec::with_capacity(plan.channel_count);
        let mut envelope_release = Vec::with_capacity(plan.channel_count);
        let mut latency = Vec::with_capacity(plan.channel_count);
        let mut warm_up = 0usize;
        for channel in 0..plan.channel_count {
            let path = plan
                .path_for_channel(channel)
                .ok_or(EngineError::UncoveredChannel { channel })?;
            let (Some(realization), Some(Ok(design))) = (path.runnable(), path.design.as_ref())
            else {
                return Err(EngineError::UncoveredChannel { channel });
            };
            filters.push(realization.filter.clone());
            output_bound.push(l1_gain(design));
            envelope_release.push(release_for(design));
            latency.push(design.added_latency_samples);
            warm_up = warm_up.max(decay_samples(design));
        }
        let group_of = if plan.channel_groups.len() == plan.channel_count {
            plan.channel_groups.clone()
        } else {
            vec![0; plan.channel_count]
        };
        Ok(Self {
            bank: Box::new(ChannelBank::new(filters)),
            output_bound,
            envelope_release,
            delay: Box::new(DelayLines::new(&latency)),
            group_of,
            warm_up,
            generation,
        })
    }

    /// Builds an equalizer from ready filters, one per channel, with the guard figures given
    /// (tests and benchmarks). `output_bound` is Σ|g[n]| per channel. The set adds no latency,
    /// all its channels are one linked group, and it needs no warm-up; the `with_*` methods
    /// say otherwise.
    pub fn from_filters(filters: Vec<Filter>, output_bound: f64, generation: u64) -> Self {
        let n = filters.len();
        Self {
            bank: Box::new(ChannelBank::new(filters)),
            output_bound: vec![output_bound; n],
            envelope_release: vec![DEFAULT_RELEASE; n],
            group_of: vec![0; n],
            warm_up: 0,
            delay: Box::new(DelayLines::new(&vec![0; n])),
            generation,
        }
    }

    /// The same set, declaring that channel c's filter delays by `latency[c]` samples.
    pub fn with_latency(mut self, latency: Vec<usize>) -> Self {
        let mut latency = latency;
        latency.resize(self.channel_count(), 0);
        self.delay = Box::new(DelayLines::new(&latency));
        self
    }

    /// The same set with these linked groups (group number per channel).
    pub fn with_channel_groups(mut self, group_of: Vec<usize>) -> Self {
        let mut group_of = group_of;
        group_of.resize(self.channel_count(), 0);
        self.group_of = group_of;
        self
    }

    /// The same set, asking for `samples` of warm-up before it is crossfaded in.
    pub fn with_warm_up(mut self, samples: usize) -> Self {
        self.warm_up = samples;
        self
    }

    pub fn channel_count(&self) -> usize {
        self.bank.channel_count()
    }

    /// How many channels run side by side in vector lanes (the rest run alone).
    pub fn channels_in_lanes(&self) -> usize {
        self.bank.channels_in_lanes()
    }

    pub fn generation(&self) -> u64 {
        self.generation
    }

    /// Σ|g[n]| of channel `channel`'s inverse.
    pub fn output_bound(&self, channel: usize) -> f64 {
        self.output_bound.get(channel).copied().unwrap_or(1.0)
    }

    /// Samples channel `channel`'s filter delays on purpose (0 for an absent channel).
    pub fn latency(&self, channel: usize) -> usize {
        self.delay.latency(channel)
    }

    /// The linked group channel `channel` belongs to.
    pub fn group_of(&self, channel: usize) -> usize {
        self.group_of.get(channel).copied().unwrap_or(0)
    }

    /// Samples of warm-up this set asks for before its crossfade (uncapped).
    pub fn warm_up_samples(&self) -> usize {
        self.warm_up
    }

    /// Per-sample release of the input envelope for channel `channel`.
    pub fn envelope_release(&self, channel: usize) -> f64 {
        self.envelope_release
            .get(channel)
            .copied()
            .unwrap_or(DEFAULT_RELEASE)
    }

    /// Runs one sample of channel `channel` (no bounds panic: an absent channel passes through).
    #[inline]
    pub fn process_channel_sample(&mut self, channel: usize, x: f64) -> f64 {
        self.bank.process_channel_sample(channel, x)
    }

    /// Filters interleaved f32 frames into interleaved f64 frames through the block kernels
    /// (whole frames of the shorter slice), carrying state: the output of
    /// [`Equalizer::process_channel_sample`] on every sample, computed faster.
    pub fn process_frames(&mut self, input: &[f32], output: &mut [f64]) {
        self.bank.process(input, output);
    }

    /// As [`Equalizer::process_frames`], and runs the bypass delay lines on `delay_input` (the
    /// live input, while `input` may have channels silenced) into `delayed`.
    pub fn process_frames_and_delay(
        &mut self,
        input: &[f32],
        delay_input: &[f32],
        output: &mut [f64],
        delayed: &mut [f64],
    ) {
        self.bank.process(input, output);
        self.delay.process(delay_input, delayed);
    }

    /// Clears one channel's filter state (silence in its past).
    pub fn reset_channel(&mut self, channel: usize) {
        self.bank.reset_channel(channel);
    }

    /// Filters interleaved frames: `input.len()` must equal `output.len()` and be a multiple of
    /// the channel count (a trailing partial frame is left untouched in `output`). State carries
    /// over between calls, so a signal cut into blocks anywhere gives the same result.
    pub fn process_interleaved(&mut self, input: &[f32], output: &mut [f32]) {
        if self.bank.channel_count() == 0 {
            return;
        }
        self.bank.process_f32(input, output);
    }

    /// Clears every filter's state and the delay lines (silence in the past).
    pub fn reset(&mut self) {
        self.bank.reset();
        self.delay.reset();
    }
}

/// Release used when no design is known: 60 dB in one second at 48 kHz.
const DEFAULT_RELEASE: f64 = 0.999_856;

/// Σ|g[n]| of the design's inverse, from its impulse response until it has decayed.
fn l1_gain(design: &InverseDesign) -> f64 {
    let h = decayed_impulse_response(&design.inverse.b, &design.inverse.a, 1 << 18);
    h.iter().map(|x| x.abs()).sum::<f64>().max(1e-12)
}

/// The design's 60 dB decay time in samples (at least one).
fn decay_samples(design: &InverseDesign) -> usize {
    let samples = (design.decay_60db_seconds * design.sample_rate).ceil();
    if samples.is_finite() && samples >= 1.0 {
        samples as usize
    } else {
        1
    }
}

/// Envelope release that falls 60 dB over the design's own 60 dB decay time (at least 1 ms
/// worth of samples at the design's rate, so an FIR inverse still gets a sensible envelope).
fn release_for(design: &InverseDesign) -> f64 {
    let samples = (design.decay_60db_seconds * design.sample_rate).max(design.sample_rate / 1000.0);
    if samples.is_finite() && samples > 0.0 {
        10f64.powf(-3.0 / samples)
    } else {
        DEFAULT_RELEASE
    }
}
