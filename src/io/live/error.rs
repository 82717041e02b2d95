//! Why live audio could not start, told with what to do about it.

use std::fmt;

/// Which side of the duplex a device or configuration is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Direction {
    Capture,
    Playback,
}

impl fmt::Display for Direction {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Direction::Capture => "capture",
            Direction::Playback => "playback",
        })
    }
}

#[derive(Debug, Clone, PartialEq)]
pub enum LiveError {
    /// A field of the request cannot work with any device.
    InvalidRequest {
        field: &'static str,
        value: String,
        why: String,
        help: String,
    },
    /// No device matches the name the user gave; `available` is a listing of what there is.
    NoSuchDevice {
        direction: Direction,
        wanted: String,
        available: String,
    },
    /// Several devices match the name the user gave.
    AmbiguousDevice {
        direction: Direction,
        wanted: String,
        matches: Vec<String>,
    },
    /// The device cannot run the requested rate, channel count or period.
    ConfigUnsupported {
        direction: Direction,
        device: String,
        wanted: String,
        why: String,
        /// What the device does offer, one line per sample format.
        offered: Vec<String>,
    },
    /// The device does not run the rate the config's filters were designed for (with the
    /// channel count asked for); running them at another rate would move every frequency.
    RateMismatch {
        direction: Direction,
        device: String,
        /// The config's `sample_rate_hz`.
        design_rate: u32,
        /// The rates the device does run with that channel count ("44100 Hz", "8000–44100 Hz").
        device_rates: Vec<String>,
    },
    /// The engine was built for another channel count than the devices are opened with.
    ChannelMismatch {
        engine_channels: usize,
        requested: u16,
    },
    /// A graph host (a sound server's client library) cannot be reached at all.
    HostUnavailable {
        /// The config's key for the host ("jack").
        host: &'static str,
        missing: HostMissing,
        /// What the library said.
        detail: String,
    },
    /// The graph host refused something after the client was opened (a port, a connection).
    Graph {
        host: &'static str,
        /// What was being done ("connecting `system:capture_1` to `redress:in_1`").
        context: String,
        detail: String,
        help: String,
    },
    /// The audio backend refused an operation.
    Backend {
        /// What was being done ("opening capture device `…`").
        context: String,
        source: cpal::Error,
    },
}

/// What a graph host lacks when it cannot be reached.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HostMissing {
    /// The client library is not installed (it is loaded when the host is first used).
    Library,
    /// The library is there, the server is not running (or not for this user).
    Server,
}

impl LiveError {
    pub(crate) fn backend(context: impl Into<String>, source: cpal::Error) -> Self {
        LiveError::Backend {
            context: context.into(),
            source,
        }
    }
}

/// What the user can do about a backend error of this kind.
fn backend_help(kind: cpal::ErrorKind) -> &'static str {
    match kind {
        cpal::ErrorKind::DeviceBusy => {
            "another program holds the device; close it, or pick another device"
        }
        cpal::ErrorKind::DeviceNotAvailable => {
            "the device is gone or was never there; check it is connected and list the devices again"
        }
        cpal::ErrorKind::HostUnavailable => {
            "the audio system is not available; check that ALSA (and the sound server, if any) is installed and running"
        }
        cpal::ErrorKind::PermissionDenied => {
            "the user may not open the device; add the user to the `audio` group or run inside the user's session"
        }
        cpal::ErrorKind::UnsupportedConfig | cpal::ErrorKind::InvalidInput => {
            "choose a sample rate, channel count and buffer size from the device listing"
        }
        cpal::ErrorKind::UnsupportedOperation => {
            "the device cannot do this (e.g. capture on a playback-only device); pick another device"
        }
        _ => "check the device in the device listing and try again",
    }
}

impl fmt::Display for LiveError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            LiveError::InvalidRequest {
                field,
                value,
                why,
                help,
            } => write!(f, "audio request `{field}` = {value}: {why}\n  help: {help}"),
            LiveError::NoSuchDevice {
                direction,
                wanted,
                available,
            } => {
                write!(
                    f,
                    "no {direction} device matches `{wanted}`\n  help: give \"default\", a device id, \
                     or part of a device name; the {direction} devices are:"
                )?;
                for line in available.lines() {
                    write!(f, "\n    {line}")?;
                }
                write!(f, "\n  (`redress devices` shows what each one supports)")
            }
            LiveError::AmbiguousDevice {
                direction,
                wanted,
                matches,
            } => {
                write!(f, "`{wanted}` matches {} {direction} devices:", matches.len())?;
                for m in matches {
                    write!(f, "\n    {m}")?;
                }
                write!(f, "\n  help: give the full device id of the one you mean")
            }
            LiveError::ConfigUnsupported {
                direction,
                device,
                wanted,
                why,
                offered,
            } => {
                write!(
                    f,
                    "{direction} device `{device}` cannot run {wanted}: {why}\n  the device offers:"
                )?;
                if offered.is_empty() {
                    write!(f, "\n    nothing it could report")?;
                }
                for line in offered {
                    write!(f, "\n    {line}")?;
                }
                write!(
                    f,
                    "\n  help: set the sample rate, channel count and buffer size to values from \
                     that list, or pick another device"
                )
            }
            LiveError::RateMismatch {
                direction,
                device,
                design_rate,
                device_rates,
            } => write!(
                f,
                "{direction} device `{device}` runs at {}, and the config's filters are designed \
                 for {design_rate} Hz: run at another rate, every frequency the inverse corrects \
                 would move by the ratio, so redress does not start\n  help: set the device (or \
                 its sound server) to {design_rate} Hz, or measure the link again at the \
                 device's rate (`redress stimulus --rate`, `redress identify`) and run that \
                 config",
                device_rates.join(" or ")
            ),
            LiveError::ChannelMismatch {
                engine_channels,
                requested,
            } => write!(
                f,
                "the filter set has {engine_channels} channel(s) but the devices were asked for \
                 {requested}\n  help: make the link's channel count and the audio channel count agree"
            ),
            LiveError::HostUnavailable {
                host,
                missing: HostMissing::Library,
                detail,
            } => write!(
                f,
                "audio host `{host}`: its client library is not installed ({detail})\n  help: \
                 install it (Debian: apt-get install libjack-jackd2-0), or set [audio] host = \
                 \"alsa\""
            ),
            LiveError::HostUnavailable {
                host,
                missing: HostMissing::Server,
                detail,
            } => {
                let how = match *host {
                    "jack" => {
                        "start it as the user the service runs as (e.g. `jackd -d alsa -r \
                         48000`, or through the desktop's session), check JACK_DEFAULT_SERVER \
                         if a named server is meant"
                    }
                    _ => {
                        "start it (`pipewire` with its session manager `wireplumber`) as the user \
                         the service runs as, and run the service in that user's session \
                         (XDG_RUNTIME_DIR must lead to the server's socket)"
                    }
                };
                write!(
                    f,
                    "audio host `{host}`: its server is not running ({detail})\n  help: {how}, \
                     or set [audio] host = \"alsa\""
                )
            }
            LiveError::Graph {
                host,
                context,
                detail,
                help,
            } => write!(f, "audio host `{host}`: {context}: {detail}\n  help: {help}"),
            LiveError::Backend { context, source } => write!(
                f,
                "{context}: {source}\n  help: {}",
                backend_help(source.kind())
            ),
        }
    }
}

impl std::error::Error for LiveError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            LiveError::Backend { source, .. } => Some(source),
            _ => None,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn backend_errors_keep_context_and_say_what_to_do() {
        let e = LiveError::backend(
            "opening capture device `alsa:hw:CARD=1,DEV=0`",
            cpal::Error::new(cpal::ErrorKind::DeviceBusy),
        );
        let text = e.to_string();
        assert!(text.starts_with("opening capture device `alsa:hw:CARD=1,DEV=0`: "));
        assert!(text.contains("help: another program holds the device"));
        assert!(std::error::Error::source(&e).is_some());
    }

    // A graph host that cannot be reached says which part is missing and what to do.
    #[test]
    fn an_unreachable_graph_host_names_what_is_missing() {
        let library = LiveError::HostUnavailable {
            host: "jack",
            missing: HostMissing::Library,
            detail: "libjack.so.0: cannot open shared object file".into(),
        }
        .to_string();
        assert!(
            library.starts_with("audio host `jack`: its client library is not installed"),
            "{library}"
        );
        assert!(library.contains("help: install it"), "{library}");
        let server = LiveError::HostUnavailable {
            host: "jack",
            missing: HostMissing::Server,
            detail: "no JACK server named `default` answers".into(),
        }
        .to_string();
        assert!(
            server.starts_with("audio host `jack`: its server is not running"),
            "{server}"
        );
        assert!(server.contains("help: start it"), "{server}");
    }

    #[test]
    fn missing_device_lists_what_there_is() {
        let e = LiveError::NoSuchDevice {
            direction: Direction::Playback,
            wanted: "rack amp".into(),
            available: "alsa:default (Default Audio Device)\nalsa:eq_out (test)".into(),
        };
        let text = e.to_string();
        assert!(text.starts_with("no playback device matches `rack amp`"));
        assert!(text.contains("\n    alsa:eq_out (test)"));
    }
}
