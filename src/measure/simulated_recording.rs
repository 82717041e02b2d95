//! A recording made without a sound card: the stimulus through a configured link, after a
//! latency, with white noise at a chosen SNR. For rehearsing the measurement, for the demo
//! workflow in the README, and for the tests.
//!
//! The SNR is set per channel against the clean response's power over the span where the
//! stimulus is playing (its silence after left out), the same span the identification measures
//! SNR over.

use std::path::Path;

use super::error::MeasureError;
use super::noise::GaussianNoise;
use crate::io::{read_wav, write_wav, SimulatedLink, WavFormat};
use crate::model::Link;

/// How the simulated recording is made.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RecordingSimulation {
    /// Silence before the response: playback and capture latency (frames).
    pub latency_frames: usize,
    /// Signal-to-noise ratio in dB; `None` for a noiseless recording.
    pub snr_db: Option<f64>,
    /// Seed of the noise.
    pub seed: u64,
}

/// Simulates recording `stimulus` (interleaved, `stimulus_channels` wide: 1, or the link's
/// channel count) played through `link`. Returns the link's channel count of interleaved frames.
pub fn simulate_recording(
    link: &Link,
    stimulus: &[f32],
    stimulus_channels: usize,
    simulation: &RecordingSimulation,
) -> Result<Vec<f32>, MeasureError> {
    let width = link.channel_count;
    if stimulus_channels == 0 || (stimulus_channels != 1 && stimulus_channels != width) {
        return Err(MeasureError::ChannelMismatch {
            stimulus: "the stimulus".into(),
            stimulus_channels,
            response: "the link".into(),
            response_channels: width,
        });
    }
    let frames = stimulus.len() / stimulus_channels;
    let latency = simulation.latency_frames;
    let mut played = vec![0.0f32; (latency + frames) * width];
    for n in 0..frames {
        for c in 0..width {
            let source = if stimulus_channels == 1 { 0 } else { c };
            played[(latency + n) * width + c] = stimulus[n * stimulus_channels + source];
        }
    }
    let clean = SimulatedLink::new(link)?.apply(&played);
    let Some(snr_db) = simulation.snr_db else {
        return Ok(clean);
    };
    let mut noise = GaussianNoise::new(simulation.seed);
    let mut out = clean.clone();
    for c in 0..width {
        let source = if stimulus_channels == 1 { 0 } else { c };
        let active = (0..frames)
            .rposition(|n| stimulus[n * stimulus_channels + source] != 0.0)
            .map_or(0, |p| p + 1);
        let span = latency..latency + active.max(1);
        let power = span
            .clone()
            .map(|n| f64::from(clean[n * width + c]).powi(2))
            .sum::<f64>()
            / span.len() as f64;
        let sigma = (power / 10f64.powf(snr_db / 10.0)).sqrt();
        for n in 0..latency + frames {
            out[n * width + c] += (sigma * noise.sample()) as f32;
        }
    }
    Ok(out)
}

/// [`simulate_recording`] from a stimulus WAV file to a 32-bit float WAV file.
pub fn simulate_recording_file(
    link: &Link,
    stimulus: &Path,
    output: &Path,
    simulation: &RecordingSimulation,
) -> Result<WavFormat, MeasureError> {
    let (samples, format) = read_wav(stimulus)?;
    if f64::from(format.sample_rate) != link.sample_rate {
        return Err(MeasureError::SampleRateMismatch {
            stimulus: stimulus.display().to_string(),
            stimulus_rate: format.sample_rate,
            response: "the link config".into(),
            response_rate: link.sample_rate as u32,
        });
    }
    let recorded = simulate_recording(link, &samples, format.channels, simulation)?;
    let out_format = WavFormat::float32(link.channel_count, format.sample_rate);
    write_wav(output, &recorded, out_format)?;
    Ok(out_format)
}
