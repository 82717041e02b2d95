//! Fast processing paths: the same arithmetic as each filter's `process_sample`, arranged so
//! the processor does more of it at once.
//!
//! - [`process_block_f64`]: one channel, a block at a time — direct form and lattice with
//!   inner loops free of bounds checks and branches, sections as a wavefront (section k on
//!   sample n − k inside the block, no latency added);
//! - [`ChannelBank`]: many channels, those with filters of one shape side by side in vector
//!   lanes (struct of arrays over 4 or 8 channels);
//! - [`dispatch`]: compiles them for AVX2 / AVX-512 as well and picks at run time;
//! - `sparse_block` (sparse recursions, a tap at a time over runs shorter than the shortest
//!   recursive delay), `fir_head` and `spectral_mac` (the partitioned convolution's direct-form
//!   head and its frequency-domain products): these filters always run alone, never in lanes.
//!
//! Every path performs each filter's own operations in its own order, so the results are the
//! same to the bit as the per-sample path, except second-order sections on CPUs with FMA
//! (AVX2/AVX-512), which fuse multiply-adds (one rounding instead of two) to halve the
//! recurrence's critical path, and the partitioned convolution, whose block path fuses its
//! multiply-adds too (an FIR: nothing feeds the difference back); the equality tests bound every
//! path at 1e-12 of the peak.

mod bank;
mod direct_form_block;
pub mod dispatch;
pub(crate) mod fir_head;
mod lane_direct_form;
mod lane_filter;
mod lane_lattice;
mod lane_sections;
mod lattice_block;
mod mono;
mod sections_wavefront;
mod simd_wavefront;
pub(crate) mod sparse_block;
pub(crate) mod spectral_mac;
mod vector;

#[cfg(test)]
mod equality_tests;

pub use bank::{ChannelBank, BANK_CHUNK_FRAMES};
pub use dispatch::{detected_vector_unit, VectorUnit};
pub use mono::process_block_f64;
pub use sections_wavefront::MAX_WAVEFRONT_SECTIONS;
