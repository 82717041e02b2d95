use serde::Serialize;

/// How the live service runs a link: devices and the engine's guards.
#[derive(Debug, Clone, PartialEq, Serialize, Default)]
pub struct RuntimeSettings {
    pub audio: AudioSettings,
    pub engine: EngineOptions,
}

/// Which audio devices the service opens.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AudioSettings {
    /// "default", a device id, or part of a device's name.
    pub input_device: String,
    pub output_device: String,
    /// Frames per device buffer; `None` lets the device choose.
    pub buffer_frames: Option<u32>,
}

impl Default for AudioSettings {
    fn default() -> Self {
        Self {
            input_device: "default".to_string(),
            output_device: "default".to_string(),
            buffer_frames: None,
        }
    }
}

/// What the output guard does with samples at or beyond full scale.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ClipPolicy {
    /// Clamp to full scale: cheapest, audible as hard distortion if it happens often.
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

/// The engine's behaviour, in the units users think in.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EngineOptions {
    /// Crossfade between an old and a new filter set (ms).
    pub crossfade_ms: f64,
    /// Fade-in after start or after a guard reset (ms).
    pub fade_in_ms: f64,
    /// Fade-out before stopping (ms).
    pub fade_out_ms: f64,
    pub clip: ClipPolicy,
    /// How far (dB) output may exceed the filter's own bound for the input level before it
    /// counts as a runaway.
    pub instability_margin_db: f64,
    /// How long (ms) it must stay beyond that before the guard resets the filters.
    pub instability_hold_ms: f64,
    pub fallback: Fallback,
    /// Release time (ms) of the gain-reduction clip policy.
    pub gain_release_ms: f64,
}

impl Default for EngineOptions {
    fn default() -> Self {
        Self {
            crossfade_ms: 20.0,
            fade_in_ms: 50.0,
            fade_out_ms: 50.0,
            clip: ClipPolicy::SoftLimit,
            instability_margin_db: 12.0,
            instability_hold_ms: 10.0,
            fallback: Fallback::LastGood,
            gain_release_ms: 300.0,
        }
    }
}
