//! IIR model B(z)/A(z) of given orders by the Steiglitz–McBride iteration (K. Steiglitz and
//! L. E. McBride, "A technique for the identification of linear systems", IEEE Transactions on
//! Automatic Control, 1965, from memory).
//!
//! The output error y − (B/A)·s is not linear in A. The iteration makes it so: with the last
//! estimate Â, both signals are prefiltered by 1/Â and the equation error
//! Â⁻¹y·A − Â⁻¹s·B is minimised by ordinary least squares for (B, A); as Â → A the prefilter
//! turns the equation error into the output error. The first pass (Â = 1) is the plain
//! equation-error fit. A pass whose A has roots on or outside the unit circle has them reflected
//! inside (common practice), so the prefilter stays stable; the fit then says so.

use nalgebra::{DMatrix, DVector};

use super::error::MeasureError;
use super::lagged_gram::{lagged_cross, lagged_gram};
use crate::numeric::poly::from_roots;
use crate::numeric::roots::{expand, find_roots};

/// Highest order of either polynomial.
pub const MAX_IIR_ORDER: usize = 64;
/// Frames of data needed per coefficient.
pub const FRAMES_PER_COEFFICIENT: usize = 20;
/// Iterations before giving up on convergence.
pub const MAX_ITERATIONS: usize = 60;
/// Converged when no coefficient moves by more than this (relative to the largest).
const TOLERANCE: f64 = 1e-10;

/// Orders of B and A.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct IirOrders {
    pub numerator: usize,
    pub denominator: usize,
}

/// A fitted IIR model.
#[derive(Debug, Clone, PartialEq)]
pub struct IirFit {
    pub b: Vec<f64>,
    /// a[0] = 1.
    pub a: Vec<f64>,
    pub iterations: usize,
    pub converged: bool,
    /// Poles reflected inside the unit circle over the iterations.
    pub reflected_poles: usize,
    /// Σ (y − (B/A)·s)² over the frames fitted.
    pub residual_energy: f64,
    pub response_energy: f64,
    pub frames: usize,
}

impl IirFit {
    /// Output error relative to the response, in dB.
    pub fn fit_error_db(&self) -> f64 {
        10.0 * (self.residual_energy / self.response_energy).log10()
    }
}

/// First `n_end` samples of (B/A)·x, from rest.
pub(crate) fn filter(b: &[f64], a: &[f64], x: &[f64], n_end: usize) -> Vec<f64> {
    let mut y = vec![0.0; n_end];
    for n in 0..n_end {
        let mut acc = 0.0;
        for (k, &bk) in b.iter().enumerate() {
            if k > n {
                break;
            }
            acc += bk * x.get(n - k).copied().unwrap_or(0.0);
        }
        for (k, &ak) in a.iter().enumerate().skip(1) {
            if k > n {
                break;
            }
            acc -= ak * y[n - k];
        }
        y[n] = acc / a[0];
    }
    y
}

/// Reflects roots of `a` on or outside the unit circle to 1/conj(p); returns the new
/// polynomial (a[0] = 1) and how many roots moved.
fn stabilised(a: &[f64]) -> (Vec<f64>, usize) {
    if a.len() <= 1 {
        return (a.to_vec(), 0);
    }
    let Ok(roots) = find_roots(a) else {
        return (a.to_vec(), 0);
    };
    let mut moved = 0;
    let mut values = expand(&roots);
    for p in values.iter_mut() {
        let r = p.norm();
        if r >= 1.0 {
            // A pole exactly on the circle has nowhere to reflect to; pull it just inside.
            *p = if r > 1.0 { p.inv().conj() } else { *p * 0.999 };
            moved += 1;
        }
    }
    if moved == 0 {
        return (a.to_vec(), 0);
    }
    match from_roots(1.0, &values) {
        Some(v) => (v, moved),
        None => (a.to_vec(), 0),
    }
}

/// Checks that `orders` can be fitted to `frames` frames of data.
pub fn check_orders(orders: IirOrders, frames: usize) -> Result<(), MeasureError> {
    let fail = |why: String| MeasureError::OrdersTooHigh {
        numerator: orders.numerator,
        denominator: orders.denominator,
        frames,
        why,
    };
    if orders.numerator > MAX_IIR_ORDER || orders.denominator > MAX_IIR_ORDER {
        return Err(fail(format!(
            "each order may be at most {MAX_IIR_ORDER}; a longer model is better fitted as an FIR"
        )));
    }
    let coefficients = orders.numerator + orders.denominator + 1;
    if frames < FRAMES_PER_COEFFICIENT * coefficients {
        return Err(fail(format!(
            "{coefficients} coefficients need at least {} frames ({FRAMES_PER_COEFFICIENT} per \
             coefficient)",
            FRAMES_PER_COEFFICIENT * coefficients
        )));
    }
    Ok(())
}

/// Fits B/A of `orders` to the first `n_end` frames of `response` (aligned so that index 0 is
/// where the stimulus starts to arrive).
pub fn fit_iir(
    stimulus: &[f64],
    response: &[f64],
    n_end: usize,
    orders: IirOrders,
) -> Result<IirFit, MeasureError> {
    let n_end = n_end.min(response.len());
    check_orders(orders, n_end)?;
    let (nb, na) = (orders.numerator + 1, orders.denominator);
    let response_energy: f64 = response[..n_end].iter().map(|v| v * v).sum();
    let mut a = vec![1.0];
    a.resize(na + 1, 0.0);
    let mut b = vec![0.0; nb];
    let mut reflected = 0;
    let mut converged = false;
    let mut iterations = 0;
    while iterations < MAX_ITERATIONS {
        iterations += 1;
        let sf = filter(&[1.0], &a, stimulus, n_end);
        let yf = filter(&[1.0], &a, response, n_end);
        let (new_b, new_a) = equation_error_fit(&sf, &yf, nb, na, n_end)?;
        let (new_a, moved) = stabilised(&new_a);
        reflected += moved;
        let scale = new_b
            .iter()
            .chain(&new_a)
            .fold(0.0f64, |m, v| m.max(v.abs()))
            .max(1e-300);
        let change = new_b
            .iter()
            .zip(&b)
            .chain(new_a.iter().zip(&a))
            .fold(0.0f64, |m, (x, y)| m.max((x - y).abs()));
        b = new_b;
        a = new_a;
        if na == 0 || change <= TOLERANCE * scale {
            converged = true;
            break;
        }
    }
    let residual_energy = super::fir_fit::output_residual(stimulus, response, &b, &a, n_end);
    Ok(IirFit {
        b,
        a,
        iterations,
        converged,
        reflected_poles: reflected,
        residual_energy,
        response_energy,
        frames: n_end,
    })
}

/// Least squares for yf[n] + Σ aᵢ·yf[n−i] = Σ bⱼ·sf[n−j]: returns (b, a with a[0] = 1).
fn equation_error_fit(
    sf: &[f64],
    yf: &[f64],
    nb: usize,
    na: usize,
    n_end: usize,
) -> Result<(Vec<f64>, Vec<f64>), MeasureError> {
    // Regressors: sf lagged 0..nb, and w = yf delayed one sample, lagged 0..na (entering with a
    // minus sign: −w[n−j] = −yf[n−1−j]).
    let mut w = Vec::with_capacity(n_end);
    w.push(0.0);
    w.extend_from_slice(&yf[..n_end.saturating_sub(1)]);
    let p = nb + na;
    let mut m = DMatrix::zeros(p, p);
    let mut rhs = DVector::zeros(p);
    let ss = lagged_gram(sf, sf, nb, nb, n_end);
    m.view_mut((0, 0), (nb, nb)).copy_from(&ss);
    for (j, v) in lagged_cross(yf, sf, nb, n_end).into_iter().enumerate() {
        rhs[j] = v;
    }
    if na > 0 {
        let ww = lagged_gram(&w, &w, na, na, n_end);
        let sw = lagged_gram(sf, &w, nb, na, n_end);
        m.view_mut((nb, nb), (na, na)).copy_from(&ww);
        m.view_mut((0, nb), (nb, na)).copy_from(&(-&sw));
        m.view_mut((nb, 0), (na, nb)).copy_from(&(-sw.transpose()));
        for (j, v) in lagged_cross(yf, &w, na, n_end).into_iter().enumerate() {
            rhs[nb + j] = -v;
        }
    }
    // Scale to a unit diagonal: the blocks can differ by orders of magnitude.
    let d: Vec<f64> = (0..p)
        .map(|i| {
            let v = m[(i, i)];
            if v > 0.0 {
                1.0 / v.sqrt()
            } else {
                1.0
            }
        })
        .collect();
    let scaled = DMatrix::from_fn(p, p, |i, j| m[(i, j)] * d[i] * d[j]);
    let scaled_rhs = DVector::from_fn(p, |i, _| rhs[i] * d[i]);
    let solution = match scaled.clone().cholesky() {
        Some(c) => c.solve(&scaled_rhs),
        None => scaled
            .svd(true, true)
            .solve(&scaled_rhs, 1e-12)
            .map_err(|why| MeasureError::Numerical {
                what: format!("the Steiglitz–McBride system could not be solved ({why})"),
            })?,
    };
    let theta: Vec<f64> = (0..p).map(|i| solution[i] * d[i]).collect();
    if theta.iter().any(|v| !v.is_finite()) {
        return Err(MeasureError::Numerical {
            what: "the Steiglitz–McBride system has no finite solution".into(),
        });
    }
    let b = theta[..nb].to_vec();
    let mut a = vec![1.0];
    a.extend_from_slice(&theta[nb..]);
    Ok((b, a))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::measure::noise::GaussianNoise;

    #[test]
    fn recovers_a_resonant_channel_without_noise() {
        // H(z) = (0.5 + 0.2z⁻¹)/(1 − 1.2z⁻¹ + 0.72z⁻²): poles at radius √0.72 ≈ 0.85.
        let (b, a) = ([0.5, 0.2], [1.0, -1.2, 0.72]);
        let mut g = GaussianNoise::new(3);
        let s: Vec<f64> = (0..3_000).map(|_| 0.1 * g.sample()).collect();
        let y = filter(&b, &a, &s, 3_100);
        let fit = fit_iir(
            &s,
            &y,
            3_100,
            IirOrders {
                numerator: 1,
                denominator: 2,
            },
        )
        .unwrap();
        assert!(fit.converged);
        for (x, want) in fit.b.iter().zip(b).chain(fit.a.iter().zip(a)) {
            assert!((x - want).abs() < 1e-9, "{x} vs {want}");
        }
        assert!(fit.fit_error_db() < -150.0);
    }

    #[test]
    fn orders_too_high_for_the_data_are_refused() {
        let s = vec![0.1; 200];
        let e = fit_iir(
            &s,
            &s,
            200,
            IirOrders {
                numerator: 6,
                denominator: 6,
            },
        )
        .unwrap_err();
        assert!(matches!(e, MeasureError::OrdersTooHigh { .. }), "{e}");
        let e = check_orders(
            IirOrders {
                numerator: 65,
                denominator: 2,
            },
            1_000_000,
        )
        .unwrap_err();
        assert!(e.to_string().contains("at most 64"), "{e}");
    }

    #[test]
    fn an_unstable_estimate_is_reflected_inside() {
        // 1 − 2.5z⁻¹ + z⁻² has roots 2 and 0.5; reflecting 2 gives a double root at 0.5.
        let (a, moved) = stabilised(&[1.0, -2.5, 1.0]);
        assert_eq!(moved, 1);
        assert!(
            (a[1] + 1.0).abs() < 1e-12 && (a[2] - 0.25).abs() < 1e-12,
            "{a:?}"
        );
    }
}
