//! Live audio: a capture device feeds the engine, a playback device plays its output.
//!
//! The engine runs inside the capture callback ([`CaptureSide::on_input`]): device samples are
//! converted to f32 in preallocated scratch, processed, and pushed into a wait-free ring. The
//! playback callback ([`PlaybackSide::on_output`]) pops from the ring into the device buffer,
//! playing silence when it runs dry. The ring starts with two periods of silence to absorb the
//! jitter between the two device clocks (see [`ring`] for the latency this adds). Samples
//! dropped because the ring was full and samples of silence played because it was empty are
//! counted in the engine's `input_overruns` / `output_underruns`, so the two streams never
//! drift apart silently.
//!
//! On JACK there is no ring: the server hands one client its capture and playback buffers in
//! the same process callback, and the engine runs there ([`graph_side`], `jack_host`).
//!
//! Both callbacks allocate nothing, lock nothing and do no I/O or logging; the streams' error
//! callbacks only count into atomics ([`StreamErrorCounter`]) and the control thread reports.
//! The callback bodies are plain methods so tests run the real code without a device.

mod capture_side;
mod devices;
mod dither;
pub mod drift;
mod drift_stage;
pub use drift_stage::PushClock;
mod duplex;
mod error;
pub mod graph_side;
mod jack_host;
mod memory_lock;
mod os_scheduling;
mod playback_side;
mod playout;
mod published_count;
mod quiet_stderr;
pub mod realtime;
pub mod ring;
mod round_trip;
mod samples;
mod stream_choice;
mod stream_errors;

/// The atomics [`published_count`] is written over (a model checker's in its ordering test).
mod atomics {
    pub use std::sync::atomic::{AtomicU64, AtomicU8, Ordering};
}

pub use capture_side::CaptureSide;
pub use devices::{list_devices, DEFAULT_DEVICE};
pub use dither::TpdfDither;
pub use duplex::{start_duplex, DeviceRequest, DuplexConfig, DuplexStreams, StreamErrorCounts};
pub use error::{Direction, HostMissing, LiveError};
pub use jack_host::{input_port_name, output_port_name, CLIENT_NAME as JACK_CLIENT_NAME};
pub use memory_lock::{lock_process_memory, tune_allocator_for_locking, MemoryLock};
pub use playback_side::PlaybackSide;
pub use playout::PlayoutProgress;
pub use realtime::{
    request_for_priority, CallbackScheduling, RealtimeStatus, SchedulingRequest, SchedulingWatch,
};
#[cfg(any(test, feature = "test-door"))]
pub use ring::duplex_sides_two_clocks_on;
pub use ring::{
    duplex_sides, duplex_sides_two_clocks, RingPlan, PREFILL_PERIODS, RING_PERIODS,
    TWO_CLOCK_TARGET_HALF_PERIODS,
};
pub use round_trip::{record_loop, LoopRecording, LoopRequest};
pub use samples::{DeviceFormat, DeviceSample};
pub use stream_choice::DEFAULT_PERIOD_FRAMES;
pub use stream_errors::{StreamErrorCounter, StreamErrorKind, StreamErrorTally};
