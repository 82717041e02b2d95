//! The status socket: a local stream socket, owner-only, answering one request per connection.
//!
//! Protocol (ours): the client sends one line, `status` or `openmetrics`; the server answers
//! with the service's status document as one line of JSON, or with its figures in the
//! OpenMetrics text format, and closes. Anything else gets `{"error": …}`.
//!
//! The server thread blocks in `accept` (it costs nothing while nobody asks). Each connection is
//! answered on a short-lived thread of its own, at most [`MAX_CLIENTS`] at once (more are told
//! the service is busy, and a reaper thread closes them a moment later), each bounded by the
//! timeouts below: a slow, silent or hostile client holds one slot for at most about a second,
//! never delays the others by more than that, and never touches the audio thread. A client
//! thread asks the control loop for a fresh answer over a channel; if the loop does not answer
//! within [`FRESH_WAIT`] (busy restarting the streams, say), the last answer it published is
//! given instead.

use std::io::{ErrorKind, Read, Write};
use std::os::unix::fs::FileTypeExt;
use std::os::unix::net::{UnixListener, UnixStream};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::sync::{Arc, Mutex};
use std::thread::JoinHandle;
use std::time::{Duration, Instant};

use crossbeam_channel::{Receiver, Sender};

use super::socket_path::{lock_socket, prepare_private_dir, restrict_socket, LockRefused};
use super::ServiceError;

/// Longest request line read; anything longer is refused.
pub const MAX_REQUEST_BYTES: usize = 256;
/// How long a client may take to send its request or to read the answer.
pub const CLIENT_TIMEOUT: Duration = Duration::from_millis(500);

/// Connections answered at once; more are told to try again.
pub const MAX_CLIENTS: usize = 32;
/// Refused connections kept open for a moment (so the refusal is read, not reset); beyond this
/// many they are closed at once.
const MAX_REFUSED: usize = 256;
/// Stack of a client thread: it only copies a rendered document.
const CLIENT_STACK_BYTES: usize = 64 * 1024;
/// How long a client thread waits for the control loop's fresh answer before handing out the
/// last one published.
pub const FRESH_WAIT: Duration = Duration::from_millis(250);

/// What a client asked for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RequestKind {
    /// The status document (JSON).
    Status,
    /// The figures in the OpenMetrics text format.
    OpenMetrics,
}

/// A request passed to the control loop; it renders the answer and sends it back.
#[derive(Debug)]
pub struct StatusRequest {
    pub kind: RequestKind,
    pub reply: Sender<Arc<String>>,
}

/// The last answers the control loop published, handed out when it cannot answer in time.
#[derive(Debug, Clone)]
pub struct Published {
    pub status: Arc<String>,
    pub openmetrics: Arc<String>,
}

impl Published {
    fn get(&self, kind: RequestKind) -> Arc<String> {
        match kind {
            RequestKind::Status => Arc::clone(&self.status),
            RequestKind::OpenMetrics => Arc::clone(&self.openmetrics),
        }
    }
}

/// The answers shared with the client threads, replaced whole by the control thread.
pub type SharedDocument = Arc<Mutex<Published>>;

/// Where client threads send their requests.
#[derive(Clone)]
struct Desk {
    document: SharedDocument,
    requests: Sender<StatusRequest>,
}

pub struct StatusServer {
    path: PathBuf,
    stop: Arc<AtomicBool>,
    thread: Option<JoinHandle<()>>,
    /// The single-instance lock, held while the server lives (fields drop after `drop` has
    /// removed the socket, so the lock is released last).
    _lock: std::fs::File,
}

impl StatusServer {
    /// Takes the socket's single-instance lock (refusing if another instance holds it), then
    /// binds the socket (taking over a stale one) and starts answering: each request goes to
    /// `requests`, and `document` is the fallback.
    pub fn start(
        path: &Path,
        document: SharedDocument,
        requests: Sender<StatusRequest>,
    ) -> Result<Self, ServiceError> {
        prepare_private_dir(path).map_err(|why| ServiceError::Socket {
            path: path.to_path_buf(),
            why,
        })?;
        let lock = lock_socket(path).map_err(|refused| match refused {
            LockRefused::Held => ServiceError::AlreadyRunning {
                path: path.to_path_buf(),
            },
            LockRefused::Failed(why) => ServiceError::Socket {
                path: path.to_path_buf(),
                why,
            },
        })?;
        claim_path(path)?;
        let listener = UnixListener::bind(path).map_err(|e| ServiceError::Socket {
            path: path.to_path_buf(),
            why: format!("cannot listen: {}", crate::os_error::plain_os_error(&e)),
        })?;
        restrict_socket(path).map_err(|e| ServiceError::Socket {
            path: path.to_path_buf(),
            why: format!(
                "cannot make the socket owner-only: {}",
                crate::os_error::plain_os_error(&e)
            ),
        })?;
        let stop = Arc::new(AtomicBool::new(false));
        let flag = Arc::clone(&stop);
        let desk = Desk { document, requests };
        let thread = std::thread::Builder::new()
            .name("redress-status".into())
            .spawn(move || serve(listener, desk, flag))
            .map_err(|e| ServiceError::Socket {
                path: path.to_path_buf(),
                why: format!(
                    "cannot start the status thread: {}",
                    crate::os_error::plain_os_error(&e)
                ),
            })?;
        Ok(Self {
            path: path.to_path_buf(),
            stop,
            thread: Some(thread),
            _lock: lock,
        })
    }

    pub fn path(&self) -> &Path {
        &self.path
    }
}

impl Drop for StatusServer {
    fn drop(&mut self) {
        self.stop.store(true, Ordering::Release);
        // The thread sleeps in `accept`: a connection of our own wakes it to see the flag. If
        // the socket file was removed behind our back nothing can reach it; the thread is left
        // to end with the process rather than waited for.
        let woken = UnixStream::connect(&self.path).is_ok();
        if let Some(t) = self.thread.take() {
            if woken {
                let _ = t.join();
            }
        }
        let _ = std::fs::remove_file(&self.path);
    }
}

/// Refuses a path held by a live instance; removes a stale socket left by a dead one.
fn claim_path(path: &Path) -> Result<(), ServiceError> {
    let Ok(meta) = std::fs::symlink_metadata(path) else {
        return Ok(());
    };
    if !meta.file_type().is_socket() {
        return Err(ServiceError::Socket {
            path: path.to_path_buf(),
            why: "a file that is not a socket is in the way; remove it or choose another --socket"
                .into(),
        });
    }
    match UnixStream::connect(path) {
        Ok(_) => Err(ServiceError::AlreadyRunning {
            path: path.to_path_buf(),
        }),
        Err(_) => std::fs::remove_file(path).map_err(|e| ServiceError::Socket {
            path: path.to_path_buf(),
            why: format!(
                "a stale socket is in the way and cannot be removed: {}",
                crate::os_error::plain_os_error(&e)
            ),
        }),
    }
}

fn serve(listener: UnixListener, desk: Desk, stop: Arc<AtomicBool>) {
    let active = Arc::new(AtomicUsize::new(0));
    let reaper = start_reaper();
    loop {
        let accepted = listener.accept();
        if stop.load(Ordering::Acquire) {
            return;
        }
        match accepted {
            Ok((stream, _)) => {
                if let Some(busy) = dispatch(stream, &desk, &active) {
                    // With the reaper's queue full (or no reaper), it is closed at once.
                    if let Some(reaper) = &reaper {
                        let _ = reaper.try_send((busy, Instant::now() + CLIENT_TIMEOUT));
                    }
                }
            }
            Err(e) if e.kind() == ErrorKind::Interrupted => {}
            // Out of descriptors or memory for a moment: do not spin on the error.
            Err(_) => std::thread::sleep(Duration::from_millis(20)),
        }
    }
}

/// A thread that keeps refused connections open until their deadline, so the refusal is read
/// rather than reset, then closes them. It sleeps in `recv` while there are none.
fn start_reaper() -> Option<Sender<(UnixStream, Instant)>> {
    let (tx, rx) = crossbeam_channel::bounded::<(UnixStream, Instant)>(MAX_REFUSED);
    std::thread::Builder::new()
        .name("redress-status-reaper".into())
        .stack_size(CLIENT_STACK_BYTES)
        .spawn(move || reap(&rx))
        .ok()?;
    Some(tx)
}

fn reap(rx: &Receiver<(UnixStream, Instant)>) {
    for (mut stream, until) in rx {
        let now = Instant::now();
        if until > now {
            std::thread::sleep(until - now);
        }
        // Closing with unread input would reset the connection and destroy the refusal before
        // the client reads it: discard what it sent first (non-blocking, bounded).
        let mut sink = [0u8; 4096];
        for _ in 0..16 {
            if !matches!(stream.read(&mut sink), Ok(n) if n > 0) {
                break;
            }
        }
    }
}

/// Answers `stream` on a thread of its own; when every slot is taken, tells the client so and
/// gives the connection back to be closed a little later.
fn dispatch(stream: UnixStream, desk: &Desk, active: &Arc<AtomicUsize>) -> Option<UnixStream> {
    if active.fetch_add(1, Ordering::AcqRel) >= MAX_CLIENTS {
        active.fetch_sub(1, Ordering::AcqRel);
        return refuse_busy(stream);
    }
    let desk = desk.clone();
    let slot = Arc::clone(active);
    let spawned = std::thread::Builder::new()
        .name("redress-status-client".into())
        .stack_size(CLIENT_STACK_BYTES)
        .spawn(move || {
            answer(stream, &desk);
            slot.fetch_sub(1, Ordering::AcqRel);
        });
    if spawned.is_err() {
        active.fetch_sub(1, Ordering::AcqRel);
    }
    None
}

/// Tells a client over the limit to come back, without waiting on it in any way.
fn refuse_busy(mut stream: UnixStream) -> Option<UnixStream> {
    stream.set_nonblocking(true).ok()?;
    let reply = error_reply(&format!(
        "the status socket is busy ({MAX_CLIENTS} clients at once); try again shortly"
    ));
    let _ = stream.write_all(reply.as_bytes());
    let _ = stream.shutdown(std::net::Shutdown::Write);
    Some(stream)
}

/// The control loop's fresh answer, or the last one it published if it cannot answer in time.
fn fetch(desk: &Desk, kind: RequestKind) -> Option<Arc<String>> {
    let (tx, rx) = crossbeam_channel::bounded(1);
    let asked = desk
        .requests
        .try_send(StatusRequest { kind, reply: tx })
        .is_ok();
    if asked {
        if let Ok(fresh) = rx.recv_timeout(FRESH_WAIT) {
            return Some(fresh);
        }
    }
    desk.document.lock().map(|d| d.get(kind)).ok()
}

fn answer(mut stream: UnixStream, desk: &Desk) {
    if stream.set_nonblocking(false).is_err()
        || stream.set_read_timeout(Some(CLIENT_TIMEOUT)).is_err()
        || stream.set_write_timeout(Some(CLIENT_TIMEOUT)).is_err()
    {
        return;
    }
    // One deadline for the whole exchange, so a client trickling bytes cannot stretch it.
    let deadline = Instant::now() + 2 * CLIENT_TIMEOUT;
    let kind = match read_request(&mut stream, deadline) {
        Ok(request) if request == "status" => Ok(RequestKind::Status),
        Ok(request) if request == "openmetrics" => Ok(RequestKind::OpenMetrics),
        Ok(request) => Err(format!(
            "unknown request {:?}; send the line `status` or `openmetrics`",
            request.chars().take(40).collect::<String>()
        )),
        Err(why) => Err(why),
    };
    let reply = match kind.map(|k| (k, fetch(desk, k))) {
        Ok((RequestKind::Status, Some(d))) => format!("{d}\n"),
        Ok((RequestKind::OpenMetrics, Some(d))) => d.to_string(),
        Ok((_, None)) => error_reply("the status is not available right now; try again"),
        Err(why) => error_reply(&why),
    };
    // A client that does not read gets cut off by the write timeout.
    let _ = stream.write_all(reply.as_bytes());
    // Closing with unread input would reset the connection and could destroy the reply before
    // the client reads it: say we are done, then discard what is left (bounded in size and time).
    let _ = stream.shutdown(std::net::Shutdown::Write);
    let mut sink = [0u8; 4096];
    let mut drained = 0;
    while drained < MAX_DRAIN_BYTES && Instant::now() < deadline {
        match stream.read(&mut sink) {
            Ok(0) | Err(_) => break,
            Ok(n) => drained += n,
        }
    }
}

/// Most unread request bytes discarded before a connection is closed.
const MAX_DRAIN_BYTES: usize = 64 * 1024;

/// Reads one request line of at most [`MAX_REQUEST_BYTES`].
fn read_request(stream: &mut UnixStream, deadline: Instant) -> Result<String, String> {
    let mut buf = [0u8; MAX_REQUEST_BYTES + 1];
    let mut len = 0;
    loop {
        if Instant::now() >= deadline {
            return Err("the request did not arrive in time".into());
        }
        match stream.read(&mut buf[len..]) {
            Ok(0) => break,
            Ok(n) => {
                len += n;
                if buf[..len].contains(&b'\n') || len > MAX_REQUEST_BYTES {
                    break;
                }
            }
            Err(e) if e.kind() == ErrorKind::Interrupted => continue,
            Err(_) => return Err("the request did not arrive in time".into()),
        }
    }
    if len > MAX_REQUEST_BYTES {
        return Err(format!(
            "the request is longer than {MAX_REQUEST_BYTES} bytes; send the line `status`"
        ));
    }
    let line = buf[..len].split(|&b| b == b'\n').next().unwrap_or(&[]);
    std::str::from_utf8(line)
        .map(|s| s.trim().to_string())
        .map_err(|_| "the request is not text; send the line `status`".into())
}

fn error_reply(why: &str) -> String {
    format!("{}\n", serde_json::json!({ "error": why }))
}
