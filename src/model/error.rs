//! Config errors. (being written)
#[derive(Debug)]
pub struct ConfigError;
