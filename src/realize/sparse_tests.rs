//! The sparse recursion against direct form II transposed, and its post-rounding pole check.
//!
//! Source: common practice — leaving out a difference equation's zero taps changes no sum, so in
//! f64 the sparse recursion must give direct form II transposed's output up to round-off.
//! Measure: max over n of |y_sparse(n) − y_direct(n)| ≤ 1e-12 × max over n of |y_direct(n)|, on
//! every path of the example echo configs (configs/echo_line*.toml) and on random sparse
//! channels, sample by sample and through the block kernel at random block lengths.

use proptest::prelude::*;

use crate::model::config::load_link;
use crate::model::{CoefficientPrecision, Structure, TransferFunction};
use crate::pipeline::plan_link;

use super::{realize, DirectForm2T, Filter, PoleEvidence, RealizeError};

const RELATIVE_TOLERANCE: f64 = 1e-12;

/// 1/A(z) with A = 1 + Σ aₖz^−dₖ given as (delay, aₖ) pairs.
pub(crate) fn all_pole(taps: &[(usize, f64)]) -> TransferFunction {
    let order = taps.iter().map(|t| t.0).max().unwrap_or(0);
    let mut a = vec![0.0; order + 1];
    a[0] = 1.0;
    for &(d, g) in taps {
        a[d] = g;
    }
    TransferFunction::new(vec![1.0], a)
}

/// (1 − c·z⁻⁸)² as the denominator: 1 − 2c·z⁻⁸ + c²·z⁻¹⁶, a double root of z⁸ at c.
pub(crate) fn squared_echo(c: f64) -> TransferFunction {
    all_pole(&[(8, -2.0 * c), (16, c * c)])
}

/// Noise, an impulse and silence (the recursion's own ringing), deterministic.
fn signal(n: usize, seed: u64) -> Vec<f64> {
    let mut state = seed.wrapping_mul(0x9e37_79b9_7f4a_7c15) | 1;
    (0..n)
        .map(|i| {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            let noise = (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5;
            match i {
                _ if i < n / 2 => noise,
                _ if i == n / 2 => 1.0,
                _ => 0.0,
            }
        })
        .collect()
}

/// Worst |sparse − direct| relative to the direct form's peak: sample by sample, and in blocks
/// cut at the lengths in `cuts` (cycled). `None` when the design does not realize (unstable).
fn mismatch(design: &TransferFunction, x: &[f64], cuts: &[usize]) -> Option<(f64, f64)> {
    let sparse = realize(
        design,
        Structure::SparseRecursion,
        CoefficientPrecision::F64,
    )
    .ok()?
    .filter;
    // The same coefficients as a dense direct form, built without a second root search.
    let (b, a) = match &sparse {
        Filter::SparseRecursion(s) => {
            let order = s.order();
            let (mut b, mut a) = (vec![0.0; order + 1], vec![0.0; order + 1]);
            a[0] = 1.0;
            for t in s.numerator() {
                b[t.delay] = t.coefficient;
            }
            for t in s.denominator() {
                a[t.delay] = t.coefficient;
            }
            (b, a)
        }
        _ => return None,
    };
    let mut direct = Filter::DirectForm2T(DirectForm2T::new(b, a));
    let reference: Vec<f64> = x.iter().map(|&v| direct.process_sample(v)).collect();
    let peak = reference
        .iter()
        .fold(0.0f64, |m, v| m.max(v.abs()))
        .max(1e-300);
    let per_sample: Vec<f64> = {
        let mut f = sparse.clone();
        x.iter().map(|&v| f.process_sample(v)).collect()
    };
    let mut blocked = vec![0.0; x.len()];
    let mut f: Filter = sparse;
    let (mut at, mut i) = (0, 0);
    while at < x.len() {
        let len = cuts[i % cuts.len()].min(x.len() - at);
        f.process_block_f64(&x[at..at + len], &mut blocked[at..at + len]);
        at += len;
        i += 1;
    }
    let worst = |y: &[f64]| {
        y.iter()
            .zip(&reference)
            .map(|(a, b)| (a - b).abs())
            .fold(0.0f64, f64::max)
            / peak
    };
    Some((worst(&per_sample), worst(&blocked)))
}

#[test]
fn example_echo_configs_run_sparse_and_equal_the_direct_form() {
    let root = env!("CARGO_MANIFEST_DIR");
    for name in ["echo_line", "echo_line_first_pass"] {
        let link = load_link(std::path::Path::new(&format!("{root}/configs/{name}.toml")))
            .expect("example config loads");
        let plan = plan_link(&link);
        for path in &plan.paths {
            let r = path.runnable().expect("echo inverse runs");
            assert_eq!(r.structure, Structure::SparseRecursion, "{name}");
            assert!(matches!(
                r.pole_evidence,
                PoleEvidence::DominantLeadingTap { .. }
            ));
            let design = &path.design.as_ref().unwrap().as_ref().unwrap().inverse;
            let x = signal(6000, 7);
            let (one, blocks) =
                mismatch(design, &x, &[64, 1, 37, 256, 5, 0, 300]).expect("realizes");
            assert!(one <= RELATIVE_TOLERANCE, "{name}: per sample {one:e}");
            assert!(blocks <= RELATIVE_TOLERANCE, "{name}: blocks {blocks:e}");
        }
    }
}

/// A sparse channel's inverse 1/(g₀ + Σ gₖz^−Dₖ) (b = [1/g₀]) with a sparse numerator as well,
/// optionally made non-dominant (Σ|aₖ| ≥ 1) but kept stable by a root check.
fn sparse_design() -> impl Strategy<Value = TransferFunction> {
    (
        prop::collection::vec((1usize..160, -1.0..1.0f64), 1..6),
        prop::collection::vec((0usize..200, -2.0..2.0f64), 1..4),
        0.3..1.6f64,
    )
        .prop_map(|(den, num, total)| {
            let order = den.iter().map(|t| t.0).max().unwrap_or(1);
            let mut a = vec![0.0; order + 1];
            a[0] = 1.0;
            let sum: f64 = den.iter().map(|t| t.1.abs()).sum::<f64>().max(1e-9);
            for (d, g) in den {
                a[d] += g * total / sum;
            }
            let width = num.iter().map(|t| t.0).max().unwrap_or(0);
            let mut b = vec![0.0; width + 1];
            for (d, g) in num {
                b[d] += g;
            }
            if b.iter().all(|v| *v == 0.0) {
                b[0] = 1.0;
            }
            TransferFunction::new(b, a)
        })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 32, ..ProptestConfig::default() })]

    #[test]
    fn random_sparse_channels_equal_the_direct_form(
        design in sparse_design(),
        cuts in prop::collection::vec(0usize..400, 1..6),
        seed in any::<u64>(),
    ) {
        // Only stable designs run (the cheap check or the roots decide, as in `realize`).
        let x = signal(3000, seed);
        let result = mismatch(&design, &x, &cuts);
        prop_assume!(result.is_some());
        let (one, blocks) = result.unwrap();
        prop_assert!(one <= RELATIVE_TOLERANCE, "per sample {:e}", one);
        prop_assert!(blocks <= RELATIVE_TOLERANCE, "blocks {:e}", blocks);
    }
}

// Source: common practice (IEEE 754 binary32 spacing just below 1 is 2⁻²⁴ ≈ 6e-8) —
// 1/(1 − c·z⁻¹⁰) with c = 1 − 2e-8 is stable in f64 (poles at c^(1/10)), but c rounds to 1.0 in
// f32, which puts all ten poles on the circle: the rounded recursion must be refused. In f64
// the cheap check holds (Σ|aₖ| = c < 1); rounded, Σ|aₖ| = 1, so the roots decide.
#[test]
fn rounding_that_reaches_the_circle_is_refused() {
    let design = all_pole(&[(10, -(1.0 - 2e-8))]);
    let f64_run = realize(
        &design,
        Structure::SparseRecursion,
        CoefficientPrecision::F64,
    )
    .expect("stable in f64");
    assert!(f64_run.max_pole_radius < 1.0);
    assert!(matches!(
        f64_run.pole_evidence,
        PoleEvidence::DominantLeadingTap { .. }
    ));
    match realize(
        &design,
        Structure::SparseRecursion,
        CoefficientPrecision::F32,
    ) {
        Err(RealizeError::UnstableAfterRounding { structure, .. }) => {
            assert_eq!(structure, Structure::SparseRecursion)
        }
        other => panic!("expected a refusal after rounding, got {other:?}"),
    }
}

// Source: common practice — a double root is ill-conditioned: coefficient errors δ move it by
// about √δ. (1 − c·z⁻⁸)² with c = 0.99989 is stable (poles at c^(1/8)), but its f32 coefficients
// −2c and c² split the double root of w = z⁸ to |w| ≈ 1.00016 (worked out from the rounded
// quadratic w² + a₁w + a₂): the sparse recursion is refused after rounding.
#[test]
fn a_split_double_root_is_refused_and_not_judged_by_the_cheap_check() {
    let design = squared_echo(0.99989);
    let f64_run = realize(
        &design,
        Structure::SparseRecursion,
        CoefficientPrecision::F64,
    )
    .expect("stable in f64");
    assert_eq!(f64_run.pole_evidence, PoleEvidence::Roots);
    assert!(
        matches!(
            realize(
                &design,
                Structure::SparseRecursion,
                CoefficientPrecision::F32
            ),
            Err(RealizeError::UnstableAfterRounding { .. })
        ),
        "the rounded double root leaves the circle"
    );
}

// Source: common practice — a sparse FIR (taps at multiples of an echo's delay, as a delayed
// least-squares inverse of a single echo comes out) has no poles to check.
#[test]
fn a_sparse_fir_has_no_poles() {
    let mut b = vec![0.0; 37];
    b[0] = -0.003;
    b[12] = 0.0067;
    b[36] = 0.29;
    let r = realize(
        &TransferFunction::new(b, vec![1.0]),
        Structure::SparseRecursion,
        CoefficientPrecision::F32,
    )
    .unwrap();
    assert_eq!(r.pole_evidence, PoleEvidence::NoPoles);
    assert_eq!(r.max_pole_radius, 0.0);
}
