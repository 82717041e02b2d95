//! Plain log lines on stderr, one event a line.
//!
//! Under systemd (JOURNAL_STREAM set) each line starts with the kernel-style priority prefix
//! `<N>` that journald turns into the entry's priority; elsewhere it starts with the level word.

use log::{Level, LevelFilter, Log, Metadata, Record};

struct LineLogger {
    journald: bool,
}

impl Log for LineLogger {
    fn enabled(&self, metadata: &Metadata) -> bool {
        metadata.level() <= log::max_level()
    }

    fn log(&self, record: &Record) {
        if !self.enabled(record.metadata()) {
            return;
        }
        let line = if self.journald {
            // syslog priorities (RFC 5424): 3 error, 4 warning, 6 informational, 7 debug.
            let priority = match record.level() {
                Level::Error => 3,
                Level::Warn => 4,
                Level::Info => 6,
                Level::Debug | Level::Trace => 7,
            };
            format!("<{priority}>{}\n", record.args())
        } else {
            let word = match record.level() {
                Level::Error => "error",
                Level::Warn => "warning",
                Level::Info => "info",
                Level::Debug => "debug",
                Level::Trace => "trace",
            };
            format!("redress: {word}: {}\n", record.args())
        };
        // One write per line so lines from several threads do not interleave.
        use std::io::Write;
        let _ = std::io::stderr().lock().write_all(line.as_bytes());
    }

    fn flush(&self) {}
}

/// Installs the logger. `verbosity`: −1 quiet (errors only), 0 normal (info), 1 debug, 2 trace.
/// Calling it twice keeps the first logger and only changes the level.
pub fn init_logging(verbosity: i8) {
    let journald = std::env::var_os("JOURNAL_STREAM").is_some();
    let _ = log::set_boxed_logger(Box::new(LineLogger { journald }));
    log::set_max_level(match verbosity {
        i8::MIN..=-1 => LevelFilter::Error,
        0 => LevelFilter::Info,
        1 => LevelFilter::Debug,
        _ => LevelFilter::Trace,
    });
}
