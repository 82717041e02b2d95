//! A closed pipe on standard output or standard error ends the command quietly, as Unix tools
//! do (`redress demo | head -1`).
//!
//! Rust starts every program with SIGPIPE ignored, so a write to a pipe whose reader has gone
//! fails with EPIPE and `println!` panics with a backtrace. For the commands that print and
//! end, the default action of SIGPIPE (the process ends at once, silently) is what a pipeline
//! expects. Two commands keep it ignored: the live service (`run`), which must never die
//! because a status client hung up on its socket, and `status`, which talks to that socket
//! itself and must report a service that closed the connection rather than vanish; `status`
//! prints without panicking instead (see `main.rs`).
//!
//! This is the binary's only `unsafe`: one call, made before any thread exists.

/// Gives SIGPIPE its default action for the rest of this process.
pub fn end_quietly_on_closed_pipe() {
    // SAFETY: signal(2) with SIG_DFL installs no handler of ours (no code runs in signal
    // context); it is called at the start of `main`, before any other thread exists, so nothing
    // races on the signal's disposition.
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
}
