//! Where the status socket lives, and making sure only its owner can reach it.

use std::fs;
use std::os::unix::fs::{DirBuilderExt, MetadataExt, PermissionsExt};
use std::path::{Path, PathBuf};

/// The current user's numeric id (read from /proc, so no C call is needed).
pub fn current_uid() -> Option<u32> {
    fs::metadata("/proc/self").ok().map(|m| m.uid())
}

/// Default socket: `$XDG_RUNTIME_DIR/redress/status.sock`, else `/tmp/redress-UID/status.sock`.
pub fn default_socket_path() -> PathBuf {
    match std::env::var_os("XDG_RUNTIME_DIR") {
        Some(dir) if !dir.is_empty() => PathBuf::from(dir).join("redress").join("status.sock"),
        _ => {
            let uid = current_uid().map_or_else(|| "unknown".to_string(), |u| u.to_string());
            PathBuf::from(format!("/tmp/redress-{uid}")).join("status.sock")
        }
    }
}

/// Creates the socket's directory owner-only (0700), or checks an existing one is ours and
/// closed to others. The directory, not a umask race on the socket, is what keeps others out.
pub fn prepare_private_dir(socket: &Path) -> Result<(), String> {
    let Some(dir) = socket.parent().filter(|d| !d.as_os_str().is_empty()) else {
        return Ok(());
    };
    if !dir.exists() {
        fs::DirBuilder::new()
            .recursive(true)
            .mode(0o700)
            .create(dir)
            .map_err(|e| {
                format!(
                    "cannot create {}: {}",
                    dir.display(),
                    crate::os_error::plain_os_error(&e)
                )
            })?;
        return Ok(());
    }
    let meta = fs::metadata(dir).map_err(|e| {
        format!(
            "cannot inspect {}: {}",
            dir.display(),
            crate::os_error::plain_os_error(&e)
        )
    })?;
    if !meta.is_dir() {
        return Err(format!("{} is not a directory", dir.display()));
    }
    if let Some(uid) = current_uid() {
        if meta.uid() != uid {
            return Err(format!(
                "{} belongs to another user (uid {}); choose a socket path in a directory of your own",
                dir.display(),
                meta.uid()
            ));
        }
    }
    // A shared directory such as /tmp is fine for an explicit path only if the socket itself
    // is locked down, which the server does; a private one we created is locked down fully.
    if meta.permissions().mode() & 0o022 != 0 && meta.permissions().mode() & 0o1000 == 0 {
        return Err(format!(
            "{} is writable by others (mode {:o}); use a private directory for the status socket",
            dir.display(),
            meta.permissions().mode() & 0o7777
        ));
    }
    Ok(())
}

/// Sets the socket file to owner read/write only.
pub fn restrict_socket(socket: &Path) -> std::io::Result<()> {
    fs::set_permissions(socket, fs::Permissions::from_mode(0o600))
}
