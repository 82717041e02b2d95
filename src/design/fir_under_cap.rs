//! A least-squares FIR solved again, with more regularisation, until its taps respect the boost
//! cap; when even λ = 1 boosts too much, the taps are scaled down to the cap.
//!
//! Raising λ shortens the taps' reach into the channel's nulls, which is where the boost comes
//! from, while a broadband scale would give up correction everywhere: so regularise first.

use super::least_squares_fir::FirSolution;
use crate::numeric::response::Peak;

/// A solution that respects the cap, and what it took.
#[derive(Debug, Clone, PartialEq)]
pub struct CappedFir {
    pub solution: FirSolution,
    /// Largest gain of the (possibly scaled) taps.
    pub peak: Peak,
    /// True when λ was raised above the one asked for.
    pub raised: bool,
    /// Broadband reduction applied after λ reached 1 (dB; 0 when none).
    pub level_reduction_db: f64,
}

/// Largest regularisation tried before scaling instead (relative to the channel's energy).
const LARGEST_REGULARIZATION: f64 = 1.0;

/// Solves with `solve(λ)` from `regularization` up by decades (from 1e-8 when it is 0) until
/// `peak_of(taps)` is at most `cap_db`. `None` when no λ gives a solution.
pub fn fir_under_cap(
    solve: impl Fn(f64) -> Option<FirSolution>,
    peak_of: impl Fn(&[f64]) -> Peak,
    regularization: f64,
    cap_db: f64,
) -> Option<CappedFir> {
    let next = |lambda: f64| if lambda <= 0.0 { 1e-8 } else { lambda * 10.0 };
    let mut lambda = regularization;
    let mut raised = false;
    // A singular system at λ = 0 (a channel with a null) is solved with the first raise.
    let mut solution = loop {
        if let Some(s) = solve(lambda) {
            break s;
        }
        if lambda >= LARGEST_REGULARIZATION {
            return None;
        }
        lambda = next(lambda);
        raised = true;
    };
    let mut peak = peak_of(&solution.taps);
    while peak.level_db > cap_db && lambda < LARGEST_REGULARIZATION {
        lambda = next(lambda);
        raised = true;
        if let Some(s) = solve(lambda) {
            solution = s;
            peak = peak_of(&solution.taps);
        }
    }
    let mut level_reduction_db = 0.0;
    if peak.level_db > cap_db {
        level_reduction_db = peak.level_db - cap_db;
        let scale = 10f64.powf(-level_reduction_db / 20.0);
        solution.taps.iter_mut().for_each(|t| *t *= scale);
        peak.level_db = cap_db;
    }
    Some(CappedFir {
        solution,
        peak,
        raised,
        level_reduction_db,
    })
}
