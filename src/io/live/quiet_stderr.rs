//! Silence on standard error while the audio libraries are probed.
//!
//! Asking the host for its devices makes ALSA's plugins and the JACK client library print their
//! own complaints ("Cannot get card index", "jack server is not running") straight to file
//! descriptor 2, dozens of lines before the listing a user asked for, about devices the listing
//! already marks as unavailable. [`QuietStderr`] points descriptor 2 at /dev/null for as long as
//! it lives and puts the real one back when dropped; `redress devices -v` skips it.
//!
//! This module's `unsafe` is the two `dup2` calls: the standard library has no safe way to
//! replace a descriptor the process already uses. Used only by the `devices` command, which has
//! no other thread writing to standard error meanwhile.

use std::fs::File;
use std::os::fd::{AsFd, AsRawFd, OwnedFd};

/// While alive, writes to standard error go nowhere.
pub struct QuietStderr {
    saved: Option<OwnedFd>,
}

impl QuietStderr {
    /// Redirects standard error to /dev/null; does nothing (and says nothing) if it cannot.
    pub fn new() -> Self {
        let saved = std::io::stderr().as_fd().try_clone_to_owned().ok();
        let null = File::options().write(true).open("/dev/null").ok();
        if let (Some(_), Some(null)) = (&saved, null) {
            // SAFETY: both descriptors are open and owned (by `null` and by the process's
            // standard error); dup2 only makes descriptor 2 refer to /dev/null. `null` closes
            // its own descriptor when dropped, leaving 2 open.
            unsafe {
                libc::dup2(null.as_raw_fd(), libc::STDERR_FILENO);
            }
        }
        Self { saved }
    }
}

impl Drop for QuietStderr {
    fn drop(&mut self) {
        if let Some(saved) = self.saved.take() {
            // SAFETY: `saved` is an open descriptor we own (a duplicate of the original
            // standard error); dup2 makes descriptor 2 refer to it again. `saved` is closed
            // when it drops, after this call.
            unsafe {
                libc::dup2(saved.as_raw_fd(), libc::STDERR_FILENO);
            }
        }
    }
}
