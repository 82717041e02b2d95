//! Direct form II transposed filters for up to `L` channels at once, one channel per vector
//! lane. The channels must have the same order; each lane does the operations of
//! [`DirectForm2T::process_sample`] in the same order (bit-identical output).
//!
//! On x86-64 with AVX2 or AVX-512, orders up to [`MAX_REGISTER_ORDER`] run with the state in
//! registers for the whole block (module `registers` below); elsewhere a portable loop keeps it
//! in memory.

use super::super::DirectForm2T;
use super::dispatch::{Arithmetic, Plain};

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
    ///
    /// Always the plain arithmetic: fusing changes the rounding, and a high-order direct form
    /// amplifies that past the 1e-12 the fast paths promise.
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
        #[cfg(target_arch = "x86_64")]
        {
            use super::dispatch::{detected_vector_unit, VectorUnit};
            let (b, a, state) = (&self.b, &self.a, &mut self.state);
            // SAFETY (both calls): the unit the function needs was detected on this CPU.
            let done = match detected_vector_unit() {
                VectorUnit::Avx512 => unsafe { registers::on_avx512(b, a, state, frames) },
                VectorUnit::Avx2 => unsafe { registers::on_avx2(b, a, state, frames) },
                VectorUnit::Baseline => false,
            };
            if done {
                return;
            }
        }
        run_any_order(&self.b, &self.a, &mut self.state, frames);
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

    /// Clears one lane's state (the others untouched).
    pub fn reset_lane(&mut self, lane: usize) {
        let lane = lane.min(L - 1);
        for s in &mut self.state {
            s[lane] = 0.0;
        }
    }
}

/// Any order ≥ 1, the state in memory: the portable build, and orders past
/// [`MAX_REGISTER_ORDER`].
#[inline(always)]
fn run_any_order<const L: usize>(
    b: &[[f64; L]],
    a: &[[f64; L]],
    state: &mut [[f64; L]],
    frames: &mut [[f64; L]],
) {
    let order = state.len();
    if order == 0 || b.len() != order + 1 || a.len() != order + 1 {
        return;
    }
    let b0 = b[0];
    let (b, b_last) = (&b[1..order], b[order]);
    let (a, a_last) = (&a[1..order], a[order]);
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
                s[l] = Plain::state_update(bi[l], x[l], ai[l], y[l], next[l]);
            }
            state[i] = s;
        }
        for l in 0..L {
            state[order - 1][l] = Plain::state_update(b_last[l], x[l], a_last[l], y[l], 0.0);
        }
        *frame = y;
    }
}

/// The x86-64 vector units' copies: the state of each register's worth of channels held in
/// registers for the whole block.
///
/// Why not the portable loop: compiled for AVX2 / AVX-512, the compiler vectorises it across
/// the delay line (gathering b[i] of one channel for eight i at once) instead of across the
/// channels, which made 8 channels at order 16 slower in lanes than each channel alone.
///
/// Why a constant order `N` per compiled copy: the state is then a fixed set of vector values
/// the compiler keeps in registers (spilling a fixed few past 32 registers), and each frame is a
/// straight run of whole-register operations. Inside a frame only y is shared by the updates,
/// which are otherwise independent, so a frame costs its 4·N vector operations on however many
/// units the core has; the chain carried from frame to frame is y(n) → s₁(n) → y(n + 1) alone.
/// Every lane does `process_sample`'s operations in its order (multiply, multiply, subtract,
/// add; the last update adds an explicit 0.0 as the per-sample code does): same bits.
/// Largest order compiled with its state in registers (x86-64 with AVX2 or AVX-512).
pub const MAX_REGISTER_ORDER: usize = 32;

#[cfg(target_arch = "x86_64")]
mod registers {
    use std::arch::x86_64::{__m256d, __m512d};

    use super::super::vector::F64Vector;
    use super::MAX_REGISTER_ORDER;

    /// Returns false (nothing done) for orders past [`MAX_REGISTER_ORDER`] (the match in
    /// `by_order` lists exactly the orders up to it).
    ///
    /// # Safety
    /// The CPU must have AVX-512F, AVX2 and FMA.
    #[target_feature(enable = "avx512f,avx2,fma")]
    pub unsafe fn on_avx512<const L: usize>(
        b: &[[f64; L]],
        a: &[[f64; L]],
        state: &mut [[f64; L]],
        frames: &mut [[f64; L]],
    ) -> bool {
        if L.is_multiple_of(8) {
            by_order::<__m512d, L>(b, a, state, frames)
        } else {
            by_order::<__m256d, L>(b, a, state, frames)
        }
    }

    /// As [`on_avx512`], for AVX2.
    ///
    /// # Safety
    /// The CPU must have AVX2 and FMA.
    #[target_feature(enable = "avx2,fma")]
    pub unsafe fn on_avx2<const L: usize>(
        b: &[[f64; L]],
        a: &[[f64; L]],
        state: &mut [[f64; L]],
        frames: &mut [[f64; L]],
    ) -> bool {
        by_order::<__m256d, L>(b, a, state, frames)
    }

    #[inline(always)]
    unsafe fn by_order<V: F64Vector, const L: usize>(
        b: &[[f64; L]],
        a: &[[f64; L]],
        state: &mut [[f64; L]],
        frames: &mut [[f64; L]],
    ) -> bool {
        if !L.is_multiple_of(V::LANES) || state.len() > MAX_REGISTER_ORDER {
            return false;
        }
        macro_rules! orders {
            ($($n:literal)*) => {
                match state.len() {
                    $($n => run_order::<V, L, $n>(b, a, state, frames),)*
                    _ => return false,
                }
            };
        }
        orders!(1 2 3 4 5 6 7 8 9 10 11 12 13 14 15 16 17 18 19 20 21 22 23 24 25 26 27 28 29 30 31 32);
        true
    }

    /// `N` delay elements (exactly: `state.len()`; `b` and `a` hold N + 1), one register of
    /// channels at a time over the whole block.
    #[inline(always)]
    unsafe fn run_order<V: F64Vector, const L: usize, const N: usize>(
        b: &[[f64; L]],
        a: &[[f64; L]],
        state: &mut [[f64; L]],
        frames: &mut [[f64; L]],
    ) {
        let (Some((b0, b)), Some((_, a))) = (b.split_first(), a.split_first()) else {
            return;
        };
        let (Ok(b), Ok(a), Ok(state)) = (
            <&[[f64; L]; N]>::try_from(b),
            <&[[f64; L]; N]>::try_from(a),
            <&mut [[f64; L]; N]>::try_from(state),
        ) else {
            return;
        };
        // `L` is a multiple of `V::LANES` (checked by the caller), so every `[c..]` below holds
        // a whole register.
        for c in (0..L).step_by(V::LANES) {
            let b0 = V::load(&b0[c..]);
            let bv: [V; N] = std::array::from_fn(|i| V::load(&b[i][c..]));
            let av: [V; N] = std::array::from_fn(|i| V::load(&a[i][c..]));
            let mut s: [V; N] = std::array::from_fn(|i| V::load(&state[i][c..]));
            let zero = V::splat(0.0);
            for frame in frames.iter_mut() {
                let x = V::load(&frame[c..]);
                let y = b0.mul(x).add(s[0]);
                // Ascending i: s[i + 1] is still the previous frame's when s[i] reads it.
                for i in 0..N - 1 {
                    s[i] = bv[i].mul(x).sub(av[i].mul(y)).add(s[i + 1]);
                }
                s[N - 1] = bv[N - 1].mul(x).sub(av[N - 1].mul(y)).add(zero);
                y.store(&mut frame[c..]);
            }
            for (i, v) in s.iter().enumerate() {
                v.store(&mut state[i][c..]);
            }
        }
    }
}
