use serde::Serialize;

/// How the live service runs a link: devices and the engine's guards.
#[derive(Debug, Clone, PartialEq, Serialize, Default)]
pub struct RuntimeSettings {
    pub audio: AudioSettings,
    pub engine: EngineOptions,
}

/// Which audio devices the service opens, and how its audio threads run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AudioSettings {
    /// The audio system the devices belong to.
    pub host: AudioHost,
    /// "default", a device id, or part of a device's name.
    pub input_device: String,
    pub output_device: String,
    /// Frames per device buffer; `None` lets the device choose.
    pub buffer_frames: Option<u32>,
    /// `SCHED_FIFO` priority the callback threads ask for where the host leaves them to us;
    /// 0 asks for nothing.
    pub callback_priority: u8,
    /// Lock the process's memory (`mlockall`) where the limits allow.
    pub lock_memory: bool,
    /// Whether the input and output run on one sample clock.
    pub clocks: Clocks,
    /// Ports of the sound server to connect the service's inputs and outputs to, in channel
    /// order (JACK only; empty: connect nothing).
    pub connect_inputs: Vec<String>,
    pub connect_outputs: Vec<String>,
}

impl Default for AudioSettings {
    fn default() -> Self {
        Self {
            host: AudioHost::Alsa,
            input_device: "default".to_string(),
            output_device: "default".to_string(),
            buffer_frames: None,
            callback_priority: super::DEFAULT_CALLBACK_PRIORITY,
            lock_memory: true,
            clocks: Clocks::Auto,
            connect_inputs: Vec::new(),
            connect_outputs: Vec::new(),
        }
    }
}

/// The audio system the service talks to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum AudioHost {
    Alsa,
    Jack,
    #[serde(rename = "pipewire")]
    PipeWire,
}

impl AudioHost {
    /// The config's spelling.
    pub fn key(self) -> &'static str {
        match self {
            AudioHost::Alsa => "alsa",
            AudioHost::Jack => "jack",
            AudioHost::PipeWire => "pipewire",
        }
    }
}

/// Whether capture and playback share a sample clock.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Clocks {
    /// Run as one clock (nothing resampled). Two device names do not prove two crystals (a
    /// card's `hw:` and `plughw:` devices share one), so two clocks are asked for by name.
    Auto,
    /// One clock: nothing is resampled, the output is bit-exact.
    Shared,
    /// Two clocks: the output is resampled by the measured ratio to keep the ring steady.
    Separate,
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
