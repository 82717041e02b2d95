//! Finding devices by the name a user gives, and describing what devices there are.

use std::collections::BTreeSet;

use cpal::traits::{DeviceTrait, HostTrait};
use cpal::{DeviceId, SupportedBufferSize, SupportedStreamConfigRange};

use super::error::{Direction, HostMissing, LiveError};
use super::quiet_stderr::QuietStderr;
use super::samples::DeviceFormat;
use crate::model::{BUFFER_FRAMES_RANGE, SAMPLE_RATE_RANGE};

/// The cpal host for `host` (ALSA or PipeWire; JACK has its own client, see `jack_host`).
/// Named, never cpal's default: with PipeWire built in, cpal's default host is PipeWire
/// whenever a PipeWire server answers, and `host = "alsa"` must mean ALSA.
pub(crate) fn open_host(host: crate::model::AudioHost) -> Result<cpal::Host, LiveError> {
    use crate::model::AudioHost;
    match host {
        AudioHost::PipeWire => {
            cpal::host_from_id(cpal::HostId::PipeWire).map_err(|e| LiveError::HostUnavailable {
                host: "pipewire",
                missing: HostMissing::Server,
                detail: format!("{e}; looked for its socket at {}", pipewire_socket()),
            })
        }
        AudioHost::Alsa | AudioHost::Jack => cpal::host_from_id(cpal::HostId::Alsa)
            .map_err(|e| LiveError::backend("opening the ALSA host", e)),
    }
}

/// Where a PipeWire client looks for the server (libpipewire's own rule), for messages.
fn pipewire_socket() -> String {
    let var = |k: &str| std::env::var(k).ok().filter(|v| !v.is_empty());
    let name = var("PIPEWIRE_REMOTE").unwrap_or_else(|| "pipewire-0".to_string());
    match var("PIPEWIRE_RUNTIME_DIR").or_else(|| var("XDG_RUNTIME_DIR")) {
        Some(dir) => format!("`{dir}/{name}`"),
        None => format!("`{name}` (XDG_RUNTIME_DIR is not set)"),
    }
}

/// The word that selects the host's default device.
pub const DEFAULT_DEVICE: &str = "default";

/// The device's id as the user may type it back ("alsa:hw:CARD=0,DEV=0"), or its name.
pub(crate) fn device_label(device: &cpal::Device) -> String {
    match device.id() {
        Ok(id) => id.to_string(),
        Err(_) => device_name(device),
    }
}

fn device_name(device: &cpal::Device) -> String {
    device
        .description()
        .map(|d| d.name().to_string())
        .unwrap_or_else(|_| device.to_string())
}

/// Everything a substring may match: the id, the name and any further description lines.
fn searchable_text(device: &cpal::Device) -> Vec<String> {
    let mut texts = vec![device_label(device)];
    if let Ok(desc) = device.description() {
        texts.push(desc.name().to_string());
        texts.extend(desc.extended().map(str::to_string));
    }
    texts
}

fn supports(device: &cpal::Device, direction: Direction) -> bool {
    match direction {
        Direction::Capture => device.supports_input(),
        Direction::Playback => device.supports_output(),
    }
}

fn default_device(host: &cpal::Host, direction: Direction) -> Option<cpal::Device> {
    match direction {
        Direction::Capture => host.default_input_device(),
        Direction::Playback => host.default_output_device(),
    }
}

/// Finds the device `wanted` names: "default" (or empty), a device id ("alsa:hw:CARD=0,DEV=0",
/// with or without the host prefix), an exact device name, or else a case-insensitive
/// substring of exactly one device's id, name or description.
pub(crate) fn find_device(
    host: &cpal::Host,
    wanted: &str,
    direction: Direction,
) -> Result<cpal::Device, LiveError> {
    let wanted = wanted.trim();
    let not_found = || LiveError::NoSuchDevice {
        direction,
        wanted: wanted.to_string(),
        available: device_choices(host, direction),
    };
    let by_default = || default_device(host, direction).ok_or_else(not_found);
    if wanted.is_empty() || wanted.eq_ignore_ascii_case(DEFAULT_DEVICE) {
        return by_default();
    }
    if let Ok(id) = wanted.parse::<DeviceId>() {
        if id.id() == DEFAULT_DEVICE && id.host() == host.id() {
            return by_default();
        }
        if let Some(device) = host.device_by_id(&id) {
            return Ok(device);
        }
    }
    let devices: Vec<cpal::Device> = host
        .devices()
        .map_err(|e| LiveError::backend(format!("listing {direction} devices"), e))?
        .filter(|d| supports(d, direction))
        .collect();
    let exact = |d: &&cpal::Device| {
        d.id().is_ok_and(|id| id.id() == wanted) || device_name(d).eq_ignore_ascii_case(wanted)
    };
    if let Some(device) = devices.iter().find(exact) {
        return Ok(device.clone());
    }
    let needle = wanted.to_lowercase();
    let matches: Vec<&cpal::Device> = devices
        .iter()
        .filter(|d| {
            searchable_text(d)
                .iter()
                .any(|t| t.to_lowercase().contains(&needle))
        })
        .collect();
    match matches.as_slice() {
        [] => Err(not_found()),
        [one] => Ok((*one).clone()),
        many => Err(LiveError::AmbiguousDevice {
            direction,
            wanted: wanted.to_string(),
            matches: many
                .iter()
                .map(|d| format!("{} — {}", device_label(d), device_name(d)))
                .collect(),
        }),
    }
}

/// A listing of the default host's devices and what each supports, for `redress devices`
/// (opens each device briefly to ask; nothing is started). Devices that cannot be opened now
/// are named on one line at the end; `verbose` gives each its reason and lets the audio
/// libraries' own messages through (they are silenced otherwise: see [`QuietStderr`]).
pub fn list_devices(verbose: bool) -> Result<String, LiveError> {
    let _quiet = (!verbose).then(QuietStderr::new);
    let mut out = hosts_line();
    out.push_str(&list_devices_of(
        &open_host(crate::model::AudioHost::Alsa)?,
        verbose,
    )?);
    // The JACK server's ports, or why it cannot be reached (library or server missing).
    out.push('\n');
    out.push_str(&super::jack_host::list_jack());
    // The PipeWire server's nodes, or why it cannot be reached.
    out.push('\n');
    match open_host(crate::model::AudioHost::PipeWire) {
        Ok(host) => out.push_str(&list_devices_of(&host, verbose)?),
        Err(e) => {
            let text = e.to_string();
            let first = text.lines().next().unwrap_or_default();
            let first = first.trim_start_matches("audio host `pipewire`: ");
            out.push_str(&format!("audio host: pipewire: not available: {first}\n"));
        }
    }
    Ok(out)
}

/// The `[audio] host` values and whether this build opens them, one line.
fn hosts_line() -> String {
    // ALSA first (the default), then the other cpal hosts built in, then JACK (its own client).
    let mut built: Vec<String> = cpal::ALL_HOSTS
        .iter()
        .map(|h| h.name().to_lowercase())
        .collect();
    built.sort_by_key(|h| h != "alsa");
    built.push("jack".to_string());
    format!("audio hosts: {} (opened by this build)\n", built.join(", "))
}

fn list_devices_of(host: &cpal::Host, verbose: bool) -> Result<String, LiveError> {
    let mut out = String::new();
    out.push_str(&format!("audio host: {}\n", host.id().name()));
    for (direction, device) in [
        (Direction::Capture, host.default_input_device()),
        (Direction::Playback, host.default_output_device()),
    ] {
        match device {
            Some(d) => out.push_str(&format!(
                "default {direction} device: {} ({})\n",
                device_label(&d),
                device_name(&d)
            )),
            None => out.push_str(&format!("no default {direction} device\n")),
        }
    }
    let devices = host
        .devices()
        .map_err(|e| LiveError::backend("listing audio devices", e))?;
    let mut any = false;
    let mut closed: Vec<(String, String)> = Vec::new();
    for device in devices {
        any = true;
        let mut lines = Vec::new();
        let mut reasons = Vec::new();
        for direction in [Direction::Capture, Direction::Playback] {
            if !supports(&device, direction) {
                continue;
            }
            match supported_configs(&device, direction) {
                Ok(ranges) => {
                    let summary = summarize_configs(&ranges);
                    if summary.is_empty() {
                        lines.push(format!("    {direction}: nothing redress can run"));
                    }
                    for line in summary {
                        lines.push(format!("    {direction}: {line}"));
                    }
                }
                Err(e) => reasons.push((direction, e.to_string())),
            }
        }
        let label = device_label(&device);
        if lines.is_empty() {
            closed.push((label, why_closed(&reasons)));
            continue;
        }
        out.push_str(&format!("\n{label} ({})\n", device_name(&device)));
        for line in lines {
            out.push_str(&line);
            out.push('\n');
        }
    }
    if !any {
        out.push_str("no devices found\n");
    }
    if closed.is_empty() {
        return Ok(out);
    }
    if verbose {
        out.push_str("\nnot available now (could not be opened):\n");
        for (label, why) in &closed {
            out.push_str(&format!("  {label}: {why}\n"));
        }
    } else {
        let labels: Vec<&str> = closed.iter().map(|(l, _)| l.as_str()).collect();
        out.push_str(&format!(
            "\nnot available now (could not be opened): {}\n  (`redress devices -v` says why \
             for each)\n",
            labels.join(", ")
        ));
    }
    Ok(out)
}

/// Why a device could not be opened: one reason when both directions failed alike.
fn why_closed(reasons: &[(Direction, String)]) -> String {
    match reasons {
        [] => "it offers nothing redress can run".to_string(),
        [(_, a), (_, b)] if a == b => a.clone(),
        many => many
            .iter()
            .map(|(direction, why)| format!("{direction}: {why}"))
            .collect::<Vec<_>>()
            .join("; "),
    }
}

/// The devices that support `direction`, one "id (name)" line each: what a user may write as
/// `input_device` / `output_device`.
fn device_choices(host: &cpal::Host, direction: Direction) -> String {
    let Ok(devices) = host.devices() else {
        return "(the device list could not be read)".to_string();
    };
    let lines: Vec<String> = devices
        .filter(|d| supports(d, direction))
        .map(|d| format!("{} ({})", device_label(&d), device_name(&d)))
        .collect();
    if lines.is_empty() {
        format!("(no {direction} device at all)")
    } else {
        lines.join("\n")
    }
}

/// What `device` supports in `direction`.
pub(crate) fn supported_configs(
    device: &cpal::Device,
    direction: Direction,
) -> Result<Vec<SupportedStreamConfigRange>, cpal::Error> {
    Ok(match direction {
        Direction::Capture => device.supported_input_configs()?.collect(),
        Direction::Playback => device.supported_output_configs()?.collect(),
    })
}

/// What a device offers, in terms a user can choose from: formats this tool runs that offer
/// the same channel counts, rates and periods share a line; rates and periods are cut to what
/// a config may ask for (sample_rate_hz, buffer_frames), so a plugin that claims "1 to
/// 4294967295 Hz" reads "any rate from 4000 to 384000 Hz". Formats this tool does not run are
/// named on a last line.
pub(crate) fn summarize_configs(ranges: &[SupportedStreamConfigRange]) -> Vec<String> {
    let formats: BTreeSet<cpal::SampleFormat> = ranges.iter().map(|r| r.sample_format()).collect();
    let (runnable, others): (Vec<cpal::SampleFormat>, Vec<cpal::SampleFormat>) = formats
        .into_iter()
        .partition(|f| DeviceFormat::from_cpal(*f).is_some());
    let mut lines: Vec<(String, Vec<String>)> = Vec::new();
    for format in runnable {
        let of_format: Vec<&SupportedStreamConfigRange> = ranges
            .iter()
            .filter(|r| r.sample_format() == format)
            .collect();
        let Some(offer) = describe_offer(&of_format) else {
            continue;
        };
        match lines.iter_mut().find(|(text, _)| *text == offer) {
            Some((_, names)) => names.push(format.to_string()),
            None => lines.push((offer, vec![format.to_string()])),
        }
    }
    let mut out: Vec<String> = lines
        .into_iter()
        .map(|(offer, names)| format!("{}: {offer}", names.join(", ")))
        .collect();
    if !others.is_empty() {
        let names: Vec<String> = others.iter().map(|f| f.to_string()).collect();
        out.push(format!(
            "also {} (formats this tool does not run)",
            names.join(", ")
        ));
    }
    out
}

/// "1–64 channels, any rate from 4000 to 384000 Hz, periods of 16–16384 frames" for the
/// ranges of one sample format, or `None` when no rate a config may name is among them.
fn describe_offer(ranges: &[&SupportedStreamConfigRange]) -> Option<String> {
    let (rate_low, rate_high) = (SAMPLE_RATE_RANGE.0 as u32, SAMPLE_RATE_RANGE.1 as u32);
    let usable_rates: BTreeSet<(u32, u32)> = ranges
        .iter()
        .map(|r| {
            (
                r.min_sample_rate().max(rate_low),
                r.max_sample_rate().min(rate_high),
            )
        })
        .filter(|(lo, hi)| lo <= hi)
        .collect();
    if usable_rates.is_empty() {
        return None;
    }
    let channels: BTreeSet<u16> = ranges
        .iter()
        .filter(|r| r.max_sample_rate() >= rate_low && r.min_sample_rate() <= rate_high)
        .map(|r| r.channels())
        .collect();
    let rates = if usable_rates == BTreeSet::from([(rate_low, rate_high)]) {
        format!("any rate from {rate_low} to {rate_high} Hz")
    } else {
        format!("{} Hz", join_ranges(&usable_rates))
    };
    let mut text = format!(
        "{} channel{}, {rates}",
        compress(&channels),
        if channels.len() == 1 && channels.first() == Some(&1) {
            ""
        } else {
            "s"
        }
    );
    // The period range differs with the channel count (it is a byte limit); the span over all
    // of them, cut to what buffer_frames may ask, is what a listing can usefully show.
    let (period_low, period_high) = BUFFER_FRAMES_RANGE;
    let periods = ranges
        .iter()
        .filter_map(|r| match r.buffer_size() {
            SupportedBufferSize::Range { min, max } => Some((*min, *max)),
            SupportedBufferSize::Unknown => None,
        })
        .reduce(|(a, b), (c, d)| (a.min(c), b.max(d)))
        .map(|(lo, hi)| (lo.max(period_low), hi.min(period_high)))
        .filter(|(lo, hi)| lo <= hi);
    match periods {
        Some(span) if span == BUFFER_FRAMES_RANGE => text.push_str(&format!(
            ", any period from {period_low} to {period_high} frames"
        )),
        Some(span) => text.push_str(&format!(
            ", periods of {} frames",
            join_ranges(&BTreeSet::from([span]))
        )),
        None => {}
    }
    Some(text)
}

/// "1–8" for a run of consecutive counts, "1, 2, 6" otherwise.
fn compress(values: &BTreeSet<u16>) -> String {
    let (Some(first), Some(last)) = (values.first(), values.last()) else {
        return "no".to_string();
    };
    if values.len() > 2 && usize::from(last - first) + 1 == values.len() {
        format!("{first}–{last}")
    } else {
        values
            .iter()
            .map(u16::to_string)
            .collect::<Vec<_>>()
            .join(", ")
    }
}

fn join_ranges(ranges: &BTreeSet<(u32, u32)>) -> String {
    ranges
        .iter()
        .map(|(lo, hi)| {
            if lo == hi {
                lo.to_string()
            } else {
                format!("{lo}–{hi}")
            }
        })
        .collect::<Vec<_>>()
        .join(", ")
}

#[cfg(test)]
mod tests {

    // The `[audio] host` values the config reader accepts are each named, with whether this
    // build opens them (cpal's available hosts: ALSA on Linux with default features; JACK
    // through the jack crate).
    #[cfg(target_os = "linux")]
    #[test]
    fn the_hosts_line_names_every_config_host_and_what_this_build_opens() {
        let line = hosts_line();
        assert!(
            line.starts_with("audio hosts: alsa, pipewire, jack (opened by this build)"),
            "{line}"
        );
    }
    use super::*;

    fn range(ch: u16, lo: u32, hi: u32, format: cpal::SampleFormat) -> SupportedStreamConfigRange {
        SupportedStreamConfigRange::new(
            ch,
            lo,
            hi,
            SupportedBufferSize::Range { min: 64, max: 4096 },
            format,
        )
    }

    #[test]
    fn summary_groups_by_format_and_marks_what_cannot_run() {
        let mut ranges = vec![
            range(1, 44_100, 44_100, cpal::SampleFormat::I16),
            range(2, 44_100, 44_100, cpal::SampleFormat::I16),
            range(2, 48_000, 48_000, cpal::SampleFormat::I16),
            range(2, 8_000, 192_000, cpal::SampleFormat::U8),
            range(2, 8_000, 192_000, cpal::SampleFormat::F64),
        ];
        ranges[0] = SupportedStreamConfigRange::new(
            1,
            44_100,
            44_100,
            SupportedBufferSize::Range { min: 32, max: 8192 },
            cpal::SampleFormat::I16,
        );
        let lines = summarize_configs(&ranges);
        assert_eq!(
            lines,
            vec![
                "i16: 1, 2 channels, 44100, 48000 Hz, periods of 32–8192 frames".to_string(),
                "also u8, f64 (formats this tool does not run)".to_string(),
            ]
        );
    }

    #[test]
    fn sentinel_ranges_are_cut_to_what_a_config_may_ask() {
        // ALSA's null plugin claims every rate a u32 holds and periods to 2^30 frames.
        let wide = |format| {
            SupportedStreamConfigRange::new(
                2,
                1,
                u32::MAX,
                SupportedBufferSize::Range {
                    min: 1,
                    max: 1 << 30,
                },
                format,
            )
        };
        let lines =
            summarize_configs(&[wide(cpal::SampleFormat::I16), wide(cpal::SampleFormat::F32)]);
        assert_eq!(
            lines,
            vec![
                "i16, f32: 2 channels, any rate from 4000 to 384000 Hz, any period from 16 to \
                 16384 frames"
                    .to_string()
            ]
        );
        assert!(!lines[0].contains("4294967295"));
    }

    #[test]
    fn consecutive_channel_counts_are_shown_as_a_span() {
        let set: BTreeSet<u16> = (1..=8).collect();
        assert_eq!(compress(&set), "1–8");
        let set: BTreeSet<u16> = [1, 2, 6].into_iter().collect();
        assert_eq!(compress(&set), "1, 2, 6");
    }
}
