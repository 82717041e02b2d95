//! Real-time scheduling of the audio callback threads, and what each got.
//!
//! A callback thread that a host leaves to us (ALSA's stream workers, the simulated link's
//! thread) asks once, on its first call, for `SCHED_FIFO` at the configured priority. Threads a
//! sound server schedules (JACK's process thread, PipeWire's data loop) are the server's
//! business (its real-time module, RTKit or `jackd -R`): there the callback only records what it
//! actually runs at. Either way the callback writes its policy and priority, and the error the
//! kernel gave if the request was refused, into a [`SchedulingSlot`] of plain atomics; the
//! control thread reads the slot and explains a refusal ([`ThreadScheduling`]): which limit
//! stood in the way and what to change. A refusal is a warning: the audio runs on at ordinary
//! priority.
//!
//! Why a thread at `SCHED_FIFO`: under CPU load an ordinary thread waits for time slices of
//! other programs and misses its deadline; a real-time thread pre-empts them (`redress bench
//! --cpu-load` measures both; README "Real-time priority").

use std::sync::atomic::{AtomicI32, AtomicU8, Ordering};
use std::sync::Arc;

use serde::Serialize;

use super::memory_lock::MemoryLock;
use super::os_scheduling::{
    effective_root, realtime_priority_limit, request_fifo_for_this_thread, this_thread_schedule,
};

/// What a callback thread does about its scheduling on its first call.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SchedulingRequest {
    /// Ask for `SCHED_FIFO` at this priority (the host leaves the thread to us).
    Fifo(u8),
    /// Ask for nothing: the host's server schedules the thread, or the config said so.
    /// What it runs at is still recorded.
    LeaveAsIs(LeftBecause),
}

/// Why a thread was left at the priority it came with.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LeftBecause {
    /// `[audio] callback_priority = 0`.
    Config,
    /// A sound server (JACK, PipeWire) runs the thread.
    Server,
}

/// `SchedulingSlot::state` once the thread has recorded (0, the default, is "not yet").
const RECORDED: u8 = 1;

/// What one callback thread got, written once by that thread and read by the control thread.
#[derive(Debug, Default)]
pub struct SchedulingSlot {
    state: AtomicU8,
    policy: AtomicI32,
    priority: AtomicI32,
    /// The error the request returned (0: granted or not asked).
    refused_with: AtomicI32,
}

impl SchedulingSlot {
    fn record(&self, schedule: Option<(i32, i32)>, refused_with: i32) {
        let (policy, priority) = schedule.unwrap_or((-1, 0));
        self.policy.store(policy, Ordering::Relaxed);
        self.priority.store(priority, Ordering::Relaxed);
        self.refused_with.store(refused_with, Ordering::Relaxed);
        // Release: a reader that sees RECORDED sees the three values above.
        self.state.store(RECORDED, Ordering::Release);
    }

    fn read(&self) -> Option<(i32, i32, i32)> {
        (self.state.load(Ordering::Acquire) == RECORDED).then(|| {
            (
                self.policy.load(Ordering::Relaxed),
                self.priority.load(Ordering::Relaxed),
                self.refused_with.load(Ordering::Relaxed),
            )
        })
    }
}

/// Held by a callback: makes the request on the first call and records the outcome.
#[derive(Debug)]
pub struct CallbackScheduling {
    request: SchedulingRequest,
    slot: Arc<SchedulingSlot>,
    done: bool,
}

impl CallbackScheduling {
    pub fn new(request: SchedulingRequest) -> Self {
        Self {
            request,
            slot: Arc::new(SchedulingSlot::default()),
            done: false,
        }
    }

    /// The request this callback makes.
    pub fn request(&self) -> SchedulingRequest {
        self.request
    }

    /// Where the outcome is published.
    pub fn slot(&self) -> Arc<SchedulingSlot> {
        Arc::clone(&self.slot)
    }

    /// Called at the top of every callback: the first call makes the request (one system call,
    /// no allocation) and records the thread's schedule; later calls cost one branch.
    #[inline]
    pub fn on_callback(&mut self) {
        if !self.done {
            self.done = true;
            self.claim();
        }
    }

    #[cold]
    fn claim(&self) {
        let refused_with = match self.request {
            SchedulingRequest::Fifo(priority) => request_fifo_for_this_thread(i32::from(priority))
                .err()
                .unwrap_or(0),
            SchedulingRequest::LeaveAsIs(_) => 0,
        };
        let schedule = this_thread_schedule().map(|s| (s.policy, s.priority));
        self.slot.record(schedule, refused_with);
    }
}

/// What one callback thread runs at, for `status` and the log.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct ThreadScheduling {
    /// Which thread: "capture and engine", "playback", "process (one callback)", …
    pub thread: String,
    /// The priority redress asked for; `None` when it asked nothing (see `decided_by`).
    pub asked_priority: Option<u8>,
    /// "redress" when redress asked, "config" when the config said not to, "server" when a
    /// sound server schedules the thread.
    pub decided_by: &'static str,
    /// "fifo", "round_robin", "other", "batch", "idle", "deadline" or "unknown"; `None` until
    /// the thread's first callback.
    pub policy: Option<&'static str>,
    pub priority: Option<i32>,
    /// True when the thread runs at a real-time policy.
    pub real_time: bool,
    /// Why the request was refused, and what to change; `None` when granted or not asked.
    pub refused: Option<String>,
    pub help: Option<String>,
}

impl ThreadScheduling {
    /// Reads `slot` as written by the callback named `thread`, which made `request`.
    pub fn read(thread: &str, request: SchedulingRequest, slot: &SchedulingSlot) -> Self {
        let (asked_priority, decided_by) = match request {
            SchedulingRequest::Fifo(p) => (Some(p), "redress"),
            SchedulingRequest::LeaveAsIs(LeftBecause::Config) => (None, "config"),
            SchedulingRequest::LeaveAsIs(LeftBecause::Server) => (None, "server"),
        };
        let mut report = Self {
            thread: thread.to_string(),
            asked_priority,
            decided_by,
            policy: None,
            priority: None,
            real_time: false,
            refused: None,
            help: None,
        };
        let Some((policy, priority, refused_with)) = slot.read() else {
            return report;
        };
        report.policy = Some(policy_name(policy));
        report.priority = Some(priority);
        report.real_time = policy == libc::SCHED_FIFO || policy == libc::SCHED_RR;
        if let (Some(asked), true) = (asked_priority, refused_with != 0) {
            let (why, help) = explain_refusal(asked, refused_with);
            report.refused = Some(why);
            report.help = Some(help);
        } else if decided_by == "server" && !report.real_time {
            report.help = Some(
                "the sound server runs this thread at ordinary priority: give the server \
                 real-time scheduling (jackd -R; PipeWire's real-time module or RTKit)"
                    .to_string(),
            );
        }
        report
    }

    /// One line for the log and `status`.
    pub fn summary(&self) -> String {
        let runs = match (self.policy, self.priority) {
            (None, _) => "not started yet".to_string(),
            (Some(p), Some(prio)) if self.real_time => format!("{p} at priority {prio}"),
            (Some(p), _) => format!("{p} (ordinary priority)"),
        };
        match (&self.refused, self.asked_priority, self.decided_by) {
            (Some(why), Some(asked), _) => {
                format!(
                    "{}: runs {runs}; real-time priority {asked} refused: {why}",
                    self.thread
                )
            }
            (None, Some(asked), _) if self.policy.is_some() => {
                format!("{}: runs {runs} (asked for {asked})", self.thread)
            }
            (_, _, "server") => format!("{}: runs {runs}, as the sound server set it", self.thread),
            (_, _, "config") => format!(
                "{}: runs {runs} (callback_priority = 0: nothing asked)",
                self.thread
            ),
            _ => format!("{}: {runs}", self.thread),
        }
    }
}

/// The callback threads of one running stream pair (or simulated link) and the process's
/// memory lock, as the control thread follows them.
#[derive(Debug, Clone)]
pub struct SchedulingWatch {
    threads: Vec<(&'static str, SchedulingRequest, Arc<SchedulingSlot>)>,
    memory: MemoryLock,
}

impl SchedulingWatch {
    pub fn new(memory: MemoryLock) -> Self {
        Self {
            threads: Vec::new(),
            memory,
        }
    }

    /// Follows the callback thread `name`, which makes `request` and records into `slot`.
    pub fn add(
        &mut self,
        name: &'static str,
        request: SchedulingRequest,
        slot: Arc<SchedulingSlot>,
    ) {
        self.threads.push((name, request, slot));
    }

    /// What every thread runs at so far.
    pub fn status(&self) -> RealtimeStatus {
        RealtimeStatus {
            threads: self
                .threads
                .iter()
                .map(|(name, request, slot)| ThreadScheduling::read(name, *request, slot))
                .collect(),
            memory: self.memory.clone(),
        }
    }

    /// True once every thread has run its first callback.
    pub fn all_started(&self) -> bool {
        self.threads
            .iter()
            .all(|(_, _, slot)| slot.read().is_some())
    }
}

/// What the audio threads run at and whether memory is locked: `status` shows it.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct RealtimeStatus {
    pub threads: Vec<ThreadScheduling>,
    pub memory: MemoryLock,
}

impl RealtimeStatus {
    /// One line per thread and one for memory, for the log: a line with something to change
    /// (a refusal, a server running the thread at ordinary priority) carries its help and is
    /// marked `true`, to be logged as a warning.
    pub fn log_lines(&self) -> Vec<(String, bool)> {
        let line = |summary: String, help: Option<&str>| match help {
            Some(help) => (format!("{summary}; help: {help}"), true),
            None => (summary, false),
        };
        self.threads
            .iter()
            .map(|t| line(t.summary(), t.help.as_deref()))
            .chain(std::iter::once(line(
                self.memory.summary(),
                self.memory.help.as_deref(),
            )))
            .collect()
    }
}

/// The request a callback thread that the host leaves to us makes for `priority` (0: none).
pub fn request_for_priority(priority: u8) -> SchedulingRequest {
    match priority {
        0 => SchedulingRequest::LeaveAsIs(LeftBecause::Config),
        p => SchedulingRequest::Fifo(p),
    }
}

fn policy_name(policy: i32) -> &'static str {
    match policy {
        libc::SCHED_FIFO => "fifo",
        libc::SCHED_RR => "round_robin",
        libc::SCHED_OTHER => "other",
        libc::SCHED_BATCH => "batch",
        libc::SCHED_IDLE => "idle",
        6 => "deadline", // SCHED_DEADLINE (sched(7)); not exported by every libc version
        _ => "unknown",
    }
}

/// Why the kernel refused `SCHED_FIFO` at `asked`, and what to change, from the error and this
/// process's `RLIMIT_RTPRIO`.
fn explain_refusal(asked: u8, error: i32) -> (String, String) {
    let unit_help = format!(
        "allow it: LimitRTPRIO={asked} in the service's systemd unit, or for a user \
         `@audio - rtprio {asked}` in /etc/security/limits.d/ with the user in group audio \
         (README \"Real-time priority\"); the audio runs on at ordinary priority meanwhile"
    );
    if error != libc::EPERM {
        return (
            format!("the kernel refused the request ({})", errno_name(error)),
            unit_help,
        );
    }
    match realtime_priority_limit() {
        Some((Some(0), _)) => ("RLIMIT_RTPRIO is 0 for this process".to_string(), unit_help),
        Some((Some(soft), hard)) if soft < u64::from(asked) => (
            format!(
                "RLIMIT_RTPRIO is {soft} (hard limit {}), below the priority asked",
                hard.map_or("unlimited".to_string(), |h| h.to_string())
            ),
            format!(
                "raise the limit to {asked} (LimitRTPRIO={asked}), or set [audio] \
                 callback_priority = {soft}"
            ),
        ),
        _ if effective_root() => (
            "the kernel refused it although the process runs as root: real-time time is \
             not granted to this control group"
                .to_string(),
            "give the service's cgroup real-time runtime (cpu.rt_runtime_us), or run it \
             outside the container or slice that withholds it"
                .to_string(),
        ),
        _ => (
            "the kernel refused it although RLIMIT_RTPRIO allows it: real-time time is \
             not granted to this control group"
                .to_string(),
            "give the service's cgroup real-time runtime (cpu.rt_runtime_us)".to_string(),
        ),
    }
}

fn errno_name(code: i32) -> String {
    match code {
        libc::EINVAL => "invalid priority".to_string(),
        libc::ESRCH => "no such thread".to_string(),
        other => format!("error {other}"),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Runs `scheduling`'s first call on a thread of its own, so the test thread keeps its
    /// schedule whatever the request did.
    fn claim_on_own_thread(mut scheduling: CallbackScheduling) -> Arc<SchedulingSlot> {
        let slot = scheduling.slot();
        std::thread::spawn(move || {
            scheduling.on_callback();
            scheduling.on_callback();
        })
        .join()
        .unwrap();
        slot
    }

    #[test]
    fn a_thread_left_to_its_server_records_what_it_runs_at() {
        let request = SchedulingRequest::LeaveAsIs(LeftBecause::Server);
        let slot = claim_on_own_thread(CallbackScheduling::new(request));
        let report = ThreadScheduling::read("process", request, &slot);
        assert_eq!(report.decided_by, "server");
        assert_eq!(report.asked_priority, None);
        assert!(report.policy.is_some(), "{report:?}");
        assert_eq!(report.refused, None);
        assert!(report.summary().contains("as the sound server set it"));
    }

    #[test]
    fn nothing_is_known_before_the_first_callback() {
        let scheduling = CallbackScheduling::new(SchedulingRequest::Fifo(70));
        let report = ThreadScheduling::read("playback", scheduling.request(), &scheduling.slot());
        assert_eq!(report.policy, None);
        assert!(report.summary().contains("not started yet"));
    }

    // Source: sched(7) — SCHED_FIFO is granted when RLIMIT_RTPRIO allows the priority or the
    // caller has CAP_SYS_NICE, refused with EPERM otherwise. Which of the two this machine
    // gives depends on who runs the test, so the test checks that the report agrees with the
    // kernel's own answer either way.
    #[test]
    fn a_fifo_request_is_granted_or_explained() {
        let request = SchedulingRequest::Fifo(10);
        let slot = claim_on_own_thread(CallbackScheduling::new(request));
        let report = ThreadScheduling::read("capture and engine", request, &slot);
        if report.refused.is_none() {
            assert_eq!((report.policy, report.priority), (Some("fifo"), Some(10)));
            assert!(report.real_time);
        } else {
            assert!(!report.real_time);
            assert_eq!(report.policy, Some("other"));
            assert!(report.help.as_deref().unwrap_or("").contains("LimitRTPRIO"));
        }
    }

    // Source: sched(7) — priority 0 is invalid for SCHED_FIFO (EINVAL), for every caller.
    #[test]
    fn an_invalid_request_is_reported_as_refused() {
        let request = SchedulingRequest::Fifo(0);
        let slot = claim_on_own_thread(CallbackScheduling::new(request));
        let report = ThreadScheduling::read("playback", request, &slot);
        assert_eq!(
            report.refused.as_deref(),
            Some("the kernel refused the request (invalid priority)")
        );
        assert!(report.summary().contains("real-time priority 0 refused"));
    }
}
