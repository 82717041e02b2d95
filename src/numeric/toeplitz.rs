//! Solving a symmetric positive-definite Toeplitz system T·x = y in O(n²) (Levinson's recursion).
//!
//! The normal equations of a least-squares inverse have exactly this matrix (the channel's
//! autocorrelation), so a general O(n³) solver would waste the structure.

/// Solves T·x = y where T is the symmetric Toeplitz matrix with first column `r`.
///
/// Returns `None` when T is not positive definite (the recursion meets a non-positive pivot),
/// or when `r` and `y` differ in length or are empty.
///
/// The recursion is Levinson's algorithm for a general right-hand side (as in Golub & Van Loan,
/// "Matrix Computations", from memory), on T scaled to a unit diagonal.
pub fn solve_symmetric_toeplitz(r: &[f64], y: &[f64]) -> Option<Vec<f64>> {
    let n = r.len();
    if n == 0 || y.len() != n || r[0].partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
        return None;
    }
    let t: Vec<f64> = r[1..].iter().map(|v| v / r[0]).collect();
    let b: Vec<f64> = y.iter().map(|v| v / r[0]).collect();
    let mut x = vec![0.0; n];
    x[0] = b[0];
    if n == 1 {
        return Some(x);
    }
    // `durbin` solves the Yule–Walker system T_k·d = −t[..k] as k grows.
    let mut durbin = vec![0.0; n];
    durbin[0] = -t[0];
    let mut beta = 1.0;
    let mut alpha = -t[0];
    let mut scratch = vec![0.0; n];
    for k in 1..n {
        beta *= 1.0 - alpha * alpha;
        if beta.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
            return None;
        }
        let dot: f64 = (0..k).map(|i| t[i] * x[k - 1 - i]).sum();
        let mu = (b[k] - dot) / beta;
        for i in 0..k {
            scratch[i] = x[i] + mu * durbin[k - 1 - i];
        }
        x[..k].copy_from_slice(&scratch[..k]);
        x[k] = mu;
        if k < n - 1 {
            let dot: f64 = (0..k).map(|i| t[i] * durbin[k - 1 - i]).sum();
            alpha = (-t[k] - dot) / beta;
            for i in 0..k {
                scratch[i] = durbin[i] + alpha * durbin[k - 1 - i];
            }
            durbin[..k].copy_from_slice(&scratch[..k]);
            durbin[k] = alpha;
        }
    }
    if x.iter().all(|v| v.is_finite()) {
        Some(x)
    } else {
        None
    }
}

/// The forward predictor of the symmetric Toeplitz matrix T with first column `r`: `a` (with
/// a[0] = 1) and P > 0 such that T·a = (P, 0, …, 0)ᵀ, by Durbin's recursion (Golub & Van Loan,
/// "Matrix Computations", from memory). With it the whole inverse is known without forming it
/// (Gohberg–Semencul): T⁻¹ = (A·Aᵀ − B·Bᵀ) / P, A lower-triangular Toeplitz with first column
/// a, B lower-triangular Toeplitz with first column (0, a[n−1], …, a[1]).
///
/// `None` when T is not positive definite.
pub fn symmetric_toeplitz_predictor(r: &[f64]) -> Option<(Vec<f64>, f64)> {
    let n = r.len();
    if n == 0 || r[0].partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
        return None;
    }
    let mut a = vec![0.0; n];
    a[0] = 1.0;
    let mut p = r[0];
    let mut previous = vec![0.0; n];
    for k in 1..n {
        // Reflection coefficient of order k from the order-(k−1) predictor's error.
        let e: f64 = (0..k).map(|i| a[i] * r[k - i]).sum();
        let kappa = -e / p;
        previous[..k].copy_from_slice(&a[..k]);
        for i in 1..k {
            a[i] = previous[i] + kappa * previous[k - i];
        }
        a[k] = kappa;
        p *= 1.0 - kappa * kappa;
        if p.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
            return None;
        }
    }
    if a.iter().all(|v| v.is_finite()) {
        Some((a, p))
    } else {
        None
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — check against the dense product T·x.
    #[test]
    fn solves_small_system() {
        let r = [4.0, 1.0, 0.5, 0.25];
        let y = [1.0, -2.0, 0.5, 3.0];
        let x = solve_symmetric_toeplitz(&r, &y).unwrap();
        for i in 0..4 {
            let row: f64 = (0..4)
                .map(|j| r[(i as isize - j as isize).unsigned_abs()] * x[j])
                .sum();
            assert!((row - y[i]).abs() < 1e-13, "row {i}: {row} vs {}", y[i]);
        }
    }

    // Source: the Gohberg–Semencul formula (Golub & Van Loan, from memory), checked here
    // against the dense product: T·(T⁻¹·y) = y with T⁻¹ built from the predictor alone.
    #[test]
    fn predictor_gives_the_inverse() {
        let r = [4.0, 1.5, -0.7, 0.3, 0.1];
        let n = r.len();
        let (a, p) = symmetric_toeplitz_predictor(&r).unwrap();
        let t = |i: usize, j: usize| r[(i as isize - j as isize).unsigned_abs()];
        let lower =
            |c: &dyn Fn(usize) -> f64, i: usize, j: usize| if i >= j { c(i - j) } else { 0.0 };
        let col_a = |k: usize| a[k];
        let col_b = |k: usize| if k == 0 { 0.0 } else { a[n - k] };
        let inverse = |i: usize, j: usize| {
            (0..n)
                .map(|k| {
                    lower(&col_a, i, k) * lower(&col_a, j, k)
                        - lower(&col_b, i, k) * lower(&col_b, j, k)
                })
                .sum::<f64>()
                / p
        };
        for i in 0..n {
            for j in 0..n {
                let product: f64 = (0..n).map(|k| t(i, k) * inverse(k, j)).sum();
                let expected = if i == j { 1.0 } else { 0.0 };
                assert!((product - expected).abs() < 1e-13, "({i}, {j}): {product}");
            }
        }
    }

    #[test]
    fn refuses_indefinite() {
        assert!(symmetric_toeplitz_predictor(&[1.0, 2.0]).is_none());
        assert!(solve_symmetric_toeplitz(&[1.0, 2.0], &[1.0, 1.0]).is_none());
        assert!(solve_symmetric_toeplitz(&[0.0, 0.0], &[1.0, 1.0]).is_none());
    }
}
