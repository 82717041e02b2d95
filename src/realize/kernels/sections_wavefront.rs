//! One channel's cascade of second-order sections, a block at a time, as a wavefront.
//!
//! Sample by sample, section k must wait for section k − 1's output on the same sample, so the
//! sections form one long chain of dependent multiply-adds. Inside a block the chain can be
//! skewed instead: at step t, section k works on sample t − k, taking the output section k − 1
//! produced one step earlier. Every section then does independent work at each step, so all of
//! them run side by side in vector lanes (lane k = section k). The first K − 1 steps (the
//! sections further down have nothing of this block yet) and the last K − 1 steps (the first
//! sections are done) leave the idle lanes' state untouched, so the block ends with every
//! section having processed exactly the block's samples: nothing is held over, no latency is
//! added. Each section does the very operations of [`SectionCascade::process_sample`] in the
//! same order, so the output is bit for bit the same (the AVX2/AVX-512 version in
//! [`super::simd_wavefront`] fuses multiply-adds and differs by rounding only).

use super::super::SectionCascade;

/// Largest number of sections the wavefront runs; longer cascades go sample by sample.
pub const MAX_WAVEFRONT_SECTIONS: usize = 32;

/// Runs `input` through `cascade` into `output` (the shorter length counts), carrying state.
#[inline(always)]
pub fn process(cascade: &mut SectionCascade, input: &[f64], output: &mut [f64]) {
    let n = input.len().min(output.len());
    let (input, output) = (&input[..n], &mut output[..n]);
    #[cfg(target_arch = "x86_64")]
    if let Some(done) = vector_wavefront(cascade, input, output) {
        return done;
    }
    match cascade.section_count() {
        0 => {
            let gain = cascade.gain();
            for (x, y) in input.iter().zip(output.iter_mut()) {
                *y = gain * x;
            }
        }
        1 => sample_by_sample(cascade, input, output),
        2..=4 => wavefront::<4>(cascade, input, output),
        5..=8 => wavefront::<8>(cascade, input, output),
        9..=16 => wavefront::<16>(cascade, input, output),
        17..=MAX_WAVEFRONT_SECTIONS => wavefront::<MAX_WAVEFRONT_SECTIONS>(cascade, input, output),
        _ => sample_by_sample(cascade, input, output),
    }
}

/// The intrinsics version when the CPU has AVX-512F or AVX2 and the cascade fits.
#[cfg(target_arch = "x86_64")]
#[inline(always)]
fn vector_wavefront(cascade: &mut SectionCascade, input: &[f64], output: &mut [f64]) -> Option<()> {
    use super::dispatch::{detected_vector_unit, VectorUnit};
    use super::simd_wavefront::{wavefront_avx2, wavefront_avx512};
    let sections = cascade.section_count();
    if sections < 2 {
        return None;
    }
    // SAFETY (every call below): the unit the function needs was detected on this CPU.
    match (detected_vector_unit(), sections) {
        (VectorUnit::Avx512, 2..=8) => unsafe { wavefront_avx512::<1, 8>(cascade, input, output) },
        (VectorUnit::Avx512, 9..=16) => unsafe {
            wavefront_avx512::<2, 16>(cascade, input, output)
        },
        (VectorUnit::Avx512, 17..=32) => unsafe {
            wavefront_avx512::<4, 32>(cascade, input, output)
        },
        (VectorUnit::Avx2, 2..=4) => unsafe { wavefront_avx2::<1, 4>(cascade, input, output) },
        (VectorUnit::Avx2, 5..=8) => unsafe { wavefront_avx2::<2, 8>(cascade, input, output) },
        (VectorUnit::Avx2, 9..=16) => unsafe { wavefront_avx2::<4, 16>(cascade, input, output) },
        (VectorUnit::Avx2, 17..=32) => unsafe { wavefront_avx2::<8, 32>(cascade, input, output) },
        _ => return None,
    }
    Some(())
}

/// The plain order: every section on one sample, then the next sample.
#[inline(always)]
fn sample_by_sample(cascade: &mut SectionCascade, input: &[f64], output: &mut [f64]) {
    for (x, y) in input.iter().zip(output.iter_mut()) {
        *y = cascade.process_sample(*x);
    }
}

/// Coefficients and state of up to `W` sections, one lane each; lanes past the real sections
/// are pass-through sections (b = [1, 0, 0], a = [1, 0, 0]) whose output nobody reads.
struct Lanes<const W: usize> {
    b0: [f64; W],
    b1: [f64; W],
    b2: [f64; W],
    a1: [f64; W],
    a2: [f64; W],
    s0: [f64; W],
    s1: [f64; W],
}

impl<const W: usize> Lanes<W> {
    #[inline(always)]
    fn load(cascade: &SectionCascade) -> Self {
        let mut l = Lanes {
            b0: [1.0; W],
            b1: [0.0; W],
            b2: [0.0; W],
            a1: [0.0; W],
            a2: [0.0; W],
            s0: [0.0; W],
            s1: [0.0; W],
        };
        for (k, (c, s)) in cascade
            .sections()
            .iter()
            .zip(cascade.state())
            .take(W)
            .enumerate()
        {
            l.b0[k] = c[0];
            l.b1[k] = c[1];
            l.b2[k] = c[2];
            l.a1[k] = c[4];
            l.a2[k] = c[5];
            l.s0[k] = s[0];
            l.s1[k] = s[1];
        }
        l
    }

    #[inline(always)]
    fn store(&self, cascade: &mut SectionCascade) {
        for (k, s) in cascade.state_mut().iter_mut().take(W).enumerate() {
            *s = [self.s0[k], self.s1[k]];
        }
    }

    /// One step with every lane active: each section takes `v[k]` in and leaves its output
    /// in `y[k]`.
    #[inline(always)]
    fn step(&mut self, v: &[f64; W], y: &mut [f64; W]) {
        for k in 0..W {
            let out = self.b0[k] * v[k] + self.s0[k];
            self.s0[k] = self.b1[k] * v[k] - self.a1[k] * out + self.s1[k];
            self.s1[k] = self.b2[k] * v[k] - self.a2[k] * out;
            y[k] = out;
        }
    }

    /// One step where only lanes `first..=last` hold a sample of this block; the others keep
    /// their state (a select, not arithmetic, so nothing of theirs leaks in).
    #[inline(always)]
    fn step_masked(&mut self, v: &[f64; W], y: &mut [f64; W], first: usize, last: usize) {
        for k in 0..W {
            let out = self.b0[k] * v[k] + self.s0[k];
            let s0 = self.b1[k] * v[k] - self.a1[k] * out + self.s1[k];
            let s1 = self.b2[k] * v[k] - self.a2[k] * out;
            let active = k >= first && k <= last;
            self.s0[k] = if active { s0 } else { self.s0[k] };
            self.s1[k] = if active { s1 } else { self.s1[k] };
            y[k] = out;
        }
    }
}

/// Lane k's input at the next step: the new sample (times the gain) in lane 0, every other
/// lane the output its predecessor just produced.
#[inline(always)]
fn shift_in<const W: usize>(first: f64, y: &[f64; W]) -> [f64; W] {
    let mut v = [0.0; W];
    v[0] = first;
    v[1..].copy_from_slice(&y[..W - 1]);
    v
}

#[inline(always)]
fn wavefront<const W: usize>(cascade: &mut SectionCascade, input: &[f64], output: &mut [f64]) {
    let sections = cascade.section_count();
    let n = input.len();
    if n == 0 {
        return;
    }
    let gain = cascade.gain();
    let last = sections - 1;
    let mut lanes = Lanes::<W>::load(cascade);
    let mut y = [0.0; W];
    let steps = n + last;
    // Step t: lane k works on sample t − k when 0 ≤ t − k < n.
    let lane_input = |t: usize| if t < n { gain * input[t] } else { 0.0 };
    let full_from = last.min(n); // first step at which all real lanes are busy
    let full_to = n; // ... until this step (exclusive)
    let mut t = 0;
    // Ramp-up: lanes 0..=t are busy.
    while t < full_from {
        let v = shift_in(lane_input(t), &y);
        let first = (t + 1).saturating_sub(n);
        lanes.step_masked(&v, &mut y, first, t.min(last));
        if t >= last {
            output[t - last] = y[last];
        }
        t += 1;
    }
    // Every real lane busy: the long middle of the block, no masks.
    if full_from < full_to {
        let body = &input[full_from..full_to];
        let out = &mut output[..full_to - last];
        let out = &mut out[full_from - last..];
        for (x, o) in body.iter().zip(out.iter_mut()) {
            let v = shift_in(gain * x, &y);
            lanes.step(&v, &mut y);
            *o = y[last];
        }
        t = full_to;
    }
    // Ramp-down: lanes t − n + 1 ..= last are still busy.
    while t < steps {
        let v = shift_in(lane_input(t), &y);
        let first = (t + 1).saturating_sub(n);
        lanes.step_masked(&v, &mut y, first, t.min(last));
        if t >= last {
            output[t - last] = y[last];
        }
        t += 1;
    }
    lanes.store(cascade);
}
