//! A long FIR h[0 … L−1] by uniformly partitioned FFT convolution (overlap-save with a
//! frequency-domain delay line), behind a direct-form head, so it adds no latency.
//!
//! The taps are cut into partitions of B: the head h[0 … B−1] runs as a plain tapped delay line
//! sample by sample; partition k ≥ 1 (taps kB … kB + B − 1) touches output n only through inputs
//! up to n − kB, i.e. from blocks of B that are already complete. So at the end of every input
//! block m, one real FFT of the last 2B inputs gives Xₘ, the sum Σₖ Xₘ₊₁₋ₖ·Hₖ over the stored
//! spectra gives the tail's contribution to all of block m + 1, and one inverse FFT brings it
//! back (overlap-save: its last B samples are the linear convolution). Output n = head(n) +
//! tail(n): the direct form's sum, regrouped, from the first sample on.
//!
//! Of Σₖ Xₘ₊₁₋ₖ·Hₖ, only the k = 1 term needs the block just completed; the terms k ≥ 2 use
//! spectra known a whole block earlier, so they are accumulated a share at a time while block m
//! comes in, in step with the samples processed. The work at a block boundary is then two FFTs
//! of 2B and one partition's products, whatever the length, and a callback shorter than B costs
//! about the same as the next one.
//!
//! All plans, spectra and buffers are made in [`PartitionedConvolution::new`] on the control
//! side; processing allocates nothing (the transforms run with scratch made ahead). State f64.

use std::sync::Arc;

use realfft::num_complex::Complex;
use realfft::{ComplexToReal, RealFftPlanner, RealToComplex};

use super::kernels::dispatch::{Arithmetic, Plain};
use super::kernels::fir_head::{convolve_head, HEAD_WINDOW};
use super::kernels::spectral_mac::multiply_accumulate;

/// A running partitioned convolution.
#[derive(Clone)]
pub struct PartitionedConvolution {
    taps: usize,
    /// B: samples per partition and per input block; the FFTs have 2B points.
    partition: usize,
    /// h[0 … min(B, L) − 1], run as a direct form.
    head: Vec<f64>,
    /// Spectra of partitions 1 … K (K·(B + 1) bins each, real and imaginary parts apart),
    /// scaled by 1/(2B) so the inverse transform needs no scaling.
    spectra_re: Vec<f64>,
    spectra_im: Vec<f64>,
    partitions: usize,
    bins: usize,
    /// The previous input block, then the current one (B + B samples), then slack for the
    /// head's whole-window reads past the newest sample (never used in a result).
    input: Vec<f64>,
    /// Samples of the current block seen so far (0 … B − 1).
    fill: usize,
    /// The tail's contribution to the current block.
    tail_out: Vec<f64>,
    /// Frequency-domain delay line: the spectra of the last K input windows (a ring).
    delay_re: Vec<f64>,
    delay_im: Vec<f64>,
    /// Ring slot of the newest input spectrum.
    newest: usize,
    /// Σₖ≥₂ of the coming boundary's products, and how many of those partitions are in it.
    acc_re: Vec<f64>,
    acc_im: Vec<f64>,
    acc_done: usize,
    forward: Arc<dyn RealToComplex<f64>>,
    inverse: Arc<dyn ComplexToReal<f64>>,
    time: Vec<f64>,
    spectrum: Vec<Complex<f64>>,
    scratch: Vec<Complex<f64>>,
}

impl std::fmt::Debug for PartitionedConvolution {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("PartitionedConvolution")
            .field("taps", &self.taps)
            .field("partition", &self.partition)
            .field("partitions", &self.partitions)
            .finish_non_exhaustive()
    }
}

impl PartitionedConvolution {
    /// `taps` (at least one) cut into partitions of `partition` ≥ 1 samples (control side).
    pub(crate) fn new(taps: &[f64], partition: usize) -> Self {
        let b = partition.max(1);
        let n = 2 * b;
        let bins = b + 1;
        let partitions = taps.len().saturating_sub(b).div_ceil(b);
        let mut planner = RealFftPlanner::<f64>::new();
        let forward = planner.plan_fft_forward(n);
        let inverse = planner.plan_fft_inverse(n);
        let scratch_len = forward.get_scratch_len().max(inverse.get_scratch_len());
        let mut time = vec![0.0; n];
        let mut spectrum = vec![Complex::new(0.0, 0.0); bins];
        let mut scratch = vec![Complex::new(0.0, 0.0); scratch_len];
        let mut spectra_re = vec![0.0; partitions * bins];
        let mut spectra_im = vec![0.0; partitions * bins];
        let scale = 1.0 / n as f64;
        for k in 0..partitions {
            let from = (k + 1) * b;
            let to = (from + b).min(taps.len());
            time.fill(0.0);
            time[..to - from].copy_from_slice(&taps[from..to]);
            // Lengths are the plan's own: the transform cannot fail.
            let _ = forward.process_with_scratch(&mut time, &mut spectrum, &mut scratch);
            for (i, c) in spectrum.iter().enumerate() {
                spectra_re[k * bins + i] = c.re * scale;
                spectra_im[k * bins + i] = c.im * scale;
            }
        }
        Self {
            taps: taps.len(),
            partition: b,
            head: taps[..taps.len().min(b)].to_vec(),
            spectra_re,
            spectra_im,
            partitions,
            bins,
            input: vec![0.0; n + HEAD_WINDOW],
            fill: 0,
            tail_out: vec![0.0; b],
            delay_re: vec![0.0; partitions * bins],
            delay_im: vec![0.0; partitions * bins],
            newest: 0,
            acc_re: vec![0.0; bins],
            acc_im: vec![0.0; bins],
            acc_done: 0,
            forward,
            inverse,
            time,
            spectrum,
            scratch,
        }
    }

    pub fn process_sample(&mut self, x: f64) -> f64 {
        let mut y = [0.0];
        self.process::<Plain>(&[x], &mut y);
        y[0]
    }

    /// Filters `input` into `output` (the shorter length counts), carrying state.
    #[inline(always)]
    pub(crate) fn process<A: Arithmetic>(&mut self, input: &[f64], output: &mut [f64]) {
        let b = self.partition;
        let n = input.len().min(output.len());
        let mut done = 0;
        while done < n {
            let len = (n - done).min(b - self.fill);
            let at = b + self.fill;
            self.input[at..at + len].copy_from_slice(&input[done..done + len]);
            let out = &mut output[done..done + len];
            convolve_head::<A>(&self.head, &self.input, at, out);
            for (y, t) in out
                .iter_mut()
                .zip(&self.tail_out[self.fill..self.fill + len])
            {
                *y += *t;
            }
            self.fill += len;
            done += len;
            if self.fill == b {
                self.end_block::<A>();
            } else {
                let due = ((self.partitions.saturating_sub(1)) * self.fill).div_ceil(b);
                self.accumulate_until::<A>(due);
            }
        }
    }

    /// Adds partitions 2, 3, … to the accumulator until `due` of them are in.
    #[inline(always)]
    fn accumulate_until<A: Arithmetic>(&mut self, due: usize) {
        let (k_count, bins) = (self.partitions, self.bins);
        while self.acc_done < due.min(k_count.saturating_sub(1)) {
            // Partition k = acc_done + 2 meets the input window k − 2 blocks before the newest.
            let back = self.acc_done;
            let slot = (self.newest + k_count - back) % k_count;
            let k = back + 1; // index of partition k = back + 2 in `spectra_*` (which start at 1)
            multiply_accumulate::<A>(
                &mut self.acc_re,
                &mut self.acc_im,
                &self.delay_re[slot * bins..(slot + 1) * bins],
                &self.delay_im[slot * bins..(slot + 1) * bins],
                &self.spectra_re[k * bins..(k + 1) * bins],
                &self.spectra_im[k * bins..(k + 1) * bins],
            );
            self.acc_done += 1;
        }
    }

    /// The input block is complete: its spectrum joins the delay line and the tail's output
    /// for the next block is formed.
    #[inline(always)]
    fn end_block<A: Arithmetic>(&mut self) {
        let (b, bins, k_count) = (self.partition, self.bins, self.partitions);
        if k_count > 0 {
            self.accumulate_until::<A>(k_count);
            self.time.copy_from_slice(&self.input[..2 * b]);
            let _ = self.forward.process_with_scratch(
                &mut self.time,
                &mut self.spectrum,
                &mut self.scratch,
            );
            self.newest = (self.newest + 1) % k_count;
            let slot = self.newest * bins..(self.newest + 1) * bins;
            for ((re, im), c) in self.delay_re[slot.clone()]
                .iter_mut()
                .zip(&mut self.delay_im[slot.clone()])
                .zip(&self.spectrum)
            {
                *re = c.re;
                *im = c.im;
            }
            multiply_accumulate::<A>(
                &mut self.acc_re,
                &mut self.acc_im,
                &self.delay_re[slot.clone()],
                &self.delay_im[slot],
                &self.spectra_re[..bins],
                &self.spectra_im[..bins],
            );
            for ((c, re), im) in self.spectrum.iter_mut().zip(&self.acc_re).zip(&self.acc_im) {
                *c = Complex::new(*re, *im);
            }
            // A real signal's spectrum is real at 0 and at the Nyquist bin; say so exactly.
            self.spectrum[0].im = 0.0;
            self.spectrum[bins - 1].im = 0.0;
            let _ = self.inverse.process_with_scratch(
                &mut self.spectrum,
                &mut self.time,
                &mut self.scratch,
            );
            self.tail_out.copy_from_slice(&self.time[b..2 * b]);
            self.acc_re.fill(0.0);
            self.acc_im.fill(0.0);
            self.acc_done = 0;
        }
        self.input.copy_within(b..2 * b, 0);
        self.fill = 0;
    }

    /// Silence in the past.
    pub fn reset(&mut self) {
        self.input.fill(0.0);
        self.tail_out.fill(0.0);
        self.delay_re.fill(0.0);
        self.delay_im.fill(0.0);
        self.acc_re.fill(0.0);
        self.acc_im.fill(0.0);
        self.acc_done = 0;
        self.fill = 0;
        self.newest = 0;
    }

    /// Order of the FIR (taps − 1).
    pub fn order(&self) -> usize {
        self.taps.saturating_sub(1)
    }

    /// B, the partition size (the head's length and the FFT blocks' hop).
    pub fn partition_size(&self) -> usize {
        self.partition
    }

    /// K, the partitions run by FFT after the head.
    pub fn fft_partitions(&self) -> usize {
        self.partitions
    }
}
