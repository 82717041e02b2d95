//! Realize: turn a transfer function H(z) = B(z)/A(z) (normally an inverse design) into a filter
//! that runs sample by sample, in one of five structures, with its coefficients rounded to the
//! run precision and its poles checked on the rounded coefficients.
//!
//! - direct form II transposed ([`DirectForm2T`]): one difference equation of the full order;
//! - second-order sections ([`SectionCascade`]): poles and zeros paired into real quadratics;
//! - lattice–ladder ([`LatticeLadder`]): reflection coefficients and ladder taps;
//! - sparse recursion ([`SparseRecursion`]): the difference equation with only its non-zero
//!   taps (echo inverses), its poles checked by the dominant leading tap where that suffices;
//! - partitioned convolution ([`PartitionedConvolution`]): a long FIR by FFT, behind a
//!   direct-form head so no latency is added.
//!
//! All compute the same H(z); they differ in how far rounding moves the poles and in what they
//! cost. The filter state is always f64. A realization whose rounded coefficients would put a
//! pole on or outside the unit circle is refused, never run.

mod coefficients;
mod deflation;
mod direct_form;
mod dominant_tap;
mod error;
mod history_line;
pub mod kernels;
mod lattice;
mod normalise;
mod pairing;
mod partitioned_convolution;
mod rounding;
mod sections;
mod sparse_recursion;

#[cfg(test)]
mod agreement_tests;
#[cfg(test)]
mod filter_tests;
#[cfg(test)]
mod partitioned_tests;
#[cfg(test)]
mod quantization_tests;
#[cfg(test)]
pub(crate) mod sparse_tests;

pub use coefficients::StructureCoefficients;
pub use direct_form::DirectForm2T;
pub use error::RealizeError;
pub use lattice::LatticeLadder;
pub use partitioned_convolution::PartitionedConvolution;
pub use sections::{SectionCascade, SectionCoefficients};
pub use sparse_recursion::{dense_direct_form_taps, sparse_taps, SparseRecursion, SparseTap};

use crate::model::{CoefficientPrecision, Structure, TransferFunction};
use crate::numeric::stepdown::step_up;

use dominant_tap::dominant_tap_bound;
use normalise::{normalise, Normalised};
use rounding::{
    check_denominator, first_unrepresentable, max_root_radius, round, round_all, PoleCheck,
};

/// A filter ready to run, with the coefficients it runs and the largest pole radius they give.
#[derive(Debug, Clone)]
pub struct Realization {
    pub structure: Structure,
    pub precision: CoefficientPrecision,
    /// The coefficients exactly as the filter holds them (after rounding).
    pub coefficients: StructureCoefficients,
    /// Largest pole radius of the structure as it will run (after rounding); an upper bound
    /// when [`Realization::pole_evidence`] says so.
    pub max_pole_radius: f64,
    /// How the poles of the running coefficients were judged.
    pub pole_evidence: PoleEvidence,
    pub filter: Filter,
}

/// How a realization's poles were checked after rounding.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PoleEvidence {
    /// The roots of the running denominator(s), cross-checked by the step-down test (or the
    /// lattice's |k| < 1); `max_pole_radius` is the largest root radius.
    Roots,
    /// A sparse recursion whose leading tap a₀ = 1 outweighs the others' magnitudes in sum
    /// (`others` = Σ|aₖ| < 1): every pole is inside, and `max_pole_radius` is an upper bound
    /// on the radii from the taps alone, with no root finding.
    DominantLeadingTap { others: f64 },
    /// An FIR: no poles.
    NoPoles,
}

/// The FIR length from which partitioned convolution runs an FIR faster than the direct form's
/// tapped delay line: measured with `redress bench --fir-taps` (median callback, 64-frame
/// blocks): with 8 channels the direct form (in vector lanes up to order 32) wins at 16 taps,
/// the partitioned convolution from 32 (1.5×) and clearly from 48 (1.9×); with one channel it
/// wins from 8. Up to one partition (64 taps) it is its vectorised head alone, without FFTs.
pub const PARTITIONED_MIN_TAPS: usize = 64;

/// Partition size B for an FIR of `taps` taps: the head costs B multiply-adds a sample and the
/// spectra about 4·L/B, so B near √L balances them; powers of two from 64 to 512 (measured).
pub fn partition_size_for(taps: usize) -> usize {
    let balanced = ((taps as f64).sqrt() * 2.0) as usize;
    balanced.next_power_of_two().clamp(64, 512)
}

/// A running filter in one of the three structures. Processing allocates nothing and never
/// panics; NaN in gives NaN out (clearing it takes [`Filter::reset`]).
#[derive(Debug, Clone)]
pub enum Filter {
    DirectForm2T(DirectForm2T),
    Sections(SectionCascade),
    LatticeLadder(LatticeLadder),
    SparseRecursion(SparseRecursion),
    /// Boxed: its plans and buffers would make every `Filter` large.
    PartitionedConvolution(Box<PartitionedConvolution>),
}

impl Filter {
    pub fn process_sample(&mut self, x: f64) -> f64 {
        match self {
            Filter::DirectForm2T(f) => f.process_sample(x),
            Filter::Sections(f) => f.process_sample(x),
            Filter::LatticeLadder(f) => f.process_sample(x),
            Filter::SparseRecursion(f) => f.process_sample(x),
            Filter::PartitionedConvolution(f) => f.process_sample(x),
        }
    }

    /// Filters `input` into `output` (f32 samples, f64 arithmetic and state), carrying state
    /// from call to call. Processes `min(input.len(), output.len())` samples; the rest of a
    /// longer `output` is left as it was. Runs the block kernel ([`kernels`]): the same
    /// output as `process_sample` on each sample.
    pub fn process_block(&mut self, input: &[f32], output: &mut [f32]) {
        const CHUNK: usize = 256;
        let mut x = [0.0f64; CHUNK];
        let mut y = [0.0f64; CHUNK];
        for (xs, ys) in input.chunks(CHUNK).zip(output.chunks_mut(CHUNK)) {
            let n = xs.len().min(ys.len());
            for (d, s) in x.iter_mut().zip(&xs[..n]) {
                *d = f64::from(*s);
            }
            kernels::process_block_f64(self, &x[..n], &mut y[..n]);
            for (d, s) in ys[..n].iter_mut().zip(&y[..n]) {
                *d = *s as f32;
            }
        }
    }

    /// Filters `input` into `output` in f64, a block at a time, through the fastest kernel for
    /// the structure (see [`kernels`]); the same output as `process_sample` on each sample.
    pub fn process_block_f64(&mut self, input: &[f64], output: &mut [f64]) {
        kernels::process_block_f64(self, input, output);
    }

    /// Clears the state: the next output is as if the filter had only ever seen zeros.
    pub fn reset(&mut self) {
        match self {
            Filter::DirectForm2T(f) => f.reset(),
            Filter::Sections(f) => f.reset(),
            Filter::LatticeLadder(f) => f.reset(),
            Filter::SparseRecursion(f) => f.reset(),
            Filter::PartitionedConvolution(f) => f.reset(),
        }
    }

    /// Number of delay elements that carry signal (the order of the difference equations run).
    pub fn order(&self) -> usize {
        match self {
            Filter::DirectForm2T(f) => f.order(),
            Filter::Sections(f) => f.order(),
            Filter::LatticeLadder(f) => f.order(),
            Filter::SparseRecursion(f) => f.order(),
            Filter::PartitionedConvolution(f) => f.order(),
        }
    }
}

/// Realizes `inverse` in `structure` with coefficients rounded to `precision`.
///
/// `inverse` may be any B(z)/A(z) with finite coefficients and a[0] ≠ 0 (it is normalised to
/// a[0] = 1; b and a may differ in length). Refuses, saying why and what to do, when the design
/// is unstable, when the structure cannot be formed, or when rounding would make it unstable.
pub fn realize(
    inverse: &TransferFunction,
    structure: Structure,
    precision: CoefficientPrecision,
) -> Result<Realization, RealizeError> {
    let h = normalise(inverse)?;
    match structure {
        Structure::DirectForm2T => realize_direct_form(&h, precision),
        Structure::Sections => realize_sections(&h, precision),
        Structure::LatticeLadder => realize_lattice(&h, precision),
        Structure::SparseRecursion => realize_sparse(&h, precision),
        Structure::PartitionedConvolution => realize_partitioned(&h, precision),
    }
}

/// Refuses when any named coefficient vector holds a value that is not finite at `precision`.
fn representable(
    structure: Structure,
    named: &[(&str, &[f64])],
    precision: CoefficientPrecision,
) -> Result<(), RealizeError> {
    for (name, values) in named {
        if let Some((coefficient, value)) = first_unrepresentable(name, values, precision) {
            return Err(RealizeError::CoefficientOverflow {
                structure,
                coefficient,
                value,
            });
        }
    }
    Ok(())
}

fn unstable_design(structure: Structure, check: &PoleCheck) -> RealizeError {
    RealizeError::UnstableDesign {
        structure,
        max_pole_radius: check.max_pole_radius,
        detail: check.detail(),
    }
}

fn unstable_after_rounding(structure: Structure, check: &PoleCheck) -> RealizeError {
    RealizeError::UnstableAfterRounding {
        structure,
        max_pole_radius: check.max_pole_radius,
        detail: check.detail(),
    }
}

fn realize_direct_form(
    h: &Normalised,
    precision: CoefficientPrecision,
) -> Result<Realization, RealizeError> {
    let structure = Structure::DirectForm2T;
    let design = check_denominator(&h.a);
    if !design.stable() {
        return Err(unstable_design(structure, &design));
    }
    let (b, a) = h.padded();
    representable(structure, &[("b", &b), ("a", &a)], precision)?;
    let (b, a) = (round_all(&b, precision), round_all(&a, precision));
    let running = match precision {
        CoefficientPrecision::F64 => design,
        CoefficientPrecision::F32 => check_denominator(&a),
    };
    if !running.stable() {
        return Err(unstable_after_rounding(structure, &running));
    }
    Ok(Realization {
        structure,
        precision,
        coefficients: StructureCoefficients::DirectForm2T {
            b: b.clone(),
            a: a.clone(),
        },
        max_pole_radius: running.max_pole_radius,
        pole_evidence: PoleEvidence::Roots,
        filter: Filter::DirectForm2T(DirectForm2T::new(b, a)),
    })
}

/// The worst of the sections' denominators: largest radius, first failing section named.
fn check_sections(sections: &[SectionCoefficients]) -> PoleCheck {
    let mut worst = check_denominator(&[1.0]);
    let mut failing: Option<(usize, PoleCheck)> = None;
    for (i, c) in sections.iter().enumerate() {
        let check = check_denominator(&c[3..6]);
        if failing.is_none() && !check.stable() {
            failing = Some((i, check.clone()));
        }
        if check.max_pole_radius > worst.max_pole_radius || check.max_pole_radius.is_nan() {
            worst = check;
        }
    }
    match failing {
        Some((i, check)) => PoleCheck {
            root_problem: Some(format!(
                "section {} of {} has denominator [{}, {}, {}]{}",
                i + 1,
                sections.len(),
                sections[i][3],
                sections[i][4],
                sections[i][5],
                check
                    .root_problem
                    .as_deref()
                    .map(|p| format!(": {p}"))
                    .unwrap_or_default()
            )),
            max_pole_radius: worst.max_pole_radius,
            failing_stage: check.failing_stage,
        },
        None => worst,
    }
}

fn realize_sections(
    h: &Normalised,
    precision: CoefficientPrecision,
) -> Result<Realization, RealizeError> {
    let structure = Structure::Sections;
    let (gain, sections) = sections::factor(h)?;
    let design = check_sections(&sections);
    if !design.stable() {
        return Err(unstable_design(structure, &design));
    }
    let flat: Vec<f64> = sections.iter().flatten().copied().collect();
    representable(
        structure,
        &[
            ("gain", &[gain]),
            ("sections (flattened, 6 per section)", &flat),
        ],
        precision,
    )?;
    let gain = round(gain, precision);
    let sections: Vec<SectionCoefficients> = sections
        .iter()
        .map(|c| c.map(|x| round(x, precision)))
        .collect();
    let running = match precision {
        CoefficientPrecision::F64 => design,
        CoefficientPrecision::F32 => check_sections(&sections),
    };
    if !running.stable() {
        return Err(unstable_after_rounding(structure, &running));
    }
    Ok(Realization {
        structure,
        precision,
        coefficients: StructureCoefficients::Sections {
            gain,
            sections: sections.clone(),
        },
        max_pole_radius: running.max_pole_radius,
        pole_evidence: PoleEvidence::Roots,
        filter: Filter::Sections(SectionCascade::new(gain, sections)),
    })
}

fn realize_lattice(
    h: &Normalised,
    precision: CoefficientPrecision,
) -> Result<Realization, RealizeError> {
    let structure = Structure::LatticeLadder;
    let (c, a) = h.padded();
    let k = lattice::reflection_coefficients(&a)?;
    let design = lattice_check(&k);
    if !design.stable() {
        return Err(unstable_design(structure, &design));
    }
    // The step-down's rounding grows as Π 1/(1 − k²); on a long denominator with poles near the
    // circle the k may then describe another filter (stable, but not this one): check them.
    let relative_error = sections::relative_difference(&step_up(&k), &a);
    if relative_error > LATTICE_TOLERANCE {
        return Err(RealizeError::LatticeMismatch {
            relative_error,
            tolerance: LATTICE_TOLERANCE,
        });
    }
    // Round k first, then fit the taps to the lattice that will actually run, so the numerator
    // is matched to the rounded denominator's polynomials; then round the taps.
    let k = round_all(&k, precision);
    let running = match precision {
        CoefficientPrecision::F64 => design,
        CoefficientPrecision::F32 => lattice_check(&k),
    };
    if !running.stable() {
        return Err(unstable_after_rounding(structure, &running));
    }
    let v = lattice::ladder_taps(&k, &c);
    representable(structure, &[("v", &v)], precision)?;
    let v = round_all(&v, precision);
    Ok(Realization {
        structure,
        precision,
        coefficients: StructureCoefficients::LatticeLadder {
            k: k.clone(),
            v: v.clone(),
        },
        max_pole_radius: running.max_pole_radius,
        pole_evidence: PoleEvidence::Roots,
        filter: Filter::LatticeLadder(LatticeLadder::new(k, v)),
    })
}

/// Largest ‖step_up(k) − a‖∞ / ‖a‖∞ accepted from the step-down recursion.
pub(crate) const LATTICE_TOLERANCE: f64 = 1e-9;

/// The poles of a sparse recursion's denominator `a` (dense, a[0] = 1): by the dominant
/// leading tap when Σ|aₖ| < 1 (no roots needed), else by the roots and the step-down test of
/// the dense polynomial, as for the direct form.
fn sparse_check(a: &[f64]) -> (PoleCheck, PoleEvidence) {
    let recursive: Vec<SparseTap> = sparse_taps(a).into_iter().skip(1).collect();
    if recursive.is_empty() {
        // A sparse FIR (a delayed least-squares inverse of an echo can be one).
        return (check_denominator(&[1.0]), PoleEvidence::NoPoles);
    }
    match dominant_tap_bound(&recursive) {
        Some(d) => (
            PoleCheck {
                max_pole_radius: d.radius_bound,
                failing_stage: None,
                root_problem: None,
            },
            PoleEvidence::DominantLeadingTap { others: d.others },
        ),
        None => (check_denominator(a), PoleEvidence::Roots),
    }
}

fn realize_sparse(
    h: &Normalised,
    precision: CoefficientPrecision,
) -> Result<Realization, RealizeError> {
    let structure = Structure::SparseRecursion;
    let (b, a) = h.padded();
    let (design, _) = sparse_check(&a);
    if !design.stable() {
        return Err(unstable_design(structure, &design));
    }
    representable(structure, &[("b", &b), ("a", &a)], precision)?;
    let (b, a) = (round_all(&b, precision), round_all(&a, precision));
    // Rounding can only move taps, never create any: the running recursion touches the taps
    // the design has, and its poles are judged again on the rounded values.
    let (running, evidence) = sparse_check(&a);
    if !running.stable() {
        return Err(unstable_after_rounding(structure, &running));
    }
    let filter = SparseRecursion::new(&b, &a);
    Ok(Realization {
        structure,
        precision,
        coefficients: StructureCoefficients::SparseRecursion {
            order: filter.order(),
            numerator: filter.numerator().to_vec(),
            denominator: filter.denominator().to_vec(),
        },
        max_pole_radius: running.max_pole_radius,
        pole_evidence: evidence,
        filter: Filter::SparseRecursion(filter),
    })
}

fn realize_partitioned(
    h: &Normalised,
    precision: CoefficientPrecision,
) -> Result<Realization, RealizeError> {
    let structure = Structure::PartitionedConvolution;
    if h.a.len() != 1 {
        return Err(RealizeError::NeedsFir {
            structure,
            denominator_order: h.a.len() - 1,
        });
    }
    representable(structure, &[("b", &h.b)], precision)?;
    let taps = round_all(&h.b, precision);
    let partition_size = partition_size_for(taps.len());
    let filter = PartitionedConvolution::new(&taps, partition_size);
    Ok(Realization {
        structure,
        precision,
        coefficients: StructureCoefficients::PartitionedConvolution {
            taps,
            partition_size,
        },
        max_pole_radius: 0.0,
        pole_evidence: PoleEvidence::NoPoles,
        filter: Filter::PartitionedConvolution(Box::new(filter)),
    })
}

/// Poles of the lattice with reflection coefficients `k`: stable exactly when every |k| < 1;
/// the radius comes from the roots of the stepped-up denominator.
fn lattice_check(k: &[f64]) -> PoleCheck {
    let failing_stage = k
        .iter()
        .position(|x| x.abs() >= 1.0 || x.is_nan())
        .map(|i| (i + 1, k[i]));
    let (max_pole_radius, root_problem) = max_root_radius(&step_up(k));
    PoleCheck {
        max_pole_radius,
        failing_stage,
        root_problem,
    }
}

#[cfg(any(test, feature = "test-door"))]
impl Filter {
    /// Test-only door: a direct-form filter straight from coefficients, with no stability check.
    /// Compiled only for tests (feature `test-door`); the pipeline never builds filters this way.
    /// Tests use it to put a runaway filter in front of the engine's guards.
    pub fn unvalidated_direct_form(b: Vec<f64>, a: Vec<f64>) -> Filter {
        let n = b.len().max(a.len());
        let (mut b, mut a) = (b, a);
        b.resize(n, 0.0);
        a.resize(n, 0.0);
        Filter::DirectForm2T(DirectForm2T::new(b, a))
    }
}
