//! Analysis: where the channel's zeros and poles lie, whether the channel is stable, and the
//! verdict on whether a stable, causal inverse exists.
//!
//! Two independent tests decide "strictly inside the unit circle": the roots themselves
//! (companion-matrix eigenvalues, polished) and the step-down recursion (every |k| < 1). They
//! must agree; where they do not (only possible within round-off of the circle) the analysis
//! takes the cautious reading and records the disagreement for the report.
//!
//! Above [`LISTED_ROOTS_MAX_ORDER`] the companion-matrix eigenvalues (O(n³): seconds at order
//! 1024, minutes at 4096) are not computed. The zeros are then counted, not listed: by the
//! argument principle on a guarded FFT grid ([`crate::numeric::winding`]) at the radii
//! 1 ∓ tolerance, cross-checked with the step-down count where its error growth allows
//! ([`counting`]).

mod counting;
mod placement;

use serde::Serialize;

use crate::model::TransferFunction;
use crate::numeric::poly::leading_zeros;
use crate::numeric::roots::{find_roots, RootError};
use crate::numeric::stepdown::{step_down, StepDown};

pub use counting::{count_zeros, ZeroCount, LISTED_ROOTS_MAX_ORDER};
pub use placement::{place, PlacedRoot, Placement};

/// Everything the later stages and the report need to know about one channel.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ChannelAnalysis {
    /// Leading zero taps of B: pure transmission delay, which no causal inverse can undo.
    pub bulk_delay: usize,
    /// Roots of B after the bulk delay is stripped (empty when not listed: see `zero_count`).
    pub zeros: Vec<PlacedRoot>,
    /// Roots of A (empty when not listed: see `pole_count`).
    pub poles: Vec<PlacedRoot>,
    /// How many zeros lie inside, on and outside the circle, and how that was decided.
    pub zero_count: ZeroCount,
    /// The same for the poles.
    pub pole_count: ZeroCount,
    /// Every pole strictly inside the unit circle, by both tests.
    pub channel_stable: bool,
    /// Step-down test on B (bulk delay stripped): all |k| < 1 ⇔ all zeros strictly inside.
    pub zero_steps: StepDown,
    /// Step-down test on A: all |k| < 1 ⇔ all poles strictly inside.
    pub pole_steps: StepDown,
    /// Plain-language notes where the root test and the step-down test disagree.
    pub disagreements: Vec<String>,
    pub verdict: Verdict,
}

/// Does a stable, causal inverse exist?
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Verdict {
    /// Every zero strictly inside the unit circle: 1/H is stable and causal.
    Invertible,
    /// The zeros that prevent an exact stable, causal inverse.
    NotInvertible {
        on_circle: Vec<PlacedRoot>,
        outside: Vec<PlacedRoot>,
    },
}

impl Verdict {
    pub fn is_invertible(&self) -> bool {
        matches!(self, Verdict::Invertible)
    }
}

/// Why the analysis could not be completed.
#[derive(Debug, Clone, PartialEq)]
pub enum AnalysisError {
    /// B has no non-zero coefficient (the config stage should have refused this).
    NoNumerator,
    /// A[0] is zero (the config stage should have refused this).
    NoDenominator,
    /// Root finding failed for the numerator or denominator.
    Roots {
        polynomial: &'static str,
        source: RootError,
    },
}

impl std::fmt::Display for AnalysisError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            AnalysisError::NoNumerator => write!(
                f,
                "the channel's numerator B(z) is all zeros, so it passes no signal; check the model"
            ),
            AnalysisError::NoDenominator => write!(
                f,
                "the channel's denominator has a[0] = 0; scale it so a[0] is non-zero (normally 1)"
            ),
            AnalysisError::Roots { polynomial, source } => write!(
                f,
                "could not find the roots of the {polynomial}: {source}; \
                 describe the channel with fewer taps, or as second-order sections"
            ),
        }
    }
}

impl std::error::Error for AnalysisError {}

/// Analyses `channel`; roots within `circle_tolerance` of the unit circle (in radius) count as on it.
pub fn analyse(
    channel: &TransferFunction,
    circle_tolerance: f64,
) -> Result<ChannelAnalysis, AnalysisError> {
    let bulk_delay = leading_zeros(&channel.b);
    if bulk_delay == channel.b.len() {
        return Err(AnalysisError::NoNumerator);
    }
    if channel.a.first().is_none_or(|&a0| a0 == 0.0) {
        return Err(AnalysisError::NoDenominator);
    }
    let numerator = &channel.b[bulk_delay..];
    let listed = |c: &[f64], polynomial: &'static str| -> Result<Vec<PlacedRoot>, AnalysisError> {
        if c.len() - 1 > LISTED_ROOTS_MAX_ORDER {
            return Ok(Vec::new());
        }
        let roots = find_roots(c).map_err(|source| AnalysisError::Roots { polynomial, source })?;
        Ok(roots.iter().map(|r| place(*r, circle_tolerance)).collect())
    };
    let mut zeros = listed(numerator, "numerator B(z)")?;
    let mut poles = listed(&channel.a, "denominator A(z)")?;
    // step_down only returns None for an empty input or a zero leading coefficient, both
    // excluded above.
    let zero_steps = step_down(numerator).ok_or(AnalysisError::NoNumerator)?;
    let pole_steps = step_down(&channel.a).ok_or(AnalysisError::NoDenominator)?;

    let mut disagreements = Vec::new();
    if numerator.len() - 1 <= LISTED_ROOTS_MAX_ORDER {
        reconcile("zeros", &mut zeros, &zero_steps, &mut disagreements);
    }
    if channel.a.len() - 1 <= LISTED_ROOTS_MAX_ORDER {
        reconcile("poles", &mut poles, &pole_steps, &mut disagreements);
    }
    let zero_count = count_zeros(
        "zeros",
        numerator,
        &zeros,
        circle_tolerance,
        &mut disagreements,
    );
    let pole_count = count_zeros(
        "poles",
        &channel.a,
        &poles,
        circle_tolerance,
        &mut disagreements,
    );

    let channel_stable = if pole_count.listed {
        poles.iter().all(|p| p.placement == Placement::Inside)
    } else {
        pole_count.all_inside() && pole_steps.all_inside()
    };
    // Unlisted zeros: the counts decide, the step-down test cautiously overriding.
    let unlisted_blocked =
        !(zero_count.listed || zero_count.all_inside() && zero_steps.all_inside());
    let on_circle: Vec<PlacedRoot> = zeros
        .iter()
        .filter(|z| z.placement == Placement::OnCircle)
        .copied()
        .collect();
    let outside: Vec<PlacedRoot> = zeros
        .iter()
        .filter(|z| z.placement == Placement::Outside)
        .copied()
        .collect();
    let verdict = if on_circle.is_empty() && outside.is_empty() && !unlisted_blocked {
        Verdict::Invertible
    } else {
        Verdict::NotInvertible { on_circle, outside }
    };
    Ok(ChannelAnalysis {
        bulk_delay,
        zeros,
        poles,
        zero_count,
        pole_count,
        channel_stable,
        zero_steps,
        pole_steps,
        disagreements,
        verdict,
    })
}

/// Makes the two tests agree, cautiously, and records where they did not.
///
/// If the roots say "all strictly inside" but the step-down test found some |k| ≥ 1, the roots
/// of largest radius are within round-off of the circle: they are re-labelled as on it. If the
/// roots put something on or outside the circle but the step-down test passes, the root reading
/// (the cautious one) stands.
fn reconcile(what: &str, roots: &mut [PlacedRoot], steps: &StepDown, notes: &mut Vec<String>) {
    let roots_inside = roots.iter().all(|r| r.placement == Placement::Inside);
    match (roots_inside, steps.all_inside()) {
        (true, false) => {
            let largest = roots.iter().map(|r| r.root.radius()).fold(0.0, f64::max);
            for r in roots.iter_mut() {
                if r.root.radius() == largest {
                    r.placement = Placement::OnCircle;
                }
            }
            notes.push(format!(
                "{what}: the roots lie inside the unit circle (largest radius {largest:.12}) but the \
                 step-down test stopped at stage {} (|k| ≥ 1); the largest are treated as on the circle",
                steps.stopped_at.unwrap_or(0)
            ));
        }
        (false, true) => {
            let largest = roots.iter().map(|r| r.root.radius()).fold(0.0, f64::max);
            notes.push(format!(
                "{what}: the step-down test passes (smallest 1 - |k| = {:.3e}) but a root lies at \
                 radius {largest:.12}, within the circle tolerance or beyond; the root reading stands",
                steps.margin()
            ));
        }
        _ => {}
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — zeros of 1 + c·z⁻¹ sit at −c.
    #[test]
    fn echo_weaker_than_direct_is_invertible() {
        let tf = TransferFunction::new(vec![1.0, 0.0, 0.5], vec![1.0]);
        let a = analyse(&tf, 1e-9).unwrap();
        assert_eq!(a.bulk_delay, 0);
        assert!(a.verdict.is_invertible());
        assert!(a.channel_stable);
        assert!(a.disagreements.is_empty());
    }

    #[test]
    fn echo_stronger_than_direct_is_not_invertible() {
        let tf = TransferFunction::new(vec![0.0, 0.0, 0.6, 0.9], vec![1.0]);
        let a = analyse(&tf, 1e-9).unwrap();
        assert_eq!(a.bulk_delay, 2);
        match &a.verdict {
            Verdict::NotInvertible { outside, on_circle } => {
                assert!(on_circle.is_empty());
                assert_eq!(outside.len(), 1);
                assert!((outside[0].root.value.re + 1.5).abs() < 1e-14);
                assert!((outside[0].margin + 0.5).abs() < 1e-14);
            }
            Verdict::Invertible => panic!("a zero at −1.5 must prevent inversion"),
        }
    }

    #[test]
    fn zero_on_circle_within_tolerance() {
        // (1 − z⁻¹): a zero exactly at z = 1 (no DC passes).
        let tf = TransferFunction::new(vec![1.0, -1.0], vec![1.0]);
        let a = analyse(&tf, 1e-9).unwrap();
        match &a.verdict {
            Verdict::NotInvertible { on_circle, outside } => {
                assert_eq!(on_circle.len(), 1);
                assert!(outside.is_empty());
            }
            Verdict::Invertible => panic!("a zero on the circle must prevent inversion"),
        }
    }

    #[test]
    fn unstable_channel_is_flagged() {
        let tf = TransferFunction::new(vec![1.0], vec![1.0, -1.1]);
        let a = analyse(&tf, 1e-9).unwrap();
        assert!(!a.channel_stable);
        assert!(!a.pole_steps.all_inside());
    }

    #[test]
    fn all_zero_numerator_is_an_error() {
        let tf = TransferFunction::new(vec![0.0, 0.0], vec![1.0]);
        assert_eq!(analyse(&tf, 1e-9), Err(AnalysisError::NoNumerator));
    }
}
