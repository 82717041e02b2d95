//! A count of events and the code of the last one, written by one thread (a stream's error
//! callback) and read by another (the control thread's device watch).
//!
//! The reader acts on the pair: "the count went up, and the last event was fatal". So whoever
//! sees an event counted must also see its code (or a later event's), never the code from
//! before it: the writer publishes the code first and then raises the count with release
//! ordering; the reader loads the count with acquire ordering, then the code. Two atomics,
//! no lock, nothing allocated: safe in an audio callback.
//!
//! The atomics are the parent module's: `std`'s in the library, a model checker's in
//! `tests/published_count_ordering.rs`, which includes this file to try every interleaving.

use super::atomics::{AtomicU64, AtomicU8, Ordering};

#[derive(Debug)]
pub struct PublishedCount {
    count: AtomicU64,
    /// 0: none yet; otherwise the code of the last event.
    last: AtomicU8,
}

impl Default for PublishedCount {
    fn default() -> Self {
        Self::new()
    }
}

impl PublishedCount {
    pub fn new() -> Self {
        Self {
            count: AtomicU64::new(0),
            last: AtomicU8::new(0),
        }
    }

    /// Counts one event with code `code` (non-zero).
    pub fn record(&self, code: u8) {
        self.last.store(code, Ordering::Relaxed);
        // Release: the code stored above is visible to whoever acquires this count.
        self.count.fetch_add(1, Ordering::Release);
    }

    /// The count, and the code of the last event it includes (or of a later one); 0 for none.
    pub fn read(&self) -> (u64, u8) {
        // Acquire: every code published before the count we see is visible below.
        let count = self.count.load(Ordering::Acquire);
        let last = self.last.load(Ordering::Relaxed);
        (count, last)
    }
}
