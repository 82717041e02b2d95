//! Choosing and building the inverse a policy asks for.

use num_complex::Complex64;

use super::band_figures::band_figures;
use super::band_limit::{limit_recursive_design, lowest_snr_in, needs_limiting, BandOutcome};
use super::band_weighted_fir::{solve_weighted, SpectralWeights};
use super::boost_cap::cap_boost;
use super::cepstral_minimum_phase::cepstral_inverse;
use super::correction_band::correction_band;
use super::fir_under_cap::{fir_under_cap, CappedFir};
use super::knee::knee_inverse;
use super::least_squares_fir::{search_delay, solve_at_delay};
use super::minimum_phase::{all_pass_residual, reflect_outside_zeros};
use super::noise_weight::snr_at;
use super::{
    decay_60db_samples, design_exact, BoostCapReport, DesignError, DesignMethod, FirReport,
    InverseDesign,
};
use crate::analysis::{ChannelAnalysis, Placement};
use crate::model::{FirDelay, FirSettings, InverseMethod, InversePolicy, TransferFunction};
use crate::numeric::homomorphic::magnitude_on_grid;
use crate::numeric::impulse::decayed_impulse_response;
use crate::numeric::poly::eval_z_inverse;
use crate::numeric::response::{peak_magnitude, Peak};
use crate::numeric::roots::expand;

/// Longest channel impulse response the FIR design will use (samples).
const MAX_CHANNEL_RESPONSE: usize = 1 << 16;

/// Designs the inverse that `policy` asks for.
pub fn design_inverse(
    channel: &TransferFunction,
    analysis: &ChannelAnalysis,
    policy: &InversePolicy,
    sample_rate: f64,
) -> Result<InverseDesign, DesignError> {
    match policy.method {
        InverseMethod::Exact => {
            let design = design_exact(channel, analysis, sample_rate)?;
            if design.peak_boost_db > policy.boost_cap_db {
                return Err(DesignError::OverBoostCap {
                    peak_db: design.peak_boost_db,
                    cap_db: policy.boost_cap_db,
                });
            }
            normalise(channel, design, policy, sample_rate)
                .map(|d| limit_recursive_design(channel, d, policy, sample_rate))
        }
        InverseMethod::MinimumPhase => {
            minimum_phase_inverse(channel, analysis, policy, sample_rate)
                .and_then(|d| normalise(channel, d, policy, sample_rate))
                .map(|d| limit_recursive_design(channel, d, policy, sample_rate))
        }
        InverseMethod::LeastSquaresFir => {
            fir_inverse_with(channel, analysis, policy, &policy.fir, sample_rate)
        }
        InverseMethod::LatencyKnee => knee_inverse(channel, analysis, policy, sample_rate),
    }
}

fn minimum_phase_inverse(
    channel: &TransferFunction,
    analysis: &ChannelAnalysis,
    policy: &InversePolicy,
    sample_rate: f64,
) -> Result<InverseDesign, DesignError> {
    if !analysis.channel_stable {
        // design_exact reports the unstable poles.
        return design_exact(channel, analysis, sample_rate);
    }
    if let Ok(exact) = design_exact(channel, analysis, sample_rate) {
        if exact.peak_boost_db <= policy.boost_cap_db {
            return Ok(exact);
        }
    }
    let order = channel.b.len() - analysis.bulk_delay - 1;
    if analysis.zero_count.listed && order <= ROOT_ROUTE_MAX_ORDER {
        // A root route that fails its own checks hands over to the homomorphic one.
        if let Ok(design) = root_route(channel, analysis, policy, sample_rate) {
            return Ok(design);
        }
    }
    cepstral_inverse(channel, analysis, policy, sample_rate)
}

/// Up to this numerator order the minimum-phase substitute reflects and caps the listed roots
/// themselves (exact moves, each reported); above it, or when that fails its checks, it takes
/// the homomorphic route, which multiplies no roots back together.
pub const ROOT_ROUTE_MAX_ORDER: usize = 64;

/// Largest | |B_min| − |B| | over the grid, relative to max |B|, that the root route's
/// reflection may leave (it must keep the magnitude). Clustered roots near the circle multiply
/// back with errors near 1e-8; an expansion that has lost the polynomial is off by far more.
const REFLECTION_TOLERANCE: f64 = 1e-6;

fn root_route(
    channel: &TransferFunction,
    analysis: &ChannelAnalysis,
    policy: &InversePolicy,
    sample_rate: f64,
) -> Result<InverseDesign, DesignError> {
    let numerator = &channel.b[analysis.bulk_delay..];
    let (reflected_b, reflected) =
        reflect_outside_zeros(numerator, &analysis.zeros).ok_or(DesignError::Numerical {
            what: "the reflected zeros do not form real coefficients",
        })?;
    if !keeps_magnitude(numerator, &reflected_b) {
        return Err(DesignError::Numerical {
            what: "the reflected zeros do not keep the channel's magnitude",
        });
    }
    let all_pass =
        (!reflected.is_empty()).then(|| all_pass_residual(numerator, &reflected_b, sample_rate));

    // The reflected zeros, all on or inside the circle now.
    let zeros: Vec<Complex64> = analysis
        .zeros
        .iter()
        .flat_map(|z| {
            let v = expand(std::slice::from_ref(&z.root));
            if z.placement == Placement::Outside {
                v.into_iter()
                    .map(|x| Complex64::new(1.0, 0.0) / x.conj())
                    .collect()
            } else {
                v
            }
        })
        .collect();
    let gain = reflected_b[0];
    let uncapped_peak = peak_magnitude(&channel.a, &reflected_b);
    let largest_before = zeros.iter().map(|z| z.norm()).fold(0.0, f64::max);
    let capped =
        cap_boost(&channel.a, gain, &zeros, policy.boost_cap_db).ok_or(DesignError::Numerical {
            what: "the capped zeros do not form real coefficients",
        })?;
    let largest_after = capped
        .radius_limit
        .map_or(largest_before, |r| r.min(largest_before));
    let length = channel.a.len().max(capped.numerator.len());
    let boost_cap = capped.radius_limit.is_some() || capped.level_reduction_db > 0.0;
    let cap_report = boost_cap.then(|| BoostCapReport {
        cap_db: policy.boost_cap_db,
        radius_limit: capped.radius_limit,
        moved_zeros: capped.moved.clone(),
        level_reduction_db: capped.level_reduction_db,
        peak_before_db: uncapped_peak.level_db,
        decay_60db_before_seconds: decay_60db_samples(largest_before, length) / sample_rate,
    });
    let inverse = monic_inverse(&channel.a, &capped.numerator);
    Ok(InverseDesign {
        method: DesignMethod::MinimumPhase,
        sample_rate,
        gain: inverse.b[0],
        inverse,
        residual_delay_samples: analysis.bulk_delay,
        added_latency_samples: 0,
        peak_boost_db: capped.peak.level_db,
        peak_boost_hz: hz(capped.peak, sample_rate),
        decay_60db_seconds: decay_60db_samples(largest_after, length) / sample_rate,
        reflected_zeros: reflected,
        all_pass,
        boost_cap: cap_report,
        fir: None,
        unity_scale_db: 0.0,
        cepstral: None,
        band: None,
        knee: None,
    })
}

/// The least-squares FIR inverse with `settings` (the policy's own, or the latency-knee
/// method's), under the policy's boost cap.
pub(super) fn fir_inverse_with(
    channel: &TransferFunction,
    analysis: &ChannelAnalysis,
    policy: &InversePolicy,
    settings: &FirSettings,
    sample_rate: f64,
) -> Result<InverseDesign, DesignError> {
    if !analysis.channel_stable {
        return design_exact(channel, analysis, sample_rate);
    }
    let h = decayed_impulse_response(&channel.b, &channel.a, MAX_CHANNEL_RESPONSE);
    let taps = settings.taps;
    let band = correction_band(policy, sample_rate);
    let unweighted = |regularization: f64| match settings.delay {
        FirDelay::Fixed { samples } => solve_at_delay(&h, taps, samples, regularization),
        FirDelay::Search { budget_seconds } => {
            let budget = (budget_seconds * sample_rate).floor() as usize;
            let max_delay = budget.min(taps + h.len() - 2);
            search_delay(&h, taps, max_delay, regularization)
        }
    };
    // The plain design first: when it keeps to its band (and the noise asks nothing), it stands.
    let first = unweighted(settings.regularization).ok_or(DesignError::Numerical {
        what: "the least-squares system is singular; set a small regularization (e.g. 1e-6)",
    })?;
    let first_figures = band_figures(&first.taps, &[1.0], &band);
    let weighted = needs_limiting(&first_figures, &band, &policy.band_snr).then(|| {
        let size = super::band_figures::grid_size(taps + h.len(), &band);
        SpectralWeights::new(size, &band, |hz| snr_at(&policy.band_snr, hz))
    });
    // The weighted design keeps the plain design's delay (searched without weights).
    let solve = |regularization: f64| match &weighted {
        Some(weights) => solve_weighted(&h, taps, first.delay, regularization, weights),
        None => unweighted(regularization),
    };
    let capped = fir_under_cap(
        solve,
        |taps| peak_magnitude(taps, &[1.0]),
        settings.regularization,
        policy.boost_cap_db,
    )
    .ok_or(DesignError::Numerical {
        what: "the least-squares system is singular; set a small regularization (e.g. 1e-6)",
    })?;
    let CappedFir {
        solution,
        peak,
        raised,
        level_reduction_db,
    } = capped;
    let report = FirReport {
        taps,
        delay_samples: solution.delay,
        delay_ms: 1000.0 * solution.delay as f64 / sample_rate,
        delay_searched: matches!(settings.delay, FirDelay::Search { .. }),
        regularization: solution.regularization,
        regularization_raised_for_cap: raised,
        level_reduction_db,
        residual_error_db: solution.residual_error_db,
    };
    let figures = band_figures(&solution.taps, &[1.0], &band);
    let band_outcome = BandOutcome {
        band,
        limited: weighted.is_some(),
        noise_aware: weighted.is_some() && !policy.band_snr.is_empty(),
        lowest_snr_db: lowest_snr_in(&band, &policy.band_snr),
        outside_before: first_figures.outside,
        fit_error_db: 0.0,
        figures,
    };
    let inverse = TransferFunction::new(solution.taps, vec![1.0]);
    // The cascade is ≈ δ(n − D): the channel's own bulk delay is part of D, the rest is added.
    let channel_delay = analysis.bulk_delay.min(solution.delay);
    Ok(InverseDesign {
        method: DesignMethod::LeastSquaresFir,
        sample_rate,
        gain: inverse.b[0],
        residual_delay_samples: channel_delay,
        added_latency_samples: solution.delay - channel_delay,
        peak_boost_db: peak.level_db,
        peak_boost_hz: hz(peak, sample_rate),
        decay_60db_seconds: decay_60db_samples(0.0, inverse.b.len()) / sample_rate,
        inverse,
        reflected_zeros: Vec::new(),
        all_pass: None,
        boost_cap: None,
        fir: Some(report),
        unity_scale_db: 0.0,
        cepstral: None,
        band: Some(band_outcome),
        knee: None,
    })
}

/// Scales the inverse so the cascade is 0 dB at `policy.unity_at_hz`, when asked, without ever
/// passing the boost cap.
fn normalise(
    channel: &TransferFunction,
    mut design: InverseDesign,
    policy: &InversePolicy,
    sample_rate: f64,
) -> Result<InverseDesign, DesignError> {
    let Some(f) = policy.unity_at_hz else {
        return Ok(design);
    };
    let z = Complex64::from_polar(1.0, 2.0 * std::f64::consts::PI * f / sample_rate);
    let cascade = (eval_z_inverse(&channel.b, z) / eval_z_inverse(&channel.a, z))
        * (eval_z_inverse(&design.inverse.b, z) / eval_z_inverse(&design.inverse.a, z));
    let level = cascade.norm();
    if !(level.is_finite() && level > 0.0) {
        return Err(DesignError::NoUnityAt { hz: f });
    }
    let mut scale_db = -20.0 * level.log10();
    scale_db = scale_db.min(policy.boost_cap_db - design.peak_boost_db);
    let scale = 10f64.powf(scale_db / 20.0);
    design.inverse.b.iter_mut().for_each(|x| *x *= scale);
    design.gain *= scale;
    design.peak_boost_db += scale_db;
    design.unity_scale_db = scale_db;
    Ok(design)
}

/// True when |reflected| equals |original| on a grid of 16 points per coefficient, to
/// [`REFLECTION_TOLERANCE`] of the largest.
fn keeps_magnitude(original: &[f64], reflected: &[f64]) -> bool {
    let size = (16 * original.len()).next_power_of_two().max(1024);
    let (x, y) = (
        magnitude_on_grid(original, size),
        magnitude_on_grid(reflected, size),
    );
    let top = x.iter().fold(0.0f64, |m, v| m.max(*v));
    x.iter()
        .zip(&y)
        .all(|(a, b)| (a - b).abs() <= REFLECTION_TOLERANCE * top)
}

/// A/B scaled so the denominator leads with 1.
fn monic_inverse(a: &[f64], b: &[f64]) -> TransferFunction {
    let lead = b[0];
    TransferFunction::new(
        a.iter().map(|x| x / lead).collect(),
        b.iter().map(|x| x / lead).collect(),
    )
}

fn hz(peak: Peak, sample_rate: f64) -> f64 {
    peak.omega * sample_rate / (2.0 * std::f64::consts::PI)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::analyse;
    use crate::numeric::poly::multiply;
    use crate::numeric::response::magnitude_db;

    /// The policy corrects from 0 Hz to half the sample rate: these tests are about the designs
    /// themselves (`tests/correction_band.rs` is about the band).
    fn policy(method: InverseMethod) -> InversePolicy {
        InversePolicy {
            method,
            correction_band_hz: Some(crate::model::BandEdges {
                low_hz: 0.0,
                high_hz: 24_000.0,
            }),
            ..InversePolicy::default()
        }
    }

    /// A channel with one zero outside (−1.25) and a pair near the circle (0.9995 at ±0.6 rad).
    fn mixed_channel() -> TransferFunction {
        let pair = [1.0, -2.0 * 0.9995 * 0.6f64.cos(), 0.9995 * 0.9995];
        TransferFunction::new(multiply(&[1.0, 1.25], &pair), vec![1.0, -0.2])
    }

    // Source: common practice — the default policy never exceeds the cap, and reflection keeps
    // the magnitude away from the capped notch.
    #[test]
    fn combined_outside_and_near_circle_zeros() {
        let channel = mixed_channel();
        let analysis = analyse(&channel, 1e-9).unwrap();
        assert!(!analysis.verdict.is_invertible());
        let d = design_inverse(
            &channel,
            &analysis,
            &policy(InverseMethod::MinimumPhase),
            48_000.0,
        )
        .unwrap();
        assert_eq!(d.method, DesignMethod::MinimumPhase);
        assert_eq!(d.reflected_zeros.len(), 1);
        assert!(d.all_pass.is_some());
        let cap = d.boost_cap.as_ref().unwrap();
        assert_eq!(cap.moved_zeros.len(), 2);
        assert!(d.peak_boost_db <= 20.0 + 1e-9);
        // Recomputed independently from the coefficients:
        let peak = peak_magnitude(&d.inverse.b, &d.inverse.a);
        assert!((peak.level_db - d.peak_boost_db).abs() < 1e-9);
        // The reflected zero's magnitude is fully corrected, so what is left of the cascade is
        // only the capped pair's: |pair(r)| / |pair(ρ)| at every frequency.
        let rho = cap.radius_limit.unwrap();
        let pair = |r: f64| [1.0, -2.0 * r * 0.6f64.cos(), r * r];
        for w in [0.1, 1.5, 2.5, std::f64::consts::PI] {
            let cascade = magnitude_db(&channel.b, &channel.a, w)
                + magnitude_db(&d.inverse.b, &d.inverse.a, w);
            let expected =
                magnitude_db(&pair(0.9995), &[1.0], w) - magnitude_db(&pair(rho), &[1.0], w);
            assert!(
                (cascade - expected).abs() < 1e-9,
                "{w}: {cascade} vs {expected}"
            );
        }
        assert!(d.gives_up().contains("all-pass"));
        assert!(d.gives_up().contains("capped"));
    }

    #[test]
    fn exact_policy_refuses_substitution() {
        let channel = mixed_channel();
        let analysis = analyse(&channel, 1e-9).unwrap();
        let r = design_inverse(&channel, &analysis, &policy(InverseMethod::Exact), 48_000.0);
        assert!(matches!(r, Err(DesignError::NoStableInverse { .. })));
    }

    #[test]
    fn fir_inverse_reports_latency() {
        let channel = TransferFunction::new(vec![0.0, 0.5, 1.0], vec![1.0]);
        let analysis = analyse(&channel, 1e-9).unwrap();
        let d = design_inverse(
            &channel,
            &analysis,
            &policy(InverseMethod::LeastSquaresFir),
            48_000.0,
        )
        .unwrap();
        let fir = d.fir.as_ref().unwrap();
        assert!(fir.delay_samples > 1);
        assert_eq!(d.residual_delay_samples, 1);
        assert_eq!(d.added_latency_samples, fir.delay_samples - 1);
        assert!(fir.residual_error_db < -30.0);
        assert!(d.gives_up().contains("latency"));
    }
}
