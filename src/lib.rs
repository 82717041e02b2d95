//! redress: derive and run stable, causal inverse filters for linear time-invariant audio links.
//!
//! Data flows one way through the stages, each a module with its own error type:
//! `model` (validated channel description) → `analysis` (roots, stability, verdict) →
//! `design` (the inverse and its report) → `realize` (a concrete filter structure, checked after
//! rounding) → `engine` (allocation-free per-channel processing); `io` reads and writes audio.
//! `numeric` holds the polynomial and frequency-response arithmetic they share.

pub mod analysis;
pub mod bench;
pub mod control;
pub mod design;
pub mod engine;
pub mod io;
pub mod measure;
pub mod model;
pub mod numeric;
pub mod os_error;
pub mod pipeline;
pub mod realize;
pub mod report;
