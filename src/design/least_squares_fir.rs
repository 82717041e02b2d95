//! Delayed least-squares FIR inverse.
//!
//! With h the channel's impulse response and H its convolution matrix, the L taps g minimise
//!   ‖H·g − δ(n − D)‖² + λ′·‖g‖²,  λ′ = λ·‖h‖²,
//! whose normal equations (HᵀH + λ′I)·g = Hᵀδ_D have a symmetric Toeplitz matrix (the
//! autocorrelation of h) and right-hand side (Hᵀδ_D)ᵢ = h[D − i]. A delay D lets the inverse
//! answer before the channel's energy has arrived, which is how it corrects zeros outside the
//! circle (and phase): the price is D samples of latency.

use serde::Serialize;

use crate::numeric::toeplitz::{solve_symmetric_toeplitz, symmetric_toeplitz_predictor};

/// A solved FIR inverse.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FirSolution {
    pub taps: Vec<f64>,
    pub delay: usize,
    /// λ (relative to the channel energy) actually used.
    pub regularization: f64,
    /// ‖h∗g − δ(n−D)‖² in dB (relative to the unit impulse).
    pub residual_error_db: f64,
}

/// Solves for L taps at a fixed delay D. `None` when the system is singular (λ = 0 and a
/// degenerate h) or `h` is empty.
pub fn solve_at_delay(
    h: &[f64],
    taps: usize,
    delay: usize,
    regularization: f64,
) -> Option<FirSolution> {
    let r = autocorrelation(h, taps, regularization);
    let rhs = window(h, taps, delay);
    let g = solve_symmetric_toeplitz(&r, &rhs)?;
    Some(FirSolution::measured(h, g, delay, regularization))
}

impl FirSolution {
    /// Taps `g` at delay D with their residual ‖h∗g − δ(n−D)‖² measured by convolution.
    pub fn measured(h: &[f64], g: Vec<f64>, delay: usize, regularization: f64) -> Self {
        let residual = residual_energy(h, &g, delay);
        FirSolution {
            taps: g,
            delay,
            regularization,
            residual_error_db: 10.0 * residual.max(1e-300).log10(),
        }
    }
}

/// The normal equations of one channel, built once for solving at many lengths, delays and
/// regularisations: the autocorrelation's first lags do not depend on the length asked for, and
/// λ only scales lag 0.
pub struct FirSystem<'a> {
    h: &'a [f64],
    /// Lags 0 … `longest` − 1 of h's autocorrelation, without regularisation.
    lags: Vec<f64>,
}

impl<'a> FirSystem<'a> {
    /// The system for up to `longest` taps. The autocorrelation is taken by FFT, since the
    /// channel's response may run to tens of thousands of samples.
    pub fn new(h: &'a [f64], longest: usize) -> Self {
        FirSystem {
            h,
            lags: fft_autocorrelation(h, longest),
        }
    }

    /// As [`solve_at_delay`], for `taps` up to the longest the system was built for. The
    /// residual comes from the normal equations (‖Hg − d‖² = ‖d‖² − gᵀHᵀd − λ′‖g‖²), not from a
    /// convolution.
    pub fn solve(&self, taps: usize, delay: usize, regularization: f64) -> Option<FirSolution> {
        let taps = taps.min(self.lags.len());
        let mut r = self.lags[..taps].to_vec();
        let energy = *r.first()?;
        r[0] *= 1.0 + regularization;
        let rhs = window(self.h, taps, delay);
        let g = solve_symmetric_toeplitz(&r, &rhs)?;
        let gd: f64 = g.iter().zip(&rhs).map(|(a, b)| a * b).sum();
        let gg: f64 = g.iter().map(|x| x * x).sum();
        let residual = 1.0 - gd - regularization * energy * gg;
        Some(FirSolution {
            taps: g,
            delay,
            regularization,
            residual_error_db: 10.0 * residual.max(1e-300).log10(),
        })
    }
}

/// Lags 0 … `lags` − 1 of h's autocorrelation, as the inverse FFT of |H|² on a grid long enough
/// that no lag wraps.
fn fft_autocorrelation(h: &[f64], lags: usize) -> Vec<f64> {
    use rustfft::{num_complex::Complex64, FftPlanner};
    let size = (h.len() + lags).next_power_of_two().max(2);
    let mut power: Vec<Complex64> = crate::numeric::homomorphic::spectrum_on_grid(h, size)
        .iter()
        .map(|c| Complex64::new(c.norm_sqr(), 0.0))
        .collect();
    FftPlanner::<f64>::new()
        .plan_fft_inverse(size)
        .process(&mut power);
    power
        .iter()
        .take(lags)
        .map(|c| c.re / size as f64)
        .collect()
}

/// Tries every delay 0..=max_delay and keeps the one with the smallest residual.
///
/// One Levinson solve per delay would cost O(D·L²) (a minute at 4096 taps and delays). The
/// matrix is the same for every delay, only the right-hand side r_D (a window of h) slides, so
/// its predictor alone (Gohberg–Semencul) gives every delay's objective r_Dᵀ·T⁻¹·r_D in O(L)
/// after an O(L²) start ([`DelayScreen`]). The few best delays by that objective are then
/// solved exactly and ranked by the residual itself (the two differ only through λ′).
pub fn search_delay(
    h: &[f64],
    taps: usize,
    max_delay: usize,
    regularization: f64,
) -> Option<FirSolution> {
    let r = autocorrelation(h, taps, regularization);
    let lambda = r[0] - h.iter().map(|x| x * x).sum::<f64>();
    let mut screen = DelayScreen::new(h, &r)?;
    let mut objective: Vec<(f64, usize)> = (0..=max_delay)
        .map(|delay| (screen.next_objective(), delay))
        .collect();
    objective.sort_by(|x, y| y.0.total_cmp(&x.0).then(x.1.cmp(&y.1)));
    objective.truncate(EXACT_CANDIDATES);
    objective.sort_by_key(|&(_, delay)| delay);
    let mut best: Option<(usize, f64)> = None;
    for &(_, delay) in &objective {
        let rhs = window(h, taps, delay);
        let Some(g) = solve_symmetric_toeplitz(&r, &rhs) else {
            continue;
        };
        // With T·g = Hᵀd: ‖Hg − d‖² = 1 − gᵀHᵀd − λ′‖g‖² (no convolution needed per delay).
        let gd: f64 = g.iter().zip(&rhs).map(|(a, b)| a * b).sum();
        let gg: f64 = g.iter().map(|x| x * x).sum();
        let err = 1.0 - gd - lambda * gg;
        if best.is_none_or(|(_, e)| err < e) {
            best = Some((delay, err));
        }
    }
    let (delay, _) = best?;
    solve_at_delay(h, taps, delay, regularization)
}

/// Delays solved exactly after the screen (the best by the screen's objective).
const EXACT_CANDIDATES: usize = 8;

/// Delays between fresh O(L²) starts of the screen, so that the O(L) updates' rounding cannot
/// build up over a long search.
const SCREEN_REFRESH: usize = 256;

/// The right-hand side for delay D: (Hᵀδ_D)ᵢ = h[D − i].
fn window(h: &[f64], taps: usize, delay: usize) -> Vec<f64> {
    (0..taps).map(|i| tap_of(h, delay, i)).collect()
}

fn tap_of(h: &[f64], delay: usize, i: usize) -> f64 {
    delay
        .checked_sub(i)
        .and_then(|j| h.get(j))
        .copied()
        .unwrap_or(0.0)
}

/// r_Dᵀ·T⁻¹·r_D for D = 0, 1, 2, … With T⁻¹ = (A·Aᵀ − B·Bᵀ)/P it is (‖Aᵀr_D‖² − ‖Bᵀr_D‖²)/P,
/// and since r_{D+1} is r_D shifted down by one with h[D+1] on top, Aᵀr_{D+1} is Aᵀr_D shifted
/// down, less a multiple of the element that fell off, with one new head (likewise for B).
struct DelayScreen<'a> {
    h: &'a [f64],
    predictor: Vec<f64>,
    power: f64,
    along_a: Vec<f64>,
    along_b: Vec<f64>,
    delay: usize,
}

impl<'a> DelayScreen<'a> {
    fn new(h: &'a [f64], r: &[f64]) -> Option<Self> {
        let (predictor, power) = symmetric_toeplitz_predictor(r)?;
        let taps = r.len();
        Some(DelayScreen {
            h,
            predictor,
            power,
            along_a: vec![0.0; taps],
            along_b: vec![0.0; taps],
            delay: 0,
        })
    }

    /// The objective at the next delay (0 on the first call).
    fn next_objective(&mut self) -> f64 {
        let (a, n, d) = (&self.predictor, self.predictor.len(), self.delay);
        if d % SCREEN_REFRESH == 0 {
            // Aᵀr and Bᵀr from scratch: (Aᵀr)ᵢ = Σ_{j≥i} a[j−i]·r[j], (Bᵀr)ᵢ = Σ_{j>i} a[n−j+i]·r[j].
            for i in 0..n {
                self.along_a[i] = (i..n).map(|j| a[j - i] * tap_of(self.h, d, j)).sum();
                self.along_b[i] = (i + 1..n)
                    .map(|j| a[n - j + i] * tap_of(self.h, d, j))
                    .sum();
            }
        } else {
            // The element r_{D−1}[n−1] = h[D − n] fell off the bottom of the window.
            let fell = tap_of(self.h, d - 1, n - 1);
            self.along_a.rotate_right(1);
            self.along_b.rotate_right(1);
            for i in 1..n {
                self.along_a[i] -= a[n - i] * fell;
                self.along_b[i] -= a[i] * fell;
            }
            self.along_a[0] = (0..n).map(|j| a[j] * tap_of(self.h, d, j)).sum();
            self.along_b[0] = (1..n).map(|j| a[n - j] * tap_of(self.h, d, j)).sum();
        }
        self.delay += 1;
        let norm = |v: &[f64]| v.iter().map(|x| x * x).sum::<f64>();
        (norm(&self.along_a) - norm(&self.along_b)) / self.power
    }
}

/// First `taps` lags of h's autocorrelation, with λ·‖h‖² added at lag 0.
fn autocorrelation(h: &[f64], taps: usize, regularization: f64) -> Vec<f64> {
    let mut r: Vec<f64> = (0..taps)
        .map(|k| {
            h.iter()
                .zip(h.iter().skip(k))
                .map(|(a, b)| a * b)
                .sum::<f64>()
        })
        .collect();
    if let Some(r0) = r.first_mut() {
        *r0 *= 1.0 + regularization;
    }
    r
}

/// ‖h∗g − δ(n − D)‖², by direct convolution.
fn residual_energy(h: &[f64], g: &[f64], delay: usize) -> f64 {
    let n = h.len() + g.len() - 1;
    let mut energy = 0.0;
    for k in 0..n.max(delay + 1) {
        let lo = k.saturating_sub(g.len() - 1);
        let hi = k.min(h.len() - 1);
        let mut y = 0.0;
        if lo <= hi {
            for i in lo..=hi {
                y += h[i] * g[k - i];
            }
        }
        if k == delay {
            y -= 1.0;
        }
        energy += y * y;
    }
    energy
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — an FIR channel 1 + 0.5z⁻¹ has the exact inverse Σ(−0.5)ⁿz⁻ⁿ;
    // at D = 0 the least-squares taps approach it and the residual falls with L.
    #[test]
    fn min_phase_channel_at_zero_delay() {
        let h = [1.0, 0.5];
        let s = solve_at_delay(&h, 32, 0, 0.0).unwrap();
        for (n, g) in s.taps.iter().take(10).enumerate() {
            assert!((g - (-0.5f64).powi(n as i32)).abs() < 1e-6, "tap {n}: {g}");
        }
        assert!(s.residual_error_db < -50.0);
    }

    // Source: common practice — the system built once (autocorrelation by FFT, residual from
    // the normal equations) gives the taps and residual of a fresh solve with a convolution.
    #[test]
    fn system_matches_a_fresh_solve() {
        for h in channels() {
            let system = FirSystem::new(&h, 96);
            for (taps, delay, lambda) in [(16, 0, 0.0), (48, 20, 1e-4), (96, 70, 1e-2)] {
                let fresh = solve_at_delay(&h, taps, delay, lambda).unwrap();
                let built = system.solve(taps, delay, lambda).unwrap();
                let scale = fresh.taps.iter().fold(0.0f64, |m, x| m.max(x.abs()));
                for (a, b) in fresh.taps.iter().zip(&built.taps) {
                    assert!(
                        (a - b).abs() <= 1e-8 * scale,
                        "{taps} taps at {delay}: {a} vs {b}"
                    );
                }
                assert!(
                    (fresh.residual_error_db - built.residual_error_db).abs() < 1e-6,
                    "{} vs {}",
                    fresh.residual_error_db,
                    built.residual_error_db
                );
            }
        }
    }

    // Source: common practice — a zero outside the circle (0.5 + z⁻¹) needs delay to invert.
    #[test]
    fn outside_zero_prefers_delay() {
        let h = [0.5, 1.0];
        let at_zero = solve_at_delay(&h, 32, 0, 0.0).unwrap();
        let best = search_delay(&h, 32, 40, 0.0).unwrap();
        assert!(best.delay > 10);
        assert!(best.residual_error_db < at_zero.residual_error_db - 20.0);
    }

    /// Decaying pseudo-random impulse responses (a fixed xorshift, so every run sees the same).
    fn channels() -> Vec<Vec<f64>> {
        let mut state: u64 = 0x2545_f491_4f6c_dd1d;
        let mut next = move || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        [24usize, 60, 150]
            .iter()
            .map(|&len| (0..len).map(|n| next() * 0.93f64.powi(n as i32)).collect())
            .collect()
    }

    // Source: common practice — the screen's O(L) updates must give the same objective
    // r_Dᵀ·T⁻¹·r_D as a Levinson solve per delay, across several refreshes.
    #[test]
    fn screen_matches_a_solve_per_delay() {
        for h in channels() {
            for regularization in [0.0, 1e-3] {
                let taps = 48;
                let r = autocorrelation(&h, taps, regularization);
                let mut screen = DelayScreen::new(&h, &r).unwrap();
                for delay in 0..=(2 * SCREEN_REFRESH + 40) {
                    let rhs = window(&h, taps, delay);
                    let g = solve_symmetric_toeplitz(&r, &rhs).unwrap();
                    let direct: f64 = g.iter().zip(&rhs).map(|(a, b)| a * b).sum();
                    let screened = screen.next_objective();
                    assert!(
                        (screened - direct).abs() <= 1e-9 * direct.abs().max(1e-3),
                        "delay {delay}: screen {screened}, solve {direct}"
                    );
                }
            }
        }
    }

    // Source: common practice — the search picks the delay an exhaustive search picks (the
    // residual measured by direct convolution at every delay).
    #[test]
    fn search_equals_exhaustive() {
        for h in channels() {
            for (taps, regularization) in [(16, 0.0), (40, 1e-4), (40, 1e-2)] {
                let max_delay = h.len() + taps;
                let exhaustive = (0..=max_delay)
                    .filter_map(|d| solve_at_delay(&h, taps, d, regularization))
                    .min_by(|x, y| x.residual_error_db.total_cmp(&y.residual_error_db))
                    .unwrap();
                let found = search_delay(&h, taps, max_delay, regularization).unwrap();
                assert!(
                    (found.residual_error_db - exhaustive.residual_error_db).abs() < 1e-9,
                    "taps {taps}, λ {regularization}: found D = {} ({} dB), exhaustive D = {} ({} dB)",
                    found.delay,
                    found.residual_error_db,
                    exhaustive.delay,
                    exhaustive.residual_error_db
                );
            }
        }
    }
}
