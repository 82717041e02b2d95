//! Locking the process's memory, so the audio path never waits for a page to come back from
//! swap or to be faulted in under memory pressure.
//!
//! `mlockall(MCL_CURRENT | MCL_FUTURE)` locks every page mapped now and later. With a finite
//! `RLIMIT_MEMLOCK` that is unsafe for a service: once the locked total would pass the limit,
//! later allocations fail (mlockall(2)), and an allocation failure ends the process. So the
//! future pages are locked only where the limit does not apply (unlimited, or root's
//! capabilities); under a finite limit the pages mapped now are locked if they fit, and the
//! report says what to change. A refusal is a warning, never a stop.

use std::sync::OnceLock;

use serde::Serialize;

use super::os_scheduling::{
    effective_root, lock_memory, locked_memory_limit, tune_allocator_for_locked_memory,
};

/// What became of the request to lock memory.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct MemoryLock {
    /// "current_and_future", "current", "no" or "not_asked".
    pub locked: &'static str,
    /// Why it is less than "current_and_future" (when asked), and what to change.
    pub refused: Option<String>,
    pub help: Option<String>,
}

impl MemoryLock {
    /// One line for the log and `status`.
    pub fn summary(&self) -> String {
        let what = match self.locked {
            "current_and_future" => "locked (every page, now and later)",
            "current" => "partly locked (the pages mapped at start; later ones are not)",
            "not_asked" => "not locked (lock_memory = false)",
            _ => "not locked",
        };
        match &self.refused {
            Some(why) => format!("memory {what}: {why}"),
            None => format!("memory {what}"),
        }
    }
}

const HELP: &str = "allow it: LimitMEMLOCK=infinity in the service's systemd unit, or for a user \
                    `@audio - memlock unlimited` in /etc/security/limits.d/ (README \"Real-time \
                    priority\")";

/// Prepares the allocator for a process that may lock its memory (see
/// `os_scheduling::tune_allocator_for_locked_memory` for why), so what a design frees is given
/// back and resident memory stays flat across reloads. Call it first thing in a service,
/// before other threads start. Returns whether the allocator took the settings.
pub fn tune_allocator_for_locking() -> bool {
    tune_allocator_for_locked_memory()
}

/// Locks the process's memory once per process (the lock is process-wide and lasts until
/// exit); later calls return the first outcome. `wanted = false` asks nothing.
pub fn lock_process_memory(wanted: bool) -> MemoryLock {
    static OUTCOME: OnceLock<MemoryLock> = OnceLock::new();
    if !wanted && OUTCOME.get().is_none() {
        return MemoryLock {
            locked: "not_asked",
            refused: None,
            help: None,
        };
    }
    OUTCOME.get_or_init(try_lock).clone()
}

fn try_lock() -> MemoryLock {
    let limit = locked_memory_limit();
    let unlimited = matches!(limit, Some((None, _))) || effective_root();
    if unlimited {
        return match lock_memory(true) {
            Ok(()) => MemoryLock {
                locked: "current_and_future",
                refused: None,
                help: None,
            },
            Err(e) => MemoryLock {
                locked: "no",
                refused: Some(format!(
                    "the kernel refused it: {}",
                    crate::os_error::plain_os_error(&e)
                )),
                help: Some(HELP.to_string()),
            },
        };
    }
    let limit_text = match limit {
        Some((Some(bytes), _)) => format!("RLIMIT_MEMLOCK is {}", size_text(bytes)),
        _ => "RLIMIT_MEMLOCK could not be read".to_string(),
    };
    match lock_memory(false) {
        Ok(()) => MemoryLock {
            locked: "current",
            refused: Some(format!(
                "{limit_text}, so later allocations (new filter sets) are not locked: locking \
                 them under a finite limit would make an allocation fail"
            )),
            help: Some(HELP.to_string()),
        },
        Err(_) => MemoryLock {
            locked: "no",
            refused: Some(format!("{limit_text}, less than the process already maps")),
            help: Some(HELP.to_string()),
        },
    }
}

fn size_text(bytes: u64) -> String {
    if bytes >= 1 << 20 {
        format!("{} MiB", bytes >> 20)
    } else {
        format!("{} KiB", bytes >> 10)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nothing_is_locked_when_nothing_is_asked() {
        // The unit tests never lock the test process: only this branch runs here.
        let m = lock_process_memory(false);
        assert_eq!(m.locked, "not_asked");
        assert!(m.summary().contains("lock_memory = false"));
    }

    #[test]
    fn sizes_read_in_the_unit_a_limit_is_set_in() {
        assert_eq!(size_text(8 << 20), "8 MiB");
        assert_eq!(size_text(64 << 10), "64 KiB");
    }
}
