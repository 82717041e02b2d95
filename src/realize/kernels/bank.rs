//! Every channel of a multichannel signal, each with its own filter, run a block at a time:
//! channels whose filters share a [`LaneShape`] run side by side in vector lanes (groups of 8,
//! or 4 for what is left), the rest alone through their block kernel.
//!
//! Built (and sized) on the control side; [`ChannelBank::process`] and the other methods
//! allocate nothing. Every channel's output is its filter's own `process_sample` output
//! (to the bit, or by rounding only for sections on CPUs with FMA).

use std::collections::BTreeMap;

use super::super::Filter;
use super::dispatch::{detected_vector_unit, with_widest_vectors, Arithmetic, Kernel, VectorUnit};
use super::lane_direct_form::MAX_REGISTER_ORDER;
use super::lane_filter::{LaneFilter, LaneShape};
use super::mono::process_inline;

/// Frames moved through the scratch buffers at a time.
pub const BANK_CHUNK_FRAMES: usize = 256;

#[derive(Debug, Clone)]
enum Unit {
    Alone {
        channel: usize,
        filter: Filter,
    },
    Four {
        channels: [usize; 4],
        used: usize,
        lanes: LaneFilter<4>,
    },
    Eight {
        channels: [usize; 8],
        used: usize,
        lanes: LaneFilter<8>,
    },
}

#[derive(Debug, Clone)]
pub struct ChannelBank {
    channels: usize,
    units: Vec<Unit>,
    /// Channel → (unit, lane).
    place: Vec<(usize, usize)>,
    /// Scratch: one channel in and out (channels alone), lane frames (groups), f64 frames for
    /// the f32 entry.
    alone_in: Vec<f64>,
    alone_out: Vec<f64>,
    lanes4: Vec<[f64; 4]>,
    lanes8: Vec<[f64; 8]>,
    interleaved: Vec<f64>,
}

/// Groups of size `L` that are worth vector lanes: at least this many real channels.
const MIN_LANES_USED: usize = 2;

/// Whether `used` channels of this shape run faster side by side in `lanes` vector lanes than
/// each alone through its block kernel.
///
/// Lattices always gain from lanes; so do direct forms where their state fits registers.
/// For cascades of sections, a rough count of cycles per sample decides (FMA latency 4, two
/// vector FMA units, as on current x86-64 cores; checked with `cargo bench --bench kernels --
/// sections`): in lanes, a frame costs five vector operations per section on two units, shared
/// by the `used` channels; alone, the wavefront waits on one section's recurrence (two
/// dependent FMAs, 8 cycles) per sample, or on its own seven operations per register of
/// sections when there are many. So 8 channels of 8 or 16 sections go in lanes, 2 channels
/// of 8 sections go alone (10 cycles against 8).
fn prefers_lanes(shape: LaneShape, used: usize, lanes: usize) -> bool {
    match shape {
        LaneShape::Sections(k) => {
            let per_register = match detected_vector_unit() {
                VectorUnit::Baseline => return true,
                VectorUnit::Avx2 => 4,
                VectorUnit::Avx512 => 8,
            };
            // Tenths of a cycle per sample.
            let registers_per_frame = lanes.div_ceil(per_register);
            let in_lanes = 25 * k * registers_per_frame / used.max(1);
            let alone = 80.max(35 * k.div_ceil(per_register));
            in_lanes <= alone
        }
        // With a vector unit, orders up to 32 run with the state of each register's worth of
        // channels in registers (8 channels at order 16: 9× the plain path, against 1.8× for
        // each alone; `cargo bench --bench kernels -- direct_form`). Past that, and in the
        // portable build, the lanes keep their state in memory, which only pays at low orders.
        LaneShape::DirectForm2T(order) => {
            order <= 8
                || (order <= MAX_REGISTER_ORDER && detected_vector_unit() != VectorUnit::Baseline)
        }
        LaneShape::LatticeLadder(_) => true,
    }
}

impl ChannelBank {
    /// One filter per channel, in channel order.
    pub fn new(filters: Vec<Filter>) -> Self {
        // The unit is chosen here, on the control side, whatever the filters: the first choice
        // reads the environment (`REDRESS_KERNELS`), which allocates, and must never fall to
        // the first block the audio thread runs (mono sets and direct forms up to order 8 would
        // otherwise not ask before then).
        detected_vector_unit();
        let channels = filters.len();
        let mut by_shape: BTreeMap<LaneShape, Vec<usize>> = BTreeMap::new();
        let mut units = Vec::new();
        for (c, f) in filters.iter().enumerate() {
            match LaneShape::of(f) {
                Some(shape) => by_shape.entry(shape).or_default().push(c),
                None => units.push(Unit::Alone {
                    channel: c,
                    filter: f.clone(),
                }),
            }
        }
        for (shape, members) in &by_shape {
            let mut rest: &[usize] = members;
            while !rest.is_empty() {
                let take = if rest.len() >= 5 { 8 } else { 4 }.min(rest.len());
                let (group, tail) = rest.split_at(take);
                rest = tail;
                let lanes = if group.len() > 4 { 8 } else { 4 };
                if group.len() < MIN_LANES_USED || !prefers_lanes(*shape, group.len(), lanes) {
                    for &c in group {
                        units.push(Unit::Alone {
                            channel: c,
                            filter: filters[c].clone(),
                        });
                    }
                    continue;
                }
                let refs: Vec<&Filter> = group.iter().map(|&c| &filters[c]).collect();
                let unit = if group.len() > 4 {
                    LaneFilter::<8>::new(&refs).map(|lanes| Unit::Eight {
                        channels: std::array::from_fn(|i| group.get(i).copied().unwrap_or(0)),
                        used: group.len(),
                        lanes,
                    })
                } else {
                    LaneFilter::<4>::new(&refs).map(|lanes| Unit::Four {
                        channels: std::array::from_fn(|i| group.get(i).copied().unwrap_or(0)),
                        used: group.len(),
                        lanes,
                    })
                };
                match unit {
                    Some(u) => units.push(u),
                    // Unreachable by construction (one shape per group); run them alone.
                    None => units.extend(group.iter().map(|&c| Unit::Alone {
                        channel: c,
                        filter: filters[c].clone(),
                    })),
                }
            }
        }
        let mut place = vec![(0, 0); channels];
        for (u, unit) in units.iter().enumerate() {
            match unit {
                Unit::Alone { channel, .. } => place[*channel] = (u, 0),
                Unit::Four { channels, used, .. } => {
                    for (l, &c) in channels.iter().take(*used).enumerate() {
                        place[c] = (u, l);
                    }
                }
                Unit::Eight { channels, used, .. } => {
                    for (l, &c) in channels.iter().take(*used).enumerate() {
                        place[c] = (u, l);
                    }
                }
            }
        }
        Self {
            channels,
            units,
            place,
            alone_in: vec![0.0; BANK_CHUNK_FRAMES],
            alone_out: vec![0.0; BANK_CHUNK_FRAMES],
            lanes4: vec![[0.0; 4]; BANK_CHUNK_FRAMES],
            lanes8: vec![[0.0; 8]; BANK_CHUNK_FRAMES],
            interleaved: vec![0.0; BANK_CHUNK_FRAMES * channels],
        }
    }

    pub fn channel_count(&self) -> usize {
        self.channels
    }

    /// How many channels run in vector lanes (the rest run alone).
    pub fn channels_in_lanes(&self) -> usize {
        self.units
            .iter()
            .map(|u| match u {
                Unit::Alone { .. } => 0,
                Unit::Four { used, .. } | Unit::Eight { used, .. } => *used,
            })
            .sum()
    }

    /// Filters interleaved f32 frames into interleaved f64 frames (whole frames of the shorter
    /// slice; the rest of `output` is left as it was), carrying state from call to call.
    pub fn process(&mut self, input: &[f32], output: &mut [f64]) {
        with_widest_vectors(BankBlock {
            bank: self,
            input,
            output,
        })
    }

    /// As [`ChannelBank::process`], into f32 frames (each output rounded once, from f64).
    pub fn process_f32(&mut self, input: &[f32], output: &mut [f32]) {
        let channels = self.channels.max(1);
        let step = BANK_CHUNK_FRAMES * channels;
        let mut scratch = std::mem::take(&mut self.interleaved);
        for (x, y) in input.chunks(step).zip(output.chunks_mut(step)) {
            let n = x.len().min(y.len()) / channels * channels;
            self.process(&x[..n], &mut scratch[..n]);
            for (out, v) in y[..n].iter_mut().zip(&scratch[..n]) {
                *out = *v as f32;
            }
        }
        self.interleaved = scratch;
    }

    #[inline(always)]
    fn process_inline<A: Arithmetic>(&mut self, input: &[f32], output: &mut [f64]) {
        let channels = self.channels;
        if channels == 0 {
            return;
        }
        let frames = input.len().min(output.len()) / channels;
        let mut start = 0;
        while start < frames {
            let n = (frames - start).min(BANK_CHUNK_FRAMES);
            let x = &input[start * channels..(start + n) * channels];
            let y = &mut output[start * channels..(start + n) * channels];
            for unit in self.units.iter_mut() {
                match unit {
                    Unit::Alone { channel, filter } => {
                        let (xin, yout) = (&mut self.alone_in[..n], &mut self.alone_out[..n]);
                        // Strided walks over the channel: no per-frame index checks.
                        for (v, s) in xin
                            .iter_mut()
                            .zip(x.iter().skip(*channel).step_by(channels))
                        {
                            *v = f64::from(*s);
                        }
                        process_inline::<A>(filter, xin, yout);
                        for (v, d) in yout
                            .iter()
                            .zip(y.iter_mut().skip(*channel).step_by(channels))
                        {
                            *d = *v;
                        }
                    }
                    Unit::Four {
                        channels: lanes_of,
                        used,
                        lanes,
                    } => run_lanes::<A, 4>(
                        lanes,
                        lanes_of,
                        *used,
                        &mut self.lanes4[..n],
                        channels,
                        x,
                        y,
                    ),
                    Unit::Eight {
                        channels: lanes_of,
                        used,
                        lanes,
                    } => run_lanes::<A, 8>(
                        lanes,
                        lanes_of,
                        *used,
                        &mut self.lanes8[..n],
                        channels,
                        x,
                        y,
                    ),
                }
            }
            start += n;
        }
    }

    /// One sample of one channel (an absent channel passes through).
    pub fn process_channel_sample(&mut self, channel: usize, x: f64) -> f64 {
        let Some(&(u, lane)) = self.place.get(channel) else {
            return x;
        };
        match self.units.get_mut(u) {
            Some(Unit::Alone { filter, .. }) => filter.process_sample(x),
            Some(Unit::Four { lanes, .. }) => lanes.step_lane(lane, x),
            Some(Unit::Eight { lanes, .. }) => lanes.step_lane(lane, x),
            None => x,
        }
    }

    /// Clears one channel's state (an absent channel is ignored).
    pub fn reset_channel(&mut self, channel: usize) {
        let Some(&(u, lane)) = self.place.get(channel) else {
            return;
        };
        match self.units.get_mut(u) {
            Some(Unit::Alone { filter, .. }) => filter.reset(),
            Some(Unit::Four { lanes, .. }) => lanes.reset_lane(lane),
            Some(Unit::Eight { lanes, .. }) => lanes.reset_lane(lane),
            None => {}
        }
    }

    /// Clears every channel's state.
    pub fn reset(&mut self) {
        for unit in &mut self.units {
            match unit {
                Unit::Alone { filter, .. } => filter.reset(),
                Unit::Four { lanes, .. } => lanes.reset(),
                Unit::Eight { lanes, .. } => lanes.reset(),
            }
        }
    }
}

struct BankBlock<'a> {
    bank: &'a mut ChannelBank,
    input: &'a [f32],
    output: &'a mut [f64],
}

impl Kernel for BankBlock<'_> {
    type Output = ();
    #[inline(always)]
    fn run<A: Arithmetic>(self) {
        self.bank.process_inline::<A>(self.input, self.output)
    }
}

/// Gathers the group's channels into lane frames, filters them, scatters them back.
#[inline(always)]
fn run_lanes<A: Arithmetic, const L: usize>(
    lanes: &mut LaneFilter<L>,
    lanes_of: &[usize; L],
    used: usize,
    frames: &mut [[f64; L]],
    channels: usize,
    x: &[f32],
    y: &mut [f64],
) {
    // The usual case, every lane used by consecutive channels: whole-slice copies the compiler
    // turns into a few vector loads and stores.
    let start = lanes_of[0];
    let consecutive = used == L
        && start + L <= channels
        && lanes_of.iter().enumerate().all(|(l, &c)| c == start + l);
    if consecutive {
        for (lane_frame, frame) in frames.iter_mut().zip(x.chunks_exact(channels)) {
            for (d, s) in lane_frame.iter_mut().zip(&frame[start..start + L]) {
                *d = f64::from(*s);
            }
        }
        lanes.process::<A>(frames);
        for (lane_frame, frame) in frames.iter().zip(y.chunks_exact_mut(channels)) {
            frame[start..start + L].copy_from_slice(lane_frame);
        }
        return;
    }
    for (lane_frame, frame) in frames.iter_mut().zip(x.chunks_exact(channels)) {
        for l in 0..L {
            lane_frame[l] = if l < used {
                f64::from(frame[lanes_of[l]])
            } else {
                0.0
            };
        }
    }
    lanes.process::<A>(frames);
    for (lane_frame, frame) in frames.iter().zip(y.chunks_exact_mut(channels)) {
        for l in 0..used.min(L) {
            frame[lanes_of[l]] = lane_frame[l];
        }
    }
}
