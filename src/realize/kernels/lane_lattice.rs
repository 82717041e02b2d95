//! Lattice–ladder filters for up to `L` channels at once, one channel per vector lane. The
//! channels must have the same order; each lane does the operations of
//! [`LatticeLadder::process_sample`] in the same order (bit-identical output).

use super::super::LatticeLadder;
use super::dispatch::{Arithmetic, Plain};

#[derive(Debug, Clone)]
pub struct LaneLattice<const L: usize> {
    /// k₁ … k_M across the lanes.
    k: Vec<[f64; L]>,
    /// v₀ … v_M across the lanes.
    v: Vec<[f64; L]>,
    /// g₀ … g_M (previous sample) across the lanes.
    g: Vec<[f64; L]>,
}

impl<const L: usize> LaneLattice<L> {
    /// Lanes from `filters` (at most `L`, all of one order, at least one); lanes beyond them
    /// copy the first filter and are fed silence.
    pub fn new(filters: &[&LatticeLadder]) -> Self {
        let first = filters[0];
        let order = first.order();
        let mut k = vec![[0.0; L]; order];
        let mut v = vec![[0.0; L]; order + 1];
        let mut g = vec![[0.0; L]; order + 1];
        for lane in 0..L {
            let f = filters.get(lane).copied().unwrap_or(first);
            for (km, value) in k.iter_mut().zip(f.reflection()) {
                km[lane] = *value;
            }
            for (vm, value) in v.iter_mut().zip(f.ladder()) {
                vm[lane] = *value;
            }
            if lane < filters.len() {
                for (s, x) in g.iter_mut().zip(f.state()) {
                    s[lane] = *x;
                }
            }
        }
        Self { k, v, g }
    }

    /// Filters each frame (one sample per lane) in place.
    #[inline(always)]
    /// Always the plain arithmetic: fusing changes the rounding, and a high-order direct form
    /// or a lattice with |k| near 1 amplifies that past the 1e-12 the fast paths promise.
    pub fn process(&mut self, frames: &mut [[f64; L]]) {
        let order = self.k.len();
        let v0 = self.v[0];
        let v = &self.v[1..=order];
        let k = &self.k[..order];
        let g = &mut self.g[..=order];
        for frame in frames.iter_mut() {
            let mut f = *frame;
            let mut y = [0.0; L];
            for m in (0..order).rev() {
                let g_below = g[m];
                let mut gm = [0.0; L];
                for l in 0..L {
                    (f[l], gm[l], y[l]) =
                        Plain::lattice_stage(k[m][l], g_below[l], f[l], v[m][l], y[l]);
                }
                g[m + 1] = gm;
            }
            g[0] = f;
            for l in 0..L {
                frame[l] = y[l] + v0[l] * f[l];
            }
        }
    }

    /// One sample of one lane (the others untouched).
    pub fn step_lane(&mut self, lane: usize, x: f64) -> f64 {
        let lane = lane.min(L - 1);
        let mut f = x;
        let mut y = 0.0;
        for m in (1..=self.k.len()).rev() {
            let k = self.k[m - 1][lane];
            let g_below = self.g[m - 1][lane];
            f -= k * g_below;
            let g = k * f + g_below;
            y += self.v[m][lane] * g;
            self.g[m][lane] = g;
        }
        self.g[0][lane] = f;
        y + self.v[0][lane] * f
    }

    pub fn reset(&mut self) {
        self.g.fill([0.0; L]);
    }

    /// Clears one lane's state (the others untouched).
    pub fn reset_lane(&mut self, lane: usize) {
        let lane = lane.min(L - 1);
        for g in &mut self.g {
            g[lane] = 0.0;
        }
    }
}
