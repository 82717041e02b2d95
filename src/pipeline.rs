//! model → analysis → design → realize, for every path of a link.
//!
//! This is the control side's whole preparation of a filter set: it allocates, finds roots and
//! rounds coefficients, so it never runs on the audio thread. The result keeps every stage's
//! outcome (or its error) so a report can show exactly where a path stopped.

use serde::Serialize;

use crate::analysis::{analyse, AnalysisError, ChannelAnalysis};
use crate::design::{design_inverse, DesignError, InverseDesign};
use crate::model::{Link, Path, Structure};
use crate::realize::{realize, Realization, RealizeError};

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
    }
}

fn plan_path(path: &Path, sample_rate: f64) -> PathPlan {
    let analysis = analyse(&path.channel, path.circle_tolerance);
    let design = analysis
        .as_ref()
        .ok()
        .map(|a| design_inverse(&path.channel, a, &path.inverse, sample_rate));
    let mut switched = None;
    let realization = design.as_ref().and_then(|d| d.as_ref().ok()).map(|d| {
        let (result, switch) = realize_safely(d, path);
        switched = switch;
        result
    });
    PathPlan {
        path: path.clone(),
        analysis,
        design,
        realization,
        switched,
    }
}

/// Realizes in the requested structure; when that would be unstable, or closer to the circle
/// than [`POLE_MARGIN_FLOOR`], after rounding, and the policy allows it, tries the sturdier
/// structures (sections, then lattice–ladder) and says why it switched.
fn realize_safely(
    design: &InverseDesign,
    path: &Path,
) -> (Result<Realization, RealizeError>, Option<StructureSwitch>) {
    // An FIR inverse has no poles for rounding to move: run it as the plain tapped delay line
    // (direct form), which is exact, cheapest and needs no root finding.
    if design.inverse.a.len() == 1 && path.structure != Structure::DirectForm2T {
        // Reported only when the config asked for the other structure: a default is a choice
        // the pipeline makes, not one it overrules.
        let switch = path.inverse.structure_configured.then(|| StructureSwitch {
            requested: path.structure,
            configured: true,
            used: Structure::DirectForm2T,
            reason: "the inverse is FIR: it has no poles to protect, so it runs as a direct-form \
                     tapped delay line, exact and always stable"
                .to_string(),
        });
        let result = checked(realize(
            &design.inverse,
            Structure::DirectForm2T,
            path.precision,
        ));
        return (result, switch);
    }
    let first = checked(realize(&design.inverse, path.structure, path.precision));
    let reason = match &first {
        Ok(_) => return (first, None),
        Err(e) => e.to_string(),
    };
    if !path.inverse.structure_fallback {
        return (first, None);
    }
    for used in [Structure::Sections, Structure::LatticeLadder] {
        if used == path.structure {
            continue;
        }
        if let Ok(r) = checked(realize(&design.inverse, used, path.precision)) {
            let switch = StructureSwitch {
                requested: path.structure,
                configured: path.inverse.structure_configured,
                used,
                reason: reason.clone(),
            };
            return (Ok(r), Some(switch));
        }
    }
    (first, None)
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
