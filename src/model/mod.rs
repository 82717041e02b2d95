//! The validated channel model: what the link does to the signal, per output channel.
//!
//! `config` turns TOML text into a [`Link`]; everything downstream takes a `Link` (or one of its
//! [`Path`]s) and never sees TOML. A `Link` that exists has passed every check in `config`.

pub mod config;
pub mod error;
mod link;
mod policy;
mod runtime;
mod transfer;

pub use error::{ConfigError, ConfigErrorKind};
pub use link::{CoefficientPrecision, Link, ModelForm, Path, Structure};
pub use policy::{
    BandEdges, BandSnr, FirDelay, FirSettings, InverseMethod, InversePolicy, DEFAULT_BOOST_CAP_DB,
    DEFAULT_FIR_BUDGET_SECONDS, DEFAULT_FIR_TAPS, DEFAULT_KNEE_BUDGET_SECONDS, MAX_FIR_TAPS,
    MAX_KNEE_BUDGET_MS,
};
pub use runtime::{
    AudioHost, AudioSettings, ClipPolicy, Clocks, EngineOptions, Fallback, RuntimeSettings,
};
pub use transfer::TransferFunction;

/// Most coefficients a numerator or denominator may have (order + 1): a measured response of
/// 4096 taps (85 ms at 48 kHz) and its inverse. Above `numeric::roots::AFFORDABLE_ORDER` the
/// zeros are counted and bounded rather than computed, so the cost stays O(n²) at most.
pub const MAX_ORDER: usize = 4096;

/// Sample rates outside this range (Hz) are refused as implausible for an audio link.
pub const SAMPLE_RATE_RANGE: (f64, f64) = (4_000.0, 384_000.0);

/// Most channels one link may carry.
pub const MAX_CHANNELS: usize = 64;

/// Device buffers outside this range (frames) are refused: below it no device keeps up, above
/// it the latency is no longer that of a live link.
pub const BUFFER_FRAMES_RANGE: (u32, u32) = (16, 16_384);
/// Real-time priority the live service's callback threads ask for unless the config says
/// otherwise: above a desktop's ordinary work and interrupt threads, below the kernel's own
/// real-time threads (common practice for audio: 70–80).
pub const DEFAULT_CALLBACK_PRIORITY: u8 = 70;
/// Highest priority a config may ask for (sched(7): SCHED_FIFO runs 1–99; 99 is left to the
/// kernel's watchdog threads).
pub const MAX_CALLBACK_PRIORITY: u8 = 98;

/// The config format this build reads and `redress identify` writes (`[link] format_version`).
/// A config without the key is taken to be this format; a newer one is refused, since a key it
/// relies on could otherwise be misread or ignored. Raised only when a change would make an
/// older config mean something else.
pub const CONFIG_FORMAT_VERSION: i64 = 1;

/// Default radius tolerance: a zero with | |z| − 1 | below this counts as on the unit circle.
pub const DEFAULT_CIRCLE_TOLERANCE: f64 = 1e-9;
