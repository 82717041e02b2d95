//! The two ends of the engine: the audio thread's [`Engine`] and the control thread's
//! [`EngineControl`], joined by wait-free single-producer/single-consumer queues.
//!
//! New filter sets travel to the engine fully built and boxed, so taking one off the queue is a
//! pointer move; the sets it is finished with travel back, so the control thread (never the
//! audio thread) frees them.

use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;

use ringbuf::traits::{Consumer, Producer, Split};
use ringbuf::{HeapCons, HeapProd, HeapRb};

use super::events::EngineEvent;
use super::runner::Engine;
use super::settings::EngineSettings;
use super::stats::{EngineStats, StatsSnapshot};
use super::Equalizer;

/// Filter sets that may wait for the engine at once.
pub const INBOX_CAPACITY: usize = 4;
/// Finished filter sets that may wait for the control thread. With the control side draining
/// before every send, at most current + previous + incoming + a full inbox are ever alive, so
/// this never fills.
pub const RETURN_CAPACITY: usize = 16;
/// Events that may wait for the control thread.
pub const EVENT_CAPACITY: usize = 256;

/// Flags shared by both ends.
#[derive(Debug, Default)]
pub(super) struct Shared {
    pub fade_out_requested: AtomicBool,
    pub fade_out_done: AtomicBool,
}

/// The engine's queue ends.
pub(super) struct EngineEnds {
    pub inbox: HeapCons<Box<Equalizer>>,
    pub outbox: HeapProd<Box<Equalizer>>,
    pub events: HeapProd<EngineEvent>,
    pub stats: Arc<EngineStats>,
    pub shared: Arc<Shared>,
}

/// The control thread's end: send filter sets, collect finished ones, read events and counters.
pub struct EngineControl {
    to_engine: HeapProd<Box<Equalizer>>,
    returned: HeapCons<Box<Equalizer>>,
    events: HeapCons<EngineEvent>,
    stats: Arc<EngineStats>,
    shared: Arc<Shared>,
    channels: usize,
}

/// Creates an engine (for the audio thread) and its control end, starting with `initial`
/// (or in bypass when `None`), faded in from silence.
pub fn engine_pair(
    settings: EngineSettings,
    initial: Option<Equalizer>,
) -> (Engine, EngineControl) {
    let (to_engine, inbox) = HeapRb::<Box<Equalizer>>::new(INBOX_CAPACITY).split();
    let (outbox, returned) = HeapRb::<Box<Equalizer>>::new(RETURN_CAPACITY).split();
    let (event_tx, event_rx) = HeapRb::<EngineEvent>::new(EVENT_CAPACITY).split();
    let stats = Arc::new(EngineStats::default());
    let shared = Arc::new(Shared::default());
    let ends = EngineEnds {
        inbox,
        outbox,
        events: event_tx,
        stats: Arc::clone(&stats),
        shared: Arc::clone(&shared),
    };
    // Choose the vector unit now (it reads the environment and allocates the first time), so
    // an engine started in bypass, with no set built yet, never chooses it on the audio thread.
    crate::realize::kernels::detected_vector_unit();
    let engine = Engine::new(settings, initial.map(Box::new), ends);
    let control = EngineControl {
        to_engine,
        returned,
        events: event_rx,
        stats,
        shared,
        channels: settings.channels,
    };
    (engine, control)
}

impl EngineControl {
    /// Hands a new filter set to the engine, which crossfades to it. Frees finished sets first.
    /// Gives the set back when the inbox is full or its channel count is wrong.
    pub fn send(&mut self, equalizer: Equalizer) -> Result<(), Equalizer> {
        self.collect_returned();
        if equalizer.channel_count() != self.channels {
            return Err(equalizer);
        }
        self.to_engine
            .try_push(Box::new(equalizer))
            .map_err(|boxed| *boxed)
    }

    /// Frees the filter sets the engine has finished with; returns how many.
    pub fn collect_returned(&mut self) -> usize {
        let mut n = 0;
        while let Some(done) = self.returned.try_pop() {
            drop(done);
            n += 1;
        }
        n
    }

    /// Takes every event waiting from the engine.
    pub fn drain_events(&mut self) -> Vec<EngineEvent> {
        std::iter::from_fn(|| self.events.try_pop()).collect()
    }

    /// Counters and meters as of now (peak meters restart from here).
    pub fn snapshot(&self) -> StatsSnapshot {
        self.stats.snapshot(self.channels)
    }

    /// The shared counters (for the I/O layer's overrun/underrun tallies).
    pub fn stats(&self) -> Arc<EngineStats> {
        Arc::clone(&self.stats)
    }

    /// Asks the engine to fade its output to silence (before stopping).
    pub fn request_fade_out(&self) {
        self.shared
            .fade_out_requested
            .store(true, Ordering::Release);
    }

    /// True once the requested fade-out is complete.
    pub fn fade_out_done(&self) -> bool {
        self.shared.fade_out_done.load(Ordering::Acquire)
    }
}
