//! The coefficients a realization runs, in plain serialisable form for reports.

use serde::Serialize;

use crate::model::TransferFunction;

use super::lattice::expand_lattice;
use super::sections::{expand_sections, SectionCoefficients};
use super::sparse_recursion::SparseTap;

/// Coefficients of a realized structure exactly as the filter holds them (after rounding).
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum StructureCoefficients {
    /// H = B/A with a[0] = 1, both of the same length.
    #[serde(rename = "direct_form_2t")]
    DirectForm2T { b: Vec<f64>, a: Vec<f64> },
    /// H = gain · Π sections, each `[b0, b1, b2, a0, a1, a2]` with a0 = 1, in running order.
    Sections {
        gain: f64,
        sections: Vec<SectionCoefficients>,
    },
    /// Reflection coefficients k₁…k_M and ladder taps v₀…v_M.
    LatticeLadder { k: Vec<f64>, v: Vec<f64> },
    /// The non-zero bₖ and aₖ (k ≥ 1; a₀ = 1) with their delays, of a difference equation of
    /// order `order`.
    SparseRecursion {
        order: usize,
        numerator: Vec<SparseTap>,
        denominator: Vec<SparseTap>,
    },
    /// FIR taps h[0 …], run as a direct-form head of `partition_size` taps and FFT partitions
    /// of `partition_size` after it.
    PartitionedConvolution {
        taps: Vec<f64>,
        partition_size: usize,
    },
}

impl StructureCoefficients {
    /// The transfer function these coefficients run, multiplied out into B(z)/A(z).
    ///
    /// Comparing it with the design shows what rounding did to the response.
    pub fn transfer_function(&self) -> TransferFunction {
        let (b, a) = match self {
            StructureCoefficients::DirectForm2T { b, a } => (b.clone(), a.clone()),
            StructureCoefficients::Sections { gain, sections } => expand_sections(*gain, sections),
            StructureCoefficients::LatticeLadder { k, v } => expand_lattice(k, v),
            StructureCoefficients::SparseRecursion {
                order,
                numerator,
                denominator,
            } => {
                let (mut b, mut a) = (vec![0.0; order + 1], vec![0.0; order + 1]);
                a[0] = 1.0;
                for t in numerator {
                    b[t.delay] = t.coefficient;
                }
                for t in denominator {
                    a[t.delay] = t.coefficient;
                }
                (b, a)
            }
            StructureCoefficients::PartitionedConvolution { taps, .. } => (taps.clone(), vec![1.0]),
        };
        TransferFunction::new(b, a)
    }
}
