use serde::Serialize;

/// What the output guard does with samples at or beyond full scale.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ClipPolicy {
    /// Clamp to ±[`FULL_SCALE`]: cheapest, audible as hard distortion if it happens often.
    HardLimit,
    /// Leave the signal alone below a knee, bend it smoothly towards full scale above it.
    SoftLimit,
    /// Lower the gain at once when a peak would pass full scale, recover slowly (then clamp as a
    /// last resort, since there is no look-ahead).
    GainReduction,
}

/// What the instability guard falls back to after resetting a runaway filter set.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Fallback {
    /// The filter set that ran before the current one, if any (else bypass).
    LastGood,
    /// Pass the input through unfiltered until a new filter set arrives.
    Bypass,
}

/// How the audio-thread engine behaves; every time is in samples, converted once from the
/// configuration on the control side.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct EngineSettings {
    pub channels: usize,
    /// Most frames one internal pass handles; longer buffers are cut into passes of this size.
    pub max_block_frames: usize,
    /// Length of the crossfade between an old and a new filter set.
    pub crossfade_samples: usize,
    /// Length of the fade-in after start or after a guard reset.
    pub fade_in_samples: usize,
    /// Length of the fade-out asked for before stopping.
    pub fade_out_samples: usize,
    pub clip: ClipPolicy,
    /// Output may exceed (bound × input envelope) by this factor before it counts as runaway.
    pub instability_margin: f64,
    /// How long output must stay beyond that before the guard resets the filters.
    pub instability_hold_samples: usize,
    pub fallback: Fallback,
    /// Release time of the gain-reduction clip policy.
    pub gain_release_samples: usize,
}

/// Full scale of float audio.
pub const FULL_SCALE: f32 = 1.0;

/// Below this input envelope (−80 dBFS) the instability guard compares against the floor: a
/// filter ringing out on silence is not a runaway.
pub const ENVELOPE_FLOOR: f64 = 1e-4;

impl EngineSettings {
    /// Settings with the defaults of the configuration at `sample_rate` (see the README).
    pub fn defaults(channels: usize, sample_rate: f64) -> Self {
        let ms = |t: f64| ((t * sample_rate / 1000.0).round() as usize).max(1);
        Self {
            channels,
            max_block_frames: 1024,
            crossfade_samples: ms(20.0),
            fade_in_samples: ms(50.0),
            fade_out_samples: ms(50.0),
            clip: ClipPolicy::SoftLimit,
            instability_margin: 4.0,
            instability_hold_samples: ms(10.0),
            fallback: Fallback::LastGood,
            gain_release_samples: ms(300.0),
        }
    }
}
