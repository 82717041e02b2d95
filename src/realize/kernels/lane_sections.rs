//! Cascades of second-order sections for up to `L` channels at once, one channel per vector
//! lane (struct of arrays: each coefficient and state variable is an `[f64; L]`).
//!
//! The channels must have the same number of sections; their coefficients may differ. Each lane
//! does the operations of [`SectionCascade::process_sample`] in the same order, so every
//! channel's output is the same to the bit as running it alone (or, with [`super::dispatch::Fused`],
//! differs by rounding only).
//!
//! The sections run a few at a time ([`GROUP`] sections, a group), frame after frame over the
//! whole block, then the next group over the block again. Inside a group the number of
//! sections is a constant of the compiled code, so their state and coefficients stay in
//! registers for the whole block: each frame costs the group's multiply-adds and one load and
//! one store of the frame, nothing else. A loop over any cascade length would keep the state
//! in memory, and every section's recurrence would go through a store and a reload on every
//! frame, lengthening the chain y(n) → s0(n) → y(n + 1) the processor has to wait for. The sections of
//! a group depend on one another only forward (section k takes section k − 1's output of the
//! same frame), so the processor overlaps consecutive frames by itself; no sample is held over,
//! no latency is added.

use super::super::SectionCascade;
use super::dispatch::Arithmetic;

#[derive(Debug, Clone)]
pub struct LaneSections<const L: usize> {
    gain: [f64; L],
    /// Per section: b0, b1, b2, a1, a2, each across the lanes.
    coefficients: Vec<[[f64; L]; 5]>,
    /// Per section: s0, s1 across the lanes.
    state: Vec<[[f64; L]; 2]>,
}

/// Most sections run together over a block. Four sections of eight lanes hold 8 state and 20
/// coefficient registers, which fits AVX-512's 32; and four sections give each frame 20 vector
/// multiply-adds, more than the 8-cycle recurrence of one section needs to stay hidden on two
/// FMA units. Groups of 8 spill coefficients and ran slower (8 channels of 8 sections: 48 µs
/// against 38 per 2048 frames, `cargo bench --bench kernels -- sections`).
pub const GROUP: usize = 4;

type Coefficients<const L: usize> = [[f64; L]; 5];
type State<const L: usize> = [[f64; L]; 2];

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
    pub fn process<A: Arithmetic>(&mut self, frames: &mut [[f64; L]]) {
        let gain = self.gain;
        for frame in frames.iter_mut() {
            for (v, g) in frame.iter_mut().zip(gain) {
                *v *= g;
            }
        }
        // Groups as even as possible (7 sections: 4 + 3, not 4 + 3 idle ones), so no group is
        // left with a single section whose recurrence alone would set the pace.
        let sections = self.coefficients.len();
        let groups = sections.div_ceil(GROUP);
        let mut start = 0;
        for g in 0..groups {
            let size = (sections - start).div_ceil(groups - g);
            let c = &self.coefficients[start..start + size];
            let s = &mut self.state[start..start + size];
            match size {
                1 => run_group::<A, L, 1>(c, s, frames),
                2 => run_group::<A, L, 2>(c, s, frames),
                3 => run_group::<A, L, 3>(c, s, frames),
                _ => run_group::<A, L, GROUP>(c, s, frames),
            }
            start += size;
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

    /// Clears one lane's state (the others untouched).
    pub fn reset_lane(&mut self, lane: usize) {
        let lane = lane.min(L - 1);
        for s in &mut self.state {
            s[0][lane] = 0.0;
            s[1][lane] = 0.0;
        }
    }
}

/// `G` sections (exactly: the slices' length) over every frame, in place; coefficients and
/// state are copied into locals for the block, so they live in registers, and written back once.
#[inline(always)]
fn run_group<A: Arithmetic, const L: usize, const G: usize>(
    coefficients: &[Coefficients<L>],
    state: &mut [State<L>],
    frames: &mut [[f64; L]],
) {
    let (Ok(c), Ok(state)) = (
        <&[Coefficients<L>; G]>::try_from(coefficients),
        <&mut [State<L>; G]>::try_from(state),
    ) else {
        return;
    };
    let c = *c;
    let mut s = *state;
    for frame in frames.iter_mut() {
        let mut v = *frame;
        for k in 0..G {
            let [b0, b1, b2, a1, a2] = c[k];
            let [mut s0, mut s1] = s[k];
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
            s[k] = [s0, s1];
            v = y;
        }
        *frame = v;
    }
    *state = s;
}
