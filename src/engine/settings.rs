use serde::Serialize;

use crate::model::EngineOptions;
pub use crate::model::{ClipPolicy, Fallback};

/// How the audio-thread engine behaves; every time is in samples, converted once from the
/// configuration on the control side.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct EngineSettings {
    pub channels: usize,
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
    /// How long a channel's over-limit level is held: half a period of the lowest audio
    /// frequency ([`LOWEST_AUDIO_HZ`]), so a runaway oscillating at any audio frequency stays
    /// over between its peaks and the hold time counts from its first peak over the limit.
    pub runaway_peak_hold_samples: usize,
    /// Longest warm-up of an incoming set on the live input before its crossfade
    /// ([`WARM_UP_CAP_SECONDS`]); a set asks for its own 60 dB decay time.
    pub warm_up_cap_samples: usize,
}

/// Lowest frequency the runaway guard's peak hold is sized for (common practice: the lower
/// limit of hearing).
pub const LOWEST_AUDIO_HZ: f64 = 20.0;

/// Cap on an incoming set's warm-up: a reload never waits longer than this to start its
/// crossfade, whatever the set's decay time.
pub const WARM_UP_CAP_SECONDS: f64 = 0.5;

/// Input beyond ±this (+60 dBFS) is not audio from any converter: it is an input fault like a
/// NaN, replaced by silence before the filters see it.
pub const INPUT_CEILING: f32 = 1000.0;

/// Full scale of float audio.
pub const FULL_SCALE: f32 = 1.0;

/// Below this input envelope (−80 dBFS) the instability guard compares against the floor: a
/// filter ringing out on silence is not a runaway.
pub const ENVELOPE_FLOOR: f64 = 1e-4;

impl EngineSettings {
    /// Settings with the configuration's defaults at `sample_rate` (see the README).
    pub fn defaults(channels: usize, sample_rate: f64) -> Self {
        Self::from_options(&EngineOptions::default(), channels, sample_rate)
    }

    /// Converts the configured options (ms, dB) to samples and factors at `sample_rate`.
    pub fn from_options(options: &EngineOptions, channels: usize, sample_rate: f64) -> Self {
        let samples = |ms: f64| ((ms * sample_rate / 1000.0).round() as usize).max(1);
        Self {
            channels,
            crossfade_samples: samples(options.crossfade_ms),
            fade_in_samples: samples(options.fade_in_ms),
            fade_out_samples: samples(options.fade_out_ms),
            clip: options.clip,
            instability_margin: 10f64.powf(options.instability_margin_db / 20.0),
            instability_hold_samples: samples(options.instability_hold_ms),
            fallback: options.fallback,
            gain_release_samples: samples(options.gain_release_ms),
            runaway_peak_hold_samples: ((sample_rate / (2.0 * LOWEST_AUDIO_HZ)).round() as usize)
                .max(1),
            warm_up_cap_samples: (WARM_UP_CAP_SECONDS * sample_rate).round() as usize,
        }
    }
}
