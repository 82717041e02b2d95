//! The configured channel itself, run over audio: what the link would do to a signal.
//!
//! Used to make distorted material for the demo and the tests: programme → simulated link →
//! equalizer should give the programme back, delayed by the link's bulk delay.

use std::fmt;

use crate::model::{CoefficientPrecision, Link, Structure};
use crate::realize::{realize, Filter, RealizeError};

/// Why a link cannot be simulated.
#[derive(Debug, Clone, PartialEq)]
pub enum SimulationError {
    /// No path models this audio channel (the config stage should have refused this).
    NoPathForChannel { channel: usize },
    /// The channel cannot be run as a filter (unstable, or not a valid transfer function).
    NotRunnable { label: String, source: RealizeError },
}

impl fmt::Display for SimulationError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SimulationError::NoPathForChannel { channel } => write!(
                f,
                "no path models audio channel {channel}\n  help: give every channel from 0 to \
                 channel_count - 1 to exactly one [[path]]"
            ),
            // The realization's own words are about an inverse (and suggest a substitute
            // inverse); here the filter is the channel itself, which no substitute replaces.
            SimulationError::NotRunnable {
                label,
                source:
                    RealizeError::UnstableDesign {
                        max_pole_radius, ..
                    }
                    | RealizeError::UnstableAfterRounding {
                        max_pole_radius, ..
                    },
            } => write!(
                f,
                "path `{label}`: the channel itself is unstable (a pole at radius {}, on or \
                 outside the unit circle), so no signal can be run through it\n  help: a \
                 physical link is stable; re-check the channel's poles (its denominator a) in \
                 the config",
                max_pole_radius
            ),
            SimulationError::NotRunnable {
                label,
                source: RealizeError::LatticeStageUnstable { .. },
            } => write!(
                f,
                "path `{label}`: the channel itself is unstable (a pole on or outside the unit \
                 circle), so no signal can be run through it\n  help: a physical link is \
                 stable; re-check the channel's poles (its denominator a) in the config"
            ),
            SimulationError::NotRunnable { label, source } => write!(
                f,
                "path `{label}`: the channel cannot be run as a filter: {}\n  help: check the \
                 channel's coefficients in the config",
                source.to_string().lines().next().unwrap_or_default()
            ),
        }
    }
}

impl std::error::Error for SimulationError {}

/// One running copy of the channel H(z) per audio channel: direct form II transposed with f64
/// coefficients and state, the most literal reading of the channel's difference equation.
#[derive(Debug, Clone)]
pub struct SimulatedLink {
    channels: Vec<Filter>,
}

impl SimulatedLink {
    pub fn new(link: &Link) -> Result<Self, SimulationError> {
        let mut channels = Vec::with_capacity(link.channel_count);
        for channel in 0..link.channel_count {
            let path = link
                .path_for_channel(channel)
                .ok_or(SimulationError::NoPathForChannel { channel })?;
            let realized = realize(
                &path.channel,
                Structure::DirectForm2T,
                CoefficientPrecision::F64,
            )
            .map_err(|source| SimulationError::NotRunnable {
                label: path.label.clone(),
                source,
            })?;
            channels.push(realized.filter);
        }
        Ok(Self { channels })
    }

    pub fn channel_count(&self) -> usize {
        self.channels.len()
    }

    /// Runs interleaved `input` through the link into `output` (same length, whole frames);
    /// state carries over from one call to the next.
    pub fn process_interleaved(&mut self, input: &[f32], output: &mut [f32]) {
        let width = self.channels.len();
        for (frame_in, frame_out) in input
            .chunks_exact(width)
            .zip(output.chunks_exact_mut(width))
        {
            for ((x, y), channel) in frame_in.iter().zip(frame_out).zip(&mut self.channels) {
                *y = channel.process_sample(f64::from(*x)) as f32;
            }
        }
    }

    /// Runs a whole interleaved signal through a fresh copy of the link.
    pub fn apply(&self, input: &[f32]) -> Vec<f32> {
        let mut fresh = self.clone();
        fresh.channels.iter_mut().for_each(Filter::reset);
        let mut output = vec![0.0; input.len()];
        fresh.process_interleaved(input, &mut output);
        output
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{
        CoefficientPrecision, InversePolicy, ModelForm, Path, Structure, TransferFunction,
    };

    fn link(paths: Vec<(Vec<usize>, TransferFunction)>, channel_count: usize) -> Link {
        Link {
            source: None,
            sample_rate: 48_000.0,
            channel_count,
            linked_channels: Vec::new(),
            runtime: Default::default(),
            paths: paths
                .into_iter()
                .enumerate()
                .map(|(i, (channels, channel))| Path {
                    label: format!("path {i}"),
                    channels,
                    form: ModelForm::DifferenceEquation,
                    channel,
                    structure: Structure::DirectForm2T,
                    precision: CoefficientPrecision::F64,
                    circle_tolerance: 1e-9,
                    inverse: InversePolicy::default(),
                })
                .collect(),
        }
    }

    #[test]
    fn impulse_response_of_a_one_pole_echo_channel() {
        // H(z) = (1 + 0.5 z⁻¹)/(1 − 0.5 z⁻¹): h = 1, 1, 0.5, 0.25, … (long division; common
        // practice).
        let tf = TransferFunction::new(vec![1.0, 0.5], vec![1.0, -0.5]);
        let sim = SimulatedLink::new(&link(vec![(vec![0], tf)], 1)).unwrap();
        let mut impulse = vec![0.0f32; 6];
        impulse[0] = 1.0;
        let out = sim.apply(&impulse);
        assert_eq!(out, vec![1.0, 1.0, 0.5, 0.25, 0.125, 0.0625]);
    }

    #[test]
    fn each_channel_gets_its_own_path_and_state_carries_between_blocks() {
        // Channel 0: pure two-sample delay. Channel 1: gain 2 with an echo of 0.5 one sample later.
        let delay = TransferFunction::new(vec![0.0, 0.0, 1.0], vec![1.0]);
        let echo = TransferFunction::new(vec![2.0, 0.5], vec![1.0]);
        let mut sim =
            SimulatedLink::new(&link(vec![(vec![0], delay), (vec![1], echo)], 2)).unwrap();
        let input = [1.0f32, 1.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0];
        let mut first = [0.0f32; 4];
        let mut second = [0.0f32; 4];
        sim.process_interleaved(&input[..4], &mut first);
        sim.process_interleaved(&input[4..], &mut second);
        assert_eq!(first, [0.0, 2.0, 0.0, 0.5]);
        assert_eq!(second, [1.0, 0.0, 0.0, 0.0]);
    }

    #[test]
    fn an_unstable_channel_is_refused() {
        let tf = TransferFunction::new(vec![1.0], vec![1.0, -1.2]);
        let error = SimulatedLink::new(&link(vec![(vec![0], tf)], 1)).unwrap_err();
        assert!(
            matches!(error, SimulationError::NotRunnable { .. }),
            "{error}"
        );
    }

    #[test]
    fn a_channel_without_a_path_is_refused() {
        let tf = TransferFunction::new(vec![1.0], vec![1.0]);
        let error = SimulatedLink::new(&link(vec![(vec![0], tf)], 2)).unwrap_err();
        assert_eq!(error, SimulationError::NoPathForChannel { channel: 1 });
    }
}
