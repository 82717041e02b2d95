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
        }
        Ok(Self {
            bank: Box::new(ChannelBank::new(filters)),
            output_bound,
            envelope_release,
            generation,
        })
    }

    /// Builds an equalizer from ready filters, one per channel, with the guard figures given
    /// (tests, benchmarks and the guard's own bypass). `output_bound` is Σ|g[n]| per channel.
    pub fn from_filters(filters: Vec<Filter>, output_bound: f64, generation: u64) -> Self {
        let n = filters.len();
        Self {
            bank: Box::new(ChannelBank::new(filters)),
            output_bound: vec![output_bound; n],
            envelope_release: vec![DEFAULT_RELEASE; n],
            generation,
        }
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

    /// Filters interleaved frames: `input.len()` must equal `output.len()` and be a multiple of
    /// the channel count (a trailing partial frame is left untouched in `output`). State carries
    /// over between calls, so a signal cut into blocks anywhere gives the same result.
    pub fn process_interleaved(&mut self, input: &[f32], output: &mut [f32]) {
        if self.bank.channel_count() == 0 {
            return;
        }
        self.bank.process_f32(input, output);
    }

    /// Clears every filter's state (silence in the past).
    pub fn reset(&mut self) {
        self.bank.reset();
    }
}

/// Release used when no design is known: 60 dB in one second at 48 kHz.
const DEFAULT_RELEASE: f64 = 0.999_856;

/// Σ|g[n]| of the design's inverse, from its impulse response until it has decayed.
fn l1_gain(design: &InverseDesign) -> f64 {
    let h = decayed_impulse_response(&design.inverse.b, &design.inverse.a, 1 << 18);
    h.iter().map(|x| x.abs()).sum::<f64>().max(1e-12)
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
