//! What a stream's error callback records: a count and the kind of the last error, in atomics.
//!
//! The error callback runs on the backend's audio thread, so it may not log or lock; it stores
//! a small integer code and the control thread turns it into words when it reports.

use super::published_count::PublishedCount;
use std::fmt;

/// The kinds of stream error worth telling apart in a report.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[repr(u8)]
pub enum StreamErrorKind {
    /// The device buffer ran empty (playback) or over (capture); the backend recovered.
    Xrun = 1,
    /// The device went away; the stream has stopped for good.
    DeviceNotAvailable = 2,
    /// The backend moved the stream to another device.
    DeviceChanged = 3,
    /// The stream's configuration no longer holds; it must be rebuilt.
    StreamInvalidated = 4,
    /// Anything else the backend reported.
    Backend = 5,
}

impl StreamErrorKind {
    /// Never blocks or allocates: safe in an error callback.
    pub fn from_backend(kind: cpal::ErrorKind) -> Self {
        match kind {
            cpal::ErrorKind::Xrun => StreamErrorKind::Xrun,
            cpal::ErrorKind::DeviceNotAvailable => StreamErrorKind::DeviceNotAvailable,
            cpal::ErrorKind::DeviceChanged => StreamErrorKind::DeviceChanged,
            cpal::ErrorKind::StreamInvalidated => StreamErrorKind::StreamInvalidated,
            _ => StreamErrorKind::Backend,
        }
    }

    fn from_code(code: u8) -> Option<Self> {
        [
            StreamErrorKind::Xrun,
            StreamErrorKind::DeviceNotAvailable,
            StreamErrorKind::DeviceChanged,
            StreamErrorKind::StreamInvalidated,
            StreamErrorKind::Backend,
        ]
        .into_iter()
        .find(|k| *k as u8 == code)
    }
}

impl fmt::Display for StreamErrorKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            StreamErrorKind::Xrun => "device buffer over- or underrun (recovered)",
            StreamErrorKind::DeviceNotAvailable => "device no longer available (stream stopped)",
            StreamErrorKind::DeviceChanged => "stream moved to another device",
            StreamErrorKind::StreamInvalidated => {
                "stream configuration invalidated (restart needed)"
            }
            StreamErrorKind::Backend => "audio backend error",
        })
    }
}

/// Shared between a stream's error callback (writer) and the control thread (reader): a
/// reader that sees an error counted also sees its kind (see [`PublishedCount`]).
#[derive(Debug, Default)]
pub struct StreamErrorCounter {
    errors: PublishedCount,
}

/// A plain copy of one stream's error counter.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct StreamErrorTally {
    pub count: u64,
    pub last_kind: Option<StreamErrorKind>,
}

impl StreamErrorCounter {
    /// Called from the error callback: two atomic operations, nothing else.
    pub fn record(&self, kind: StreamErrorKind) {
        self.errors.record(kind as u8);
    }

    pub fn tally(&self) -> StreamErrorTally {
        let (count, code) = self.errors.read();
        StreamErrorTally {
            count,
            last_kind: StreamErrorKind::from_code(code),
        }
    }
}

impl fmt::Display for StreamErrorTally {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.last_kind {
            None => write!(f, "no errors"),
            Some(kind) => write!(f, "{} error(s), last: {kind}", self.count),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_and_keeps_the_last_kind() {
        let counter = StreamErrorCounter::default();
        assert_eq!(counter.tally(), StreamErrorTally::default());
        counter.record(StreamErrorKind::from_backend(cpal::ErrorKind::Xrun));
        counter.record(StreamErrorKind::from_backend(
            cpal::ErrorKind::PermissionDenied,
        ));
        let tally = counter.tally();
        assert_eq!(tally.count, 2);
        assert_eq!(tally.last_kind, Some(StreamErrorKind::Backend));
        assert!(tally.to_string().contains("2 error(s)"));
    }

    #[test]
    fn every_kind_survives_its_code() {
        for kind in [
            StreamErrorKind::Xrun,
            StreamErrorKind::DeviceNotAvailable,
            StreamErrorKind::DeviceChanged,
            StreamErrorKind::StreamInvalidated,
            StreamErrorKind::Backend,
        ] {
            assert_eq!(StreamErrorKind::from_code(kind as u8), Some(kind));
        }
        assert_eq!(StreamErrorKind::from_code(0), None);
    }
}
