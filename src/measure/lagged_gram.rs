//! The normal-equation blocks of a least-squares fit on lagged signals.
//!
//! Entry (i, j) is Σₙ x[n − i]·z[n − j] over n = 0 … n_end − 1, with both signals zero before
//! their start ("prewindowed": nothing was played before the stimulus). The first row and column
//! are cross-correlations (one FFT); every other entry follows from its upper-left neighbour by
//! dropping the one product that slides out of the window, so the whole block costs
//! O(N log N + rows·cols) instead of O(N·rows·cols).

use nalgebra::DMatrix;

use super::fft::cross_correlation;

/// The `rows` × `cols` block Σₙ x[n − i]·z[n − j], n < `n_end`.
pub(crate) fn lagged_gram(
    x: &[f64],
    z: &[f64],
    rows: usize,
    cols: usize,
    n_end: usize,
) -> DMatrix<f64> {
    let xt = &x[..x.len().min(n_end)];
    let zt = &z[..z.len().min(n_end)];
    let (positive, negative) =
        cross_correlation(xt, zt, cols.saturating_sub(1), rows.saturating_sub(1));
    let at = |s: &[f64], index: isize| {
        if index >= 0 {
            s.get(index as usize).copied().unwrap_or(0.0)
        } else {
            0.0
        }
    };
    let mut g = DMatrix::zeros(rows, cols);
    for j in 0..cols {
        g[(0, j)] = positive[j];
    }
    for i in 1..rows {
        g[(i, 0)] = negative[i - 1];
    }
    let end = n_end as isize;
    for i in 1..rows {
        for j in 1..cols {
            g[(i, j)] = g[(i - 1, j - 1)] - at(xt, end - i as isize) * at(zt, end - j as isize);
        }
    }
    g
}

/// Σₙ y[n]·z[n − j] for j < `cols`, n < `n_end`: the right-hand side of the normal equations.
pub(crate) fn lagged_cross(y: &[f64], z: &[f64], cols: usize, n_end: usize) -> Vec<f64> {
    let yt = &y[..y.len().min(n_end)];
    let zt = &z[..z.len().min(n_end)];
    cross_correlation(yt, zt, cols.saturating_sub(1), 0).0
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn matches_the_sum_written_out() {
        // The definition, summed directly (common practice).
        let x: Vec<f64> = (0..50)
            .map(|n| ((n * 13 % 17) as f64 - 8.0) / 5.0)
            .collect();
        let z: Vec<f64> = (0..45).map(|n| ((n * 7 % 19) as f64 - 9.0) / 6.0).collect();
        for n_end in [30usize, 45, 60, 100] {
            let g = lagged_gram(&x, &z, 6, 4, n_end);
            for i in 0..6 {
                for j in 0..4 {
                    let direct: f64 = (0..n_end)
                        .map(|n| {
                            let xi = n.checked_sub(i).and_then(|m| x.get(m)).copied();
                            let zj = n.checked_sub(j).and_then(|m| z.get(m)).copied();
                            xi.unwrap_or(0.0) * zj.unwrap_or(0.0)
                        })
                        .sum();
                    assert!((g[(i, j)] - direct).abs() < 1e-9, "({i},{j}) n_end {n_end}");
                }
            }
            let r = lagged_cross(&x, &z, 4, n_end);
            for (j, v) in r.iter().enumerate() {
                assert!((v - g[(0, j)]).abs() < 1e-9);
            }
        }
    }
}
