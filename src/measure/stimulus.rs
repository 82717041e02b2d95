//! Measurement stimuli: what to play through the link, at a level and length the user picks.
//!
//! Two kinds: the exponential sine sweep (good signal-to-noise per second, distortion kept out
//! of the response) and the maximum-length sequence (flat spectrum, the whole band at once).
//! Both are scaled to a peak level in dBFS, faded in and out with half-Hann ramps so the start
//! and end do not click, and followed by silence so the link's response can die away while the
//! recorder still runs.

use super::error::MeasureError;
use super::mls::{maximum_length_sequence, MLS_ORDERS};
use super::sweep::{exponential_sweep, sweep_inverse_filter};
use crate::model::{MAX_CHANNELS, SAMPLE_RATE_RANGE};

/// The stated safe default level: −20 dBFS peak leaves room for a link that boosts some
/// frequencies before anything clips, and is moderate on loudspeakers and ears.
pub const DEFAULT_LEVEL_DBFS: f64 = -20.0;
/// Levels accepted (dBFS peak). Above −1 dBFS a converter's inter-sample peaks may clip.
pub const LEVEL_RANGE_DBFS: (f64, f64) = (-80.0, -1.0);
/// Default sweep length and band start (the top defaults to the Nyquist frequency).
pub const DEFAULT_SWEEP_SECONDS: f64 = 2.0;
pub const DEFAULT_START_HZ: f64 = 20.0;
/// Default ramp at each end and silence after.
pub const DEFAULT_FADE_MS: f64 = 10.0;
pub const DEFAULT_SILENCE_SECONDS: f64 = 0.5;
/// Default register length of the sequence: 65 535 samples, about 1.4 s at 48 kHz.
pub const DEFAULT_MLS_ORDER: u32 = 16;

/// Which signal to play.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum StimulusKind {
    /// Exponential sine sweep from `start_hz` to `end_hz` over `seconds`.
    Sweep {
        start_hz: f64,
        end_hz: f64,
        seconds: f64,
    },
    /// `periods` repetitions of the maximum-length sequence of register length `order`.
    Mls { order: u32, periods: usize },
}

/// Everything that fixes a stimulus.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StimulusSpec {
    pub kind: StimulusKind,
    pub sample_rate: u32,
    /// Peak level in dBFS.
    pub level_dbfs: f64,
    /// Half-Hann ramp at the start and at the end (ms).
    pub fade_ms: f64,
    /// Silence after the signal (s), so the response's tail is recorded too.
    pub silence_seconds: f64,
    /// Channels of the file; every channel carries the same signal.
    pub channels: usize,
}

impl StimulusSpec {
    /// A sweep with the defaults: 20 Hz to the Nyquist frequency over 2 s at −20 dBFS.
    pub fn sweep(sample_rate: u32) -> Self {
        Self {
            kind: StimulusKind::Sweep {
                start_hz: DEFAULT_START_HZ,
                end_hz: f64::from(sample_rate) / 2.0,
                seconds: DEFAULT_SWEEP_SECONDS,
            },
            sample_rate,
            level_dbfs: DEFAULT_LEVEL_DBFS,
            fade_ms: DEFAULT_FADE_MS,
            silence_seconds: DEFAULT_SILENCE_SECONDS,
            channels: 1,
        }
    }

    /// A maximum-length sequence with the defaults: order 16, one period, at −20 dBFS.
    pub fn mls(sample_rate: u32) -> Self {
        Self {
            kind: StimulusKind::Mls {
                order: DEFAULT_MLS_ORDER,
                periods: 1,
            },
            ..Self::sweep(sample_rate)
        }
    }

    /// Frames of signal (before the silence).
    pub fn signal_frames(&self) -> usize {
        match self.kind {
            StimulusKind::Sweep { seconds, .. } => {
                (seconds * f64::from(self.sample_rate)).round() as usize
            }
            StimulusKind::Mls { order, periods } => ((1usize << order.min(30)) - 1) * periods,
        }
    }

    /// One line, e.g. "exponential sine sweep 20–24000 Hz over 2 s, peak −20 dBFS, …".
    pub fn describe(&self) -> String {
        let what = match self.kind {
            StimulusKind::Sweep {
                start_hz,
                end_hz,
                seconds,
            } => format!("exponential sine sweep {start_hz}–{end_hz} Hz over {seconds} s"),
            StimulusKind::Mls { order, periods } => format!(
                "maximum-length sequence of order {order} ({} samples) × {periods}",
                (1usize << order.min(30)) - 1
            ),
        };
        format!(
            "{what}, peak {} dBFS, {} ms fades, {} s of silence after, {} Hz",
            self.level_dbfs, self.fade_ms, self.silence_seconds, self.sample_rate
        )
    }

    /// Checks every setting against its range.
    pub fn validate(&self) -> Result<(), MeasureError> {
        let bad = |setting, value: f64, why: String, help: &str| MeasureError::BadStimulus {
            setting,
            value: value.to_string(),
            why,
            help: help.to_string(),
        };
        let rate = f64::from(self.sample_rate);
        if !(SAMPLE_RATE_RANGE.0..=SAMPLE_RATE_RANGE.1).contains(&rate) {
            return Err(bad(
                "sample rate",
                rate,
                format!(
                    "outside {} … {} Hz",
                    SAMPLE_RATE_RANGE.0, SAMPLE_RATE_RANGE.1
                ),
                "give the rate the link runs at, e.g. 48000",
            ));
        }
        let (low, high) = LEVEL_RANGE_DBFS;
        if !(self.level_dbfs.is_finite() && (low..=high).contains(&self.level_dbfs)) {
            return Err(bad(
                "level",
                self.level_dbfs,
                format!("outside {low} … {high} dBFS"),
                "start at the default -20 dBFS and raise it only while the recording stays \
                 well below full scale",
            ));
        }
        if !(self.channels >= 1 && self.channels <= MAX_CHANNELS) {
            return Err(bad(
                "channels",
                self.channels as f64,
                format!("outside 1 … {MAX_CHANNELS}"),
                "give the number of channels to play",
            ));
        }
        if !(self.silence_seconds.is_finite() && (0.0..=30.0).contains(&self.silence_seconds)) {
            return Err(bad(
                "silence",
                self.silence_seconds,
                "outside 0 … 30 s".into(),
                "leave about as much silence as the link takes to die away (0.5 s is plenty \
                 for most lines)",
            ));
        }
        match self.kind {
            StimulusKind::Sweep {
                start_hz,
                end_hz,
                seconds,
            } => {
                if !(seconds.is_finite() && (0.1..=60.0).contains(&seconds)) {
                    return Err(bad(
                        "length",
                        seconds,
                        "outside 0.1 … 60 s".into(),
                        "a sweep of 1 to 10 s suits most links; longer sweeps raise the SNR",
                    ));
                }
                let nyquist = rate / 2.0;
                if !(start_hz.is_finite() && start_hz >= 1.0 && start_hz < nyquist) {
                    return Err(bad(
                        "start frequency",
                        start_hz,
                        format!("outside 1 Hz … {nyquist} Hz"),
                        "start at 20 Hz, or wherever the link begins to pass signal",
                    ));
                }
                if !(end_hz.is_finite() && end_hz > start_hz * 1.01 && end_hz <= nyquist) {
                    return Err(bad(
                        "end frequency",
                        end_hz,
                        format!(
                            "must lie above the start ({start_hz} Hz) and at most {nyquist} Hz"
                        ),
                        "end at the Nyquist frequency (half the sample rate), the default",
                    ));
                }
            }
            StimulusKind::Mls { order, periods } => {
                let (low, high) = MLS_ORDERS;
                if !(low..=high).contains(&order) {
                    return Err(bad(
                        "sequence order",
                        f64::from(order),
                        format!("outside {low} … {high}"),
                        "order 16 gives 65 535 samples per period",
                    ));
                }
                if !(1..=16).contains(&periods) {
                    return Err(bad(
                        "periods",
                        periods as f64,
                        "outside 1 … 16".into(),
                        "one period is enough for a least-squares fit",
                    ));
                }
            }
        }
        let signal_ms = 1000.0 * self.signal_frames() as f64 / rate;
        if !(self.fade_ms.is_finite() && self.fade_ms >= 0.0 && 2.0 * self.fade_ms < signal_ms) {
            return Err(bad(
                "fade",
                self.fade_ms,
                format!("must be ≥ 0 and shorter than half the signal ({signal_ms:.1} ms)"),
                "10 ms ramps keep the ends from clicking",
            ));
        }
        Ok(())
    }
}

/// A generated stimulus (mono; every file channel carries the same).
#[derive(Debug, Clone, PartialEq)]
pub struct Stimulus {
    pub spec: StimulusSpec,
    /// The signal followed by the silence.
    pub samples: Vec<f64>,
}

impl Stimulus {
    /// Interleaved `f32` samples for a WAV file of `spec.channels` channels.
    pub fn interleaved(&self) -> Vec<f32> {
        let channels = self.spec.channels;
        let mut out = Vec::with_capacity(self.samples.len() * channels);
        for &x in &self.samples {
            out.extend(std::iter::repeat_n(x as f32, channels));
        }
        out
    }

    /// [`Stimulus::interleaved`] played `repeats` times back to back (each copy with its
    /// silence), for a measurement whose captures are averaged and compared.
    pub fn repeated_interleaved(&self, repeats: usize) -> Vec<f32> {
        self.interleaved().repeat(repeats.max(1))
    }

    /// The sweep's inverse filter (Farina), for deconvolving a recording of this stimulus;
    /// `None` for a maximum-length sequence (whose own deconvolution is a correlation).
    pub fn inverse_filter(&self) -> Option<Vec<f64>> {
        match self.spec.kind {
            StimulusKind::Sweep {
                start_hz, end_hz, ..
            } => {
                let signal = &self.samples[..self.spec.signal_frames()];
                Some(sweep_inverse_filter(
                    signal,
                    start_hz,
                    end_hz,
                    f64::from(self.spec.sample_rate),
                ))
            }
            StimulusKind::Mls { .. } => None,
        }
    }
}

/// Makes the stimulus `spec` describes.
pub fn generate_stimulus(spec: &StimulusSpec) -> Result<Stimulus, MeasureError> {
    spec.validate()?;
    let rate = f64::from(spec.sample_rate);
    let frames = spec.signal_frames();
    let mut signal = match spec.kind {
        StimulusKind::Sweep {
            start_hz, end_hz, ..
        } => exponential_sweep(start_hz, end_hz, frames, rate),
        StimulusKind::Mls { order, periods } => {
            let period = maximum_length_sequence(order).ok_or_else(|| MeasureError::Numerical {
                what: format!("no maximum-length sequence of order {order}"),
            })?;
            period.repeat(periods)
        }
    };
    let peak = 10f64.powf(spec.level_dbfs / 20.0);
    let ramp = ((spec.fade_ms / 1000.0) * rate).round() as usize;
    for (n, x) in signal.iter_mut().enumerate() {
        let from_end = frames - 1 - n;
        let edge = n.min(from_end);
        let gain = if edge < ramp {
            0.5 - 0.5 * (std::f64::consts::PI * edge as f64 / ramp as f64).cos()
        } else {
            1.0
        };
        *x *= peak * gain;
    }
    let silence = (spec.silence_seconds * rate).round() as usize;
    signal.resize(frames + silence, 0.0);
    Ok(Stimulus {
        spec: *spec,
        samples: signal,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sweep_has_the_asked_level_length_fades_and_silence() {
        let mut spec = StimulusSpec::sweep(48_000);
        spec.level_dbfs = -20.0;
        let s = generate_stimulus(&spec).unwrap();
        assert_eq!(s.samples.len(), 96_000 + 24_000);
        let peak = s.samples.iter().fold(0.0f64, |m, x| m.max(x.abs()));
        // −20 dBFS peak is an amplitude of 0.1 (definition of dBFS; common practice).
        assert!((peak - 0.1).abs() < 1e-3, "{peak}");
        assert_eq!(s.samples[0], 0.0, "fade starts from silence");
        assert!(s.samples[96_000..].iter().all(|&x| x == 0.0));
        let interleaved = generate_stimulus(&StimulusSpec {
            channels: 2,
            ..spec
        })
        .unwrap()
        .interleaved();
        assert_eq!(interleaved.len(), 2 * 120_000);
        assert_eq!(interleaved[1000], interleaved[1001]);
    }

    #[test]
    fn mls_is_two_valued_at_the_level_between_the_fades() {
        let spec = StimulusSpec {
            kind: StimulusKind::Mls {
                order: 12,
                periods: 2,
            },
            level_dbfs: -26.0,
            silence_seconds: 0.0,
            ..StimulusSpec::mls(16_000)
        };
        let s = generate_stimulus(&spec).unwrap();
        assert_eq!(s.samples.len(), 2 * 4095);
        let level = 10f64.powf(-26.0 / 20.0);
        assert!(s.samples[200..7_990]
            .iter()
            .all(|x| (x.abs() - level).abs() < 1e-12));
        assert!(s.inverse_filter().is_none());
    }

    #[test]
    fn settings_out_of_range_are_refused_with_the_setting_named() {
        let base = StimulusSpec::sweep(48_000);
        let cases = [
            StimulusSpec {
                level_dbfs: 0.0,
                ..base
            },
            StimulusSpec {
                level_dbfs: f64::NAN,
                ..base
            },
            StimulusSpec {
                sample_rate: 1000,
                ..base
            },
            StimulusSpec {
                kind: StimulusKind::Sweep {
                    start_hz: 20.0,
                    end_hz: 30_000.0,
                    seconds: 2.0,
                },
                ..base
            },
            StimulusSpec {
                kind: StimulusKind::Sweep {
                    start_hz: 20.0,
                    end_hz: 20_000.0,
                    seconds: 0.01,
                },
                ..base
            },
            StimulusSpec {
                fade_ms: 1500.0,
                ..base
            },
            StimulusSpec {
                kind: StimulusKind::Mls {
                    order: 30,
                    periods: 1,
                },
                ..base
            },
            StimulusSpec {
                channels: 0,
                ..base
            },
        ];
        let settings = [
            "level",
            "level",
            "sample rate",
            "end frequency",
            "length",
            "fade",
            "sequence order",
            "channels",
        ];
        for (spec, setting) in cases.iter().zip(settings) {
            match generate_stimulus(spec) {
                Err(MeasureError::BadStimulus { setting: s, .. }) => assert_eq!(s, setting),
                other => panic!("{setting}: {other:?}"),
            }
        }
    }
}
