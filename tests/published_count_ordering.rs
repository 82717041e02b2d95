//! Every interleaving (and every reordering the memory model allows) of a stream's error
//! callback recording an error while the control thread reads the tally, tried by a model
//! checker: a reader that sees the error counted must see its kind, or the device watch misses
//! a fatal error until its stall rules notice.

/// The model checker's atomics, in place of `std`'s, for the file included below.
mod atomics {
    pub use loom::sync::atomic::{AtomicU64, AtomicU8, Ordering};
}

#[path = "../src/io/live/published_count.rs"]
#[allow(dead_code)]
mod published_count;

use loom::sync::Arc;
use published_count::PublishedCount;

const XRUN: u8 = 1;
const DEVICE_GONE: u8 = 2;

// Source: the C++/Rust memory model (a release store and an acquire load of the same atomic
// synchronize; relaxed operations promise no order) — checked exhaustively by loom.
#[test]
fn a_counted_error_is_read_with_its_kind() {
    loom::model(|| {
        let counter = Arc::new(PublishedCount::new());
        counter.record(XRUN);
        let writer = {
            let counter = Arc::clone(&counter);
            loom::thread::spawn(move || counter.record(DEVICE_GONE))
        };
        let (count, last) = counter.read();
        if count == 2 {
            assert_eq!(
                last, DEVICE_GONE,
                "the second error was counted with the first's kind"
            );
        } else {
            assert_eq!(count, 1);
        }
        writer.join().unwrap();
        assert_eq!(counter.read(), (2, DEVICE_GONE));
    });
}
