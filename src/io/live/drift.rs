//! Two sample clocks: keeping the ring between a capture device and a playback device that run
//! on different crystals near its target fill, by resampling the stream on its way out.
//!
//! Two devices nominally at the same rate differ by up to a few hundred ppm, so the ring
//! between them gains or loses that share of its throughput (100 ppm at 48 kHz is 4.8 frames a
//! second) until it overruns or runs dry. [`DriftLoop`] is a proportional–integral control loop
//! on the ring's fill: its output is the resampling ratio (playback frames per captured frame),
//! and its integral settles on the clocks' true difference, which is the drift estimate
//! reported in ppm. [`DriftResampler`] applies the ratio with rubato's asynchronous
//! resampler (septic polynomial interpolation), one playback period at a time, taking as many
//! captured frames as the ratio asks for.
//!
//! The fill is judged between the capture side's pushes, not only at them: a ring read at
//! playback time holds a staircase of whole capture periods, and with clocks a few ppm apart the
//! two callbacks' phase slips so slowly (a whole period every 53 s at 100 ppm and 256 frames)
//! that the staircase would look like drift to the loop. The caller adds the frames captured
//! since the last push (elapsed time × nominal rate), which takes the staircase out.
//!
//! Both run on the playback thread: no allocation after construction (rubato's
//! `process_into_buffer` works in its own buffers, made when it is built), no locks.

use rubato::audioadapter_buffers::direct::InterleavedSlice;
use rubato::{Adjustable, Async, FixedAsync, PolynomialDegree, Resampler};

/// How fast the loop follows (natural frequency, rad/s) and its damping: critically damped and
/// slow enough that a single late callback hardly moves the ratio, fast enough to settle within
/// about 15 s (≈ 5.8 / ω for a critically damped second-order loop; common practice).
const LOOP_NATURAL_FREQUENCY: f64 = 0.4;
const LOOP_DAMPING: f64 = 1.0;
/// Largest correction the loop may apply: far beyond any two working crystals (common practice:
/// ±100 ppm parts, a few hundred ppm apart at worst), so a runaway input cannot bend the pitch.
pub const MAX_DRIFT_PPM: f64 = 1000.0;
/// Time constant of the one-pole smoothing of the fill error, seconds. The fill is known to a
/// frame or so (the resampler takes whole frames, 256 or 257 a period); fed to the loop as it
/// is, that step would move the ratio by several ppm from one period to the next, a phase
/// wobble heard as noise near −65 dB on a pure tone. One second smooths it twentyfold and costs
/// the loop about 20° of phase at its natural frequency.
const FILL_SMOOTHING_SECONDS: f64 = 1.0;

/// The control loop from ring fill to resampling ratio.
#[derive(Debug, Clone)]
pub struct DriftLoop {
    target_frames: f64,
    /// Ratio change per frame of fill error, and integral gain per frame-second.
    proportional: f64,
    integral_gain: f64,
    /// The integral: the clocks' estimated difference (playback rate / capture rate − 1).
    drift: f64,
    /// The fill error, smoothed (frames).
    error: f64,
    ratio: f64,
}

impl DriftLoop {
    /// A loop that holds the ring at `target_frames` for a stream at `sample_rate` Hz.
    pub fn new(target_frames: f64, sample_rate: f64) -> Self {
        // The ring's fill obeys d(fill)/dt = rate · (ratio − 1 − drift): with
        // ratio − 1 = Kp·e + ∫Ki·e, the loop is s² + rate·Kp·s + rate·Ki, so
        // rate·Kp = 2ζω and rate·Ki = ω².
        let w = LOOP_NATURAL_FREQUENCY;
        Self {
            target_frames,
            proportional: 2.0 * LOOP_DAMPING * w / sample_rate,
            integral_gain: w * w / sample_rate,
            drift: 0.0,
            error: 0.0,
            ratio: 1.0,
        }
    }

    /// Takes the ring's fill (frames, between pushes as the module says) `dt` seconds after the
    /// previous update; returns the ratio to resample the next period with.
    #[inline]
    pub fn update(&mut self, fill_frames: f64, dt: f64) -> f64 {
        let limit = MAX_DRIFT_PPM * 1e-6;
        let error = self.target_frames - fill_frames;
        if error.is_finite() && dt.is_finite() && dt > 0.0 {
            self.error += (error - self.error) * dt / (FILL_SMOOTHING_SECONDS + dt);
            let error = self.error;
            self.drift = (self.drift + self.integral_gain * error * dt).clamp(-limit, limit);
            let correction = (self.proportional * error + self.drift).clamp(-limit, limit);
            self.ratio = 1.0 + correction;
        }
        self.ratio
    }

    /// The estimated clock difference, ppm: positive when playback runs faster than capture.
    pub fn drift_ppm(&self) -> f64 {
        self.drift * 1e6
    }

    /// The ratio last returned (playback frames per captured frame).
    pub fn ratio(&self) -> f64 {
        self.ratio
    }

    pub fn target_frames(&self) -> f64 {
        self.target_frames
    }
}

/// Why a drift resampler could not be built.
#[derive(Debug)]
pub struct DriftResamplerError(String);

impl std::fmt::Display for DriftResamplerError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "the drift resampler could not be built: {}", self.0)
    }
}

impl std::error::Error for DriftResamplerError {}

/// Resamples interleaved f32 audio, one fixed-size output period per call, by a ratio that may
/// change between calls.
pub struct DriftResampler {
    resampler: Async<f32>,
    channels: usize,
    period_frames: usize,
}

impl DriftResampler {
    /// Built on the control thread (allocates): `channels` interleaved, `period_frames` out per
    /// call.
    pub fn new(channels: usize, period_frames: usize) -> Result<Self, DriftResamplerError> {
        let headroom = 1.0 + 2.0 * MAX_DRIFT_PPM * 1e-6;
        let resampler = Async::<f32>::new_poly(
            1.0,
            headroom,
            PolynomialDegree::Septic,
            period_frames,
            channels,
            FixedAsync::Output,
        )
        .map_err(|e| DriftResamplerError(e.to_string()))?;
        Ok(Self {
            resampler,
            channels,
            period_frames,
        })
    }

    /// Captured frames the next call takes.
    #[inline]
    pub fn input_frames_next(&self) -> usize {
        self.resampler.input_frames_next()
    }

    /// Most captured frames any call can take: size the caller's scratch with it.
    pub fn input_frames_max(&self) -> usize {
        self.resampler.input_frames_max()
    }

    /// Frames of delay the resampler adds (at the output rate).
    pub fn delay_frames(&self) -> usize {
        self.resampler.output_delay()
    }

    /// Sets the ratio (playback frames per captured frame) for the next call; the call moves
    /// to it smoothly over its period. Call before [`Self::input_frames_next`], which depends
    /// on it.
    #[inline]
    pub fn set_ratio(&mut self, ratio: f64) {
        // Out of range only if the loop's clamp were wrong: the ratio then stays as it was.
        let _ = self.resampler.set_resample_ratio(ratio, true);
    }

    /// Resamples `input` (exactly [`Self::input_frames_next`] frames, interleaved) into `out`
    /// (one period, interleaved). A mismatched length leaves silence and returns false.
    pub fn process(&mut self, input: &[f32], out: &mut [f32]) -> bool {
        let frames_in = self.resampler.input_frames_next();
        if input.len() == frames_in * self.channels
            && out.len() == self.period_frames * self.channels
        {
            if let (Ok(src), Ok(mut dst)) = (
                InterleavedSlice::new(input, self.channels, frames_in),
                InterleavedSlice::new_mut(out, self.channels, self.period_frames),
            ) {
                if self
                    .resampler
                    .process_into_buffer(&src, &mut dst, None)
                    .is_ok()
                {
                    return true;
                }
            }
        }
        out.fill(0.0);
        false
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // The loop's own arithmetic against its closed form (common practice for a PI loop): with the
    // plant d(fill)/dt = rate · (ratio − 1 − drift) simulated exactly, the integral settles on the
    // drift and the fill on its target.
    #[test]
    fn the_loop_settles_on_the_drift_and_the_target_fill() {
        let rate = 48_000.0;
        for truth in [100e-6, -100e-6, 350e-6] {
            let mut control = DriftLoop::new(512.0, rate);
            let mut fill = 512.0;
            let dt = 256.0 / rate;
            for _ in 0..(60.0 / dt) as usize {
                let ratio = control.update(fill, dt);
                fill += rate * (ratio - 1.0 - truth) * dt;
            }
            assert!((control.drift_ppm() - truth * 1e6).abs() < 0.1, "{truth}");
            assert!((fill - 512.0).abs() < 0.5, "{fill}");
        }
    }

    #[test]
    fn the_correction_is_bounded_and_bad_readings_are_ignored() {
        let mut control = DriftLoop::new(512.0, 48_000.0);
        for _ in 0..100_000 {
            control.update(0.0, 0.01);
        }
        assert!((control.ratio() - 1.0 - MAX_DRIFT_PPM * 1e-6).abs() < 1e-12);
        let before = control.ratio();
        assert_eq!(control.update(f64::NAN, 0.01), before);
        assert_eq!(control.update(512.0, -1.0), before);
    }
}
