//! Noticing that the sound devices have gone, and pacing the attempts to get them back.
//!
//! The control thread looks every tick at two things the audio side already counts: the
//! engine's frame counter (it advances only while the capture callback runs) and the streams'
//! error tallies. Ticks are a second apart while all is well and much closer while anything is
//! amiss (`settled`), so a stall is timed from the first look that saw no new frame: a slow look
//! never makes a short stall look long (it may make a loss noticed up to one slow tick later). A device is taken as lost when the backend says so outright (device gone,
//! stream invalidated or moved), when errors keep coming for a while without a single frame
//! getting through, or when no frame has got through for a long time at all. The verdict is a
//! pure function of the observations and the times given, so it is tested without a device or
//! a clock.

use std::time::{Duration, Instant};

use crate::io::live::{StreamErrorCounts, StreamErrorKind, StreamErrorTally};

/// No frame for this long while the devices keep reporting errors: lost.
pub const STALL_WITH_ERRORS: Duration = Duration::from_secs(1);
/// This many errors without a frame in between is a flood, not a hiccup…
pub const ERROR_FLOOD: u64 = 1000;
/// …and a flood that has lasted this long (with no frame) is a loss.
pub const FLOOD_STALL: Duration = Duration::from_millis(200);
/// No frame for this long, errors or not: lost (a stream that never delivers is as good as gone).
pub const STALL_SILENT: Duration = Duration::from_secs(4);
/// First wait before trying to open the devices again; doubled after every failed try…
pub const BACKOFF_FIRST: Duration = Duration::from_millis(500);
/// …up to this.
pub const BACKOFF_MAX: Duration = Duration::from_secs(8);
/// The devices must have run this long after a reopening before the back-off starts again from
/// its first step: a device that opens and dies at once is retried at ever longer waits, not
/// twice a second for ever (each try rebuilds the engine).
pub const STABLE_RUN: Duration = Duration::from_secs(30);

/// What one look at the audio side concluded.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Health {
    Running,
    /// The devices are gone; the text says how that was seen.
    Lost(String),
}

/// Follows the frame counter and error tallies of one run of the streams.
#[derive(Debug, Clone)]
pub struct DeviceWatch {
    frames: u64,
    errors: StreamErrorCounts,
    /// The first look that saw no new frame since the last one that did (the opening, before
    /// the first frame); `None` while frames flow.
    stalled_since: Option<Instant>,
    errors_since_progress: u64,
    /// The last look saw new frames and no new error.
    settled: bool,
}

fn fatal(kind: Option<StreamErrorKind>) -> bool {
    matches!(
        kind,
        Some(
            StreamErrorKind::DeviceNotAvailable
                | StreamErrorKind::StreamInvalidated
                | StreamErrorKind::DeviceChanged
        )
    )
}

fn describe(direction: &str, tally: &StreamErrorTally) -> String {
    format!("{direction}: {tally}")
}

impl DeviceWatch {
    /// Starts watching streams that have just been opened at `now`.
    pub fn new(now: Instant) -> Self {
        Self {
            frames: 0,
            errors: StreamErrorCounts::default(),
            stalled_since: Some(now),
            errors_since_progress: 0,
            settled: false,
        }
    }

    /// Whether the last look found the audio flowing without new errors (the control loop may
    /// then look again only after its long tick).
    pub fn settled(&self) -> bool {
        self.settled
    }

    /// Takes one look: the engine's frame count and both streams' error tallies at `now`.
    pub fn observe(&mut self, now: Instant, frames: u64, errors: StreamErrorCounts) -> Health {
        let new_input = errors.input.count.saturating_sub(self.errors.input.count);
        let new_output = errors.output.count.saturating_sub(self.errors.output.count);
        self.errors = errors;
        let progressed = frames != self.frames;
        self.settled = progressed && new_input + new_output == 0;
        if new_input > 0 && fatal(errors.input.last_kind) {
            return Health::Lost(describe("capture device", &errors.input));
        }
        if new_output > 0 && fatal(errors.output.last_kind) {
            return Health::Lost(describe("playback device", &errors.output));
        }
        if progressed {
            self.frames = frames;
            self.stalled_since = None;
            self.errors_since_progress = 0;
            return Health::Running;
        }
        self.errors_since_progress += new_input + new_output;
        let since = *self.stalled_since.get_or_insert(now);
        let stalled = now.saturating_duration_since(since);
        let flood = self.errors_since_progress >= ERROR_FLOOD && stalled >= FLOOD_STALL;
        if flood || (stalled >= STALL_WITH_ERRORS && self.errors_since_progress > 0) {
            return Health::Lost(format!(
                "no audio for {:.1} s while the devices report errors ({}; {})",
                stalled.as_secs_f64(),
                describe("capture", &errors.input),
                describe("playback", &errors.output)
            ));
        }
        if stalled >= STALL_SILENT {
            return Health::Lost(format!(
                "no audio for {:.1} s: the capture device delivers nothing",
                stalled.as_secs_f64()
            ));
        }
        Health::Running
    }
}

/// Exponential back-off between attempts to reopen the devices.
#[derive(Debug, Clone)]
pub struct Backoff {
    next: Duration,
    attempts: u32,
}

impl Default for Backoff {
    fn default() -> Self {
        Self {
            next: BACKOFF_FIRST,
            attempts: 0,
        }
    }
}

impl Backoff {
    /// The wait before the next attempt; each call doubles the one after, up to [`BACKOFF_MAX`].
    pub fn next_delay(&mut self) -> Duration {
        let delay = self.next;
        self.next = (self.next * 2).min(BACKOFF_MAX);
        self.attempts += 1;
        delay
    }

    /// Attempts made so far.
    pub fn attempts(&self) -> u32 {
        self.attempts
    }
}

/// Paces the attempts to reopen the devices across losses: the back-off carries on from one
/// loss to the next unless the devices ran for [`STABLE_RUN`] in between.
#[derive(Debug, Clone, Default)]
pub struct RecoveryPacer {
    backoff: Backoff,
    /// When the devices were last opened (after a loss), while they still run.
    opened_at: Option<Instant>,
}

impl RecoveryPacer {
    /// The devices were found lost at `now`: the wait before the first attempt to reopen them.
    pub fn lost(&mut self, now: Instant) -> Duration {
        let ran_stably = self
            .opened_at
            .take()
            .is_some_and(|at| now.saturating_duration_since(at) >= STABLE_RUN);
        if ran_stably {
            self.backoff = Backoff::default();
        }
        self.backoff.next_delay()
    }

    /// An attempt to reopen failed: the wait before the next one.
    pub fn failed(&mut self) -> Duration {
        self.backoff.next_delay()
    }

    /// The devices were opened again at `now`.
    pub fn opened(&mut self, now: Instant) {
        self.opened_at = Some(now);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tally(count: u64, kind: StreamErrorKind) -> StreamErrorTally {
        StreamErrorTally {
            count,
            last_kind: Some(kind),
        }
    }

    fn ms(t0: Instant, n: u64) -> Instant {
        t0 + Duration::from_millis(n)
    }

    // Source: common practice for audio services — a device the backend reports gone is gone.
    #[test]
    fn a_device_reported_gone_is_lost_at_once() {
        let t0 = Instant::now();
        let mut watch = DeviceWatch::new(t0);
        assert_eq!(
            watch.observe(ms(t0, 20), 256, StreamErrorCounts::default()),
            Health::Running
        );
        let errors = StreamErrorCounts {
            input: tally(1, StreamErrorKind::DeviceNotAvailable),
            output: StreamErrorTally::default(),
        };
        match watch.observe(ms(t0, 40), 512, errors) {
            Health::Lost(why) => assert!(why.contains("capture device"), "{why}"),
            Health::Running => panic!("a vanished capture device went unnoticed"),
        }
    }

    #[test]
    fn xruns_while_audio_flows_are_not_a_loss() {
        let t0 = Instant::now();
        let mut watch = DeviceWatch::new(t0);
        for i in 1..200u64 {
            let errors = StreamErrorCounts {
                input: tally(i, StreamErrorKind::Xrun),
                output: tally(i, StreamErrorKind::Xrun),
            };
            assert_eq!(
                watch.observe(ms(t0, 20 * i), 256 * i, errors),
                Health::Running
            );
        }
    }

    #[test]
    fn errors_without_progress_for_a_second_are_a_loss() {
        let t0 = Instant::now();
        let mut watch = DeviceWatch::new(t0);
        assert_eq!(
            watch.observe(ms(t0, 20), 256, StreamErrorCounts::default()),
            Health::Running
        );
        let mut verdict = Health::Running;
        let mut at = 0;
        for i in 2..200u64 {
            let errors = StreamErrorCounts {
                input: tally(i, StreamErrorKind::Backend),
                output: StreamErrorTally::default(),
            };
            verdict = watch.observe(ms(t0, 20 * i), 256, errors);
            if verdict != Health::Running {
                at = 20 * i;
                break;
            }
        }
        match verdict {
            Health::Lost(why) => assert!(why.contains("while the devices report errors"), "{why}"),
            Health::Running => panic!("a stalled, erroring stream went unnoticed"),
        }
        // Declared once the stall reached STALL_WITH_ERRORS, timed from the first look that saw
        // no new frame (at 40 ms).
        assert_eq!(at, 40 + STALL_WITH_ERRORS.as_millis() as u64);
    }

    // A backend whose server has gone (the PulseAudio plugin, for one) reports an error per
    // poll, tens of thousands a second: that is a loss well before the one-second rule.
    #[test]
    fn an_error_flood_without_frames_is_a_loss_within_its_short_wait() {
        let t0 = Instant::now();
        let mut watch = DeviceWatch::new(t0);
        assert_eq!(
            watch.observe(ms(t0, 20), 256, StreamErrorCounts::default()),
            Health::Running
        );
        let flood = |n: u64| StreamErrorCounts {
            input: tally(n, StreamErrorKind::Backend),
            output: tally(n, StreamErrorKind::Backend),
        };
        let stall_ms = FLOOD_STALL.as_millis() as u64;
        // The first look without a frame starts the clock.
        let first_still = 40;
        assert_eq!(
            watch.observe(ms(t0, first_still), 256, flood(2000)),
            Health::Running
        );
        assert_eq!(
            watch.observe(ms(t0, first_still + stall_ms - 20), 256, flood(5000)),
            Health::Running
        );
        assert!(matches!(
            watch.observe(ms(t0, first_still + stall_ms), 256, flood(6000)),
            Health::Lost(_)
        ));
    }

    // A look a whole second after the last one that saw frames cannot tell when in that second
    // the frames stopped: it takes the stall as beginning now, so a short hiccup just before a
    // slow look is never judged a long one.
    #[test]
    fn a_slow_look_does_not_make_a_short_stall_look_long() {
        let t0 = Instant::now();
        let mut watch = DeviceWatch::new(t0);
        assert_eq!(
            watch.observe(ms(t0, 1000), 48_000, StreamErrorCounts::default()),
            Health::Running
        );
        assert!(watch.settled());
        let errors = StreamErrorCounts {
            input: tally(3, StreamErrorKind::Backend),
            output: StreamErrorTally::default(),
        };
        assert_eq!(watch.observe(ms(t0, 2000), 48_000, errors), Health::Running);
        assert!(
            !watch.settled(),
            "a look that saw no frame asks for closer looks"
        );
        assert_eq!(watch.observe(ms(t0, 2980), 48_000, errors), Health::Running);
        assert!(matches!(
            watch.observe(ms(t0, 3000), 48_000, errors),
            Health::Lost(_)
        ));
    }

    #[test]
    fn a_silent_stall_is_a_loss_only_after_the_long_wait() {
        let t0 = Instant::now();
        let mut watch = DeviceWatch::new(t0);
        let quiet = StreamErrorCounts::default();
        let limit = STALL_SILENT.as_millis() as u64;
        assert_eq!(watch.observe(ms(t0, limit - 20), 0, quiet), Health::Running);
        assert!(matches!(
            watch.observe(ms(t0, limit), 0, quiet),
            Health::Lost(_)
        ));
    }

    // Source: common practice (exponential back-off with a ceiling).
    #[test]
    fn backoff_doubles_up_to_its_ceiling() {
        let mut b = Backoff::default();
        let delays: Vec<u64> = (0..7).map(|_| b.next_delay().as_millis() as u64).collect();
        assert_eq!(delays, vec![500, 1000, 2000, 4000, 8000, 8000, 8000]);
        assert_eq!(b.attempts(), 7);
    }

    // Source: common practice (exponential back-off that resets only after a stable run).
    #[test]
    fn a_device_that_opens_and_dies_at_once_is_retried_ever_more_slowly() {
        let t0 = Instant::now();
        let mut pacer = RecoveryPacer::default();
        let mut now = t0;
        let mut waits = Vec::new();
        for _ in 0..6 {
            let wait = pacer.lost(now);
            waits.push(wait.as_millis() as u64);
            now += wait;
            pacer.opened(now);
            now += Duration::from_millis(50); // dies again at once
        }
        assert_eq!(waits, vec![500, 1000, 2000, 4000, 8000, 8000]);
        // A failed attempt in between doubles as well.
        assert_eq!(pacer.failed().as_millis(), 8000);
        // After a stable run the next loss starts from the first step again.
        pacer.opened(now);
        now += STABLE_RUN;
        assert_eq!(pacer.lost(now).as_millis(), 500);
        assert_eq!(pacer.lost(now).as_millis(), 1000);
    }
}
