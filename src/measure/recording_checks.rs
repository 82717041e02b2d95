//! Is this pair of files a usable measurement? Same rate, channels that pair up, long enough,
//! not silent, not clipped. What is doubtful but usable becomes a warning for the report.

use super::error::MeasureError;
use crate::io::WavFormat;

/// A peak below this (dBFS) is silence: nothing a converter would tell from its own noise.
pub const SILENCE_DBFS: f64 = -90.0;
/// A sample at or beyond this magnitude has reached full scale (clipped).
pub const CLIP_LEVEL: f64 = 0.999;
/// A response peak above this (dBFS) is close enough to full scale to be worth a warning.
pub const NEAR_CLIP_DBFS: f64 = -1.0;
/// Fewest frames of stimulus signal a fit is attempted with.
pub const MIN_STIMULUS_FRAMES: usize = 1024;

/// A whole WAV file's samples and what to call it in messages.
#[derive(Debug, Clone, Copy)]
pub struct NamedSignal<'a> {
    pub name: &'a str,
    /// Interleaved samples.
    pub samples: &'a [f32],
    pub format: WavFormat,
}

/// The checked pair, split into channels.
#[derive(Debug, Clone, PartialEq)]
pub struct CheckedPair {
    pub sample_rate: u32,
    /// Stimulus channels, trailing silence removed (one when the stimulus is mono).
    pub stimulus: Vec<Vec<f64>>,
    /// Response channels, whole.
    pub response: Vec<Vec<f64>>,
    /// Doubts worth telling the user.
    pub warnings: Vec<String>,
}

impl CheckedPair {
    /// The stimulus played into response channel `channel`.
    pub fn stimulus_for(&self, channel: usize) -> &[f64] {
        if self.stimulus.len() == 1 {
            &self.stimulus[0]
        } else {
            &self.stimulus[channel]
        }
    }
}

fn split_channels(samples: &[f32], channels: usize) -> Vec<Vec<f64>> {
    (0..channels)
        .map(|c| {
            samples
                .iter()
                .skip(c)
                .step_by(channels)
                .map(|&x| f64::from(x))
                .collect()
        })
        .collect()
}

fn peak_dbfs(x: &[f64]) -> f64 {
    20.0 * x.iter().fold(0.0f64, |m, v| m.max(v.abs())).log10()
}

/// Checks `stimulus` and `response` as a measurement pair.
pub fn check_pair(
    stimulus: NamedSignal<'_>,
    response: NamedSignal<'_>,
) -> Result<CheckedPair, MeasureError> {
    if stimulus.format.sample_rate != response.format.sample_rate {
        return Err(MeasureError::SampleRateMismatch {
            stimulus: stimulus.name.to_string(),
            stimulus_rate: stimulus.format.sample_rate,
            response: response.name.to_string(),
            response_rate: response.format.sample_rate,
        });
    }
    let (sc, rc) = (stimulus.format.channels, response.format.channels);
    if sc == 0 || rc == 0 || (sc != 1 && sc != rc) {
        return Err(MeasureError::ChannelMismatch {
            stimulus: stimulus.name.to_string(),
            stimulus_channels: sc,
            response: response.name.to_string(),
            response_channels: rc,
        });
    }
    let mut warnings = Vec::new();
    if sc == 1 && rc > 1 {
        warnings.push(format!(
            "{} is mono and {} has {rc} channels: each channel is identified against the same \
             stimulus, as if it was played into every channel at once",
            stimulus.name, response.name
        ));
    }
    let mut stimulus_channels = split_channels(stimulus.samples, sc);
    let response_channels = split_channels(response.samples, rc);

    for (channel, s) in stimulus_channels.iter_mut().enumerate() {
        let peak = peak_dbfs(s);
        if peak.is_nan() || peak <= SILENCE_DBFS {
            return Err(MeasureError::Silent {
                signal: stimulus.name.to_string(),
                channel,
                peak_dbfs: peak.max(-999.0),
            });
        }
        refuse_clipping(stimulus.name, channel, s)?;
        // The silence after the signal only pads; the fit reads the response over it anyway.
        let end = s.iter().rposition(|&x| x != 0.0).map_or(0, |p| p + 1);
        s.truncate(end);
        if s.len() < MIN_STIMULUS_FRAMES {
            return Err(MeasureError::TooShort {
                signal: stimulus.name.to_string(),
                frames: s.len(),
                needed: MIN_STIMULUS_FRAMES,
                why: "too little signal to fit a model to".into(),
            });
        }
    }
    for (channel, r) in response_channels.iter().enumerate() {
        let played = if sc == 1 {
            stimulus_channels[0].len()
        } else {
            stimulus_channels[channel].len()
        };
        if r.len() < played {
            return Err(MeasureError::TooShort {
                signal: response.name.to_string(),
                frames: r.len(),
                needed: played,
                why: "the recording must hold at least the whole stimulus".into(),
            });
        }
        let peak = peak_dbfs(r);
        if peak.is_nan() || peak <= SILENCE_DBFS {
            return Err(MeasureError::Silent {
                signal: response.name.to_string(),
                channel,
                peak_dbfs: peak.max(-999.0),
            });
        }
        refuse_clipping(response.name, channel, r)?;
        if peak > NEAR_CLIP_DBFS {
            warnings.push(format!(
                "{}, channel {channel}, peaks at {peak:.1} dBFS, close to full scale: lower the \
                 level a little next time",
                response.name
            ));
        }
    }
    Ok(CheckedPair {
        sample_rate: stimulus.format.sample_rate,
        stimulus: stimulus_channels,
        response: response_channels,
        warnings,
    })
}

fn refuse_clipping(name: &str, channel: usize, x: &[f64]) -> Result<(), MeasureError> {
    let clipped = |v: &f64| !v.is_finite() || v.abs() >= CLIP_LEVEL;
    let samples = x.iter().filter(|v| clipped(v)).count();
    if samples > 0 {
        return Err(MeasureError::Clipped {
            signal: name.to_string(),
            channel,
            samples,
            first_frame: x.iter().position(clipped).unwrap_or(0),
        });
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tone(frames: usize, level: f32) -> Vec<f32> {
        (0..frames)
            .map(|n| level * (n as f32 * 0.05).sin())
            .collect()
    }

    fn named<'a>(name: &'a str, samples: &'a [f32], channels: usize, rate: u32) -> NamedSignal<'a> {
        NamedSignal {
            name,
            samples,
            format: WavFormat::float32(channels, rate),
        }
    }

    #[test]
    fn different_rates_are_refused() {
        let s = tone(4096, 0.1);
        let e =
            check_pair(named("s.wav", &s, 1, 48_000), named("r.wav", &s, 1, 44_100)).unwrap_err();
        assert!(matches!(e, MeasureError::SampleRateMismatch { .. }), "{e}");
        assert!(e.to_string().contains("44100 Hz"));
    }

    #[test]
    fn stereo_stimulus_with_mono_response_is_refused_but_mono_into_stereo_is_a_warning() {
        let stereo = tone(8192, 0.1);
        let mono = tone(4096, 0.1);
        let e = check_pair(
            named("s.wav", &stereo, 2, 48_000),
            named("r.wav", &mono, 1, 48_000),
        )
        .unwrap_err();
        assert!(matches!(e, MeasureError::ChannelMismatch { .. }), "{e}");
        let pair = check_pair(
            named("s.wav", &mono, 1, 48_000),
            named("r.wav", &stereo, 2, 48_000),
        )
        .unwrap();
        assert_eq!(pair.response.len(), 2);
        assert_eq!(pair.warnings.len(), 1);
        assert_eq!(pair.stimulus_for(1).len(), 4096);
    }

    #[test]
    fn short_silent_and_clipped_signals_are_refused() {
        let s = tone(4096, 0.1);
        let short = tone(500, 0.1);
        let e = check_pair(
            named("s.wav", &short, 1, 48_000),
            named("r.wav", &s, 1, 48_000),
        )
        .unwrap_err();
        assert!(matches!(e, MeasureError::TooShort { .. }), "{e}");
        let e = check_pair(
            named("s.wav", &s, 1, 48_000),
            named("r.wav", &short, 1, 48_000),
        )
        .unwrap_err();
        assert!(
            matches!(e, MeasureError::TooShort { frames: 500, .. }),
            "{e}"
        );

        let silent = vec![0.0f32; 4096];
        let e = check_pair(
            named("s.wav", &s, 1, 48_000),
            named("r.wav", &silent, 1, 48_000),
        )
        .unwrap_err();
        assert!(matches!(e, MeasureError::Silent { .. }), "{e}");

        let mut clipped = tone(4096, 0.5);
        clipped[1234] = 1.0;
        clipped[2000] = -1.2;
        let e = check_pair(
            named("s.wav", &s, 1, 48_000),
            named("r.wav", &clipped, 1, 48_000),
        )
        .unwrap_err();
        match e {
            MeasureError::Clipped {
                samples,
                first_frame,
                ..
            } => assert_eq!((samples, first_frame), (2, 1234)),
            other => panic!("{other}"),
        }
    }

    #[test]
    fn a_hot_but_unclipped_response_is_a_warning() {
        let s = tone(4096, 0.1);
        let hot = tone(4096, 0.95);
        let pair = check_pair(
            named("s.wav", &s, 1, 48_000),
            named("r.wav", &hot, 1, 48_000),
        )
        .unwrap();
        assert!(pair.warnings[0].contains("close to full scale"));
    }
}
