//! How many zeros of a polynomial lie inside a circle, without finding them: the argument
//! principle on an FFT grid.
//!
//! For P(z) = Σ bₖ z^{n−k} (the z-form of B(z) = Σ bₖ z⁻ᵏ), the number of zeros inside |z| < ρ is
//! the number of times P(ρ·e^{jω}) winds round the origin as ω runs over the circle. With
//! cₖ = bₖ·ρ^{n−k}, P(ρ·e^{jω}) = e^{jωn}·C(ω), C(ω) = Σ cₖ e^{−jωk}, so the count is n plus the
//! winding of C. C is real at ω = 0 and π and C(−ω) = conj C(ω), so half the circle suffices:
//! count = n + Δarg C over [0, π] / π.
//!
//! The winding is summed interval by interval on an FFT grid, and an interval counts only when
//! it is proven not to pass round the origin: C, C′ and C″ at its left end come from three FFTs,
//! and by Taylor's theorem the curve over an interval of width h stays within
//!   R = h²/2·|C″(ωᵢ)| + h³/6·Σ k³|cₖ| (+ the FFT's rounding)
//! of the segment C(ωᵢ) + t·C′(ωᵢ), 0 ≤ t ≤ h. When the origin is farther than R from that
//! segment, the curve lies in a convex set without the origin, so its change of argument is the
//! principal value of arg(C(ωᵢ₊₁)/C(ωᵢ)) (common practice, the argument principle with a
//! remainder bound). Intervals that fail the test are split in two, evaluated directly, and
//! tested again; an interval still failing at a width of 2⁻⁴⁰ of the grid step holds a zero
//! within about that distance of the circle of radius ρ, and the count is refused (`NearZero`).

use num_complex::Complex64;
use rustfft::FftPlanner;

/// The grid has at least this many points per coefficient over the whole circle.
pub const GRID_POINTS_PER_COEFFICIENT: usize = 16;
/// Smallest grid (points over the whole circle).
const MIN_GRID: usize = 1 << 10;
/// Largest grid: beyond this, failing intervals are split rather than the grid doubled.
const MAX_GRID: usize = 1 << 21;
/// An interval is split at most this many times before the count is refused.
const MAX_SPLITS: u32 = 40;
/// The grid is not doubled past this many points per coefficient.
const MAX_POINTS_PER_COEFFICIENT: usize = 1024;
/// The grid is doubled while more than this fraction of its intervals fail the test.
const DOUBLE_WHEN_FAILING: f64 = 1.0 / 64.0;

/// A count of zeros inside a circle and how it was reached.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct WindingCount {
    /// Zeros of B strictly inside the circle of radius `radius`.
    pub inside: usize,
    /// Degree of the z-form polynomial (zeros in all).
    pub degree: usize,
    pub radius: f64,
    /// Points of the FFT grid over the whole circle.
    pub grid_points: usize,
    /// Smallest |C| on the grid, relative to Σ|cₖ| (the guard: how close the curve came to 0).
    pub min_relative_magnitude: f64,
    /// Intervals that had to be split and evaluated directly.
    pub refined_intervals: usize,
}

/// Why a count could not be made.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum WindingError {
    /// Empty polynomial or zero leading coefficient.
    Degenerate,
    /// A zero lies within round-off of the circle of radius `radius`, near angle `angle`.
    NearZero { radius: f64, angle: f64 },
}

impl std::fmt::Display for WindingError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            WindingError::Degenerate => write!(f, "the polynomial is empty or leads with zero"),
            WindingError::NearZero { radius, angle } => write!(
                f,
                "a zero lies within round-off of the circle |z| = {radius} near angle {angle:.6} rad"
            ),
        }
    }
}

impl std::error::Error for WindingError {}

/// Counts the zeros of `b[0] + b[1]·z⁻¹ + … + b[n]·z⁻ⁿ` (b[0] ≠ 0) strictly inside |z| < `radius`.
pub fn count_inside(b: &[f64], radius: f64) -> Result<WindingCount, WindingError> {
    if b.is_empty() || b[0] == 0.0 || radius.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater)
    {
        return Err(WindingError::Degenerate);
    }
    let n = b.len() - 1;
    if n == 0 {
        return Ok(WindingCount {
            inside: 0,
            degree: 0,
            radius,
            grid_points: 0,
            min_relative_magnitude: 1.0,
            refined_intervals: 0,
        });
    }
    let c = scaled(b, radius);
    let sum_abs: f64 = c.iter().map(|x| x.abs()).sum();
    let third: f64 = c
        .iter()
        .enumerate()
        .map(|(k, x)| (k as f64).powi(3) * x.abs())
        .sum();
    let mut size = (GRID_POINTS_PER_COEFFICIENT * (n + 1))
        .next_power_of_two()
        .max(MIN_GRID);
    loop {
        let grid = Grid::new(&c, size);
        let h = std::f64::consts::TAU / size as f64;
        // Rounding of a length-M FFT is about ε·log₂M·Σ|cₖ| (common practice); a generous
        // multiple covers C′ and C″ scaled by h and h².
        let fft_error = 16.0 * f64::EPSILON * (size as f64).log2() * sum_abs;
        let direct_error = 4.0 * f64::EPSILON * (n + 1) as f64 * sum_abs;
        let half = size / 2;
        let mut failing = Vec::new();
        let mut total = 0.0;
        let mut smallest = f64::INFINITY;
        for i in 0..half {
            smallest = smallest.min(grid.value[i].norm());
            let point = Point {
                value: grid.value[i],
                slope: grid.slope[i],
                curve: grid.curve[i],
            };
            if clear_of_origin(point, h, third, fft_error) {
                total += (grid.value[i + 1] / grid.value[i]).arg();
            } else {
                failing.push(i);
            }
        }
        smallest = smallest.min(grid.value[half].norm());
        // Doubling pays for long polynomials (each direct evaluation costs the order); a short
        // one is refined interval by interval beyond 1024 points per coefficient.
        let doubling_pays = size < MAX_GRID && size < MAX_POINTS_PER_COEFFICIENT * (n + 1);
        if failing.len() as f64 > DOUBLE_WHEN_FAILING * half as f64 && doubling_pays {
            size *= 2;
            continue;
        }
        let refined_intervals = failing.len();
        for i in failing {
            let from = i as f64 * h;
            total += refined_change(&c, from, h, third, direct_error, 0)
                .map_err(|angle| WindingError::NearZero { radius, angle })?;
        }
        let turns = total / std::f64::consts::PI;
        let winding = turns.round();
        if (turns - winding).abs() > 0.25 || !turns.is_finite() {
            // Cannot happen when every interval passed its test; refuse rather than guess.
            return Err(WindingError::NearZero {
                radius,
                angle: f64::NAN,
            });
        }
        let inside = n as i64 + winding as i64;
        return Ok(WindingCount {
            inside: inside.clamp(0, n as i64) as usize,
            degree: n,
            radius,
            grid_points: size,
            min_relative_magnitude: smallest / sum_abs,
            refined_intervals,
        });
    }
}

/// The smallest radius, to `relative` precision, inside which all the zeros of `b` (b[0] ≠ 0)
/// are proven to lie: an upper bound on the largest |zero|, found by bisection on
/// [`count_inside`] without computing any zero.
pub fn largest_zero_radius(b: &[f64], relative: f64) -> Result<f64, WindingError> {
    let b = crate::numeric::poly::trim_trailing_zeros(b);
    if b.is_empty() || b[0] == 0.0 {
        return Err(WindingError::Degenerate);
    }
    let n = b.len() - 1;
    if n == 0 {
        return Ok(0.0);
    }
    // Cauchy's bound: every zero has |z| < 1 + max|bₖ/b₀| (common practice).
    let cauchy = 1.0 + b[1..].iter().map(|x| (x / b[0]).abs()).fold(0.0, f64::max);
    let all_inside = |r: f64| count_inside(b, r).is_ok_and(|c| c.inside == n);
    let (mut lo, mut hi) = (0.0, cauchy * (1.0 + 1e-9));
    if !all_inside(hi) {
        hi *= 2.0;
        if !all_inside(hi) {
            return Err(WindingError::NearZero {
                radius: hi,
                angle: f64::NAN,
            });
        }
    }
    while hi - lo > relative * hi {
        let mid = 0.5 * (lo + hi);
        if all_inside(mid) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Ok(hi)
}

/// cₖ = bₖ·ρ^{n−k}, scaled by a power of two so the largest is near 1 (no overflow or
/// underflow whatever ρ and n; a common factor changes no winding).
fn scaled(b: &[f64], radius: f64) -> Vec<f64> {
    let n = b.len() - 1;
    let log_r = radius.ln();
    let logs: Vec<f64> = b
        .iter()
        .enumerate()
        .map(|(k, x)| x.abs().ln() + (n - k) as f64 * log_r)
        .collect();
    let top = logs
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .fold(f64::NEG_INFINITY, f64::max);
    b.iter()
        .zip(&logs)
        .map(|(x, l)| {
            if *x == 0.0 {
                0.0
            } else {
                x.signum() * (l - top).exp()
            }
        })
        .collect()
}

/// C, C′ and C″ on the grid ω = 2πi/M, i = 0 ..= M/2.
struct Grid {
    value: Vec<Complex64>,
    slope: Vec<Complex64>,
    curve: Vec<Complex64>,
}

impl Grid {
    fn new(c: &[f64], size: usize) -> Self {
        let fft = FftPlanner::<f64>::new().plan_fft_forward(size);
        let transform = |weight: &dyn Fn(usize) -> Complex64| {
            let mut buffer = vec![Complex64::new(0.0, 0.0); size];
            for (k, &x) in c.iter().enumerate() {
                buffer[k % size] += weight(k) * x;
            }
            fft.process(&mut buffer);
            buffer.truncate(size / 2 + 1);
            buffer
        };
        // d/dω e^{−jωk} = −jk·e^{−jωk}; twice: −k².
        Grid {
            value: transform(&|_| Complex64::new(1.0, 0.0)),
            slope: transform(&|k| Complex64::new(0.0, -(k as f64))),
            curve: transform(&|k| Complex64::new(-((k * k) as f64), 0.0)),
        }
    }
}

#[derive(Clone, Copy)]
struct Point {
    value: Complex64,
    slope: Complex64,
    curve: Complex64,
}

/// C, C′ and C″ at ω by direct summation.
fn evaluate(c: &[f64], omega: f64) -> Point {
    let mut p = Point {
        value: Complex64::new(0.0, 0.0),
        slope: Complex64::new(0.0, 0.0),
        curve: Complex64::new(0.0, 0.0),
    };
    for (k, &x) in c.iter().enumerate() {
        let e = Complex64::from_polar(x, -omega * k as f64);
        let kf = k as f64;
        p.value += e;
        p.slope += e * Complex64::new(0.0, -kf);
        p.curve += e * (-kf * kf);
    }
    p
}

/// True when the curve over [ω, ω + h] provably stays clear of the origin.
fn clear_of_origin(p: Point, h: f64, third: f64, rounding: f64) -> bool {
    let remainder = 0.5 * h * h * p.curve.norm() + h * h * h / 6.0 * third;
    // Rounding in C, and in C′ and C″ as they are used (scaled by h and h²/2).
    let slack = rounding * (1.0 + h * third.cbrt() + h * h * third.cbrt().powi(2));
    distance_to_segment(p.value, p.value + p.slope * h) > remainder + slack
}

/// Distance from the origin to the segment [u, v].
fn distance_to_segment(u: Complex64, v: Complex64) -> f64 {
    let d = v - u;
    let length2 = d.norm_sqr();
    if length2 == 0.0 {
        return u.norm();
    }
    let t = (-(u.re * d.re + u.im * d.im) / length2).clamp(0.0, 1.0);
    (u + d * t).norm()
}

/// Change of arg C over [from, from + h], splitting until every piece passes the test; the
/// angle of a piece that never does is the error.
fn refined_change(
    c: &[f64],
    from: f64,
    h: f64,
    third: f64,
    rounding: f64,
    depth: u32,
) -> Result<f64, f64> {
    let start = evaluate(c, from);
    if clear_of_origin(start, h, third, rounding) {
        let end = evaluate(c, from + h);
        return Ok((end.value / start.value).arg());
    }
    if depth >= MAX_SPLITS {
        return Err(from);
    }
    let half = 0.5 * h;
    Ok(refined_change(c, from, half, third, rounding, depth + 1)?
        + refined_change(c, from + half, half, third, rounding, depth + 1)?)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::numeric::poly::from_roots;

    // Source: common practice — a polynomial built from known zeros has exactly as many inside
    // each circle as were put there.
    #[test]
    fn counts_known_zeros() {
        let zeros = [
            Complex64::from_polar(0.5, 0.3),
            Complex64::from_polar(0.5, -0.3),
            Complex64::new(-1.2, 0.0),
            Complex64::from_polar(0.999, 2.0),
            Complex64::from_polar(0.999, -2.0),
            Complex64::from_polar(1.001, 1.0),
            Complex64::from_polar(1.001, -1.0),
        ];
        let b = from_roots(1.0, &zeros).unwrap();
        assert_eq!(count_inside(&b, 1.0).unwrap().inside, 4);
        assert_eq!(count_inside(&b, 0.9).unwrap().inside, 2);
        assert_eq!(count_inside(&b, 1.1).unwrap().inside, 6);
        assert_eq!(count_inside(&b, 2.0).unwrap().inside, 7);
        assert_eq!(count_inside(&b, 0.1).unwrap().inside, 0);
        let r = largest_zero_radius(&b, 1e-9).unwrap();
        assert!((r - 1.2).abs() < 1e-8, "{r}");
    }

    // Source: common practice — 1 + g·z⁻ᴺ has N zeros on the circle of radius g^(1/N).
    #[test]
    fn single_echo_counts_at_scale() {
        for (n, g) in [(1000usize, 0.5f64), (4000, 0.9), (301, 1.5)] {
            let mut b = vec![0.0; n + 1];
            b[0] = 1.0;
            b[n] = g;
            let r = g.powf(1.0 / n as f64);
            assert_eq!(count_inside(&b, r * (1.0 - 1e-6)).unwrap().inside, 0);
            assert_eq!(count_inside(&b, r * (1.0 + 1e-6)).unwrap().inside, n);
        }
    }

    // Source: common practice — a zero on the circle is refused, not counted either way.
    #[test]
    fn zero_on_the_circle_is_refused() {
        let b = [1.0, -1.0];
        assert!(matches!(
            count_inside(&b, 1.0),
            Err(WindingError::NearZero { .. })
        ));
    }
}
