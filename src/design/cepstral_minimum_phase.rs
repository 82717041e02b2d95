//! The minimum-phase substitute and its boost cap without roots: the homomorphic route.
//!
//! The magnitude to keep is |B(e^{jω})|, with a floor under it where the inverse would boost
//! more than the cap: |B_cap| = max(|B|, |A|·10^{−(cap − margin)/20}). Reflecting a zero to
//! 1/conj(z) keeps |B| (see `minimum_phase`), so the reflected channel is the minimum-phase
//! sequence of that magnitude, which [`minimum_phase`] builds from the cepstrum without a root.
//! The floor plays the part of pulling zeros in: a zero near the circle whose notch goes under
//! the floor is replaced by a shallower one, and nothing else moves. The result is truncated to
//! the channel's own length (the recursion keeps its order) and then checked:
//!
//! - all its zeros strictly inside the circle, by the argument principle; if the truncation left
//!   any on or outside, every zero is pulled in by a common factor ρ (bₖ·ρᵏ) until none is;
//! - its magnitude against the one it must keep, in dB, where the floor did not act
//!   ([`CepstralReport::deviation_db`]);
//! - the inverse's peak against the cap, computed on the final coefficients; what the
//!   truncation put over it is taken off the level (reported, as the root route does).

use serde::Serialize;

use super::boost_cap::CAP_MARGIN_DB;
use super::minimum_phase::all_pass_residual;
use super::{decay_60db_samples, BoostCapReport, DesignError, DesignMethod, InverseDesign};
use crate::analysis::ChannelAnalysis;
use crate::model::{InversePolicy, TransferFunction};
use crate::numeric::homomorphic::{magnitude_on_grid, minimum_phase, spectrum_on_grid};
use crate::numeric::response::peak_magnitude_near;
use crate::numeric::winding::{count_inside, largest_zero_radius};

/// The floor sits this far under the cap (dB), so the truncation's ripple rarely reaches it.
pub const FLOOR_MARGIN_DB: f64 = 0.5;
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
    /// Largest |20·log10(|B_min| / |B|)| where the floor did not act, on the check grid (dB).
    pub deviation_db: f64,
    /// Fraction of the check grid (0 … π) where the floor raised the magnitude.
    pub floored_fraction: f64,
    /// Radius factor every zero was pulled in by after truncation (1 when none was needed).
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
    let numerator = &channel.b[analysis.bulk_delay..];
    let a = &channel.a;
    let length = numerator.len().max(1);
    let floor = 10f64.powf(-(policy.boost_cap_db - FLOOR_MARGIN_DB) / 20.0);
    let target = |size: usize| -> Vec<f64> {
        let (mb, ma) = (
            magnitude_on_grid(numerator, size),
            magnitude_on_grid(a, size),
        );
        mb.iter().zip(&ma).map(|(b, a)| b.max(floor * a)).collect()
    };
    let first = FFT_POINTS_PER_COEFFICIENT * length.max(a.len());
    let fitted = minimum_phase(length, first, &target);
    let mut b_min = fitted.coefficients;
    if b_min.iter().any(|x| !x.is_finite()) || b_min[0] == 0.0 {
        return Err(DesignError::Numerical {
            what: "the cepstral minimum-phase sequence is not finite",
        });
    }
    let contraction = pull_inside(&mut b_min)?;

    // The magnitude it must keep, where the floor did not act, and the peak before the cap.
    let grid = (CHECK_POINTS_PER_COEFFICIENT * length.max(a.len()))
        .next_power_of_two()
        .max(8192);
    let sb = spectrum_on_grid(numerator, grid);
    let sa = spectrum_on_grid(a, grid);
    let sm = spectrum_on_grid(&b_min, grid);
    let half = grid / 2;
    let mut deviation_db = 0.0f64;
    let mut floored = 0usize;
    let mut peak_before = f64::NEG_INFINITY;
    for i in 0..=half {
        let (b, a, m) = (sb[i].norm(), sa[i].norm(), sm[i].norm());
        peak_before = peak_before.max(20.0 * (a / b).log10());
        if b >= floor * a {
            deviation_db = deviation_db.max((20.0 * (m / b).log10()).abs());
        } else {
            floored += 1;
        }
    }
    let peak_before = if peak_before.is_nan() {
        f64::INFINITY
    } else {
        peak_before
    };
    // The capped inverse's peak, on its own coefficients; over the cap → lower the level.
    let target_db = policy.boost_cap_db - CAP_MARGIN_DB;
    let mut peak = peak_magnitude_near(a, &b_min, &[]);
    let mut level_reduction_db = 0.0;
    if peak.level_db > target_db {
        level_reduction_db = peak.level_db - target_db;
        let scale = 10f64.powf(level_reduction_db / 20.0);
        b_min.iter_mut().for_each(|x| *x *= scale);
        peak = peak_magnitude_near(a, &b_min, &[]);
    }
    let reflected_count = analysis.zero_count.outside;
    let all_pass = (reflected_count > 0).then(|| {
        let unscaled: Vec<f64> = b_min
            .iter()
            .map(|x| x / 10f64.powf(level_reduction_db / 20.0))
            .collect();
        all_pass_residual(numerator, &unscaled, sample_rate)
    });
    let capped = floored > 0 || level_reduction_db > 0.0;
    let boost_cap = capped.then(|| BoostCapReport {
        cap_db: policy.boost_cap_db,
        radius_limit: None,
        moved_zeros: Vec::new(),
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
            floored_fraction: floored as f64 / (half + 1) as f64,
            contraction,
            reflected_count,
            on_circle_count: analysis.zero_count.on_circle,
        }),
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
