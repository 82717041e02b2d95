use std::path::PathBuf;

use serde::Serialize;

use super::{InversePolicy, RuntimeSettings, TransferFunction};

/// How the user described a path's channel in the config (kept for reports).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ModelForm {
    DifferenceEquation,
    ZerosPoles,
    EchoPaths,
    Sections,
}

/// The filter structure the inverse is to run in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Structure {
    /// Direct form II transposed, one section of the full order.
    #[serde(rename = "direct_form_2t")]
    DirectForm2T,
    /// Cascade of second-order sections.
    Sections,
    /// Lattice–ladder (Gray–Markel).
    LatticeLadder,
    /// The difference equation with only its non-zero taps (echo inverses and other mostly-zero
    /// recursions). Chosen by the pipeline when it is cheaper and safe, not requested.
    SparseRecursion,
    /// A long FIR by partitioned FFT convolution behind a direct-form head (no added latency).
    /// Chosen by the pipeline for long FIR inverses, not requested.
    PartitionedConvolution,
}

impl Structure {
    pub fn name(self) -> &'static str {
        match self {
            Structure::DirectForm2T => "direct form II transposed",
            Structure::Sections => "second-order sections",
            Structure::LatticeLadder => "lattice-ladder",
            Structure::SparseRecursion => "sparse recursion",
            Structure::PartitionedConvolution => "partitioned convolution",
        }
    }
}

/// Precision the running filter's coefficients are rounded to. State is always f64.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum CoefficientPrecision {
    F32,
    F64,
}

/// One channel model, applying to one or more audio channels.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Path {
    /// The user's name for this path (or "path N" when none was given).
    pub label: String,
    /// Zero-based audio channel indices this model applies to.
    pub channels: Vec<usize>,
    /// How the channel was described.
    pub form: ModelForm,
    /// The channel itself, H(z) = B(z)/A(z).
    pub channel: TransferFunction,
    /// Structure requested for the inverse.
    pub structure: Structure,
    /// Precision the inverse's coefficients are rounded to before running.
    pub precision: CoefficientPrecision,
    /// A zero or pole with | |z| − 1 | below this radius tolerance counts as on the circle.
    pub circle_tolerance: f64,
    /// How the inverse is built and the limits it must respect.
    pub inverse: InversePolicy,
}

/// A whole link: sample rate, channel count and a model for every channel.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Link {
    /// File the link was read from, when it came from one.
    pub source: Option<PathBuf>,
    /// Sample rate in Hz.
    pub sample_rate: f64,
    /// Number of audio channels; every index in 0..channel_count has exactly one path.
    pub channel_count: usize,
    pub paths: Vec<Path>,
    /// Channels the engine's guards act on together beyond each path's own (`[link]
    /// linked_channels`); see [`Link::channel_groups`].
    pub linked_channels: Vec<Vec<usize>>,
    /// Devices and engine behaviour for the live service (defaults when the file says nothing).
    pub runtime: RuntimeSettings,
}

impl Link {
    /// The path that models audio channel `channel`.
    pub fn path_for_channel(&self, channel: usize) -> Option<&Path> {
        self.paths.iter().find(|p| p.channels.contains(&channel))
    }

    /// The linked group of every channel, numbered from 0 in order of each group's lowest
    /// channel. Channels of one path are linked (one model, one measurement: a stereo pair
    /// described once), and so are the channels of each `linked_channels` list; groups that
    /// share a channel are one group.
    pub fn channel_groups(&self) -> Vec<usize> {
        let n = self.channel_count;
        // Union–find over the channels, smallest channel as each root.
        let mut parent: Vec<usize> = (0..n).collect();
        fn root(parent: &mut [usize], mut c: usize) -> usize {
            while parent[c] != c {
                parent[c] = parent[parent[c]];
                c = parent[c];
            }
            c
        }
        let lists = self
            .paths
            .iter()
            .map(|p| p.channels.as_slice())
            .chain(self.linked_channels.iter().map(Vec::as_slice));
        for list in lists {
            let mut members = list.iter().copied().filter(|&c| c < n);
            let Some(first) = members.next() else {
                continue;
            };
            for c in members {
                let (a, b) = (root(&mut parent, first), root(&mut parent, c));
                parent[a.max(b)] = a.min(b);
            }
        }
        let mut number = vec![usize::MAX; n];
        let mut next = 0;
        (0..n)
            .map(|c| {
                let r = root(&mut parent, c);
                if number[r] == usize::MAX {
                    number[r] = next;
                    next += 1;
                }
                number[r]
            })
            .collect()
    }
}
