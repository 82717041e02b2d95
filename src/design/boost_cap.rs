//! Boost cap: keep the inverse's peak gain under a limit by pulling zeros towards the origin.
//!
//! A zero of the channel at radius r becomes a pole of the inverse; near the circle its boost
//! grows like 1/(1 − r). For a conjugate pair at radius r and angle ω₀ the boost at ω₀ is
//!   1/|(1 − r·e^{jω₀}e^{−jω₀})(1 − r·e^{−jω₀}e^{−jω₀})| = 1/((1 − r)·|1 − r·e^{−j2ω₀}|),
//! i.e. −20·log10((1 − r)·|1 − r·e^{−j2ω₀}|) dB (common practice). Shrinking r lowers it.
//!
//! We clamp every zero beyond a radius ρ to radius ρ (same angle; conjugate pairs stay pairs)
//! and search the largest ρ whose inverse respects the cap. That common radius may move zeros
//! that did not cause the excess, so a second pass lets each moved group (a conjugate pair or a
//! real zero), closest to the circle first, back out on its own as far as the cap allows: only
//! the zeros that must move do, and only as far as they must. Zeros are never pulled below
//! radius [`RADIUS_FLOOR`];
//! if the cap still fails there, the boost is broadband (a lossy link), and the level is
//! lowered instead — reported as a level reduction.

use num_complex::Complex64;
use serde::Serialize;

use crate::numeric::poly::from_roots;
use crate::numeric::response::{peak_magnitude_near, Peak};

/// How far under the cap the search aims (dB), so rounding cannot lift the result over it.
pub const CAP_MARGIN_DB: f64 = 1e-6;

/// Zeros are not pulled in further than this radius by the cap.
pub const RADIUS_FLOOR: f64 = 0.5;

/// One zero moved by the cap.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct MovedZero {
    pub from: Complex64,
    pub to: Complex64,
}

/// The capped numerator and what was done to get it.
#[derive(Debug, Clone, PartialEq)]
pub struct Capped {
    /// New B (leading coefficient included); the inverse is A/B.
    pub numerator: Vec<f64>,
    /// The common radius of the first pass, when any zero moved: no zero ends up inside it.
    pub radius_limit: Option<f64>,
    pub moved: Vec<MovedZero>,
    /// By how much the overall level was lowered (dB ≥ 0) because moving zeros was not enough.
    pub level_reduction_db: f64,
    /// Peak of the capped inverse A/B.
    pub peak: Peak,
}

/// Caps the peak of A/B, where B = `gain`·Π(1 − zₖz⁻¹), at `cap_db`.
///
/// Returns `None` only if the zeros do not form real coefficients (they always do when they are
/// the roots of a real polynomial, reflected or not).
pub fn cap_boost(a: &[f64], gain: f64, zeros: &[Complex64], cap_db: f64) -> Option<Capped> {
    let largest = zeros.iter().map(|z| z.norm()).fold(0.0, f64::max);
    // The capped zeros are the inverse's poles: their angles are where narrow peaks hide.
    let angles: Vec<f64> = zeros.iter().map(|z| z.arg().abs()).collect();
    let peak_with = |rho: f64, g: f64| -> Option<(Vec<f64>, Peak)> {
        let b = from_roots(g, &clamp(zeros, rho))?;
        let peak = peak_magnitude_near(a, &b, &angles);
        Some((b, peak))
    };
    // Aim a hair under the cap so round-off in the final coefficients cannot put it over.
    let target_db = cap_db - CAP_MARGIN_DB;
    let (b, peak) = peak_with(largest, gain)?;
    if peak.level_db <= target_db {
        return Some(Capped {
            numerator: b,
            radius_limit: None,
            moved: Vec::new(),
            level_reduction_db: 0.0,
            peak,
        });
    }
    // Broadband excess (still over the cap with every zero at the floor): lower the level.
    let floor = RADIUS_FLOOR.min(largest);
    let (_, floor_peak) = peak_with(floor, gain)?;
    let level_reduction_db = (floor_peak.level_db - target_db).max(0.0);
    // Raising B's gain by the reduction lowers the inverse's level by as much.
    let gain = gain * 10f64.powf(level_reduction_db / 20.0);

    // Largest ρ in [floor, largest] with peak ≤ cap (bisection; the peak grows with ρ).
    let (mut lo, mut hi) = (floor, largest);
    for _ in 0..64 {
        let mid = 0.5 * (lo + hi);
        let (_, p) = peak_with(mid, gain)?;
        if p.level_db <= target_db {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo <= 1e-13 {
            break;
        }
    }
    // Second pass: the common radius moves every zero beyond it, including some that did not
    // cause the excess (a notch far from the peak, say). Let each moved group (a conjugate pair
    // or a real zero) back out alone, closest to the circle first, as far as the cap allows.
    let mut placed = clamp(zeros, lo);
    let groups = moved_groups(zeros, lo);
    if groups.len() <= MAX_RELAXED_GROUPS {
        // Letting one group out changes the others' margins a little, so sweep until settled.
        for _ in 0..RELAX_SWEEPS {
            let mut largest_step = 0.0f64;
            for group in &groups {
                let at = |r: f64, placed: &[Complex64]| -> Option<Peak> {
                    let mut trial = placed.to_vec();
                    for &i in group {
                        trial[i] = Complex64::from_polar(r, zeros[i].arg());
                    }
                    let b = from_roots(gain, &trial)?;
                    Some(peak_magnitude_near(a, &b, &angles))
                };
                let original = zeros[group[0]].norm();
                let current = placed[group[0]].norm();
                let (mut lo_r, mut hi_r) = (current, original);
                if at(original, &placed)?.level_db <= target_db {
                    lo_r = original;
                } else {
                    for _ in 0..64 {
                        let mid = 0.5 * (lo_r + hi_r);
                        if at(mid, &placed)?.level_db <= target_db {
                            lo_r = mid;
                        } else {
                            hi_r = mid;
                        }
                        if hi_r - lo_r <= 1e-13 {
                            break;
                        }
                    }
                }
                largest_step = largest_step.max(lo_r - current);
                for &i in group {
                    placed[i] = if lo_r >= original {
                        zeros[i]
                    } else {
                        Complex64::from_polar(lo_r, zeros[i].arg())
                    };
                }
            }
            if largest_step <= 1e-12 {
                break;
            }
        }
    }
    let numerator = from_roots(gain, &placed)?;
    let peak = peak_magnitude_near(a, &numerator, &angles);
    let moved = zeros
        .iter()
        .zip(&placed)
        .filter(|(from, to)| from != to)
        .map(|(&from, &to)| MovedZero { from, to })
        .collect();
    Some(Capped {
        numerator,
        radius_limit: Some(lo),
        moved,
        level_reduction_db,
        peak,
    })
}

/// Most groups of zeros the second pass relaxes one by one; beyond this (a long comb of echoes
/// near the circle) the common radius stands, which is safe, only less precise.
pub const MAX_RELAXED_GROUPS: usize = 8;

/// Most sweeps of the second pass (each lets every moved group out as far as it can go).
pub const RELAX_SWEEPS: usize = 3;

/// Indices of the zeros beyond `rho`, grouped into conjugate pairs (or single real zeros), the
/// group closest to the circle first (then by angle), so the order is repeatable.
fn moved_groups(zeros: &[Complex64], rho: f64) -> Vec<Vec<usize>> {
    let mut taken = vec![false; zeros.len()];
    let mut groups = Vec::new();
    for i in 0..zeros.len() {
        if taken[i] || zeros[i].norm() <= rho {
            continue;
        }
        taken[i] = true;
        let mut group = vec![i];
        if zeros[i].im != 0.0 {
            let partner = (0..zeros.len()).find(|&j| {
                !taken[j] && (zeros[j] - zeros[i].conj()).norm() <= 1e-12 * zeros[i].norm().max(1.0)
            });
            if let Some(j) = partner {
                taken[j] = true;
                group.push(j);
            }
        }
        groups.push(group);
    }
    groups.sort_by(|x, y| {
        let (zx, zy) = (zeros[x[0]], zeros[y[0]]);
        zy.norm()
            .total_cmp(&zx.norm())
            .then(zx.arg().abs().total_cmp(&zy.arg().abs()))
    });
    groups
}

fn clamp(zeros: &[Complex64], rho: f64) -> Vec<Complex64> {
    zeros
        .iter()
        .map(|&z| {
            if z.norm() > rho {
                Complex64::from_polar(rho, z.arg())
            } else {
                z
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Closed form from the module comment: boost of 1/B at ω₀ for a conjugate pair (r, ω₀).
    fn pair_boost_db(r: f64, w0: f64) -> f64 {
        let e = Complex64::from_polar(1.0, -2.0 * w0);
        -20.0 * ((1.0 - r) * (Complex64::new(1.0, 0.0) - e * r).norm()).log10()
    }

    // Source: closed form for a conjugate zero pair (common practice, derived above).
    #[test]
    fn capped_pair_matches_closed_form() {
        let w0 = 0.9;
        let r = 0.9995;
        let zeros = [Complex64::from_polar(r, w0), Complex64::from_polar(r, -w0)];
        let capped = cap_boost(&[1.0], 1.0, &zeros, 20.0).unwrap();
        let rho = capped.radius_limit.unwrap();
        assert!(rho < r);
        assert!(capped.peak.level_db <= 20.0 + 1e-9);
        assert!((capped.peak.level_db - 20.0).abs() < 0.01);
        assert!((capped.peak.level_db - pair_boost_db(rho, w0)).abs() < 0.01);
        assert_eq!(capped.level_reduction_db, 0.0);
    }

    // Source: common practice — a notch on the circle (with its own poles just inside) and a
    // dip elsewhere: the dip sets the common radius, but the notch's zeros need only move until
    // their own boost reaches the cap, so the second pass leaves them much closer to the circle.
    #[test]
    fn second_pass_moves_each_zero_only_as_far_as_it_must() {
        let notch = 0.007_854; // 60 Hz at 48 kHz
        let dip = 1.178; // 9 kHz
        let zeros = [
            Complex64::from_polar(1.0, notch),
            Complex64::from_polar(1.0, -notch),
            Complex64::from_polar(0.9995, dip),
            Complex64::from_polar(0.9995, -dip),
        ];
        let poles = [
            Complex64::from_polar(0.995, notch),
            Complex64::from_polar(0.995, -notch),
        ];
        let a = from_roots(1.0, &poles).unwrap();
        let capped = cap_boost(&a, 1.0, &zeros, 18.0).unwrap();
        assert!(capped.peak.level_db <= 18.0);
        let rho = capped.radius_limit.unwrap();
        let radius_of = |angle: f64| {
            capped
                .moved
                .iter()
                .find(|m| (m.to.arg() - angle).abs() < 1e-9)
                .map(|m| m.to.norm())
                .unwrap()
        };
        let (notch_r, dip_r) = (radius_of(notch), radius_of(dip));
        assert!(dip_r >= rho - 1e-12 && dip_r < 0.99, "dip zeros at {dip_r}");
        assert!(notch_r > 0.999 && notch_r < 1.0, "notch zeros at {notch_r}");
        // Just enough: either group a hair further out and the cap breaks.
        for (angle, nudge) in [(notch, 1e-6), (dip, 1e-6)] {
            let out: Vec<Complex64> = zeros
                .iter()
                .map(|m| {
                    let mut r = if (m.arg().abs() - notch).abs() < 1e-9 {
                        notch_r
                    } else {
                        dip_r
                    };
                    if (m.arg().abs() - angle).abs() < 1e-9 {
                        r += nudge;
                    }
                    Complex64::from_polar(r, m.arg())
                })
                .collect();
            let b = from_roots(1.0, &out).unwrap();
            let level = crate::numeric::response::peak_magnitude(&a, &b).level_db;
            assert!(level > 18.0 - 1e-6, "angle {angle}: {level} dB");
        }
    }

    // Source: common practice — a flat loss of 30 dB needs a 30 dB boost; only the level helps.
    #[test]
    fn broadband_loss_lowers_level() {
        let capped = cap_boost(&[1.0], 10f64.powf(-30.0 / 20.0), &[], 20.0).unwrap();
        // 10 dB, plus the search's margin under the cap.
        assert!((capped.level_reduction_db - 10.0 - CAP_MARGIN_DB).abs() < 1e-9);
        assert!((capped.peak.level_db - 20.0).abs() < 1e-5);
        assert!(capped.peak.level_db <= 20.0);
    }
}
