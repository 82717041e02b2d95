//! `redress status`: ask a running service for its status document.

use std::io::{Read, Write};
use std::os::unix::net::UnixStream;
use std::path::Path;
use std::time::Duration;

use crate::os_error::plain_os_error;

/// Why the status could not be read.
#[derive(Debug)]
pub struct StatusQueryError {
    pub path: std::path::PathBuf,
    pub why: String,
}

impl std::fmt::Display for StatusQueryError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "cannot read the status from {}: {}\n  help: is `redress run` running, and with the \
             same --socket? Only the user running the service can read its socket (for the \
             system unit: `sudo -u redress redress status`).",
            self.path.display(),
            self.why
        )
    }
}

impl std::error::Error for StatusQueryError {}

/// Connects to the service's socket and returns its status document (JSON).
pub fn query_status(path: &Path) -> Result<serde_json::Value, StatusQueryError> {
    let reply = ask(path, "status")?;
    let value: serde_json::Value =
        serde_json::from_str(reply.trim()).map_err(|e| StatusQueryError {
            path: path.to_path_buf(),
            why: format!("the answer is not a status document: {e}"),
        })?;
    if let Some(error) = value.get("error").and_then(|e| e.as_str()) {
        return Err(StatusQueryError {
            path: path.to_path_buf(),
            why: format!("the service answered: {error}"),
        });
    }
    Ok(value)
}

/// Connects to the service's socket and returns its figures in the OpenMetrics text format.
pub fn query_openmetrics(path: &Path) -> Result<String, StatusQueryError> {
    let reply = ask(path, "openmetrics")?;
    // A refusal (busy, starting) comes as a JSON error line; figures start with a comment.
    if let Ok(value) = serde_json::from_str::<serde_json::Value>(reply.trim()) {
        let error = value.get("error").and_then(|e| e.as_str()).unwrap_or("?");
        return Err(StatusQueryError {
            path: path.to_path_buf(),
            why: format!("the service answered: {error}"),
        });
    }
    Ok(reply)
}

/// Sends one request line and reads the whole answer.
fn ask(path: &Path, request: &str) -> Result<String, StatusQueryError> {
    let fail = |why: String| StatusQueryError {
        path: path.to_path_buf(),
        why,
    };
    let mut stream = UnixStream::connect(path).map_err(|e| fail(plain_os_error(&e)))?;
    stream
        .set_read_timeout(Some(Duration::from_secs(3)))
        .and_then(|_| stream.set_write_timeout(Some(Duration::from_secs(3))))
        .map_err(|e| fail(plain_os_error(&e)))?;
    stream
        .write_all(format!("{request}\n").as_bytes())
        .map_err(|e| {
            fail(format!(
                "sending the request failed: {}",
                plain_os_error(&e)
            ))
        })?;
    let mut reply = String::new();
    stream
        .take(16 << 20)
        .read_to_string(&mut reply)
        .map_err(|e| fail(format!("reading the answer failed: {}", plain_os_error(&e))))?;
    Ok(reply)
}
