//! The control side of the live service: configuration reloads on SIGHUP, orderly stop on
//! SIGTERM/SIGINT, a status socket, figures for monitoring, the init system's notifications and
//! watchdog, and plain log lines. Everything slow happens here, never on the audio thread.

mod caution;
mod device_watch;
mod error;
mod event_loop;
mod fault_drill;
mod logging;
mod metrics;
mod metrics_file;
mod notify;
mod plan_details;
mod publish;
mod realtime_threads;
mod running;
mod service;
mod signals;
mod socket_path;
mod socket_search;
mod status;
mod status_client;
mod status_server;
mod totals;
mod watchdog;

pub use caution::{start_up_caution, CAUTION};
pub use device_watch::{Backoff, DeviceWatch, Health, RecoveryPacer, STABLE_RUN};
pub use error::ServiceError;
pub use event_loop::{run_service, BUSY_TICK, IDLE_TICK};
pub use fault_drill::{FaultDrill, FaultDrillError};
pub use logging::init_logging;
pub use metrics::{render_metrics, Exposition, MetricsView};
pub use metrics_file::METRICS_FILE_EVERY;
pub use running::{AudioSource, RunningAudio, DEFAULT_SIMULATED_BLOCK};
pub use service::{ServiceOptions, SourceChoice};
pub use socket_path::{current_uid, default_socket_path};
pub use socket_search::{locate_status_socket, status_socket_candidates, SYSTEM_SOCKET};
pub use status::{render_status_text, ServiceStatus};
pub use status_client::{query_openmetrics, query_status, StatusQueryError};
pub use status_server::{StatusServer, CLIENT_TIMEOUT, MAX_CLIENTS, MAX_REQUEST_BYTES};
pub use totals::{EngineCounters, PeakHold, RunningTotals};
pub use watchdog::WatchdogGate;
