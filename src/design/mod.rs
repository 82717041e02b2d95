//! Design: the inverse filter for a channel, with a report of what it does.
//!
//! Only the exact inverse lives here so far: G(z) = A(z)/B′(z), where B′ is B with its bulk
//! delay (leading zero taps) stripped. The cascade H·G is then a pure delay of that many samples:
//! a causal filter cannot advance time, so the delay is reported, not undone.

mod decay;
mod exact;

use serde::Serialize;

use crate::analysis::PlacedRoot;
use crate::model::TransferFunction;

pub use decay::decay_60db_samples;
pub use exact::design_exact;

/// How an inverse was obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum DesignMethod {
    /// 1/H after stripping the bulk delay: magnitude and phase fully corrected.
    Exact,
}

/// An inverse filter and the figures a user needs to trust it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InverseDesign {
    pub method: DesignMethod,
    /// G(z), scaled so that `inverse.a[0] == 1`.
    pub inverse: TransferFunction,
    /// Leading coefficient of G's numerator: a₀/b′₀.
    pub gain: f64,
    /// Delay left in the cascade channel∘inverse (the channel's bulk delay), in samples.
    pub residual_delay_samples: usize,
    /// Delay the inverse itself adds on purpose (0 for an exact IIR inverse), in samples.
    pub added_latency_samples: usize,
    /// Largest gain of the inverse over frequency, in dB.
    pub peak_boost_db: f64,
    /// Frequency of that largest gain, in Hz.
    pub peak_boost_hz: f64,
    /// Time for the inverse's impulse response envelope to fall by 60 dB, in seconds.
    pub decay_60db_seconds: f64,
}

/// Why no inverse was designed.
#[derive(Debug, Clone, PartialEq)]
pub enum DesignError {
    /// The channel's own poles are not all strictly inside the unit circle. A physical link is
    /// stable, so the model is wrong; no inverse is designed for it.
    UnstableChannel { poles: Vec<PlacedRoot> },
    /// Zeros on or outside the unit circle: 1/H would be unstable or non-causal.
    NoStableInverse {
        on_circle: Vec<PlacedRoot>,
        outside: Vec<PlacedRoot>,
    },
}

impl std::fmt::Display for DesignError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            DesignError::UnstableChannel { poles } => {
                let worst = poles.iter().map(|p| p.root.radius()).fold(0.0, f64::max);
                write!(
                    f,
                    "the channel itself is unstable: {} pole(s) on or outside the unit circle \
                     (largest radius {worst:.6}); a physical link is stable, so re-check the \
                     denominator coefficients a",
                    poles.len()
                )
            }
            DesignError::NoStableInverse { on_circle, outside } => write!(
                f,
                "no stable, causal inverse exists: {} zero(s) on the unit circle and {} outside it",
                on_circle.len(),
                outside.len()
            ),
        }
    }
}

impl std::error::Error for DesignError {}
