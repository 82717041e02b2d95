//! The JACK host: the service is one JACK client with an input and an output port per channel,
//! and runs the engine inside JACK's process callback, which hands it the capture and playback
//! buffers of the same cycle ([`super::graph_side`]): no ring and no prefill, so redress adds
//! no buffering of its own. The ports are connected to the ones the config lists, if any.
//!
//! The client library is loaded when the host is first used, so a machine without it builds
//! and runs the ALSA host as before and gets a typed error naming what is missing here.

use std::sync::Arc;

use jack::{
    AudioIn, AudioOut, Client, ClientOptions, ClientStatus, Control, NotificationHandler, Port,
    PortFlags, ProcessHandler, ProcessScope,
};

use super::error::{Direction, HostMissing, LiveError};
use super::graph_side::GraphSide;
use super::playout::PlayoutProgress;
use super::realtime::{LeftBecause, SchedulingRequest, SchedulingSlot};
use super::stream_errors::{StreamErrorCounter, StreamErrorKind};
use crate::engine::Engine;

/// The name the service asks for (JACK makes it unique if another client has it).
pub const CLIENT_NAME: &str = "redress";
/// The name `redress devices` opens its short-lived client under.
const LISTING_CLIENT_NAME: &str = "redress-devices";
/// JACK's own type name for its audio ports.
const AUDIO_PORT_TYPE: &str = "32 bit float mono audio";
/// Frames of scratch the engine's chunks take at least: servers change their block size while
/// running, and a longer block is only more chunks.
const MIN_CHUNK_FRAMES: usize = 1024;

/// The key of this host in the config and in messages.
const HOST: &str = "jack";

/// The short names of the service's ports for `channel` (0-based): `in_1`, `out_1`, …
pub fn input_port_name(channel: usize) -> String {
    format!("in_{}", channel + 1)
}

pub fn output_port_name(channel: usize) -> String {
    format!("out_{}", channel + 1)
}

/// Opens a client without starting a server; a failure says whether the library or the server
/// is missing.
fn open_client(name: &str) -> Result<Client, LiveError> {
    match Client::new(name, ClientOptions::NO_START_SERVER) {
        Ok((client, _status)) => Ok(client),
        Err(jack::Error::LibraryError(detail)) => Err(LiveError::HostUnavailable {
            host: HOST,
            missing: HostMissing::Library,
            detail,
        }),
        Err(jack::Error::ClientError(status)) => Err(LiveError::HostUnavailable {
            host: HOST,
            missing: HostMissing::Server,
            detail: describe_status(status),
        }),
        Err(other) => Err(LiveError::HostUnavailable {
            host: HOST,
            missing: HostMissing::Server,
            detail: other.to_string(),
        }),
    }
}

fn describe_status(status: ClientStatus) -> String {
    if status.contains(ClientStatus::SERVER_FAILED) {
        let asked = std::env::var("JACK_DEFAULT_SERVER").unwrap_or_else(|_| "default".into());
        format!(
            "no JACK server named `{asked}` answers (JACK_DEFAULT_SERVER names the server; \
             \"default\" when unset)"
        )
    } else if status.contains(ClientStatus::VERSION_ERROR) {
        "the client library and the server speak different protocol versions".to_string()
    } else {
        format!("the server refused the client ({status:?})")
    }
}

/// What the JACK client of a running service looks like.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct JackSetup {
    /// The client's name as the server granted it.
    pub client_name: String,
    pub sample_rate: u32,
    /// The server's block size when the client started (it may change while running).
    pub block_frames: u32,
    /// (our port, the ports connected to it) per channel.
    pub inputs: Vec<(String, Vec<String>)>,
    pub outputs: Vec<(String, Vec<String>)>,
}

/// What the service asks of the JACK host.
pub struct JackRequest<'a> {
    pub sample_rate: u32,
    pub channels: u16,
    pub connect_inputs: &'a [String],
    pub connect_outputs: &'a [String],
}

/// The running client: deactivated and closed when dropped (the engine goes with it).
pub struct JackStreams {
    client: jack::AsyncClient<Notifications, Process>,
    setup: JackSetup,
    errors: Arc<StreamErrorCounter>,
    playout: Arc<PlayoutProgress>,
    slot: Arc<SchedulingSlot>,
}

impl JackStreams {
    pub fn setup(&self) -> &JackSetup {
        &self.setup
    }

    pub fn errors(&self) -> &Arc<StreamErrorCounter> {
        &self.errors
    }

    pub fn playout(&self) -> &Arc<PlayoutProgress> {
        &self.playout
    }

    /// The process thread's request (none: the server schedules it) and its slot.
    pub fn scheduling(&self) -> (SchedulingRequest, Arc<SchedulingSlot>) {
        (
            SchedulingRequest::LeaveAsIs(LeftBecause::Server),
            Arc::clone(&self.slot),
        )
    }

    /// The server's block size now.
    pub fn block_frames(&self) -> u32 {
        self.client.as_client().buffer_size()
    }
}

/// Opens the client, checks the server's rate against the design before `engine` is
/// consumed, registers the ports, activates and connects them.
pub fn start_jack(request: &JackRequest<'_>, engine: Engine) -> Result<JackStreams, LiveError> {
    let channels = usize::from(request.channels);
    for (key, list) in [
        ("connect_inputs", request.connect_inputs),
        ("connect_outputs", request.connect_outputs),
    ] {
        if list.len() > channels {
            return Err(LiveError::InvalidRequest {
                field: key,
                value: format!("{} port(s)", list.len()),
                why: format!("the link has {channels} channel(s), one port each"),
                help: format!("list at most {channels} port(s), in channel order"),
            });
        }
    }
    let client = open_client(CLIENT_NAME)?;
    let server_rate = client.sample_rate();
    if server_rate != request.sample_rate {
        return Err(LiveError::RateMismatch {
            direction: Direction::Capture,
            device: format!("jack:{}", client.name()),
            design_rate: request.sample_rate,
            device_rates: vec![format!("{server_rate} Hz")],
        });
    }
    let port_error = |name: String, e: jack::Error| LiveError::Graph {
        host: HOST,
        context: format!("registering port `{name}`"),
        detail: e.to_string(),
        help: "the server may be out of ports; restart it with a larger port limit (jackd -p)"
            .to_string(),
    };
    let mut inputs = Vec::with_capacity(channels);
    let mut outputs = Vec::with_capacity(channels);
    for c in 0..channels {
        let name = input_port_name(c);
        let port = client
            .register_port(&name, AudioIn::default())
            .map_err(|e| port_error(name, e))?;
        inputs.push(port);
        let name = output_port_name(c);
        let port = client
            .register_port(&name, AudioOut::default())
            .map_err(|e| port_error(name, e))?;
        outputs.push(port);
    }
    let block_frames = client.buffer_size();
    let full_name = |name: Result<String, jack::Error>, short: String| {
        name.unwrap_or_else(|_| format!("{}:{short}", client.name()))
    };
    let our_inputs: Vec<String> = (0..channels)
        .map(|c| full_name(inputs[c].name(), input_port_name(c)))
        .collect();
    let our_outputs: Vec<String> = (0..channels)
        .map(|c| full_name(outputs[c].name(), output_port_name(c)))
        .collect();
    let client_name = client.name().to_string();

    let side = GraphSide::new(engine, (block_frames as usize).max(MIN_CHUNK_FRAMES));
    let playout = side.playout();
    let slot = side.scheduling_slot();
    let errors = Arc::new(StreamErrorCounter::default());
    let notifications = Notifications {
        errors: Arc::clone(&errors),
        design_rate: request.sample_rate,
    };
    let process = Process {
        side,
        inputs,
        outputs,
    };
    let active = client
        .activate_async(notifications, process)
        .map_err(|e| LiveError::Graph {
            host: HOST,
            context: format!("activating client `{client_name}`"),
            detail: e.to_string(),
            help: "check the server's log; it may be shutting down".to_string(),
        })?;

    let connect = |from: &str, to: &str| {
        active
            .as_client()
            .connect_ports_by_name(from, to)
            .map_err(|e| LiveError::Graph {
                host: HOST,
                context: format!("connecting `{from}` to `{to}`"),
                detail: e.to_string(),
                help: "name ports as `redress devices` (or `jack_lsp`) lists them, e.g. \
                       \"system:capture_1\"; sources feed connect_inputs, destinations take \
                       connect_outputs"
                    .to_string(),
            })
    };
    let mut setup = JackSetup {
        client_name,
        sample_rate: server_rate,
        block_frames,
        inputs: our_inputs.iter().map(|p| (p.clone(), Vec::new())).collect(),
        outputs: our_outputs
            .iter()
            .map(|p| (p.clone(), Vec::new()))
            .collect(),
    };
    for (c, source) in request.connect_inputs.iter().enumerate() {
        connect(source, &our_inputs[c])?;
        setup.inputs[c].1.push(source.clone());
    }
    for (c, destination) in request.connect_outputs.iter().enumerate() {
        connect(&our_outputs[c], destination)?;
        setup.outputs[c].1.push(destination.clone());
    }
    Ok(JackStreams {
        client: active,
        setup,
        errors,
        playout,
        slot,
    })
}

/// The process callback: every input port into the engine, its output into every output port,
/// chunk by chunk, all in JACK's one call. Allocates nothing, locks nothing.
struct Process {
    side: GraphSide,
    inputs: Vec<Port<AudioIn>>,
    outputs: Vec<Port<AudioOut>>,
}

impl ProcessHandler for Process {
    fn process(&mut self, _: &Client, scope: &ProcessScope) -> Control {
        self.side.begin_cycle();
        let frames = scope.n_frames() as usize;
        let mut at = 0;
        while at < frames {
            let len = (frames - at).min(self.side.chunk_frames());
            for (c, port) in self.inputs.iter().enumerate() {
                self.side.put_input(c, &port.as_slice(scope)[at..at + len]);
            }
            self.side.run(len);
            for (c, port) in self.outputs.iter_mut().enumerate() {
                self.side
                    .take_output(c, &mut port.as_mut_slice(scope)[at..at + len]);
            }
            at += len;
        }
        Control::Continue
    }
}

/// The server's notifications: counted into atomics only (the control thread reports).
struct Notifications {
    errors: Arc<StreamErrorCounter>,
    design_rate: u32,
}

impl NotificationHandler for Notifications {
    fn xrun(&mut self, _: &Client) -> Control {
        self.errors.record(StreamErrorKind::Xrun);
        Control::Continue
    }

    fn sample_rate(&mut self, _: &Client, rate: jack::Frames) -> Control {
        if rate != self.design_rate {
            // The design no longer fits the graph: the stream must be rebuilt (and then
            // refused with both rates named).
            self.errors.record(StreamErrorKind::StreamInvalidated);
        }
        Control::Continue
    }

    unsafe fn shutdown(&mut self, _status: ClientStatus, _reason: &str) {
        // Async-signal context: one atomic store, nothing else.
        self.errors.record(StreamErrorKind::DeviceNotAvailable);
    }
}

/// The JACK part of `redress devices`: the server's rate and block size and its audio ports,
/// or why the host cannot be reached.
pub fn list_jack() -> String {
    let client = match open_client(LISTING_CLIENT_NAME) {
        Ok(c) => c,
        Err(e) => {
            let text = e.to_string();
            let first = text.lines().next().unwrap_or_default();
            let first = first.trim_start_matches("audio host `jack`: ");
            return format!("audio host: jack: not available: {first}\n");
        }
    };
    let mut out = format!(
        "audio host: jack (server at {} Hz, {}-frame blocks; the service's ports are \
         {CLIENT_NAME}:in_N and {CLIENT_NAME}:out_N)\n",
        client.sample_rate(),
        client.buffer_size()
    );
    for (flags, what) in [
        (PortFlags::IS_OUTPUT, "sources (for connect_inputs)"),
        (PortFlags::IS_INPUT, "destinations (for connect_outputs)"),
    ] {
        let ports: Vec<String> = client
            .ports(None, Some(AUDIO_PORT_TYPE), flags)
            .into_iter()
            .filter(|p| !p.starts_with(&format!("{}:", client.name())))
            .collect();
        out.push_str(&format!("  {what}:"));
        if ports.is_empty() {
            out.push_str(" none");
        }
        out.push('\n');
        for p in ports {
            out.push_str(&format!("    {p}\n"));
        }
    }
    out
}
