//! Where `redress status` looks for a service when no `--socket` is given: first where a
//! service run by this user listens by default (the user unit's place too, since systemd's
//! user manager sets `XDG_RUNTIME_DIR`), then where the example system unit puts its socket.

use std::os::unix::fs::FileTypeExt;
use std::path::{Path, PathBuf};

use super::socket_path::default_socket_path;

/// The socket of the system service (`configs/systemd/redress.service` starts
/// `redress run … --socket /run/redress/status.sock` in its `RuntimeDirectory`).
pub const SYSTEM_SOCKET: &str = "/run/redress/status.sock";

/// The places a service may be listening, in the order they are tried.
pub fn status_socket_candidates() -> Vec<PathBuf> {
    vec![default_socket_path(), PathBuf::from(SYSTEM_SOCKET)]
}

/// The first of `candidates` where a socket exists, else the first candidate (whose absence
/// the status query then reports).
pub fn first_socket(candidates: &[PathBuf]) -> Option<PathBuf> {
    candidates
        .iter()
        .find(|p| is_socket(p))
        .or(candidates.first())
        .cloned()
}

/// The socket `redress status` asks when given none.
pub fn locate_status_socket() -> PathBuf {
    first_socket(&status_socket_candidates()).unwrap_or_else(default_socket_path)
}

fn is_socket(path: &Path) -> bool {
    std::fs::metadata(path).is_ok_and(|m| m.file_type().is_socket())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_first_existing_socket_wins_else_the_first_place() {
        let dir = tempfile::tempdir().unwrap();
        let user = dir.path().join("user/status.sock");
        let system = dir.path().join("system.sock");
        let candidates = vec![user.clone(), system.clone()];
        assert_eq!(first_socket(&candidates), Some(user.clone()));
        let _listener = std::os::unix::net::UnixListener::bind(&system).unwrap();
        assert_eq!(first_socket(&candidates), Some(system.clone()));
        // A plain file where the user's socket would be is not a service.
        std::fs::create_dir_all(user.parent().unwrap()).unwrap();
        std::fs::write(&user, b"not a socket").unwrap();
        assert_eq!(first_socket(&candidates), Some(system));
    }
}
