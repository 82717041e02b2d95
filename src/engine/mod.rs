//! The engine: allocation-free per-channel processing of interleaved audio.
//!
//! Everything here except construction may run on the audio thread: no allocation, no
//! deallocation, no locks, no I/O, bounded work per sample. Filter sets ([`Equalizer`]) are
//! built on the control side and reach the running [`Engine`] through a wait-free queue
//! ([`engine_pair`]); the engine crossfades to them, guards its output against clipping and
//! runaway filters, and counts what it did in lock-free [`EngineStats`].

mod clip;
mod delay_lines;
mod denormals;
mod equalizer;
mod events;
mod handoff;
mod input_faults;
mod runaway_watch;
mod runner;
mod settings;
mod stats;

pub use clip::{ClipCount, ClipGuard};
pub use denormals::flush_denormals_on_this_thread;
pub use equalizer::{EngineError, Equalizer};
pub use events::EngineEvent;
pub use handoff::{engine_pair, EngineControl, EVENT_CAPACITY, INBOX_CAPACITY, RETURN_CAPACITY};
pub use runner::Engine;
pub use settings::{
    ClipPolicy, EngineSettings, Fallback, ENVELOPE_FLOOR, FULL_SCALE, INPUT_CEILING,
    LOWEST_AUDIO_HZ, WARM_UP_CAP_SECONDS,
};
pub use stats::{EngineStats, StatsSnapshot, TIME_BUCKETS};
