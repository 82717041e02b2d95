//! Cascades of second-order sections for up to `L` channels at once, one channel per vector
//! lane (struct of arrays: each coefficient and state variable is an `[f64; L]`).
//!
//! The channels must have the same number of sections; their coefficients may differ. Each lane
//! does the operations of [`SectionCascade::process_sample`] in the same order, so every
//! channel's output is the same to the bit as running it alone (or, with [`super::dispatch::Fused`],
//! differs by rounding only).
//!
//! Inside a block the sections run as a wavefront, as in [`super::sections_wavefront`], but
//! across registers instead of across lanes: at step t, section k works on frame t − k, taking
//! what section k − 1 produced one step earlier. The sections' recurrences are then independent
//! within a step and the processor overlaps them, where frame by frame each frame's sections
//! would wait for one another. Ramp steps at the ends leave idle sections untouched: nothing is
//! held over between blocks, no latency is added.

use super::super::SectionCascade;
use super::dispatch::Arithmetic;

#[derive(Debug, Clone)]
pub struct LaneSections<const L: usize> {
    gain: [f64; L],
    /// Per section: b0, b1, b2, a1, a2, each across the lanes.
    coefficients: Vec<[[f64; L]; 5]>,
    /// Per section: s0, s1 across the lanes.
    state: Vec<[[f64; L]; 2]>,
    /// Per section: its output at the previous wavefront step (scratch, sized here once).
    carry: Vec<[f64; L]>,
}

impl<const L: usize> LaneSections<L> {
    /// Lanes from `cascades` (at most `L`, all with the same section count, at least one);
    /// lanes beyond them copy the first cascade and are fed silence.
    pub fn new(cascades: &[&SectionCascade]) -> Self {
        let first = cascades[0];
        let sections = first.section_count();
        let mut gain = [0.0; L];
        let mut coefficients = vec![[[0.0; L]; 5]; sections];
        let mut state = vec![[[0.0; L]; 2]; sections];
        for lane in 0..L {
            let c = cascades.get(lane).copied().unwrap_or(first);
            gain[lane] = c.gain();
            for (k, (sc, ss)) in c.sections().iter().zip(c.state()).enumerate() {
                for (j, idx) in [0, 1, 2, 4, 5].into_iter().enumerate() {
                    coefficients[k][j][lane] = sc[idx];
                }
                if lane < cascades.len() {
                    state[k][0][lane] = ss[0];
                    state[k][1][lane] = ss[1];
                }
            }
        }
        Self {
            gain,
            coefficients,
            carry: vec![[0.0; L]; sections],
            state,
        }
    }

    /// Filters each frame (one sample per lane) in place.
    #[inline(always)]
    pub fn process<A: Arithmetic>(&mut self, frames: &mut [[f64; L]]) {
        let n = frames.len();
        let k_count = self.coefficients.len();
        if k_count == 0 {
            for frame in frames.iter_mut() {
                for (v, g) in frame.iter_mut().zip(self.gain) {
                    *v *= g;
                }
            }
            return;
        }
        if n == 0 {
            return;
        }
        let last = k_count - 1;
        let gain = self.gain;
        let coefficients = &self.coefficients[..];
        let state = &mut self.state[..k_count];
        let carry = &mut self.carry[..k_count];
        // Step t: section k works on frame t − k when 0 ≤ t − k < n. Sections go from the last
        // to the first, so each reads its predecessor's output of the previous step before the
        // predecessor overwrites it.
        for t in 0..n + last {
            let first_busy = (t + 1).saturating_sub(n);
            let last_busy = t.min(last);
            for k in (first_busy..=last_busy).rev() {
                let v = if k == 0 {
                    let x = frames[t];
                    let mut v = [0.0; L];
                    for l in 0..L {
                        v[l] = gain[l] * x[l];
                    }
                    v
                } else {
                    carry[k - 1]
                };
                let [b0, b1, b2, a1, a2] = coefficients[k];
                let [mut s0, mut s1] = state[k];
                // One whole-array step at a time: each loop becomes one vector operation.
                let mut y = [0.0; L];
                for l in 0..L {
                    y[l] = A::section_output(b0[l], v[l], s0[l]);
                }
                for l in 0..L {
                    s0[l] = A::section_s0(b1[l], v[l], a1[l], y[l], s1[l]);
                }
                for l in 0..L {
                    s1[l] = A::section_s1(b2[l], v[l], a2[l], y[l]);
                }
                state[k] = [s0, s1];
                carry[k] = y;
                if k == last {
                    frames[t - last] = y;
                }
            }
        }
    }

    /// One sample of one lane (the others untouched).
    pub fn step_lane(&mut self, lane: usize, x: f64) -> f64 {
        let lane = lane.min(L - 1);
        let mut v = self.gain[lane] * x;
        for (c, s) in self.coefficients.iter().zip(self.state.iter_mut()) {
            let y = c[0][lane] * v + s[0][lane];
            s[0][lane] = c[1][lane] * v - c[3][lane] * y + s[1][lane];
            s[1][lane] = c[2][lane] * v - c[4][lane] * y;
            v = y;
        }
        v
    }

    pub fn reset(&mut self) {
        self.state.fill([[0.0; L]; 2]);
    }
}
