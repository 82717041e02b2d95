//! Design: the inverse filter for a channel, with a report of what it does.
//!
//! The exact inverse is G(z) = A(z)/B′(z), where B′ is B with its bulk delay (leading zero taps)
//! stripped. The cascade H·G is then a pure delay of that many samples: a causal filter cannot
//! advance time, so the delay is reported, not undone. When no exact inverse exists, or it would
//! boost more than the cap, the policy picks a substitute and the design says what it costs.

mod band_figures;
mod band_limit;
mod band_weighted_fir;
mod boost_cap;
mod cascade_figures;
mod cepstral_minimum_phase;
mod correction_band;
mod decay;
mod exact;
mod fir_under_cap;
mod judged_band;
mod knee;
mod least_squares_fir;
mod minimum_phase;
mod noise_weight;
mod notch_cap;
mod substitute;
mod trade_off;

use serde::Serialize;

use crate::analysis::PlacedRoot;
use crate::model::TransferFunction;

pub use band_figures::{band_figures, BandFigures, LevelAt};
pub use band_limit::{BandOutcome, FIT_TOLERANCE_DB, MAX_BAND_LIMITED_TAPS, OUTSIDE_TOLERANCE_DB};
pub use band_weighted_fir::{solve_weighted, SpectralWeights};
pub use boost_cap::{cap_boost, Capped, MovedZero, RADIUS_FLOOR};
pub use cascade_figures::{CascadeFigures, CascadeJudge, JUDGED_FRACTION};
pub use cepstral_minimum_phase::{cepstral_inverse, CepstralReport, ON_CIRCLE_PULL};
pub use correction_band::{
    correction_band, default_band, BandSource, CorrectionBand, DEFAULT_NYQUIST_SHARE,
    ROLL_OFF_OCTAVES,
};
pub use decay::decay_60db_samples;
pub use exact::design_exact;
pub use judged_band::judged_band;
pub use knee::{
    admissible, choose_knee, judged_residual, KneeChoice, KneeIndices, KNEE_MARGIN_DB,
    PRE_RINGING_LIMIT_DB, RESIDUAL_FLOOR_DB,
};
pub use least_squares_fir::{search_delay, solve_at_delay, FirSolution, FirSystem};
pub use minimum_phase::{all_pass_residual, reflect_outside_zeros, AllPassResidual};
pub use noise_weight::{snr_at, wiener_factor, NOISE_AWARE_BELOW_DB};
pub use notch_cap::{cap_notches, NotchCap};
pub use substitute::design_inverse;
pub use trade_off::{
    taps_for, trade_off, TradeOff, TradeOffRow, LARGEST_LATENCY_MS, LATENCY_LADDER_MS, TAPS_RULE,
};

/// How an inverse was obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum DesignMethod {
    /// 1/H after stripping the bulk delay: magnitude and phase fully corrected.
    Exact,
    /// Zeros outside the circle reflected and/or zeros near it pulled in: magnitude corrected
    /// (up to the cap), phase of the reflected zeros left as an all-pass.
    MinimumPhase,
    /// Delayed least-squares FIR: magnitude and phase corrected approximately, at a latency.
    LeastSquaresFir,
}

impl DesignMethod {
    pub fn name(self) -> &'static str {
        match self {
            DesignMethod::Exact => "exact inverse",
            DesignMethod::MinimumPhase => "minimum-phase substitute",
            DesignMethod::LeastSquaresFir => "delayed least-squares FIR inverse",
        }
    }
}

/// What the boost cap changed.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BoostCapReport {
    pub cap_db: f64,
    /// Radius the outermost zeros were pulled in to, when any moved.
    pub radius_limit: Option<f64>,
    pub moved_zeros: Vec<MovedZero>,
    /// Broadband level reduction (dB) when moving zeros was not enough.
    pub level_reduction_db: f64,
    /// Peak the inverse would have had without the cap (dB; +∞ for a zero on the circle).
    pub peak_before_db: f64,
    /// 60 dB decay time the inverse would have had without the cap (s; +∞ on the circle).
    pub decay_60db_before_seconds: f64,
}

/// How the least-squares FIR inverse came out.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FirReport {
    pub taps: usize,
    pub delay_samples: usize,
    pub delay_ms: f64,
    /// True when the delay was searched within the latency budget rather than given.
    pub delay_searched: bool,
    pub regularization: f64,
    /// True when the regularisation was raised above the configured one to respect the cap.
    pub regularization_raised_for_cap: bool,
    pub level_reduction_db: f64,
    /// ‖h∗g − δ(n−D)‖² in dB.
    pub residual_error_db: f64,
}

/// An inverse filter and the figures a user needs to trust it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InverseDesign {
    pub method: DesignMethod,
    /// Sample rate the design's times and frequencies refer to (Hz).
    pub sample_rate: f64,
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
    /// Channel zeros outside the circle that were reflected to 1/conj(z) (as they were).
    pub reflected_zeros: Vec<crate::analysis::PlacedRoot>,
    /// The uncorrected all-pass left by reflection, when zeros were reflected.
    pub all_pass: Option<AllPassResidual>,
    /// What the boost cap changed, when it acted.
    pub boost_cap: Option<BoostCapReport>,
    /// Details of a least-squares FIR inverse.
    pub fir: Option<FirReport>,
    /// Gain applied to hold the cascade at 0 dB at the configured frequency (dB; 0 when none).
    pub unity_scale_db: f64,
    /// How the homomorphic route went, when the minimum-phase substitute was built without
    /// roots (long channels).
    pub cepstral: Option<CepstralReport>,
    /// The correction band, what it (and the measured noise) changed, and the inverse's gain
    /// inside and outside it and noise gain (set by `design_inverse`).
    pub band: Option<BandOutcome>,
    /// What the latency-knee method chose and why, when it was the method.
    pub knee: Option<KneeChoice>,
}

impl InverseDesign {
    /// One line: what the user gives up with this design.
    pub fn gives_up(&self) -> String {
        let mut parts = Vec::new();
        if self.residual_delay_samples > 0 {
            parts.push(format!(
                "the link's own delay of {} sample(s) remains (no causal filter can advance time)",
                self.residual_delay_samples
            ));
        }
        if let Some(ap) = &self.all_pass {
            let reflected = self
                .cepstral
                .as_ref()
                .map_or(self.reflected_zeros.len(), |c| c.reflected_count);
            parts.push(format!(
                "phase of {} zero(s) outside the circle: an all-pass with {:.3}–{:.3} ms group delay stays uncorrected",
                reflected,
                ap.group_delay_min_ms,
                ap.group_delay_max_ms
            ));
        }
        if let Some(cap) = &self.boost_cap {
            if !cap.moved_zeros.is_empty() {
                parts.push(format!(
                    "depth of {} zero(s) on or near the circle: boost capped at {:.1} dB (uncapped {})",
                    cap.moved_zeros.len(),
                    cap.cap_db,
                    db_text(cap.peak_before_db)
                ));
            }
            if cap.level_reduction_db > 0.0 {
                parts.push(format!(
                    "overall level: {:.1} dB below unity to respect the {:.1} dB cap",
                    cap.level_reduction_db, cap.cap_db
                ));
            }
        }
        if let Some(fir) = &self.fir {
            parts.push(format!(
                "latency: {} sample(s) ({:.3} ms) added; residual error {:.1} dB",
                self.added_latency_samples,
                1000.0 * self.added_latency_samples as f64 / self.sample_rate,
                fir.residual_error_db
            ));
            if fir.level_reduction_db > 0.0 {
                parts.push(format!(
                    "overall level: {:.1} dB below unity to respect the boost cap",
                    fir.level_reduction_db
                ));
            }
        }
        if let Some(band) = self.band.as_ref().filter(|b| b.limited) {
            let recursive = self.fir.is_none();
            parts.push(format!(
                "the link outside {:.1}-{:.1} Hz: the inverse rolls to unity gain at the band's \
                 edges{}{}",
                band.band.low_hz,
                band.band.high_hz,
                if recursive {
                    " (run as a minimum-phase FIR, whose phase in the band follows the \
                     band-limited magnitude)"
                } else {
                    ""
                },
                if band.noise_aware {
                    "; gain held back where the measured SNR is low"
                } else {
                    ""
                }
            ));
        }
        if parts.is_empty() {
            "nothing: magnitude and phase fully corrected".to_string()
        } else {
            parts.join("; ")
        }
    }
}

fn db_text(db: f64) -> String {
    if db.is_finite() {
        format!("{db:.1} dB")
    } else {
        "unbounded".to_string()
    }
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
    /// The exact inverse exceeds the boost cap and the policy forbids substitutes.
    OverBoostCap { peak_db: f64, cap_db: f64 },
    /// A numerical step failed (should not happen for valid input; reported, never a panic).
    Numerical { what: &'static str },
    /// The cascade is zero at the frequency where unity was asked for.
    NoUnityAt { hz: f64 },
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
                "no stable, causal inverse exists: {} zero(s) on the unit circle and {} outside it; \
                 choose method = \"minimum_phase\" or \"least_squares_fir\" under [path.inverse]",
                on_circle.len(),
                outside.len()
            ),
            DesignError::OverBoostCap { peak_db, cap_db } => write!(
                f,
                "the exact inverse would boost {peak_db:.1} dB, over the {cap_db:.1} dB cap; \
                 choose method = \"minimum_phase\" to cap it, or raise boost_cap_db knowingly"
            ),
            DesignError::Numerical { what } => write!(f, "numerical failure: {what}"),
            DesignError::NoUnityAt { hz } => write!(
                f,
                "the cascade has no gain at {hz} Hz (a zero on the circle), so it cannot be held \
                 at 0 dB there; choose another unity_at_hz"
            ),
        }
    }
}

impl std::error::Error for DesignError {}
