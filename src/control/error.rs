use std::path::PathBuf;

use crate::engine::EngineError;
use crate::io::paced_link::PacedLinkError;
use crate::model::ConfigError;

/// Why the service could not start (once running, errors are logged, never fatal).
#[derive(Debug)]
pub enum ServiceError {
    Config(Box<ConfigError>),
    /// The configuration is valid but some path cannot run.
    NotRunnable(EngineError),
    Signals(std::io::Error),
    Socket {
        path: PathBuf,
        why: String,
    },
    /// Another service answers on the status socket.
    AlreadyRunning {
        path: PathBuf,
    },
    Simulation(PacedLinkError),
    Audio(String),
    /// The metrics file cannot be written (checked once at start-up).
    MetricsFile(String),
}

impl std::fmt::Display for ServiceError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ServiceError::Config(e) => write!(f, "{e}"),
            ServiceError::NotRunnable(e) => write!(f, "{e}"),
            ServiceError::Signals(e) => write!(
                f,
                "cannot install signal handlers: {}",
                crate::os_error::plain_os_error(e)
            ),
            ServiceError::Socket { path, why } => {
                write!(f, "status socket {}: {why}", path.display())
            }
            ServiceError::AlreadyRunning { path } => write!(
                f,
                "another redress service is already running on {}\n  help: stop it first, or \
                 give this one its own --socket",
                path.display()
            ),
            ServiceError::Simulation(e) => write!(f, "{e}"),
            ServiceError::Audio(e) => write!(f, "{e}"),
            ServiceError::MetricsFile(why) => write!(
                f,
                "{why}\n  help: name a file in a folder that exists and the service may write \
                 (under the system unit, add the folder to ReadWritePaths=)"
            ),
        }
    }
}

impl std::error::Error for ServiceError {}
