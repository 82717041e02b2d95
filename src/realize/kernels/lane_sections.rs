//! Cascades of second-order sections for up to `L` channels at once, one channel per vector
//! lane (struct of arrays: each coefficient and state variable is an `[f64; L]`).
//!
//! The channels must have the same number of sections; their coefficients may differ. Each lane
//! does the operations of [`SectionCascade::process_sample`] in the same order, so every
//! channel's output is the same to the bit as running it alone.

use super::super::SectionCascade;

#[derive(Debug, Clone)]
pub struct LaneSections<const L: usize> {
    gain: [f64; L],
    /// Per section: b0, b1, b2, a1, a2, each across the lanes.
    coefficients: Vec<[[f64; L]; 5]>,
    /// Per section: s0, s1 across the lanes.
    state: Vec<[[f64; L]; 2]>,
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
            state,
        }
    }

    /// Filters each frame (one sample per lane) in place.
    #[inline(always)]
    pub fn process(&mut self, frames: &mut [[f64; L]]) {
        for frame in frames.iter_mut() {
            let mut v = [0.0; L];
            for l in 0..L {
                v[l] = self.gain[l] * frame[l];
            }
            for (c, s) in self.coefficients.iter().zip(self.state.iter_mut()) {
                // Whole-array steps on local copies: the compiler then keeps each array in
                // one vector register instead of going lane by lane through memory.
                let [b0, b1, b2, a1, a2] = *c;
                let [mut s0, mut s1] = *s;
                let mut y = [0.0; L];
                for l in 0..L {
                    y[l] = b0[l] * v[l] + s0[l];
                }
                for l in 0..L {
                    s0[l] = b1[l] * v[l] - a1[l] * y[l] + s1[l];
                }
                for l in 0..L {
                    s1[l] = b2[l] * v[l] - a2[l] * y[l];
                }
                *s = [s0, s1];
                v = y;
            }
            *frame = v;
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
