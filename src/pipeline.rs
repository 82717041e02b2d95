//! model → analysis → design → realize, for every path of a link.
//!
//! This is the control side's whole preparation of a filter set: it allocates, finds roots and
//! rounds coefficients, so it never runs on the audio thread. The result keeps every stage's
//! outcome (or its error) so a report can show exactly where a path stopped.

use serde::Serialize;

use crate::analysis::{analyse, AnalysisError, ChannelAnalysis};
use crate::design::{
    design_inverse, judged_band, trade_off, DesignError, DesignMethod, InverseDesign, TradeOff,
    LATENCY_LADDER_MS,
};
use crate::model::{Link, Path, Structure, TransferFunction};
use crate::numeric::poly::trim_trailing_zeros;
use crate::realize::{
    dense_direct_form_taps, realize, Realization, RealizeError, PARTITIONED_MIN_TAPS,
};

/// Smallest distance 1 − max |pole| a rounded realization must keep before it is trusted to run.
/// Closer than this, round-off in the recursion itself can sustain oscillation (common practice:
/// keep a margin well above the coefficient quantum, 2⁻²⁴ ≈ 6e-8 for f32).
pub const POLE_MARGIN_FLOOR: f64 = 1e-6;

/// A structure switch made because the requested one was unsafe after rounding.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StructureSwitch {
    pub requested: Structure,
    /// True when the config named the requested structure, false when it was the default.
    pub configured: bool,
    pub used: Structure,
    /// Why the requested structure was not used.
    pub reason: String,
}

/// A structure that was tried and refused before the one that runs (or before giving up).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StructureRefusal {
    pub structure: Structure,
    /// The realization stage's refusal, in words.
    pub reason: String,
}

/// What the pipeline made of one path.
#[derive(Debug, Clone)]
pub struct PathPlan {
    pub path: Path,
    pub analysis: Result<ChannelAnalysis, AnalysisError>,
    /// `None` when the analysis failed.
    pub design: Option<Result<InverseDesign, DesignError>>,
    /// `None` when there is no design to realize.
    pub realization: Option<Result<Realization, RealizeError>>,
    /// Set when the realization runs in another structure than the one requested.
    pub switched: Option<StructureSwitch>,
    /// Every structure tried and refused, in the order tried (empty when the first one tried
    /// runs).
    pub refused: Vec<StructureRefusal>,
    /// What latency buys, for a path with no exact inverse within the cap; `None` until
    /// [`add_trade_offs`] fills it in (only `check` needs it), or when it does not apply.
    pub trade_off: Option<Result<TradeOff, DesignError>>,
}

impl PathPlan {
    /// The realization to run, when every stage succeeded.
    pub fn runnable(&self) -> Option<&Realization> {
        self.realization.as_ref().and_then(|r| r.as_ref().ok())
    }

    /// The first stage's error, in words, when the path cannot run.
    pub fn problem(&self) -> Option<String> {
        match (&self.analysis, &self.design, &self.realization) {
            (Err(e), _, _) => Some(format!("analysis failed: {e}")),
            (_, Some(Err(e)), _) => Some(e.to_string()),
            (_, _, Some(Err(e))) => Some(format!("realization refused: {e}")),
            _ => None,
        }
    }
}

/// What the pipeline made of a whole link.
#[derive(Debug, Clone)]
pub struct LinkPlan {
    pub sample_rate: f64,
    pub channel_count: usize,
    pub paths: Vec<PathPlan>,
    /// Per audio channel: its linked group (numbered from 0), the channels the engine's guards
    /// act on together ([`Link::channel_groups`]).
    pub channel_groups: Vec<usize>,
}

impl LinkPlan {
    /// True when every path has a realization to run.
    pub fn is_runnable(&self) -> bool {
        self.paths.iter().all(|p| p.runnable().is_some())
    }

    /// "label: problem" for every path that cannot run.
    pub fn problems(&self) -> Vec<String> {
        self.paths
            .iter()
            .filter_map(|p| p.problem().map(|why| format!("{}: {why}", p.path.label)))
            .collect()
    }

    /// The plan of the path that models audio channel `channel`.
    pub fn path_for_channel(&self, channel: usize) -> Option<&PathPlan> {
        self.paths
            .iter()
            .find(|p| p.path.channels.contains(&channel))
    }
}

/// Runs every path of `link` through analysis, design and realization.
pub fn plan_link(link: &Link) -> LinkPlan {
    LinkPlan {
        sample_rate: link.sample_rate,
        channel_count: link.channel_count,
        paths: link
            .paths
            .iter()
            .map(|path| plan_path(path, link.sample_rate))
            .collect(),
        channel_groups: link.channel_groups(),
    }
}

fn plan_path(path: &Path, sample_rate: f64) -> PathPlan {
    let analysis = analyse(&path.channel, path.circle_tolerance);
    let design = analysis
        .as_ref()
        .ok()
        .map(|a| design_inverse(&path.channel, a, &path.inverse, sample_rate));
    let mut switched = None;
    let mut refused = Vec::new();
    let realization = design.as_ref().and_then(|d| d.as_ref().ok()).map(|d| {
        let choice = realize_safely(&d.inverse, path);
        switched = choice.switched;
        refused = choice.refused;
        choice.result
    });
    PathPlan {
        path: path.clone(),
        analysis,
        design,
        realization,
        switched,
        refused,
        trade_off: None,
    }
}

/// True when the path has no exact stable causal inverse within its boost cap: a zero on or
/// outside the circle, a minimum-phase design whose cap acted, or an exact inverse refused for
/// its boost.
pub fn needs_trade_off(plan: &PathPlan) -> bool {
    let Ok(analysis) = &plan.analysis else {
        return false;
    };
    if !analysis.channel_stable {
        return false;
    }
    let capped = match &plan.design {
        Some(Ok(d)) => d.method == DesignMethod::MinimumPhase && d.boost_cap.is_some(),
        Some(Err(e)) => matches!(e, DesignError::OverBoostCap { .. }),
        None => false,
    };
    !analysis.verdict.is_invertible() || capped
}

/// Fills in every path's latency–error table where [`needs_trade_off`]: the minimum-phase
/// substitute and the least-squares FIR at each latency of [`LATENCY_LADDER_MS`], judged in
/// the band of [`judged_band`].
pub fn add_trade_offs(plan: &mut LinkPlan) {
    let sample_rate = plan.sample_rate;
    for p in plan.paths.iter_mut() {
        if !needs_trade_off(p) {
            continue;
        }
        let Ok(analysis) = &p.analysis else {
            continue;
        };
        let configured = p.design.as_ref().and_then(|d| d.as_ref().ok());
        // The latency-knee method made its choice from this very table: show that one.
        if let Some(table) = configured
            .and_then(|d| d.knee.as_ref())
            .and_then(|k| k.table.clone().map(|t| (t, k.picked.clone())))
            .map(|(table, picked)| TradeOff {
                configured: picked,
                ..table
            })
        {
            p.trade_off = Some(Ok(table));
            continue;
        }
        p.trade_off = Some(trade_off(
            &p.path.channel,
            analysis,
            &p.path.inverse,
            sample_rate,
            judged_band(&p.path.inverse, sample_rate),
            configured,
            &LATENCY_LADDER_MS,
        ));
    }
}

/// The realization chosen for one inverse, and how it was chosen.
struct Choice {
    result: Result<Realization, RealizeError>,
    switched: Option<StructureSwitch>,
    refused: Vec<StructureRefusal>,
}

/// Candidates tried in order; the first that realizes and passes [`checked`] runs. Each entry
/// is a structure and why it would be used instead of the requested one (`None`: it is the
/// requested one). Refusals are collected in order.
fn first_that_runs(
    inverse: &TransferFunction,
    path: &Path,
    candidates: &[(Structure, Option<String>)],
) -> Choice {
    let mut refused = Vec::new();
    let mut first_error = None;
    for (structure, why) in candidates {
        match checked(realize(inverse, *structure, path.precision)) {
            Ok(r) => {
                let reason = why.clone().or_else(|| {
                    // A fallback: it runs because the requested structure was refused.
                    refused
                        .iter()
                        .find(|f: &&StructureRefusal| f.structure == path.structure)
                        .map(|f| f.reason.clone())
                });
                let switched = (*structure != path.structure).then(|| StructureSwitch {
                    requested: path.structure,
                    configured: path.inverse.structure_configured,
                    used: *structure,
                    reason: reason.unwrap_or_default(),
                });
                return Choice {
                    result: Ok(r),
                    switched,
                    refused,
                };
            }
            Err(e) => {
                refused.push(StructureRefusal {
                    structure: *structure,
                    reason: e.to_string(),
                });
                if *structure == path.structure || first_error.is_none() {
                    first_error = Some(e);
                }
            }
        }
    }
    // The requested structure's refusal is the one reported (or the first, when it was not tried).
    let error = first_error.unwrap_or(RealizeError::InvalidInput {
        problem: "no structure was tried".to_string(),
    });
    Choice {
        result: Err(error),
        switched: None,
        refused,
    }
}

/// Realizes in the cheapest safe structure. In order:
///
/// 1. a sparse recursion, when the inverse's difference equation is mostly zeros
///    ([`sparse_pays`]): the same H(z) at the cost of its non-zero taps;
/// 2. an FIR inverse has no poles for rounding to move: partitioned convolution from
///    [`PARTITIONED_MIN_TAPS`] taps on (cheaper there, measured), else the plain tapped delay line
///    (direct form), exact and needing no root finding;
/// 3. the requested structure; when that would be unstable, or closer to the circle than
///    [`POLE_MARGIN_FLOOR`], after rounding, and the policy allows it, the sturdier structures
///    (sections, then lattice–ladder).
///
/// Every refusal along the way is kept, in order, for the report.
fn realize_safely(inverse: &TransferFunction, path: &Path) -> Choice {
    let mut candidates: Vec<(Structure, Option<String>)> = Vec::new();
    if let Some(why) = sparse_pays(inverse) {
        candidates.push((Structure::SparseRecursion, Some(why)));
    }
    let b = trim_trailing_zeros(&inverse.b);
    if trim_trailing_zeros(&inverse.a).len() == 1 {
        if b.len() >= PARTITIONED_MIN_TAPS {
            candidates.push((
                Structure::PartitionedConvolution,
                Some(format!(
                    "the inverse is an FIR of {} taps: from {PARTITIONED_MIN_TAPS} taps on, \
                     partitioned FFT convolution runs it faster than the tapped delay line, with \
                     a direct-form head so no latency is added",
                    b.len()
                )),
            ));
        }
        candidates.push((
            Structure::DirectForm2T,
            (path.structure != Structure::DirectForm2T).then(|| {
                "the inverse is FIR: it has no poles to protect, so it runs as a direct-form \
                 tapped delay line, exact and always stable"
                    .to_string()
            }),
        ));
        return first_that_runs(inverse, path, &candidates);
    }
    candidates.push((path.structure, None));
    if path.inverse.structure_fallback {
        for used in [Structure::Sections, Structure::LatticeLadder] {
            if used != path.structure {
                candidates.push((used, None));
            }
        }
    }
    first_that_runs(inverse, path, &candidates)
}

/// Why a sparse recursion would run `inverse` cheaper, when it would: it touches at most a
/// quarter of the coefficients the direct form touches a sample (every bₖ, every aₖ past a₀), and the
/// order is at least 4. The dense structures cost about two multiply-adds per order a sample;
/// the sparse one one per non-zero tap, plus a call's overhead per run of samples shorter than
/// the shortest recursive delay (`redress bench` on configs/echo_line.toml).
pub fn sparse_pays(inverse: &TransferFunction) -> Option<String> {
    let a0 = *inverse.a.first()?;
    if a0 == 0.0 {
        return None;
    }
    let b = trim_trailing_zeros(&inverse.b);
    let a = trim_trailing_zeros(&inverse.a);
    let order = b.len().max(a.len()).saturating_sub(1);
    let touched =
        b.iter().filter(|c| **c != 0.0).count() + a.iter().skip(1).filter(|c| **c != 0.0).count();
    let dense = dense_direct_form_taps(b, a);
    let same = if a.len() > 1 {
        "with the same poles"
    } else {
        "with the same response (an FIR: no poles)"
    };
    (order >= 4 && 4 * touched <= dense).then(|| {
        format!(
            "the inverse's difference equation has {touched} non-zero taps at order {order}: \
             a sparse recursion touches only those, {touched} multiply-adds a sample against \
             {dense} for the direct form, {same}"
        )
    })
}

/// Refuses a realization whose rounded poles are closer to the circle than the margin floor.
fn checked(result: Result<Realization, RealizeError>) -> Result<Realization, RealizeError> {
    let r = result?;
    if 1.0 - r.max_pole_radius < POLE_MARGIN_FLOOR {
        return Err(RealizeError::TooCloseToCircle {
            structure: r.structure,
            max_pole_radius: r.max_pole_radius,
            floor: POLE_MARGIN_FLOOR,
        });
    }
    Ok(r)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{CoefficientPrecision, InversePolicy, ModelForm};

    fn path_asking(structure: Structure) -> Path {
        Path {
            label: "test".to_string(),
            channels: vec![0],
            form: ModelForm::DifferenceEquation,
            channel: TransferFunction::new(vec![1.0], vec![1.0]),
            structure,
            precision: CoefficientPrecision::F32,
            circle_tolerance: 1e-9,
            inverse: InversePolicy::default(),
        }
    }

    // Source: common practice — a double root splits under coefficient rounding by about the
    // square root of the rounding error. 1/(1 − c·z⁻⁸)² with c = 0.99989 is sparse (3 taps at
    // order 16), so the sparse recursion is tried first; its f32 coefficients split the double
    // root of z⁸ outside the circle, so it is refused, and the requested sections and then the
    // lattice are tried in that order, each refusal kept.
    #[test]
    fn a_refused_sparse_recursion_falls_back_in_order_and_says_so() {
        let inverse = crate::realize::sparse_tests::squared_echo(0.99989);
        assert!(sparse_pays(&inverse).is_some());
        let choice = realize_safely(&inverse, &path_asking(Structure::Sections));
        let order = [
            Structure::SparseRecursion,
            Structure::Sections,
            Structure::LatticeLadder,
        ];
        let tried: Vec<Structure> = choice.refused.iter().map(|r| r.structure).collect();
        assert!(!tried.is_empty(), "the sparse recursion was not refused");
        assert_eq!(tried, order[..tried.len()], "fallback order");
        assert!(choice.refused[0].reason.contains("rounded"));
        match (&choice.result, tried.len()) {
            (Ok(r), n) => {
                assert_eq!(r.structure, order[n]);
                // Running the requested structure is no switch; anything else is reported as one.
                match &choice.switched {
                    None => assert_eq!(r.structure, Structure::Sections),
                    Some(switch) => assert_eq!(switch.used, r.structure),
                }
            }
            (Err(_), n) => assert_eq!(n, order.len()),
        }
    }

    // Source: common practice — a dense recursion gains nothing from skipping zeros.
    #[test]
    fn sparse_only_where_it_pays() {
        let dense = TransferFunction::new(vec![1.0, 0.5], vec![1.0, -0.5, 0.25, -0.1, 0.05]);
        assert!(sparse_pays(&dense).is_none());
        let echo = crate::realize::sparse_tests::all_pole(&[(37, 0.3), (120, -0.16)]);
        assert!(sparse_pays(&echo).is_some());
    }

    // Source: common practice — a long FIR runs by partitioned convolution, a short one as a
    // tapped delay line; both are reported as switches from the requested structure.
    #[test]
    fn fir_inverses_by_length() {
        let taps = |n: usize| -> TransferFunction {
            let b: Vec<f64> = (0..n).map(|i| 0.9f64.powi(i as i32 % 50) + 0.01).collect();
            TransferFunction::new(b, vec![1.0])
        };
        let long = realize_safely(
            &taps(PARTITIONED_MIN_TAPS),
            &path_asking(Structure::Sections),
        );
        assert_eq!(
            long.result.unwrap().structure,
            Structure::PartitionedConvolution
        );
        assert!(long.switched.is_some() && long.refused.is_empty());
        let short = realize_safely(
            &taps(PARTITIONED_MIN_TAPS - 1),
            &path_asking(Structure::Sections),
        );
        assert_eq!(short.result.unwrap().structure, Structure::DirectForm2T);
    }
}
