//! The output guard against clipping: count what reached full scale, then act on it.

use super::settings::{ClipPolicy, FULL_SCALE};

/// Where the soft limiter starts to bend (≈ −2.5 dBFS).
const SOFT_KNEE: f32 = 0.75;

/// Highest level the gain-reduction policy aims for, a hair under full scale.
const GAIN_CEILING: f32 = 0.999;

/// State of the clip guard (only the gain-reduction policy keeps any).
#[derive(Debug, Clone)]
pub struct ClipGuard {
    policy: ClipPolicy,
    gain: f32,
    /// Per-sample factor by which the remaining gain reduction decays.
    release: f32,
}

/// What the guard did to one frame.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct ClipCount {
    /// Samples at or beyond full scale (or not finite) before the guard.
    pub clipped: u32,
    /// Samples the guard changed.
    pub limited: u32,
}

impl ClipGuard {
    pub fn new(policy: ClipPolicy, release_samples: usize) -> Self {
        Self {
            policy,
            gain: 1.0,
            release: (-1.0 / release_samples.max(1) as f32).exp(),
        }
    }

    /// Guards one interleaved frame in place. Non-finite samples become 0. All channels share
    /// one gain, so gain reduction does not shift the stereo image.
    pub fn guard_frame(&mut self, frame: &mut [f32]) -> ClipCount {
        let mut count = ClipCount::default();
        let mut peak = 0.0f32;
        for y in frame.iter_mut() {
            if !y.is_finite() {
                *y = 0.0;
                count.clipped += 1;
                count.limited += 1;
            } else if y.abs() >= FULL_SCALE {
                count.clipped += 1;
            }
            peak = peak.max(y.abs());
        }
        match self.policy {
            ClipPolicy::HardLimit => {
                for y in frame.iter_mut() {
                    if y.abs() >= FULL_SCALE {
                        *y = y.signum() * FULL_SCALE;
                        count.limited += 1;
                    }
                }
            }
            ClipPolicy::SoftLimit => {
                for y in frame.iter_mut() {
                    if y.abs() > SOFT_KNEE {
                        *y = y.signum() * soft_curve(y.abs());
                        count.limited += 1;
                    }
                }
            }
            ClipPolicy::GainReduction => {
                if peak * self.gain > GAIN_CEILING {
                    self.gain = GAIN_CEILING / peak;
                } else {
                    self.gain = 1.0 - (1.0 - self.gain) * self.release;
                }
                if self.gain < 1.0 {
                    for y in frame.iter_mut() {
                        *y = (*y * self.gain).clamp(-FULL_SCALE, FULL_SCALE);
                    }
                    count.limited += frame.len() as u32;
                }
            }
        }
        count
    }
}

/// Above the knee: knee + (1 − knee)·tanh((|y| − knee)/(1 − knee)). Continuous with slope 1
/// at the knee, never reaching full scale.
fn soft_curve(magnitude: f32) -> f32 {
    let span = FULL_SCALE - SOFT_KNEE;
    SOFT_KNEE + span * ((magnitude - SOFT_KNEE) / span).tanh()
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — a limiter's output never exceeds full scale.
    #[test]
    fn every_policy_keeps_output_in_range() {
        for policy in [
            ClipPolicy::HardLimit,
            ClipPolicy::SoftLimit,
            ClipPolicy::GainReduction,
        ] {
            let mut g = ClipGuard::new(policy, 100);
            let mut frame = [3.0, -1.5, f32::NAN, 0.2];
            let c = g.guard_frame(&mut frame);
            assert_eq!(c.clipped, 3, "{policy:?}");
            assert!(
                frame.iter().all(|y| y.abs() <= FULL_SCALE),
                "{policy:?}: {frame:?}"
            );
            assert_eq!(frame[2], 0.0);
        }
    }

    #[test]
    fn soft_limit_leaves_quiet_signal_alone() {
        let mut g = ClipGuard::new(ClipPolicy::SoftLimit, 100);
        let mut frame = [0.5, -0.7];
        assert_eq!(g.guard_frame(&mut frame), ClipCount::default());
        assert_eq!(frame, [0.5, -0.7]);
    }

    #[test]
    fn gain_reduction_recovers() {
        let mut g = ClipGuard::new(ClipPolicy::GainReduction, 10);
        let mut hot = [2.0];
        g.guard_frame(&mut hot);
        assert!((hot[0] - GAIN_CEILING).abs() < 1e-6);
        let mut quiet = [0.1];
        for _ in 0..200 {
            quiet = [0.1];
            g.guard_frame(&mut quiet);
        }
        assert!((quiet[0] - 0.1).abs() < 1e-4, "{}", quiet[0]);
    }
}
