//! The operating-system calls behind real-time scheduling and locked memory, each wrapped in a
//! safe function. This is the only place in `io::live` that calls into libc for them.
//!
//! Why `unsafe`: the POSIX calls take raw structs and pointers. Each call below passes a
//! pointer to a local, fully initialised value that outlives the call, and acts on the calling
//! thread (`pthread_self`) or the calling process only, so no other memory can be touched.
//! None of them allocates, so the thread-level ones may run inside an audio callback (once, on
//! its first call).

/// A thread's scheduling policy and priority as the kernel reports them.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct Schedule {
    /// `libc::SCHED_OTHER`, `SCHED_FIFO`, `SCHED_RR`, …
    pub policy: i32,
    /// The static priority (1–99 for the real-time policies, 0 otherwise).
    pub priority: i32,
}

/// Asks for `SCHED_FIFO` at `priority` for the calling thread. `Err` holds the error number
/// the call returned (`EPERM` when neither `RLIMIT_RTPRIO` nor a capability allows it).
pub(crate) fn request_fifo_for_this_thread(priority: i32) -> Result<(), i32> {
    let param = libc::sched_param {
        sched_priority: priority,
    };
    // SAFETY: `param` is a valid, initialised sched_param that lives across the call; the
    // thread handle is the caller's own.
    let code =
        unsafe { libc::pthread_setschedparam(libc::pthread_self(), libc::SCHED_FIFO, &param) };
    if code == 0 {
        Ok(())
    } else {
        Err(code)
    }
}

/// The calling thread's policy and priority, or `None` if the kernel would not say.
pub(crate) fn this_thread_schedule() -> Option<Schedule> {
    let mut policy: libc::c_int = 0;
    let mut param = libc::sched_param { sched_priority: 0 };
    // SAFETY: both out-pointers point at initialised locals that outlive the call.
    let code =
        unsafe { libc::pthread_getschedparam(libc::pthread_self(), &mut policy, &mut param) };
    (code == 0).then_some(Schedule {
        policy,
        priority: param.sched_priority,
    })
}

/// A resource limit of this process: (soft, hard), `None` standing for "unlimited".
pub(crate) type Limit = (Option<u64>, Option<u64>);

fn limit(resource: libc::__rlimit_resource_t) -> Option<Limit> {
    let mut value = libc::rlimit {
        rlim_cur: 0,
        rlim_max: 0,
    };
    // SAFETY: `value` is an initialised local that outlives the call.
    let code = unsafe { libc::getrlimit(resource, &mut value) };
    let finite = |v: libc::rlim_t| (v != libc::RLIM_INFINITY).then_some(v);
    (code == 0).then(|| (finite(value.rlim_cur), finite(value.rlim_max)))
}

/// `RLIMIT_RTPRIO`: the highest real-time priority an unprivileged thread may take.
pub(crate) fn realtime_priority_limit() -> Option<Limit> {
    limit(libc::RLIMIT_RTPRIO)
}

/// `RLIMIT_MEMLOCK`: how many bytes an unprivileged process may lock.
pub(crate) fn locked_memory_limit() -> Option<Limit> {
    limit(libc::RLIMIT_MEMLOCK)
}

/// True when the process runs with the effective user id 0, whose capabilities pass over both
/// limits above (as in a container or a system unit left as root).
pub(crate) fn effective_root() -> bool {
    // SAFETY: geteuid takes nothing and cannot fail.
    unsafe { libc::geteuid() == 0 }
}

/// Tunes the C allocator for a process that may lock its memory, where the allocator is
/// glibc's (elsewhere does nothing): one arena for every thread, and fixed thresholds for
/// giving memory back. Returns whether every setting took.
///
/// Why: under `mlockall(MCL_FUTURE)` memory comes back to the system only by `munmap` or by
/// `sbrk` shrinking the main heap; `madvise(MADV_DONTNEED)`, which glibc uses to shrink a
/// thread's own arena, is refused on locked pages (madvise(2)). With per-thread arenas each
/// arena a design worker has used keeps its high-water mark locked for good, and the next
/// design may land in another arena: resident memory climbs by a design's working set at a
/// time. One arena (`M_ARENA_MAX`) shrinks with `sbrk`. Fixed thresholds (`M_MMAP_THRESHOLD`,
/// `M_TRIM_THRESHOLD`, 128 KiB: glibc's own starting values) stop glibc from raising them
/// after large blocks are freed (its dynamic rule keeps up to 64 MiB at the heap's top), so a
/// design's large buffers are mapped and unmapped whole and the heap gives back what it does
/// not use. The control side has few threads and the audio thread allocates nothing, so the
/// arena's lock is never contended where it matters. Run it before other threads allocate.
pub(crate) fn tune_allocator_for_locked_memory() -> bool {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    {
        const GIVE_BACK_BYTES: libc::c_int = 128 * 1024;
        // SAFETY: mallopt takes two integers and changes the allocator's tuning only; glibc
        // documents these three parameters as settable at any time (mallopt(3)).
        unsafe {
            libc::mallopt(libc::M_ARENA_MAX, 1) == 1
                && libc::mallopt(libc::M_MMAP_THRESHOLD, GIVE_BACK_BYTES) == 1
                && libc::mallopt(libc::M_TRIM_THRESHOLD, GIVE_BACK_BYTES) == 1
        }
    }
    #[cfg(not(all(target_os = "linux", target_env = "gnu")))]
    {
        false
    }
}

/// Locks the process's pages in memory: those mapped now, and with `future` every page mapped
/// later too. On failure returns the OS error.
pub(crate) fn lock_memory(future: bool) -> Result<(), std::io::Error> {
    let flags = if future {
        libc::MCL_CURRENT | libc::MCL_FUTURE
    } else {
        libc::MCL_CURRENT
    };
    // SAFETY: mlockall takes flags only and acts on this process's own mappings.
    let code = unsafe { libc::mlockall(flags) };
    if code == 0 {
        Ok(())
    } else {
        Err(std::io::Error::last_os_error())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_thread_can_read_its_own_schedule() {
        let s = this_thread_schedule().expect("the kernel reports a thread's schedule");
        // Source: sched(7) — SCHED_OTHER threads have static priority 0; a test thread is one
        // unless the whole test run was started under chrt.
        if s.policy == libc::SCHED_OTHER {
            assert_eq!(s.priority, 0);
        }
    }

    #[test]
    fn an_out_of_range_priority_is_refused_by_the_kernel() {
        // Source: sched(7) — SCHED_FIFO priorities are 1 to 99; 0 is invalid (EINVAL) for it,
        // whatever the caller's privileges, so this cannot change the test thread.
        assert_eq!(request_fifo_for_this_thread(0), Err(libc::EINVAL));
    }
}
