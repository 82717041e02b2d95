//! The runaway guard's judgement of one channel's output against its limit.
//!
//! A filter set runs away when its output stays beyond its own bound for the input level
//! (Σ|g[n]| × the input envelope × the margin) for longer than the hold time. "Stays beyond" is
//! judged on a peak-held level: a sample over the limit keeps the channel over for the next
//! `peak_hold` samples, so an oscillating runaway, whose output crosses zero every half
//! period, is over from its first peak past the limit, like a growing one (a real pole) is.
//! Output beyond 1000× the limit, or not finite, is a runaway at once.

/// Above limit × this, output is a runaway at once, without waiting for the hold time (an
/// unstable recursion grows by orders of magnitude within a block).
pub const IMMEDIATE_FACTOR: f64 = 1000.0;

/// Why a channel's output was judged a runaway.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RunawayCause {
    /// NaN or ±∞.
    NonFinite,
    /// Beyond [`IMMEDIATE_FACTOR`] × the limit.
    FarBeyond,
    /// Over the limit (peak-held) for longer than the hold time.
    Held,
}

/// One channel's over-limit episode, if any.
#[derive(Debug, Clone, Copy, Default)]
pub struct RunawayWatch {
    /// Samples since the first sample over the limit of the current episode; `None` when the
    /// channel is not over.
    over_for: Option<usize>,
    /// Samples since the last sample over the limit.
    since_over: usize,
}

impl RunawayWatch {
    /// Judges one output sample `y` against `limit`, with the hold time and the peak hold in
    /// samples. Bounded work, nothing allocated.
    #[inline]
    pub fn observe(
        &mut self,
        y: f64,
        limit: f64,
        hold: usize,
        peak_hold: usize,
    ) -> Option<RunawayCause> {
        if !y.is_finite() {
            return Some(RunawayCause::NonFinite);
        }
        let level = y.abs();
        if level > limit * IMMEDIATE_FACTOR {
            return Some(RunawayCause::FarBeyond);
        }
        if level > limit {
            self.since_over = 0;
            self.over_for.get_or_insert(0);
        } else if self.over_for.is_some() {
            self.since_over += 1;
            if self.since_over > peak_hold {
                self.over_for = None;
            }
        }
        match self.over_for.as_mut() {
            Some(n) => {
                *n += 1;
                (*n > hold).then_some(RunawayCause::Held)
            }
            None => None,
        }
    }

    /// Forgets any episode (the filter's state was reset or another set is judged now).
    pub fn reset(&mut self) {
        *self = Self::default();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn first_trip(ys: impl Iterator<Item = f64>, hold: usize, peak_hold: usize) -> Option<usize> {
        let mut w = RunawayWatch::default();
        ys.enumerate()
            .find(|(_, y)| w.observe(*y, 1.0, hold, peak_hold).is_some())
            .map(|(n, _)| n)
    }

    // Source: common practice — a level held over its limit for longer than the hold time.
    #[test]
    fn a_steady_excess_trips_after_the_hold_time() {
        assert_eq!(first_trip(std::iter::repeat(1.5), 10, 24), Some(10));
        assert_eq!(first_trip(std::iter::repeat_n(0.9, 10_000), 10, 24), None);
    }

    #[test]
    fn an_oscillation_over_the_limit_is_held_between_its_peaks() {
        // 1 kHz at 48 kHz, amplitude 1.5: over near each peak only, under at every zero crossing.
        let tone = (0..).map(|n| 1.5 * (2.0 * std::f64::consts::PI * n as f64 / 48.0).sin());
        let at = first_trip(tone.clone().take(10_000), 100, 24).expect("held over the limit");
        assert!((100..130).contains(&at), "{at}");
        // Without the peak hold, consecutive samples over the limit never reach the hold time.
        assert_eq!(first_trip(tone.take(10_000), 100, 0), None);
    }

    #[test]
    fn isolated_peaks_further_apart_than_the_hold_end_their_episode() {
        let spikes = (0..10_000).map(|n| if n % 50 == 0 { 2.0 } else { 0.0 });
        assert_eq!(first_trip(spikes, 30, 24), None);
    }

    #[test]
    fn non_finite_and_far_beyond_are_runaways_at_once() {
        let mut w = RunawayWatch::default();
        assert_eq!(
            w.observe(f64::NAN, 1.0, 10, 10),
            Some(RunawayCause::NonFinite)
        );
        assert_eq!(
            w.observe(2000.0, 1.0, 10, 10),
            Some(RunawayCause::FarBeyond)
        );
    }
}
