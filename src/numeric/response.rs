//! Frequency response of B(z)/A(z) on the unit circle, and the search for its peak.

use num_complex::Complex64;

use std::f64::consts::PI;

use super::poly::eval_z_inverse;
use super::roots::{find_roots, AFFORDABLE_ORDER};

/// H(e^{jω}) = B(e^{jω}) / A(e^{jω}) at normalised angular frequency ω (radians per sample).
pub fn response_at(b: &[f64], a: &[f64], omega: f64) -> Complex64 {
    let z = Complex64::from_polar(1.0, omega);
    eval_z_inverse(b, z) / eval_z_inverse(a, z)
}

/// |H(e^{jω})| in dB (20·log10). −∞ at an exact zero of B on the circle.
pub fn magnitude_db(b: &[f64], a: &[f64], omega: f64) -> f64 {
    20.0 * response_at(b, a, omega).norm().log10()
}

/// Where a response peaks: its level and frequency.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Peak {
    /// Level in dB.
    pub level_db: f64,
    /// Normalised angular frequency in radians per sample, in [0, π].
    pub omega: f64,
}

/// Largest |H(e^{jω})| over 0 ≤ ω ≤ π.
///
/// A dense grid finds the broad maxima; a resonance narrower than the grid step can only sit
/// next to a pole of H, so the angle of every root of A is searched as well. Each candidate is
/// refined by a golden-section search. Non-finite levels (a pole on the circle) count as +∞.
pub fn peak_magnitude(b: &[f64], a: &[f64]) -> Peak {
    let pole_angles: Vec<f64> = if a.len() > 1 && a[0] != 0.0 && a.len() - 1 <= AFFORDABLE_ORDER {
        find_roots(a)
            .map(|roots| roots.iter().map(|r| r.angle().abs()).collect())
            .unwrap_or_default()
    } else {
        Vec::new()
    };
    peak_magnitude_near(b, a, &pole_angles)
}

/// As [`peak_magnitude`], with the angles (radians) of A's roots supplied by the caller, who
/// often knows them already.
///
/// A denominator of order above [`AFFORDABLE_ORDER`] has no roots to hand: its narrow
/// resonances are then found by a grid of 32 points per coefficient (up to 2¹⁸), fine enough
/// for a pole pair at radius r whose peak is about 2(1 − r) wide, down to 1 − r ≈ 4·10⁻⁶ at
/// order 4096 (common practice: the half-power width of a resonance).
pub fn peak_magnitude_near(b: &[f64], a: &[f64], pole_angles: &[f64]) -> Peak {
    let order = b.len().max(a.len());
    let points = if pole_angles.is_empty() && a.len() - 1 > AFFORDABLE_ORDER {
        (32 * order).clamp(4096, 1 << 18)
    } else {
        (8 * order).clamp(4096, 1 << 16)
    };
    let step = PI / points as f64;
    let level = |w: f64| {
        let v = magnitude_db(b, a, w);
        if v.is_nan() {
            f64::INFINITY
        } else {
            v
        }
    };
    // The grid compares |H|² (no square root, no logarithm per point: this is most of the cost
    // of the boost cap's search); candidates are then refined in dB.
    let grid = grid_power(b, a, points);
    let grid_best = grid.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    // Every local maximum of the grid close to the best is refined, not only the best one:
    // a broad maximum sampled near its top and a slightly lower-looking one sampled off its
    // top can trade places once refined.
    let window = 10f64.powf(-CANDIDATE_WINDOW_DB / 10.0);
    let mut candidates: Vec<(f64, usize)> = (0..=points)
        .filter(|&i| {
            let v = grid[i];
            (i == 0 || v >= grid[i - 1])
                && (i == points || v >= grid[i + 1])
                && v >= grid_best * window
        })
        .map(|i| (grid[i], i))
        .collect();
    candidates.sort_by(|x, y| y.0.total_cmp(&x.0));
    candidates.truncate(MAX_CANDIDATES);
    let mut best = Peak {
        level_db: f64::NEG_INFINITY,
        omega: 0.0,
    };
    // Conjugate pairs and repeated roots give the same angle twice or more: one search each.
    let mut angles: Vec<f64> = pole_angles.iter().map(|a| a.clamp(0.0, PI)).collect();
    angles.sort_by(f64::total_cmp);
    angles.dedup();
    let starts = candidates
        .iter()
        .map(|&(_, i)| i as f64 * step)
        .chain(angles);
    for w in starts {
        let candidate = refine(
            &level,
            Peak {
                level_db: level(w),
                omega: w,
            },
            step,
        );
        if candidate.level_db > best.level_db {
            best = candidate;
        }
    }
    best
}

/// |H(e^{jω})|² at ω = π·i/points for i = 0..=points; +∞ where it is not a number (a pole on
/// the circle).
///
/// Evaluating both polynomials at every point costs O(points · order); from this order on,
/// one zero-padded FFT of each (length 2·points, so that bin i sits at ω = π·i/points) is
/// cheaper: O(points · log points).
fn grid_power(b: &[f64], a: &[f64], points: usize) -> Vec<f64> {
    let power = |nb: f64, na: f64| {
        let p = nb / na;
        if p.is_nan() {
            f64::INFINITY
        } else {
            p
        }
    };
    if b.len().max(a.len()) < FFT_GRID_MIN_COEFFICIENTS {
        let step = PI / points as f64;
        return (0..=points)
            .map(|i| {
                let z = Complex64::from_polar(1.0, i as f64 * step);
                power(
                    eval_z_inverse(b, z).norm_sqr(),
                    eval_z_inverse(a, z).norm_sqr(),
                )
            })
            .collect();
    }
    let size = 2 * points;
    // A plan is built once per size and thread (the boost cap's search asks for the same size
    // hundreds of times).
    thread_local! {
        static PLANNER: std::cell::RefCell<rustfft::FftPlanner<f64>> =
            std::cell::RefCell::new(rustfft::FftPlanner::new());
    }
    let fft = PLANNER.with(|planner| planner.borrow_mut().plan_fft_forward(size));
    let spectrum = |p: &[f64]| {
        let mut buffer = vec![Complex64::new(0.0, 0.0); size];
        for (slot, &c) in buffer.iter_mut().zip(p) {
            slot.re = c;
        }
        fft.process(&mut buffer);
        buffer
    };
    let (sb, sa) = (spectrum(b), spectrum(a));
    (0..=points)
        .map(|i| power(sb[i].norm_sqr(), sa[i].norm_sqr()))
        .collect()
}

/// Polynomials with at least this many coefficients have their grid evaluated by FFT.
const FFT_GRID_MIN_COEFFICIENTS: usize = 24;

/// Grid maxima within this many dB of the grid's best are refined.
const CANDIDATE_WINDOW_DB: f64 = 1.0;
/// Width, in grid steps, at which a golden-section refinement stops.
const REFINE_WIDTH: f64 = 1e-9;
/// Most grid maxima refined.
const MAX_CANDIDATES: usize = 16;

/// Golden-section refinement of a maximum in [ω − step, ω + step]; never returns less than the
/// starting point.
fn refine(level: &impl Fn(f64) -> f64, start: Peak, step: f64) -> Peak {
    if !start.level_db.is_finite() {
        return start;
    }
    let (mut lo, mut hi) = ((start.omega - step).max(0.0), (start.omega + step).min(PI));
    let ratio = (5.0_f64.sqrt() - 1.0) / 2.0;
    let mut x1 = hi - ratio * (hi - lo);
    let mut x2 = lo + ratio * (hi - lo);
    let (mut f1, mut f2) = (level(x1), level(x2));
    // Down to a billionth of the grid step: far below any level change that matters (near a
    // maximum the level falls with the square of the distance), about 45 evaluations.
    while hi - lo > REFINE_WIDTH * step {
        if f1 > f2 {
            hi = x2;
            x2 = x1;
            f2 = f1;
            x1 = hi - ratio * (hi - lo);
            f1 = level(x1);
        } else {
            lo = x1;
            x1 = x2;
            f1 = f2;
            x2 = lo + ratio * (hi - lo);
            f2 = level(x2);
        }
    }
    let w = 0.5 * (lo + hi);
    let v = level(w);
    if v > start.level_db {
        Peak {
            level_db: v,
            omega: w,
        }
    } else {
        start
    }
}

/// Group delay −dφ/dω of B(z)/A(z) in samples at ω, computed exactly from the coefficients:
/// for P(z) = Σ pₖz⁻ᵏ, the delay of P is Re{ Σ k·pₖe^{−jωk} / Σ pₖe^{−jωk} }.
pub fn group_delay(b: &[f64], a: &[f64], omega: f64) -> f64 {
    delay_of(b, omega) - delay_of(a, omega)
}

fn delay_of(p: &[f64], omega: f64) -> f64 {
    let mut num = Complex64::new(0.0, 0.0);
    let mut den = Complex64::new(0.0, 0.0);
    for (k, &c) in p.iter().enumerate() {
        let e = Complex64::from_polar(1.0, -omega * k as f64);
        num += e * (c * k as f64);
        den += e * c;
    }
    (num / den).re
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — a one-pole resonator 1/(1 − r z⁻¹) peaks at DC with 1/(1 − r).
    #[test]
    fn one_pole_peak_at_dc() {
        let p = peak_magnitude(&[1.0], &[1.0, -0.9]);
        assert!((p.level_db - 20.0 * (1.0_f64 / 0.1).log10()).abs() < 1e-9);
        assert!(p.omega.abs() < 1e-6);
    }

    // Source: common practice — a pure delay z⁻ᴰ has group delay D everywhere.
    // Source: common practice — a pole pair at radius 0.9999 makes a resonance about 2e-4 rad
    // wide, narrower than the grid step; its peak 1/|A(e^{jω₀})| ≈ 1/((1−r)·|1 − r·e^{−j2ω₀}|).
    #[test]
    fn narrow_resonance_between_grid_points_is_found() {
        let (r, w0) = (0.9999_f64, 0.240_46_f64);
        let a = [1.0, -2.0 * r * w0.cos(), r * r];
        let p = peak_magnitude(&[1.0], &a);
        let closed = -20.0
            * ((1.0 - r) * (Complex64::new(1.0, 0.0) - Complex64::from_polar(r, -2.0 * w0)).norm())
                .log10();
        assert!(
            (p.level_db - closed).abs() < 0.01,
            "{} vs {closed}",
            p.level_db
        );
        assert!((p.omega - w0).abs() < 1e-3);
    }

    #[test]
    fn pure_delay_group_delay() {
        let b = [0.0, 0.0, 0.0, 1.0];
        assert!((group_delay(&b, &[1.0], 0.3) - 3.0).abs() < 1e-12);
    }

    // Source: common practice — the FFT grid is the same evaluation as Horner's rule at
    // ω = π·i/points (a zero-padded DFT samples the z-transform on the circle).
    #[test]
    fn fft_grid_equals_direct_evaluation() {
        let b: Vec<f64> = (0..40)
            .map(|k| ((k * 7 % 11) as f64 - 5.0) * 0.9f64.powi(k))
            .collect();
        let a: Vec<f64> = (0..30)
            .map(|k| {
                if k == 0 {
                    1.0
                } else {
                    0.3 * 0.7f64.powi(k) * ((k % 3) as f64 - 1.0)
                }
            })
            .collect();
        assert!(b.len().max(a.len()) >= FFT_GRID_MIN_COEFFICIENTS);
        let points = 4096;
        let grid = grid_power(&b, &a, points);
        for i in (0..=points).step_by(37) {
            let direct = response_at(&b, &a, PI * i as f64 / points as f64).norm_sqr();
            assert!(
                (grid[i] - direct).abs() <= 1e-10 * direct.max(1e-12),
                "point {i}: FFT {} direct {direct}",
                grid[i]
            );
        }
    }
}
