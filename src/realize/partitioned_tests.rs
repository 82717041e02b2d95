//! The partitioned convolution against the direct form, sample for sample from the first.
//!
//! Source: common practice — overlap-save partitioned convolution regroups the direct form's
//! sum Σⱼ h[j]·x[n − j] (head: j < B in the time domain; partitions: blocks of B taps through
//! FFTs of 2B), so the outputs agree up to the FFTs' round-off, which grows like ε·log₂(2B)
//! times the size of the terms. Measure: max over n of |y_partitioned(n) − y_direct(n)| ≤
//! 1e-13 × Σⱼ|h[j]| × max|x| (the largest the output could be). Lengths 65 to 16 384 taps,
//! partitions 64 to 512, blocks that divide the partition, that do not, single samples,
//! and block lengths that change from call to call.

use crate::model::{CoefficientPrecision, Structure, TransferFunction};

use super::{realize, Filter, PartitionedConvolution};

const RELATIVE_TOLERANCE: f64 = 1e-13;

/// A decaying, sign-changing response of `n` taps (an invented long inverse), deterministic.
fn taps(n: usize, seed: u64) -> Vec<f64> {
    let mut state = seed.wrapping_mul(0x2545_f491_4f6c_dd1d) | 1;
    (0..n)
        .map(|i| {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            let noise = (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5;
            noise * (-3.0 * i as f64 / n as f64).exp()
        })
        .collect()
}

fn direct_output(h: &[f64], x: &[f64]) -> Vec<f64> {
    let mut f = realize(
        &TransferFunction::new(h.to_vec(), vec![1.0]),
        Structure::DirectForm2T,
        CoefficientPrecision::F64,
    )
    .expect("FIR realizes")
    .filter;
    let mut y = vec![0.0; x.len()];
    for (xs, ys) in x.chunks(256).zip(y.chunks_mut(256)) {
        f.process_block_f64(xs, ys);
    }
    y
}

/// Runs `x` through a partitioned convolution of `h` in blocks cut at `cuts` (cycled) and
/// returns the worst difference from the direct form relative to Σ|h|·max|x|.
fn worst(h: &[f64], partition: usize, x: &[f64], cuts: &[usize]) -> f64 {
    let expected = direct_output(h, x);
    let mut f = Filter::PartitionedConvolution(Box::new(PartitionedConvolution::new(h, partition)));
    let mut y = vec![0.0; x.len()];
    let (mut at, mut i) = (0, 0);
    while at < x.len() {
        let len = cuts[i % cuts.len()].min(x.len() - at);
        if len == 1 {
            y[at] = f.process_sample(x[at]);
        } else {
            f.process_block_f64(&x[at..at + len], &mut y[at..at + len]);
        }
        at += len;
        i += 1;
    }
    let scale =
        h.iter().map(|v| v.abs()).sum::<f64>() * x.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    y.iter()
        .zip(&expected)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0f64, f64::max)
        / scale
}

fn noise(n: usize, seed: u64) -> Vec<f64> {
    taps(n, seed)
        .iter()
        .enumerate()
        .map(|(i, v)| v * (3.0 * i as f64 / n as f64).exp())
        .collect()
}

#[test]
fn equals_the_direct_form_at_several_lengths_and_blocks() {
    let cases: [(usize, usize, &[usize]); 7] = [
        (65, 64, &[64]),
        (700, 64, &[17, 64, 1, 100, 0, 333]),
        (1000, 128, &[128, 256]),
        (1500, 256, &[48, 7, 300]),
        (4096, 256, &[64]),
        (4096, 512, &[100, 1, 1000, 63, 511]),
        (3000, 64, &[1]),
    ];
    for (n, partition, cuts) in cases {
        let h = taps(n, n as u64);
        let x = noise(n + 3 * partition + 500, 99);
        let w = worst(&h, partition, &x, cuts);
        assert!(
            w <= RELATIVE_TOLERANCE,
            "{n} taps, B = {partition}, cuts {cuts:?}: {w:e}"
        );
    }
}

// The length the benchmark runs, through `realize` (its own partition size), in engine-sized
// blocks of 64 and blocks that change size.
#[test]
fn sixteen_thousand_taps_through_realize() {
    let h = taps(16_384, 5);
    let r = realize(
        &TransferFunction::new(h.clone(), vec![1.0]),
        Structure::PartitionedConvolution,
        CoefficientPrecision::F64,
    )
    .unwrap();
    let Filter::PartitionedConvolution(f) = &r.filter else {
        panic!("not a partitioned convolution");
    };
    let x = noise(16_384 + 2 * f.partition_size() + 300, 3);
    let w = worst(&h, f.partition_size(), &x, &[64, 64, 37, 200]);
    assert!(w <= RELATIVE_TOLERANCE, "{w:e}");
}

// Source: common practice — reset means silence in the past: after a reset the output equals a
// fresh filter's.
#[test]
fn reset_forgets_everything() {
    let h = taps(900, 1);
    let x = noise(2000, 2);
    let mut used = PartitionedConvolution::new(&h, 64);
    let mut scratch = vec![0.0; x.len()];
    used.process::<crate::realize::kernels::dispatch::Plain>(&x, &mut scratch);
    used.reset();
    let mut fresh = PartitionedConvolution::new(&h, 64);
    for &v in &x {
        assert_eq!(used.process_sample(v), fresh.process_sample(v));
    }
}

#[test]
fn refuses_a_design_with_poles() {
    let r = realize(
        &TransferFunction::new(vec![1.0], vec![1.0, -0.5]),
        Structure::PartitionedConvolution,
        CoefficientPrecision::F64,
    );
    assert!(
        matches!(r, Err(super::RealizeError::NeedsFir { .. })),
        "{r:?}"
    );
}
