//! TOML text → validated [`Link`].
//!
//! The schema (every key below is checked; any other key is an error that suggests the nearest
//! valid one):
//!
//! ```toml
//! [link]
//! sample_rate_hz = 48000        # required, within SAMPLE_RATE_RANGE
//! channel_count = 2             # required, 1..=MAX_CHANNELS
//! circle_tolerance = 1e-9       # optional, > 0 and < 0.1
//! precision = "f32"             # optional, "f32" | "f64"
//!
//! [[path]]                      # one or more; together they cover every channel exactly once
//! label = "east rack feed"      # optional, default "path N" (1-based)
//! channels = [0, 1]             # required, zero-based
//! structure = "sections"        # optional, "direct_form_2t" | "sections" | "lattice_ladder";
//!                               # default "sections" when the inverse's order is above 2
//! # exactly one model:
//! difference_equation = { b = [1.0, 0.5], a = [1.0] }
//! # [path.roots]   zeros = […], poles = […], gain = 1.0, conjugates = "require" | "add"
//! # [path.echoes]  direct_gain, direct_delay_samples, taps = [{ delay_samples | delay_ms, gain }]
//! # sections = [[b0, b1, b2, a0, a1, a2], …]
//!
//! [path.inverse]                # optional; how to build the inverse (defaults shown)
//! method = "minimum_phase"      # "exact" | "minimum_phase" | "least_squares_fir"
//! boost_cap_db = 20             # > 0 and ≤ 60
//! unity_at_hz = 1000            # optional: hold the cascade at 0 dB here
//! structure_fallback = true     # switch to a sturdier structure if rounding demands it
//! fir_taps = 256                # least_squares_fir only, 2..=MAX_FIR_TAPS
//! fir_latency_budget_ms = 10    # least_squares_fir only: search the best delay up to this …
//! fir_delay_samples = 32        # … or fix it (not both)
//! fir_regularization = 0        # least_squares_fir only, ≥ 0
//!
//! [audio]                       # optional; devices of the live service (defaults shown)
//! host = "alsa"                 # "alsa" | "jack" | "pipewire"
//! input_device = "default"      # "default", a device id, or part of a device name
//! output_device = "default"
//! buffer_frames = 256           # optional, 16..=16384
//! callback_priority = 70        # SCHED_FIFO priority asked for, 0..=98 (0: ask nothing)
//! lock_memory = true            # mlockall where the limits allow
//! clocks = "auto"               # "auto" | "shared" | "separate" (resample against drift)
//! connect_inputs = []           # host = "jack" only: ports feeding redress:in_1, in_2, …
//! connect_outputs = []          # host = "jack" only: ports redress:out_1, out_2, … feed
//!
//! [engine]                      # optional; guards of the live service (defaults shown)
//! crossfade_ms = 20
//! fade_in_ms = 50
//! fade_out_ms = 50
//! clip = "soft_limit"           # "hard_limit" | "soft_limit" | "gain_reduction"
//! instability_margin_db = 12
//! instability_hold_ms = 10
//! fallback = "last_good"        # "last_good" | "bypass"
//! gain_release_ms = 300
//! ```
//!
//! A zero or pole is written `0.3`, `[re, im]`, `{ radius = 0.9, angle_deg = 30 }` or
//! `{ radius = 0.9, angle_rad = 0.52 }`. Echo conventions are documented in `config/echoes.rs`. Errors stop at the
//! first problem found; each names file, line, column, key path, value, problem and help.

// A config error is built once, on the way out, and carries the whole message; boxing it would
// only add an allocation to the rare path and a layer to every caller's match.
#![allow(clippy::result_large_err)]

mod band_keys;
mod channel_owners;
mod complex_value;
mod conjugates;
mod difference_equation;
mod echoes;
mod finish_channel;
mod inverse_table;
mod line_index;
mod link_table;
#[cfg(test)]
mod parse_tests;
mod path_table;
mod read_file;
mod runtime_tables;
mod schema;
mod sections;
mod syntax_error;
mod tree;
mod zeros_poles;

use std::path::Path;

use toml::de::DeTable;

use self::channel_owners::ChannelOwners;
use self::link_table::read_link;
use self::path_table::read_path;
use self::read_file::read_config_bytes;
pub use self::read_file::MAX_CONFIG_BYTES;
use self::runtime_tables::read_runtime;
use self::schema::{PATH, TOP};
use self::tree::Ctx;
use super::error::{ConfigError, ConfigErrorKind};
use super::Link;

/// Parses and checks a link config. `source` names the file in errors and in [`Link::source`].
pub fn parse_link(text: &str, source: Option<&Path>) -> Result<Link, ConfigError> {
    let ctx = Ctx::new(text, source);
    let document = DeTable::parse(text).map_err(|e| ctx.syntax(&e))?;
    let root = ctx.root(document.get_ref());
    root.refuse_unknown_keys(&TOP)?;

    let link = read_link(&root)?;

    let paths_node = root.get(PATH).ok_or_else(|| {
        root.missing(
            PATH,
            ConfigErrorKind::MissingKey,
            "the config has no [[path]] table, so nothing says what the link does to the audio",
            "add a [[path]] with channels = […] and one channel model",
        )
    })?;
    if paths_node.is_table() {
        return Err(paths_node.fail(
            ConfigErrorKind::WrongType,
            "`path` is a single table, but paths are a list of tables",
            "write each path's header with double brackets: [[path]]",
        ));
    }
    let path_nodes = paths_node.array()?;
    if path_nodes.is_empty() {
        return Err(paths_node.fail(
            ConfigErrorKind::EmptyList,
            "the list of paths is empty",
            "add a [[path]] with channels = […] and one channel model",
        ));
    }

    let mut owners = ChannelOwners::new(link.channel_count);
    let mut paths = Vec::with_capacity(path_nodes.len());
    for (index, node) in path_nodes.iter().enumerate() {
        let draft = read_path(node, index, &link)?;
        owners.claim(index, &draft)?;
        paths.push(draft.path);
    }
    owners.check_all_covered(&link)?;
    let runtime = read_runtime(&root)?;

    Ok(Link {
        source: source.map(Path::to_path_buf),
        sample_rate: link.sample_rate,
        channel_count: link.channel_count,
        paths,
        linked_channels: link.linked_channels,
        runtime,
    })
}

/// Reads the file at `path` and parses it with [`parse_link`]. A file that is missing, a
/// directory, a pipe or device, unreadable, too large or not UTF-8 is a [`ConfigError`] too.
pub fn load_link(path: &Path) -> Result<Link, ConfigError> {
    let fail = |kind, problem: String, help: &str| {
        let mut e = ConfigError::new(kind, problem, help);
        e.file = Some(path.to_path_buf());
        e
    };
    let bytes = read_config_bytes(path)?;
    let text = String::from_utf8(bytes).map_err(|e| {
        let bytes = e.as_bytes();
        let valid = e.utf8_error().valid_up_to();
        // The valid prefix is text, so its lines and characters place the bad byte.
        let before = std::str::from_utf8(&bytes[..valid]).unwrap_or("");
        let line = before.matches('\n').count() + 1;
        let column = before.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
        let mut err = fail(
            ConfigErrorKind::NotUtf8,
            format!("the file is not UTF-8 text (byte 0x{:02x})", bytes[valid]),
            "save the config as UTF-8 text",
        );
        err.line = Some(line);
        err.column = Some(column);
        err
    })?;
    parse_link(&text, Some(path))
}
