//! Delayed least-squares FIR inverse.
//!
//! With h the channel's impulse response and H its convolution matrix, the L taps g minimise
//!   ‖H·g − δ(n − D)‖² + λ′·‖g‖²,  λ′ = λ·‖h‖²,
//! whose normal equations (HᵀH + λ′I)·g = Hᵀδ_D have a symmetric Toeplitz matrix (the
//! autocorrelation of h) and right-hand side (Hᵀδ_D)ᵢ = h[D − i]. A delay D lets the inverse
//! answer before the channel's energy has arrived, which is how it corrects zeros outside the
//! circle (and phase): the price is D samples of latency.

use serde::Serialize;

use crate::numeric::toeplitz::solve_symmetric_toeplitz;

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
    let rhs: Vec<f64> = (0..taps)
        .map(|i| {
            delay
                .checked_sub(i)
                .and_then(|j| h.get(j))
                .copied()
                .unwrap_or(0.0)
        })
        .collect();
    let g = solve_symmetric_toeplitz(&r, &rhs)?;
    let residual = residual_energy(h, &g, delay);
    Some(FirSolution {
        taps: g,
        delay,
        regularization,
        residual_error_db: 10.0 * residual.max(1e-300).log10(),
    })
}

/// Tries every delay 0..=max_delay and keeps the one with the smallest residual.
pub fn search_delay(
    h: &[f64],
    taps: usize,
    max_delay: usize,
    regularization: f64,
) -> Option<FirSolution> {
    let r = autocorrelation(h, taps, regularization);
    let lambda = r[0] - h.iter().map(|x| x * x).sum::<f64>();
    let mut best: Option<(usize, f64)> = None;
    let mut rhs = vec![0.0; taps];
    for delay in 0..=max_delay {
        for (i, v) in rhs.iter_mut().enumerate() {
            *v = delay
                .checked_sub(i)
                .and_then(|j| h.get(j))
                .copied()
                .unwrap_or(0.0);
        }
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

    // Source: common practice — a zero outside the circle (0.5 + z⁻¹) needs delay to invert.
    #[test]
    fn outside_zero_prefers_delay() {
        let h = [0.5, 1.0];
        let at_zero = solve_at_delay(&h, 32, 0, 0.0).unwrap();
        let best = search_delay(&h, 32, 40, 0.0).unwrap();
        assert!(best.delay > 10);
        assert!(best.residual_error_db < at_zero.residual_error_db - 20.0);
    }
}
