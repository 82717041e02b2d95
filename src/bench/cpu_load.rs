//! CPU-bound threads at ordinary priority beside the timed callback, and the timed thread's
//! own scheduling: how a callback fares on a loaded machine with and without real-time
//! priority (`redress bench --cpu-load N --callback-priority P`).
//!
//! The load is made here rather than by other programs so that a run says exactly what it
//! competed with: N threads that never sleep, at the default policy and nice value, for the
//! whole timed run.

use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::thread::JoinHandle;

use serde::Serialize;

use crate::io::live::realtime::ThreadScheduling;
use crate::io::live::{request_for_priority, CallbackScheduling};

/// Busy threads that run until dropped.
pub struct CpuLoad {
    stop: Arc<AtomicBool>,
    threads: Vec<JoinHandle<u64>>,
}

impl CpuLoad {
    /// Starts `threads` busy threads (none for 0).
    pub fn start(threads: usize) -> Self {
        let stop = Arc::new(AtomicBool::new(false));
        let threads = (0..threads)
            .filter_map(|i| {
                let stop = Arc::clone(&stop);
                std::thread::Builder::new()
                    .name(format!("redress-load-{i}"))
                    .spawn(move || spin(&stop))
                    .ok()
            })
            .collect();
        Self { stop, threads }
    }

    /// Threads actually running.
    pub fn threads(&self) -> usize {
        self.threads.len()
    }
}

/// Integer work that the optimiser cannot remove, until told to stop.
fn spin(stop: &AtomicBool) -> u64 {
    let mut x: u64 = 0x9e37_79b9_7f4a_7c15;
    while !stop.load(Ordering::Relaxed) {
        for _ in 0..10_000 {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
        }
        std::hint::black_box(x);
    }
    x
}

impl Drop for CpuLoad {
    fn drop(&mut self) {
        self.stop.store(true, Ordering::Relaxed);
        for t in self.threads.drain(..) {
            let _ = t.join();
        }
    }
}

/// What the timed run competed with and what its thread ran at.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct TimingConditions {
    /// Busy threads at ordinary priority beside the timed thread.
    pub cpu_load_threads: usize,
    /// The timed thread's scheduling: asked for (`callback_priority`), granted or refused.
    pub scheduling: ThreadScheduling,
}

/// Runs `timed` on a thread of its own that first asks for `priority` (0: nothing) as a
/// device callback thread would, with `load_threads` busy threads beside it; returns what
/// `timed` returned and the conditions it ran under. The calling thread's own scheduling is
/// never changed.
pub fn run_timed<T: Send + 'static>(
    priority: u8,
    load_threads: usize,
    timed: impl FnOnce() -> T + Send + 'static,
) -> (T, TimingConditions) {
    let request = request_for_priority(priority);
    let mut scheduling = CallbackScheduling::new(request);
    let slot = scheduling.slot();
    let load = CpuLoad::start(load_threads);
    let running = load.threads();
    let result = std::thread::Builder::new()
        .name("redress-bench-callback".into())
        .spawn(move || {
            scheduling.on_callback();
            timed()
        })
        .expect("a thread for the timed run")
        .join()
        .expect("the timed run does not panic");
    drop(load);
    let conditions = TimingConditions {
        cpu_load_threads: running,
        scheduling: ThreadScheduling::read("timed callback", request, &slot),
    };
    (result, conditions)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_load_runs_while_asked_and_stops_when_dropped() {
        let load = CpuLoad::start(2);
        assert_eq!(load.threads(), 2);
        drop(load); // joins: a thread that did not stop would hang the test here
    }

    #[test]
    fn a_timed_run_reports_its_conditions() {
        let (value, conditions) = run_timed(0, 1, || 41 + 1);
        assert_eq!(value, 42);
        assert_eq!(conditions.cpu_load_threads, 1);
        assert_eq!(conditions.scheduling.decided_by, "config");
        assert_eq!(conditions.scheduling.policy, Some("other"));
    }
}
