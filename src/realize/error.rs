//! Why a transfer function could not be turned into a running filter, told plainly with what to do.

use crate::model::Structure;
use crate::numeric::roots::RootError;

/// Why `realize` refused.
#[derive(Debug, Clone, PartialEq)]
pub enum RealizeError {
    /// The transfer function handed in is not one a filter can run (empty, non-finite, a[0] = 0,
    /// numerator zero everywhere).
    InvalidInput { problem: String },
    /// The design itself, before any rounding, has a pole on or outside the unit circle.
    UnstableDesign {
        structure: Structure,
        max_pole_radius: f64,
        detail: String,
    },
    /// The step-down recursion of the denominator met |k| ≥ 1 at `stage`: a lattice needs every
    /// reflection coefficient strictly inside (−1, 1), which holds exactly for a stable denominator.
    LatticeStageUnstable { stage: usize, k: f64 },
    /// The roots of the numerator or denominator could not be found (sections need them).
    Roots {
        polynomial: &'static str,
        source: RootError,
    },
    /// The roots did not come in complex-conjugate pairs, so real sections cannot be formed.
    NotConjugate {
        polynomial: &'static str,
        upper: usize,
        lower: usize,
    },
    /// Multiplying the second-order sections back together did not give the polynomial they were
    /// factored from: the roots are too inaccurate for this polynomial.
    SectionsMismatch {
        polynomial: &'static str,
        relative_error: f64,
        tolerance: f64,
    },
    /// The design is too long to factor into sections: its roots are not computed above this
    /// order (O(n³), and too inexact to multiply back into the polynomial).
    TooLongForSections { order: usize, most: usize },
    /// The lattice's reflection coefficients, stepped back up, do not give the denominator:
    /// the step-down recursion lost too many digits (its rounding grows as Π 1/(1 − k²)).
    LatticeMismatch { relative_error: f64, tolerance: f64 },
    /// A coefficient of the structure is too large for the run precision (or not finite).
    CoefficientOverflow {
        structure: Structure,
        coefficient: String,
        value: f64,
    },
    /// After rounding the coefficients to the run precision, the structure as it would run has
    /// a pole on or outside the unit circle (or no finite pole radius could be computed).
    UnstableAfterRounding {
        structure: Structure,
        max_pole_radius: f64,
        detail: String,
    },
    /// After rounding the structure is stable, but a pole sits closer to the circle than the
    /// margin the pipeline requires before it trusts a filter to run unattended.
    TooCloseToCircle {
        structure: Structure,
        max_pole_radius: f64,
        floor: f64,
    },
    /// The structure runs FIR filters only, and this design has poles.
    NeedsFir {
        structure: Structure,
        denominator_order: usize,
    },
}

/// A structure's name as the model spells it when serialised (the spelling users write).
fn spelling(structure: Structure) -> String {
    serde_json::to_value(structure)
        .ok()
        .and_then(|v| v.as_str().map(|s| format!("`{s}`")))
        .unwrap_or_else(|| structure.name().to_string())
}

/// The structures other than `current`, for "try this instead" advice.
fn alternatives(current: Structure) -> String {
    match current {
        Structure::DirectForm2T => format!(
            "{} or {}",
            spelling(Structure::Sections),
            spelling(Structure::LatticeLadder)
        ),
        Structure::Sections => format!(
            "{} (or f64 coefficients)",
            spelling(Structure::LatticeLadder)
        ),
        Structure::LatticeLadder => {
            format!("{} (or f64 coefficients)", spelling(Structure::Sections))
        }
        Structure::SparseRecursion | Structure::PartitionedConvolution => format!(
            "{} or {}",
            spelling(Structure::Sections),
            spelling(Structure::LatticeLadder)
        ),
    }
}

impl std::fmt::Display for RealizeError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            RealizeError::InvalidInput { problem } => write!(
                f,
                "cannot realize this transfer function: {problem}\n  \
                 help: give finite coefficients, a non-zero a[0] and a numerator that is not all zero"
            ),
            RealizeError::UnstableDesign {
                structure,
                max_pole_radius,
                detail,
            } => write!(
                f,
                "the design handed to the {} realization is unstable: largest pole radius \
                 {max_pole_radius:.12} (a running filter needs every pole strictly inside the \
                 unit circle){}\n  \
                 help: this is a design problem, not a structure problem; choose a substitute \
                 inverse that keeps its poles inside the circle",
                structure.name(),
                detail_suffix(detail)
            ),
            RealizeError::LatticeStageUnstable { stage, k } => write!(
                f,
                "the lattice-ladder cannot be formed: the step-down recursion of the denominator \
                 gives reflection coefficient k{stage} = {k} with |k| >= 1, so the denominator \
                 has a root on or outside the unit circle\n  \
                 help: a lattice exists only for a stable denominator; fix the design so its \
                 poles lie inside the circle"
            ),
            RealizeError::Roots { polynomial, source } => write!(
                f,
                "cannot factor the {polynomial} into second-order sections: {source}\n  \
                 help: use structure {} or {}, which need no roots",
                spelling(Structure::DirectForm2T),
                spelling(Structure::LatticeLadder)
            ),
            RealizeError::NotConjugate {
                polynomial,
                upper,
                lower,
            } => write!(
                f,
                "cannot form real second-order sections: the {polynomial} has {upper} roots above \
                 the real axis but {lower} below, so they do not pair as complex conjugates\n  \
                 help: use structure {} or {}",
                spelling(Structure::DirectForm2T),
                spelling(Structure::LatticeLadder)
            ),
            RealizeError::SectionsMismatch {
                polynomial,
                relative_error,
                tolerance,
            } => write!(
                f,
                "the second-order sections do not reproduce the {polynomial}: multiplied back \
                 together they differ by {relative_error:.3e} relative to its largest \
                 coefficient (allowed {tolerance:.0e}); its roots cannot be found accurately \
                 enough\n  \
                 help: use structure {}, or describe the design by its zeros and poles \
                 rather than by expanded coefficients",
                spelling(Structure::LatticeLadder)
            ),
            RealizeError::TooLongForSections { order, most } => write!(
                f,
                "cannot factor an order-{order} design into second-order sections: its roots are \
                 computed only up to order {most} (the eigenvalues cost O(n³), and at this length \
                 they are too inexact to multiply back into the polynomial)\n  \
                 help: use structure {}, which takes the reflection coefficients straight from \
                 the coefficients and stays stable under rounding while every |k| < 1",
                spelling(Structure::LatticeLadder)
            ),
            RealizeError::LatticeMismatch {
                relative_error,
                tolerance,
            } => write!(
                f,
                "the lattice's reflection coefficients do not reproduce the denominator: stepped \
                 back up they differ by {relative_error:.3e} relative to its largest coefficient \
                 (allowed {tolerance:.0e}); the step-down recursion lost its digits on poles this \
                 close to the circle\n  \
                 help: use structure {}, or lower boost_cap_db so the inverse's poles sit \
                 further inside",
                spelling(Structure::DirectForm2T)
            ),
            RealizeError::CoefficientOverflow {
                structure,
                coefficient,
                value,
            } => write!(
                f,
                "the {} realization needs coefficient {coefficient} = {value:e}, which does not \
                 fit in the run precision\n  \
                 help: scale the design down (move gain out of it) or use f64 coefficients",
                structure.name()
            ),
            RealizeError::UnstableAfterRounding {
                structure,
                max_pole_radius,
                detail,
            } => write!(
                f,
                "the {} realization becomes unstable when its coefficients are rounded: largest \
                 pole radius of the filter as it would run is {max_pole_radius:.12} (must be \
                 below 1){}\n  \
                 help: use structure {}; they keep their poles far better under rounding",
                structure.name(),
                detail_suffix(detail),
                alternatives(*structure)
            ),
            RealizeError::TooCloseToCircle {
                structure,
                max_pole_radius,
                floor,
            } => write!(
                f,
                "the {} realization keeps a pole at radius {max_pole_radius:.12} after rounding, \
                 closer to the unit circle than the required margin of {floor:.0e}\n  \
                 help: use structure {}, or lower boost_cap_db so the inverse's poles sit \
                 further inside",
                structure.name(),
                alternatives(*structure)
            ),
            RealizeError::NeedsFir {
                structure,
                denominator_order,
            } => write!(
                f,
                "the {} realization runs FIR filters only, and this design has a denominator of \
                 order {denominator_order}\n  \
                 help: use structure {}",
                structure.name(),
                alternatives(*structure)
            ),
        }
    }
}

fn detail_suffix(detail: &str) -> String {
    if detail.is_empty() {
        String::new()
    } else {
        format!("; {detail}")
    }
}

impl std::error::Error for RealizeError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            RealizeError::Roots { source, .. } => Some(source),
            _ => None,
        }
    }
}
