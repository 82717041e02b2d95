//! TOML text → validated [`super::Link`]. (being written)
