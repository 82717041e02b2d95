//! Reading a config file's bytes without ever hanging or swallowing the machine's memory.
//!
//! A config path is named by the user and re-read on every reload, so whatever sits there when
//! the service looks must give a prompt, clear answer: a directory, a named pipe or a device is
//! refused before anything is read (opening a pipe for reading would wait for a writer forever,
//! and `/dev/zero` would never end), and a regular file is read only up to
//! [`MAX_CONFIG_BYTES`].

use std::fs::{File, OpenOptions};
use std::io::{ErrorKind, Read};
use std::os::unix::fs::{FileTypeExt, OpenOptionsExt};
use std::path::Path;

use crate::model::error::{ConfigError, ConfigErrorKind};

/// Largest config file read (16 MiB): 64 paths of 4097 coefficients written out in full take
/// under 7 MiB, so anything larger is not a link config.
pub const MAX_CONFIG_BYTES: u64 = 16 << 20;

fn fail(path: &Path, kind: ConfigErrorKind, problem: String, help: &str) -> ConfigError {
    let mut e = ConfigError::new(kind, problem, help);
    e.file = Some(path.to_path_buf());
    e
}

fn io_failure(path: &Path, e: &std::io::Error) -> ConfigError {
    match e.kind() {
        ErrorKind::NotFound => fail(
            path,
            ConfigErrorKind::FileNotFound,
            "no such file".into(),
            "check the path and the current directory",
        ),
        ErrorKind::PermissionDenied => fail(
            path,
            ConfigErrorKind::FileNotReadable,
            "permission to read the file was denied".into(),
            "make the file readable by this user",
        ),
        _ => fail(
            path,
            ConfigErrorKind::FileNotReadable,
            format!("the file could not be read: {e}"),
            "check that the file is a readable regular file",
        ),
    }
}

/// What a path that is not a regular file is, in words, or `None` for a regular file.
fn not_regular(file_type: std::fs::FileType) -> Option<&'static str> {
    if file_type.is_file() {
        None
    } else if file_type.is_dir() {
        Some("a directory")
    } else if file_type.is_fifo() {
        Some("a named pipe")
    } else if file_type.is_socket() {
        Some("a socket")
    } else if file_type.is_char_device() || file_type.is_block_device() {
        Some("a device")
    } else {
        Some("not a regular file")
    }
}

fn refuse_kind(path: &Path, what: &str) -> ConfigError {
    if what == "a directory" {
        fail(
            path,
            ConfigErrorKind::IsDirectory,
            "this is a directory, not a config file".into(),
            "name a .toml file, e.g. configs/echo_line.toml",
        )
    } else {
        fail(
            path,
            ConfigErrorKind::FileNotReadable,
            format!("this is {what}, not a regular file; a config is read from a file"),
            "name a .toml file; to replace a config safely, write a new file and rename it over \
             the old one",
        )
    }
}

/// The bytes of the config file at `path`.
pub fn read_config_bytes(path: &Path) -> Result<Vec<u8>, ConfigError> {
    // Look before opening: opening a named pipe would block until someone writes to it.
    let meta = std::fs::metadata(path).map_err(|e| io_failure(path, &e))?;
    if let Some(what) = not_regular(meta.file_type()) {
        return Err(refuse_kind(path, what));
    }
    // Non-blocking open as well, should the path have been swapped for a pipe since the look;
    // then check what was actually opened.
    let file: File = OpenOptions::new()
        .read(true)
        .custom_flags(libc::O_NONBLOCK)
        .open(path)
        .map_err(|e| io_failure(path, &e))?;
    let meta = file.metadata().map_err(|e| io_failure(path, &e))?;
    if let Some(what) = not_regular(meta.file_type()) {
        return Err(refuse_kind(path, what));
    }
    if meta.len() > MAX_CONFIG_BYTES {
        return Err(too_large(path, meta.len()));
    }
    let mut bytes = Vec::with_capacity(meta.len() as usize);
    file.take(MAX_CONFIG_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| io_failure(path, &e))?;
    if bytes.len() as u64 > MAX_CONFIG_BYTES {
        return Err(too_large(path, bytes.len() as u64));
    }
    Ok(bytes)
}

fn too_large(path: &Path, len: u64) -> ConfigError {
    fail(
        path,
        ConfigErrorKind::FileNotReadable,
        format!(
            "the file is {len} bytes long, more than the {MAX_CONFIG_BYTES} bytes a link config \
             may have"
        ),
        "check that the path names the link config and not some other file",
    )
}
