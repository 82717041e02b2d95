//! (being written)
pub mod live;
