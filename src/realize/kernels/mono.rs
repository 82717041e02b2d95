//! The block path of one [`Filter`]: f64 in, f64 out, the fastest kernel for its structure.

use super::super::Filter;
use super::dispatch::{with_widest_vectors, Arithmetic, Kernel, Plain};
use super::{direct_form_block, lattice_block, sections_wavefront, sparse_block};

/// Runs `input` through `filter` into `output` (the shorter length counts), carrying state;
/// the same output as calling `process_sample` on each sample.
pub fn process_block_f64(filter: &mut Filter, input: &[f64], output: &mut [f64]) {
    with_widest_vectors(MonoBlock {
        filter,
        input,
        output,
    })
}

struct MonoBlock<'a> {
    filter: &'a mut Filter,
    input: &'a [f64],
    output: &'a mut [f64],
}

impl Kernel for MonoBlock<'_> {
    type Output = ();
    #[inline(always)]
    fn run<A: Arithmetic>(self) {
        process_inline::<A>(self.filter, self.input, self.output)
    }
}

#[inline(always)]
pub(super) fn process_inline<A: Arithmetic>(
    filter: &mut Filter,
    input: &[f64],
    output: &mut [f64],
) {
    match filter {
        Filter::DirectForm2T(f) => direct_form_block::process(f, input, output),
        Filter::Sections(f) => sections_wavefront::process::<A>(f, input, output),
        Filter::LatticeLadder(f) => lattice_block::process(f, input, output),
        // Plain arithmetic, as the direct form: a recursion can amplify the different rounding
        // of fused multiply-adds (a dense order-12 recursion by 1e-12 of its peak); the runs are
        // vector work either way.
        Filter::SparseRecursion(f) => sparse_block::process::<Plain>(f, input, output),
        Filter::PartitionedConvolution(f) => f.process::<A>(input, output),
    }
}
