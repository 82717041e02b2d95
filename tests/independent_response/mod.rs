//! Frequency response and peak search written out in the tests themselves, so that a check of
//! redress's reported peak does not lean on redress::numeric::response.
//!
//! B(e^{jω}) = Σ bₖ e^{−jωk} by Horner's rule (common practice); the peak is a dense grid
//! search with every near-top local maximum refined by nested grids (each round samples the
//! bracket around the best point again, 16 times finer) — a different method from the library's
//! golden-section refinement, so the two do not share a blind spot.
#![allow(dead_code)]

use num_complex::Complex64;

/// Points of the peak grid over [0, π] (plus one for π itself).
pub const GRID_POINTS: usize = 1 << 16;

/// Local maxima within this many dB of the grid's largest are refined: a resonance narrower
/// than the grid step, sampled off its centre, can look this much lower than it is.
const CANDIDATE_DB: f64 = 30.0;

/// At most this many candidates are refined (the highest first).
const MAX_CANDIDATES: usize = 64;

/// Σ cₖ wᵏ with w = e^{−jω}, by Horner's rule.
fn polynomial(c: &[f64], w: Complex64) -> Complex64 {
    c.iter()
        .rev()
        .fold(Complex64::new(0.0, 0.0), |acc, &x| acc * w + x)
}

/// H(e^{jω}) = B/A.
pub fn response(b: &[f64], a: &[f64], omega: f64) -> Complex64 {
    let w = Complex64::from_polar(1.0, -omega);
    polynomial(b, w) / polynomial(a, w)
}

/// 20·log10|H(e^{jω})|; +∞ where the value is not finite (a pole on the circle).
pub fn level_db(b: &[f64], a: &[f64], omega: f64) -> f64 {
    let v = 20.0 * response(b, a, omega).norm().log10();
    if v.is_nan() {
        f64::INFINITY
    } else {
        v
    }
}

/// Largest |B/A| over 0 ≤ ω ≤ π in dB, and where.
pub fn dense_peak(b: &[f64], a: &[f64]) -> (f64, f64) {
    let step = std::f64::consts::PI / GRID_POINTS as f64;
    let levels: Vec<f64> = (0..=GRID_POINTS)
        .map(|i| level_db(b, a, i as f64 * step))
        .collect();
    let top = levels.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if !top.is_finite() {
        let i = levels.iter().position(|v| *v == top).unwrap_or(0);
        return (top, i as f64 * step);
    }
    let mut candidates: Vec<usize> = (0..levels.len())
        .filter(|&i| {
            let left = if i > 0 {
                levels[i - 1]
            } else {
                f64::NEG_INFINITY
            };
            let right = levels.get(i + 1).copied().unwrap_or(f64::NEG_INFINITY);
            levels[i] >= left && levels[i] >= right && top - levels[i] < CANDIDATE_DB
        })
        .collect();
    candidates.sort_by(|&i, &j| levels[j].total_cmp(&levels[i]));
    candidates.truncate(MAX_CANDIDATES);
    let mut best = (top, 0.0);
    for i in candidates {
        let centre = i as f64 * step;
        if levels[i] >= best.0 {
            best = (levels[i], centre);
        }
        let refined = nested_grid_max(
            |w| level_db(b, a, w),
            (centre - step).max(0.0),
            (centre + step).min(std::f64::consts::PI),
        );
        if refined.0 > best.0 {
            best = refined;
        }
    }
    best
}

/// Sub-intervals per round of the nested-grid search (each round is this many times finer).
const ZOOM: usize = 16;
/// Rounds of the nested-grid search: 16⁸ ≈ 4·10⁹, so the bracket ends far below any level change
/// a test resolves.
const ZOOM_ROUNDS: usize = 8;

/// Maximum of `f` on [lo, hi] by nested grids: sample ZOOM + 1 points, keep the best and its two
/// neighbours as the next bracket, repeat. (value, where).
fn nested_grid_max(f: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64) -> (f64, f64) {
    let mut best = (f64::NEG_INFINITY, lo);
    for _ in 0..ZOOM_ROUNDS {
        let h = (hi - lo) / ZOOM as f64;
        for k in 0..=ZOOM {
            let w = lo + k as f64 * h;
            let v = f(w);
            if v > best.0 {
                best = (v, w);
            }
        }
        (lo, hi) = ((best.1 - h).max(lo), (best.1 + h).min(hi));
    }
    best
}
