//! Direct form II transposed filters for up to `L` channels at once, one channel per vector
//! lane. The channels must have the same order; each lane does the operations of
//! [`DirectForm2T::process_sample`] in the same order (bit-identical output).

use super::super::DirectForm2T;

#[derive(Debug, Clone)]
pub struct LaneDirectForm<const L: usize> {
    /// b[i] and a[i] across the lanes, i = 0 … N.
    b: Vec<[f64; L]>,
    a: Vec<[f64; L]>,
    /// s[i] across the lanes, i = 0 … N − 1.
    state: Vec<[f64; L]>,
}

impl<const L: usize> LaneDirectForm<L> {
    /// Lanes from `filters` (at most `L`, all of one order, at least one); lanes beyond them
    /// copy the first filter and are fed silence.
    pub fn new(filters: &[&DirectForm2T]) -> Self {
        let first = filters[0];
        let len = first.b().len();
        let mut b = vec![[0.0; L]; len];
        let mut a = vec![[0.0; L]; len];
        let mut state = vec![[0.0; L]; len.saturating_sub(1)];
        for lane in 0..L {
            let f = filters.get(lane).copied().unwrap_or(first);
            for i in 0..len {
                b[i][lane] = f.b()[i];
                a[i][lane] = f.a()[i];
            }
            if lane < filters.len() {
                for (s, v) in state.iter_mut().zip(f.state()) {
                    s[lane] = *v;
                }
            }
        }
        Self { b, a, state }
    }

    /// Filters each frame (one sample per lane) in place.
    #[inline(always)]
    pub fn process(&mut self, frames: &mut [[f64; L]]) {
        let order = self.state.len();
        if order == 0 {
            let b0 = self.b[0];
            for frame in frames.iter_mut() {
                for l in 0..L {
                    frame[l] *= b0[l];
                }
            }
            return;
        }
        let b0 = self.b[0];
        let (b, b_last) = (&self.b[1..order], self.b[order]);
        let (a, a_last) = (&self.a[1..order], self.a[order]);
        let state = &mut self.state[..order];
        for frame in frames.iter_mut() {
            let x = *frame;
            let mut y = [0.0; L];
            for l in 0..L {
                y[l] = b0[l] * x[l] + state[0][l];
            }
            for i in 0..order - 1 {
                // Whole-array steps on local copies keep each array in a vector register.
                let (next, bi, ai) = (state[i + 1], b[i], a[i]);
                let mut s = [0.0; L];
                for l in 0..L {
                    s[l] = bi[l] * x[l] - ai[l] * y[l] + next[l];
                }
                state[i] = s;
            }
            for l in 0..L {
                state[order - 1][l] = b_last[l] * x[l] - a_last[l] * y[l] + 0.0;
            }
            *frame = y;
        }
    }

    /// One sample of one lane (the others untouched).
    pub fn step_lane(&mut self, lane: usize, x: f64) -> f64 {
        let lane = lane.min(L - 1);
        let n = self.state.len();
        let y = self.b[0][lane] * x + self.state.first().map_or(0.0, |s| s[lane]);
        for i in 0..n {
            let carried = self.state.get(i + 1).map_or(0.0, |s| s[lane]);
            self.state[i][lane] = self.b[i + 1][lane] * x - self.a[i + 1][lane] * y + carried;
        }
        y
    }

    pub fn reset(&mut self) {
        self.state.fill([0.0; L]);
    }
}
