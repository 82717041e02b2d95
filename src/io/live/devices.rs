//! Finding devices by the name a user gives, and describing what devices there are.

use std::collections::BTreeSet;

use cpal::traits::{DeviceTrait, HostTrait};
use cpal::{DeviceId, SupportedBufferSize, SupportedStreamConfigRange};

use super::error::{Direction, LiveError};
use super::samples::DeviceFormat;

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
        available: list_devices_of(host).unwrap_or_else(|e| format!("(listing failed: {e})")),
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

/// A human listing of the default host's devices and what each supports (opens each device
/// briefly to ask; nothing is started).
pub fn list_devices() -> Result<String, LiveError> {
    list_devices_of(&cpal::default_host())
}

fn list_devices_of(host: &cpal::Host) -> Result<String, LiveError> {
    let mut out = format!("audio host: {}\n", host.id().name());
    for (direction, device) in [
        (Direction::Capture, host.default_input_device()),
        (Direction::Playback, host.default_output_device()),
    ] {
        match device {
            Some(d) => out.push_str(&format!(
                "default {direction} device: {} — {}\n",
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
    for device in devices {
        any = true;
        out.push_str(&format!(
            "{} — {}\n",
            device_label(&device),
            device_name(&device)
        ));
        for direction in [Direction::Capture, Direction::Playback] {
            if !supports(&device, direction) {
                continue;
            }
            match supported_configs(&device, direction) {
                Ok(ranges) if ranges.is_empty() => {
                    out.push_str(&format!("    {direction}: no configuration reported\n"))
                }
                Ok(ranges) => {
                    for line in summarize_configs(&ranges) {
                        out.push_str(&format!("    {direction}: {line}\n"));
                    }
                }
                Err(e) => out.push_str(&format!("    {direction}: cannot open ({e})\n")),
            }
        }
    }
    if !any {
        out.push_str("no devices found\n");
    }
    Ok(out)
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

/// One line per sample format this tool runs (channel counts, sample rates and the span of
/// period sizes on offer), then one line naming the other formats the device has.
pub(crate) fn summarize_configs(ranges: &[SupportedStreamConfigRange]) -> Vec<String> {
    let formats: BTreeSet<cpal::SampleFormat> = ranges.iter().map(|r| r.sample_format()).collect();
    let (runnable, others): (Vec<cpal::SampleFormat>, Vec<cpal::SampleFormat>) = formats
        .into_iter()
        .partition(|f| DeviceFormat::from_cpal(*f).is_some());
    let mut lines: Vec<String> = runnable
        .into_iter()
        .map(|format| {
            let of_format: Vec<&SupportedStreamConfigRange> = ranges
                .iter()
                .filter(|r| r.sample_format() == format)
                .collect();
            let channels: BTreeSet<u16> = of_format.iter().map(|r| r.channels()).collect();
            let rates: BTreeSet<(u32, u32)> = of_format
                .iter()
                .map(|r| (r.min_sample_rate(), r.max_sample_rate()))
                .collect();
            // The period range differs with the channel count (it is a byte limit); the span
            // over all of them is what a listing can usefully show.
            let periods = of_format
                .iter()
                .filter_map(|r| match r.buffer_size() {
                    SupportedBufferSize::Range { min, max } => Some((*min, *max)),
                    SupportedBufferSize::Unknown => None,
                })
                .reduce(|(a, b), (c, d)| (a.min(c), b.max(d)));
            let mut line = format!(
                "{format}: {} channel(s) at {} Hz",
                compress(&channels),
                join_ranges(&rates),
            );
            if let Some(span) = periods {
                line.push_str(&format!(
                    ", period {} frames",
                    join_ranges(&BTreeSet::from([span]))
                ));
            }
            line
        })
        .collect();
    if !others.is_empty() {
        let names: Vec<String> = others.iter().map(|f| f.to_string()).collect();
        lines.push(format!(
            "also {} (formats this tool does not run)",
            names.join(", ")
        ));
    }
    lines
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
                "i16: 1, 2 channel(s) at 44100, 48000 Hz, period 32–8192 frames".to_string(),
                "also u8, f64 (formats this tool does not run)".to_string(),
            ]
        );
    }

    #[test]
    fn consecutive_channel_counts_are_shown_as_a_span() {
        let set: BTreeSet<u16> = (1..=8).collect();
        assert_eq!(compress(&set), "1–8");
        let set: BTreeSet<u16> = [1, 2, 6].into_iter().collect();
        assert_eq!(compress(&set), "1, 2, 6");
    }
}
