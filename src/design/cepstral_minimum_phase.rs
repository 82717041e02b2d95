//! The minimum-phase substitute and its boost cap without roots: the homomorphic route.
//!
//! Reflecting every zero outside the circle to 1/conj(z) keeps |B(e^{jω})| (see
//! `minimum_phase`), so the reflected numerator is the minimum-phase sequence with B's
//! magnitude, which [`minimum_phase`] builds from the cepstrum without computing a root. It has
//! B's length (the reflection keeps the degree), so the inverse keeps the channel's order. Then:
//!
//! - its magnitude is checked against |B| on a grid of 16 points per coefficient
//!   ([`CepstralReport::deviation_db`]), and all its zeros must be strictly inside the circle
//!   by the argument principle;
//! - zeros on the circle (counted by the analysis) have no finite cepstrum: B is first pulled
//!   in by ρ = 1 − [`ON_CIRCLE_PULL`] (bₖ·ρᵏ moves every zero to ρ·z), which the check shows;
//! - the boost cap moves only the zeros under peaks over the cap ([`cap_notches`]), and what it
//!   cannot reach is taken off the level, as on the root route.

use serde::Serialize;

use super::boost_cap::CAP_MARGIN_DB;
use super::minimum_phase::all_pass_residual;
use super::notch_cap::cap_notches;
use super::{decay_60db_samples, BoostCapReport, DesignError, DesignMethod, InverseDesign};
use crate::analysis::ChannelAnalysis;
use crate::model::{InversePolicy, TransferFunction};
use crate::numeric::homomorphic::{magnitude_on_grid, minimum_phase, spectrum_on_grid};
use crate::numeric::response::peak_magnitude_near;
use crate::numeric::winding::{count_inside, largest_zero_radius};

/// Zeros on the circle are pulled in by this much first (a factor 1 − 10⁻⁵ on every radius),
/// so the cepstrum is finite and converges within [`crate::numeric::homomorphic::MAX_FFT`].
pub const ON_CIRCLE_PULL: f64 = 1e-5;
/// The magnitude check ignores bins this far under the largest |B| (the bottom of a notch).
const NOTCH_FLOOR: f64 = 1e-6;
/// First FFT size, in points per coefficient (doubled until the cepstrum converges).
pub const FFT_POINTS_PER_COEFFICIENT: usize = 32;
/// Points per coefficient of the grid the result is checked on.
const CHECK_POINTS_PER_COEFFICIENT: usize = 16;
/// Most contraction steps (each doubles 1 − ρ from 1e-9).
const CONTRACTION_STEPS: u32 = 40;

/// How the homomorphic route went.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CepstralReport {
    /// FFT size (points over the whole circle) the cepstrum converged at.
    pub fft_size: usize,
    /// Largest change of a coefficient at the last doubling, relative to the largest.
    pub last_change: f64,
    /// Largest |20·log10(|B_min| / |B|)| on the check grid (dB), before the cap moved zeros,
    /// where |B| is above 10⁻⁶ of its largest (the depth of a notch is not a magnitude to keep).
    pub deviation_db: f64,
    /// Radius factor every zero was pulled in by, for zeros on the circle (1 when none).
    pub contraction: f64,
    /// Zeros of the channel outside the circle that were reflected (counted, not listed).
    pub reflected_count: usize,
    /// Zeros on the circle (counted), whose notches the floor filled to the cap.
    pub on_circle_count: usize,
}

/// The minimum-phase substitute for `channel` (stable, analysed) by the homomorphic route.
pub fn cepstral_inverse(
    channel: &TransferFunction,
    analysis: &ChannelAnalysis,
    policy: &InversePolicy,
    sample_rate: f64,
) -> Result<InverseDesign, DesignError> {
    let original = &channel.b[analysis.bulk_delay..];
    let a = &channel.a;
    let length = original.len().max(1);
    let mut contraction = 1.0;
    let mut numerator = original.to_vec();
    if analysis.zero_count.on_circle > 0 {
        contraction = 1.0 - ON_CIRCLE_PULL;
        for (k, x) in numerator.iter_mut().enumerate() {
            *x *= contraction.powi(k as i32);
        }
    }
    let first = FFT_POINTS_PER_COEFFICIENT * length;
    let fitted = minimum_phase(length, first, &|size| magnitude_on_grid(&numerator, size));
    let mut b_min = fitted.coefficients;
    if b_min.iter().any(|x| !x.is_finite()) || b_min[0] == 0.0 {
        return Err(DesignError::Numerical {
            what: "the cepstral minimum-phase sequence is not finite",
        });
    }
    let pulled = pull_inside(&mut b_min)?;
    contraction *= pulled;

    // The magnitude it must keep, and the peak the inverse would have without the cap.
    let grid = (CHECK_POINTS_PER_COEFFICIENT * length.max(a.len()))
        .next_power_of_two()
        .max(8192);
    let sb = spectrum_on_grid(original, grid);
    let sa = spectrum_on_grid(a, grid);
    let sm = spectrum_on_grid(&b_min, grid);
    let top = sb.iter().fold(0.0f64, |m, c| m.max(c.norm()));
    let mut deviation_db = 0.0f64;
    let mut peak_before = f64::NEG_INFINITY;
    for i in 0..=grid / 2 {
        let (b, a, m) = (sb[i].norm(), sa[i].norm(), sm[i].norm());
        peak_before = peak_before.max(20.0 * (a / b).log10());
        if b >= NOTCH_FLOOR * top {
            deviation_db = deviation_db.max((20.0 * (m / b).log10()).abs());
        }
    }
    if peak_before.is_nan() {
        peak_before = f64::INFINITY;
    }
    // The cap: the zeros under the peaks move; what is left comes off the level.
    let target_db = policy.boost_cap_db - CAP_MARGIN_DB;
    let reflected_only = b_min.clone();
    let capped = cap_notches(a, &mut b_min, target_db);
    let mut peak = peak_magnitude_near(a, &b_min, &[]);
    let mut level_reduction_db = 0.0;
    if peak.level_db > target_db {
        level_reduction_db = peak.level_db - target_db;
        let scale = 10f64.powf(level_reduction_db / 20.0);
        b_min.iter_mut().for_each(|x| *x *= scale);
        peak = peak_magnitude_near(a, &b_min, &[]);
    }
    let reflected_count = analysis.zero_count.outside;
    // The all-pass is B over its reflection alone (before the cap moved anything).
    let all_pass =
        (reflected_count > 0).then(|| all_pass_residual(original, &reflected_only, sample_rate));
    let acted = !capped.moved.is_empty() || level_reduction_db > 0.0;
    let boost_cap = acted.then(|| BoostCapReport {
        cap_db: policy.boost_cap_db,
        radius_limit: capped
            .moved
            .iter()
            .map(|m| m.to.norm())
            .fold(None, |m: Option<f64>, r| Some(m.map_or(r, |m| m.max(r)))),
        moved_zeros: capped.moved.clone(),
        level_reduction_db,
        peak_before_db: peak_before,
        decay_60db_before_seconds: f64::NAN,
    });
    let largest = largest_zero_radius(&b_min, 1e-9).unwrap_or(1.0);
    let order = a.len().max(b_min.len());
    let lead = b_min[0];
    let inverse = TransferFunction::new(
        a.iter().map(|x| x / lead).collect(),
        b_min.iter().map(|x| x / lead).collect(),
    );
    Ok(InverseDesign {
        method: DesignMethod::MinimumPhase,
        sample_rate,
        gain: inverse.b[0],
        inverse,
        residual_delay_samples: analysis.bulk_delay,
        added_latency_samples: 0,
        peak_boost_db: peak.level_db,
        peak_boost_hz: peak.omega * sample_rate / std::f64::consts::TAU,
        decay_60db_seconds: decay_60db_samples(largest, order) / sample_rate,
        reflected_zeros: Vec::new(),
        all_pass,
        boost_cap,
        fir: None,
        unity_scale_db: 0.0,
        cepstral: Some(CepstralReport {
            fft_size: fitted.fft_size,
            last_change: fitted.last_change,
            deviation_db,
            contraction,
            reflected_count,
            on_circle_count: analysis.zero_count.on_circle,
        }),
        band: None,
        knee: None,
    })
}

/// Pulls every zero of `b` in by a common factor until all are strictly inside the circle (the
/// argument principle decides); returns the factor (1 when nothing had to move).
fn pull_inside(b: &mut [f64]) -> Result<f64, DesignError> {
    let n = b.len() - 1;
    let all_inside = |c: &[f64]| count_inside(c, 1.0).is_ok_and(|w| w.inside == n);
    if all_inside(b) {
        return Ok(1.0);
    }
    let original = b.to_vec();
    let mut step = 1e-9f64;
    for _ in 0..CONTRACTION_STEPS {
        if step >= 0.5 {
            break;
        }
        let rho = 1.0 - step;
        for (k, (x, o)) in b.iter_mut().zip(&original).enumerate() {
            *x = o * rho.powi(k as i32);
        }
        if all_inside(b) {
            return Ok(rho);
        }
        step *= 2.0;
    }
    Err(DesignError::Numerical {
        what: "the truncated minimum-phase sequence keeps a zero outside the circle",
    })
}
