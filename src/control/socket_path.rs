//! Where the status socket lives, making sure only its owner can reach it, and the lock that
//! lets exactly one service hold it.
//!
//! Without `XDG_RUNTIME_DIR` the socket goes in a folder of the shared temporary directory,
//! `redress-UID`. Anyone may create that name first, or plant a symbolic link there, so the
//! folder is made with `mkdir` (which never follows a link) and then opened without following
//! links and checked on the open handle: ours, a real directory, closed to everyone else. If
//! it is not, the socket goes to a per-user folder under the home directory instead
//! (`$XDG_CACHE_HOME/redress`, else `~/.cache/redress`), checked the same way.

use std::fs::{self, File, OpenOptions};
use std::os::unix::fs::{DirBuilderExt, MetadataExt, OpenOptionsExt, PermissionsExt};
use std::path::{Path, PathBuf};

use crate::os_error::plain_os_error;

/// The socket's file name in its folder.
const SOCKET_NAME: &str = "status.sock";

/// The current user's numeric id (read from /proc, so no C call is needed).
pub fn current_uid() -> Option<u32> {
    fs::metadata("/proc/self").ok().map(|m| m.uid())
}

fn runtime_dir() -> Option<PathBuf> {
    std::env::var_os("XDG_RUNTIME_DIR")
        .filter(|d| !d.is_empty())
        .map(PathBuf::from)
}

/// `redress-UID` in the shared temporary directory (`$TMPDIR`, else /tmp).
fn shared_dir() -> PathBuf {
    let uid = current_uid().map_or_else(|| "unknown".to_string(), |u| u.to_string());
    std::env::temp_dir().join(format!("redress-{uid}"))
}

/// The per-user folder used when the shared one is not safe.
fn fallback_dir() -> Option<PathBuf> {
    let cache = std::env::var_os("XDG_CACHE_HOME")
        .filter(|d| !d.is_empty())
        .map(PathBuf::from)
        .or_else(|| {
            std::env::var_os("HOME")
                .filter(|d| !d.is_empty())
                .map(|h| PathBuf::from(h).join(".cache"))
        })?;
    Some(cache.join("redress"))
}

/// Default socket, as a client looks for it (nothing is created):
/// `$XDG_RUNTIME_DIR/redress/status.sock`; else `$TMPDIR/redress-UID/status.sock` unless that
/// folder exists and is not safely ours, in which case the per-user fallback folder.
pub fn default_socket_path() -> PathBuf {
    if let Some(dir) = runtime_dir() {
        return dir.join("redress").join(SOCKET_NAME);
    }
    let shared = shared_dir();
    let usable = match fs::symlink_metadata(&shared) {
        Err(_) => true,
        Ok(_) => check_private_dir(&shared).is_ok(),
    };
    match (usable, fallback_dir()) {
        (false, Some(fallback)) => fallback.join(SOCKET_NAME),
        _ => shared.join(SOCKET_NAME),
    }
}

/// Default socket for a service: as [`default_socket_path`], with its folder created (or found)
/// owner-only and checked; when the shared folder is not safe, the per-user fallback, with the
/// reason returned for the log.
pub fn prepare_default_socket() -> Result<(PathBuf, Option<String>), String> {
    if let Some(dir) = runtime_dir() {
        let dir = dir.join("redress");
        make_private_dir(&dir)?;
        return Ok((dir.join(SOCKET_NAME), None));
    }
    let shared = shared_dir();
    match make_private_dir(&shared) {
        Ok(()) => Ok((shared.join(SOCKET_NAME), None)),
        Err(why) => {
            let Some(fallback) = fallback_dir() else {
                return Err(format!("{why}; and no home directory to fall back to"));
            };
            if let Some(parent) = fallback.parent() {
                fs::create_dir_all(parent).map_err(|e| {
                    format!(
                        "{why}; and cannot create {}: {}",
                        parent.display(),
                        plain_os_error(&e)
                    )
                })?;
            }
            make_private_dir(&fallback).map_err(|e| format!("{why}; and {e}"))?;
            Ok((fallback.join(SOCKET_NAME), Some(why)))
        }
    }
}

/// Creates `dir` owner-only (0700) if it is not there (its parent must exist), then checks
/// that what is there now is safely ours.
fn make_private_dir(dir: &Path) -> Result<(), String> {
    match fs::DirBuilder::new().mode(0o700).create(dir) {
        Ok(()) => {}
        Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {}
        Err(e) => {
            return Err(format!(
                "cannot create {}: {}",
                dir.display(),
                plain_os_error(&e)
            ))
        }
    }
    check_private_dir(dir)
}

/// `dir` is a real directory (not a link to one), owned by the current user, closed to group
/// and others: checked on a handle opened without following links, so nothing can be swapped
/// in between the check and the look.
fn check_private_dir(dir: &Path) -> Result<(), String> {
    let handle = OpenOptions::new()
        .read(true)
        .custom_flags(libc::O_DIRECTORY | libc::O_NOFOLLOW | libc::O_CLOEXEC)
        .open(dir)
        .map_err(|e| {
            if e.raw_os_error() == Some(libc::ELOOP) || e.raw_os_error() == Some(libc::ENOTDIR) {
                format!(
                    "{} is not a directory (a link or a file is in the way)",
                    dir.display()
                )
            } else {
                format!("cannot open {}: {}", dir.display(), plain_os_error(&e))
            }
        })?;
    let meta = handle
        .metadata()
        .map_err(|e| format!("cannot inspect {}: {}", dir.display(), plain_os_error(&e)))?;
    owned_by_us(dir, &meta)?;
    let mode = meta.permissions().mode() & 0o7777;
    if mode & 0o077 != 0 {
        return Err(format!(
            "{} is open to other users (mode {mode:o})",
            dir.display()
        ));
    }
    Ok(())
}

fn owned_by_us(dir: &Path, meta: &fs::Metadata) -> Result<(), String> {
    match current_uid() {
        Some(uid) if meta.uid() != uid => Err(format!(
            "{} belongs to another user (uid {})",
            dir.display(),
            meta.uid()
        )),
        _ => Ok(()),
    }
}

/// For a socket path given explicitly: creates its directory owner-only (0700) if missing, or
/// checks an existing one is ours and closed to others. The directory, not a umask race on the
/// socket, is what keeps others out.
pub fn prepare_private_dir(socket: &Path) -> Result<(), String> {
    let Some(dir) = socket.parent().filter(|d| !d.as_os_str().is_empty()) else {
        return Ok(());
    };
    if fs::symlink_metadata(dir).is_err() {
        if let Some(parent) = dir.parent().filter(|p| !p.as_os_str().is_empty()) {
            fs::create_dir_all(parent).map_err(|e| {
                format!("cannot create {}: {}", parent.display(), plain_os_error(&e))
            })?;
        }
        return make_private_dir(dir);
    }
    let meta = fs::metadata(dir)
        .map_err(|e| format!("cannot inspect {}: {}", dir.display(), plain_os_error(&e)))?;
    if !meta.is_dir() {
        return Err(format!("{} is not a directory", dir.display()));
    }
    owned_by_us(dir, &meta)
        .map_err(|why| format!("{why}; choose a socket path in a directory of your own"))?;
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

/// Why the socket's lock could not be taken.
#[derive(Debug)]
pub enum LockRefused {
    /// Another service holds it.
    Held,
    Failed(String),
}

/// Takes the single-instance lock beside the socket (`status.sock.lock`, created 0600, never
/// through a link): held for as long as the returned file is open, released by the kernel if
/// the process dies. Whoever holds it owns the socket path: removing a stale socket and binding
/// a new one happen under it, so two services started together cannot both bind.
pub fn lock_socket(socket: &Path) -> Result<File, LockRefused> {
    let mut name = socket.as_os_str().to_owned();
    name.push(".lock");
    let lock = PathBuf::from(name);
    let file = OpenOptions::new()
        .write(true)
        .create(true)
        .truncate(false)
        .mode(0o600)
        .custom_flags(libc::O_NOFOLLOW | libc::O_CLOEXEC)
        .open(&lock)
        .map_err(|e| {
            LockRefused::Failed(format!(
                "cannot open the lock {}: {}",
                lock.display(),
                plain_os_error(&e)
            ))
        })?;
    match file.try_lock() {
        Ok(()) => Ok(file),
        Err(std::fs::TryLockError::WouldBlock) => Err(LockRefused::Held),
        Err(std::fs::TryLockError::Error(e)) => Err(LockRefused::Failed(format!(
            "cannot lock {}: {}",
            lock.display(),
            plain_os_error(&e)
        ))),
    }
}

/// Sets the socket file to owner read/write only.
pub fn restrict_socket(socket: &Path) -> std::io::Result<()> {
    fs::set_permissions(socket, fs::Permissions::from_mode(0o600))
}
