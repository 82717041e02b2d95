//! `redress run --metrics-file PATH`: the figures rewritten every few seconds in the Prometheus
//! text format, for a textfile collector (the node exporter's, say). No network port is opened,
//! which suits a unit with `PrivateNetwork=yes`.
//!
//! Each write goes to a temporary file in the same folder and is renamed over the old one, so a
//! reader sees the whole previous file or the whole new one, never half of either. The temporary
//! name starts with a dot and does not end in `.prom`, so collectors skip it. No fsync: the file
//! is rewritten every few seconds, and after a crash the next service writes it anew.

use std::io::Write;
use std::os::unix::fs::PermissionsExt;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

/// How often the file is rewritten.
pub const METRICS_FILE_EVERY: Duration = Duration::from_secs(5);

#[derive(Debug)]
pub struct MetricsFile {
    path: PathBuf,
    temporary: PathBuf,
    last_written: Option<Instant>,
    /// The last failure, so a lasting problem is logged once, not every few seconds.
    last_error: Option<String>,
}

impl MetricsFile {
    pub fn new(path: &Path) -> Self {
        let name = path
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_else(|| "metrics".into());
        let temporary = path.with_file_name(format!(".{name}.{}.tmp", std::process::id()));
        Self {
            path: path.to_path_buf(),
            temporary,
            last_written: None,
            last_error: None,
        }
    }

    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Whether a rewrite is due at `now`.
    pub fn due(&self, now: Instant) -> bool {
        self.last_written
            .is_none_or(|t| now.saturating_duration_since(t) >= METRICS_FILE_EVERY)
    }

    /// Replaces the file with `text`; on failure the old file is left as it was.
    pub fn write(&mut self, text: &str, now: Instant) -> Result<(), WriteFailure> {
        self.last_written = Some(now);
        let Err(e) = replace_file(&self.temporary, &self.path, text) else {
            self.last_error = None;
            return Ok(());
        };
        let _ = std::fs::remove_file(&self.temporary);
        let why = format!(
            "cannot write the metrics file {}: {}",
            self.path.display(),
            crate::os_error::plain_os_error(&e)
        );
        let news = self.last_error.as_deref() != Some(why.as_str());
        self.last_error = Some(why.clone());
        Err(WriteFailure { why, news })
    }
}

/// Why the file could not be written, and whether that is news (another reason than the last
/// failure's), so a lasting problem is logged once.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct WriteFailure {
    pub why: String,
    pub news: bool,
}

fn replace_file(temporary: &Path, path: &Path, text: &str) -> std::io::Result<()> {
    let mut file = std::fs::File::create(temporary)?;
    // Readable by the collector's user whatever the service's umask: the figures hold no
    // secret (no path, no device name).
    file.set_permissions(std::fs::Permissions::from_mode(0o644))?;
    file.write_all(text.as_bytes())?;
    drop(file);
    std::fs::rename(temporary, path)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_file_is_replaced_whole_and_readable_by_others() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("redress.prom");
        let mut file = MetricsFile::new(&path);
        let t0 = Instant::now();
        assert!(file.due(t0));
        file.write("a 1\n", t0).unwrap();
        assert!(!file.due(t0 + Duration::from_secs(1)));
        assert!(file.due(t0 + METRICS_FILE_EVERY));
        file.write("a 2\n", t0 + METRICS_FILE_EVERY).unwrap();
        assert_eq!(std::fs::read_to_string(&path).unwrap(), "a 2\n");
        let mode = std::fs::metadata(&path).unwrap().permissions().mode();
        assert_eq!(mode & 0o777, 0o644);
        // Nothing else is left in the folder.
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
    }

    #[test]
    fn a_folder_that_is_not_there_is_an_error_reported_once() {
        let dir = tempfile::tempdir().unwrap();
        let mut file = MetricsFile::new(&dir.path().join("missing/redress.prom"));
        let first = file.write("a 1\n", Instant::now()).unwrap_err();
        assert!(first.why.contains("missing/redress.prom"), "{}", first.why);
        assert!(first.news);
        let again = file.write("a 1\n", Instant::now()).unwrap_err();
        assert!(!again.news, "the same failure is not logged twice");
    }
}
