//! The `[link]` table: sample rate, channel count, circle tolerance, coefficient precision.

use super::schema::{
    CHANNEL_COUNT, CIRCLE_TOLERANCE, FORMAT_VERSION, LINK, LINKED_CHANNELS, LINK_TABLE, PRECISION,
    SAMPLE_RATE_HZ,
};
use super::tree::{Node, Table};
use crate::model::error::{ConfigError, ConfigErrorKind};
use crate::model::{
    CoefficientPrecision, CONFIG_FORMAT_VERSION, DEFAULT_CIRCLE_TOLERANCE, MAX_CHANNELS,
    SAMPLE_RATE_RANGE,
};

/// Largest circle tolerance accepted: beyond it, zeros a tenth of the way to the centre would
/// count as "on the circle", which no longer means anything.
const MAX_CIRCLE_TOLERANCE: f64 = 0.1;

/// What `[link]` says, checked.
pub(crate) struct LinkSettings<'a> {
    pub sample_rate: f64,
    pub channel_count: usize,
    pub circle_tolerance: f64,
    pub precision: CoefficientPrecision,
    /// Lists of channels the engine's guards act on together (beyond each path's own).
    pub linked_channels: Vec<Vec<usize>>,
    /// Where `channel_count` is written, for errors about channels no path covers.
    pub channel_count_node: Node<'a>,
}

pub(crate) fn read_link<'a>(root: &Table<'a>) -> Result<LinkSettings<'a>, ConfigError> {
    let link = root
        .get(LINK)
        .ok_or_else(|| {
            root.missing(
                LINK,
                ConfigErrorKind::MissingKey,
                "the config has no [link] table",
                "begin the file with [link] giving sample_rate_hz and channel_count",
            )
        })?
        .table(&LINK_TABLE)?;

    if let Some(node) = link.get(FORMAT_VERSION) {
        let version = node.integer()?;
        if version > CONFIG_FORMAT_VERSION {
            return Err(node.fail(
                ConfigErrorKind::NewerFormat,
                format!(
                    "this config is written in format {version}, newer than this redress \
                     reads (format {CONFIG_FORMAT_VERSION}, redress {})",
                    env!("CARGO_PKG_VERSION")
                ),
                "run it with the newer redress that wrote it, or have that redress write a \
                 config of format 1",
            ));
        }
        if version < 1 {
            return Err(node.fail(
                ConfigErrorKind::OutOfRange,
                format!("format_version must be 1 or more, not {version}"),
                format!("leave the key out, or write format_version = {CONFIG_FORMAT_VERSION}"),
            ));
        }
    }

    let rate_node = link.require(
        SAMPLE_RATE_HZ,
        "add sample_rate_hz = the link's sample rate in Hz, e.g. 48000",
    )?;
    let sample_rate = rate_node.number()?;
    let (low, high) = SAMPLE_RATE_RANGE;
    if !(low..=high).contains(&sample_rate) {
        return Err(rate_node.fail(
            ConfigErrorKind::OutOfRange,
            format!(
                "a sample rate of {sample_rate} Hz is outside the supported {low} to {high} Hz"
            ),
            "give the rate in Hz (48000, not 48)",
        ));
    }
    if sample_rate.fract() != 0.0 {
        return Err(rate_node.fail(
            ConfigErrorKind::OutOfRange,
            format!(
                "a sample rate of {sample_rate} Hz is not a whole number of hertz; WAV files \
                 and sound devices run at whole rates"
            ),
            format!(
                "give the rate the files and devices run at, e.g. {} or {}",
                sample_rate.floor(),
                sample_rate.ceil()
            ),
        ));
    }

    let count_node = link.require(
        CHANNEL_COUNT,
        "add channel_count = the number of audio channels the link carries, e.g. 2",
    )?;
    let count = count_node.integer()?;
    if count < 1 || count > MAX_CHANNELS as i64 {
        return Err(count_node.fail(
            ConfigErrorKind::OutOfRange,
            format!("channel_count must be between 1 and {MAX_CHANNELS}, not {count}"),
            "count the audio channels the link carries (1 for mono, 2 for stereo)",
        ));
    }

    let circle_tolerance = match link.get(CIRCLE_TOLERANCE) {
        None => DEFAULT_CIRCLE_TOLERANCE,
        Some(node) => {
            let value = node.number()?;
            if !(value > 0.0 && value < MAX_CIRCLE_TOLERANCE) {
                return Err(node.fail(
                    ConfigErrorKind::OutOfRange,
                    format!(
                        "circle_tolerance must be above 0 and below {MAX_CIRCLE_TOLERANCE}, \
                         not {value}"
                    ),
                    format!(
                        "it is a distance in radius from the unit circle; leave it out for \
                         the default {DEFAULT_CIRCLE_TOLERANCE:e}"
                    ),
                ));
            }
            value
        }
    };

    let precision = match link.get(PRECISION) {
        None => CoefficientPrecision::F32,
        Some(node) => node.choice(&[
            ("f32", CoefficientPrecision::F32),
            ("f64", CoefficientPrecision::F64),
        ])?,
    };

    let linked_channels = match link.get(LINKED_CHANNELS) {
        None => Vec::new(),
        Some(node) => read_linked_channels(&node, count as usize)?,
    };

    Ok(LinkSettings {
        sample_rate,
        channel_count: count as usize,
        circle_tolerance,
        precision,
        linked_channels,
        channel_count_node: count_node,
    })
}

/// `linked_channels = [[0, 1], [2, 3]]`: each list is channels that stay together when a guard
/// acts (a stereo pair described by two paths, say). Each list names at least two channels,
/// each once and in range.
fn read_linked_channels(
    node: &Node<'_>,
    channel_count: usize,
) -> Result<Vec<Vec<usize>>, ConfigError> {
    let mut lists = Vec::new();
    for list_node in node.array()? {
        let members = list_node.array()?;
        if members.len() < 2 {
            return Err(list_node.fail(
                ConfigErrorKind::OutOfRange,
                "a list of linked channels needs at least two channels",
                "write each group as a list of two or more channels, e.g. linked_channels = [[0, 1]]",
            ));
        }
        let group = read_channel_indices(&members, channel_count, "this group")?;
        lists.push(group);
    }
    Ok(lists)
}

/// Zero-based channel numbers, each in range and listed once `within` (a path, a group).
pub(crate) fn read_channel_indices(
    nodes: &[Node<'_>],
    channel_count: usize,
    within: &str,
) -> Result<Vec<usize>, ConfigError> {
    let mut channels = Vec::with_capacity(nodes.len());
    for n in nodes {
        let c = n.integer()?;
        if c < 0 || c >= channel_count as i64 {
            return Err(n.fail(
                ConfigErrorKind::OutOfRange,
                format!(
                    "channel {c} does not exist: [link] has channel_count = {channel_count}, so \
                     the channels are 0 to {}",
                    channel_count - 1
                ),
                "channels are numbered from 0; use one in range or raise channel_count",
            ));
        }
        let c = c as usize;
        if channels.contains(&c) {
            return Err(n.fail(
                ConfigErrorKind::ChannelTwice,
                format!("channel {c} is listed twice in {within}"),
                "list each channel once",
            ));
        }
        channels.push(c);
    }
    Ok(channels)
}
