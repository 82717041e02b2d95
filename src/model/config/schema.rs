//! The config's key names and which table each belongs to: the one place they are spelt.
//!
//! Readers look keys up through these constants, and the unknown-key check compares a stray key
//! against them (to suggest the nearest valid key, or to say which table it belongs in).

/// One kind of table in the config: how to name it to a person and which keys it may hold.
#[derive(Debug)]
pub(crate) struct TableSchema {
    /// How the table is named in messages, e.g. "[link]".
    pub name: &'static str,
    pub keys: &'static [&'static str],
}

pub(crate) const LINK: &str = "link";
pub(crate) const PATH: &str = "path";
pub(crate) const AUDIO: &str = "audio";
pub(crate) const ENGINE: &str = "engine";
pub(crate) const TOP: TableSchema = TableSchema {
    name: "the top level",
    keys: &[LINK, PATH, AUDIO, ENGINE],
};

pub(crate) const SAMPLE_RATE_HZ: &str = "sample_rate_hz";
pub(crate) const CHANNEL_COUNT: &str = "channel_count";
pub(crate) const CIRCLE_TOLERANCE: &str = "circle_tolerance";
pub(crate) const PRECISION: &str = "precision";
pub(crate) const LINKED_CHANNELS: &str = "linked_channels";
pub(crate) const FORMAT_VERSION: &str = "format_version";
pub(crate) const LINK_TABLE: TableSchema = TableSchema {
    name: "[link]",
    keys: &[
        FORMAT_VERSION,
        SAMPLE_RATE_HZ,
        CHANNEL_COUNT,
        CIRCLE_TOLERANCE,
        PRECISION,
        LINKED_CHANNELS,
    ],
};

pub(crate) const LABEL: &str = "label";
pub(crate) const CHANNELS: &str = "channels";
pub(crate) const STRUCTURE: &str = "structure";
pub(crate) const DIFFERENCE_EQUATION: &str = "difference_equation";
pub(crate) const ROOTS: &str = "roots";
pub(crate) const ECHOES: &str = "echoes";
pub(crate) const SECTIONS: &str = "sections";
pub(crate) const INVERSE: &str = "inverse";
pub(crate) const PATH_TABLE: TableSchema = TableSchema {
    name: "[[path]]",
    keys: &[
        LABEL,
        CHANNELS,
        STRUCTURE,
        DIFFERENCE_EQUATION,
        ROOTS,
        ECHOES,
        SECTIONS,
        INVERSE,
    ],
};

pub(crate) const METHOD: &str = "method";
pub(crate) const BOOST_CAP_DB: &str = "boost_cap_db";
pub(crate) const UNITY_AT_HZ: &str = "unity_at_hz";
pub(crate) const STRUCTURE_FALLBACK: &str = "structure_fallback";
pub(crate) const FIR_TAPS: &str = "fir_taps";
pub(crate) const FIR_DELAY_SAMPLES: &str = "fir_delay_samples";
pub(crate) const FIR_LATENCY_BUDGET_MS: &str = "fir_latency_budget_ms";
pub(crate) const FIR_REGULARIZATION: &str = "fir_regularization";
pub(crate) const CORRECTION_BAND_HZ: &str = "correction_band_hz";
pub(crate) const BAND_SNR_DB: &str = "band_snr_db";
pub(crate) const LATENCY_BUDGET_MS: &str = "latency_budget_ms";
pub(crate) const INVERSE_TABLE: TableSchema = TableSchema {
    name: "[path.inverse]",
    keys: &[
        METHOD,
        BOOST_CAP_DB,
        UNITY_AT_HZ,
        STRUCTURE_FALLBACK,
        FIR_TAPS,
        FIR_DELAY_SAMPLES,
        FIR_LATENCY_BUDGET_MS,
        FIR_REGULARIZATION,
        CORRECTION_BAND_HZ,
        BAND_SNR_DB,
        LATENCY_BUDGET_MS,
    ],
};

pub(crate) const INPUT_DEVICE: &str = "input_device";
pub(crate) const OUTPUT_DEVICE: &str = "output_device";
pub(crate) const BUFFER_FRAMES: &str = "buffer_frames";
pub(crate) const HOST: &str = "host";
pub(crate) const CALLBACK_PRIORITY: &str = "callback_priority";
pub(crate) const LOCK_MEMORY: &str = "lock_memory";
pub(crate) const CLOCKS: &str = "clocks";
pub(crate) const CONNECT_INPUTS: &str = "connect_inputs";
pub(crate) const CONNECT_OUTPUTS: &str = "connect_outputs";
pub(crate) const AUDIO_TABLE: TableSchema = TableSchema {
    name: "[audio]",
    keys: &[
        HOST,
        INPUT_DEVICE,
        OUTPUT_DEVICE,
        BUFFER_FRAMES,
        CALLBACK_PRIORITY,
        LOCK_MEMORY,
        CLOCKS,
        CONNECT_INPUTS,
        CONNECT_OUTPUTS,
    ],
};

pub(crate) const CROSSFADE_MS: &str = "crossfade_ms";
pub(crate) const FADE_IN_MS: &str = "fade_in_ms";
pub(crate) const FADE_OUT_MS: &str = "fade_out_ms";
pub(crate) const CLIP: &str = "clip";
pub(crate) const INSTABILITY_MARGIN_DB: &str = "instability_margin_db";
pub(crate) const INSTABILITY_HOLD_MS: &str = "instability_hold_ms";
pub(crate) const FALLBACK: &str = "fallback";
pub(crate) const GAIN_RELEASE_MS: &str = "gain_release_ms";
pub(crate) const ENGINE_TABLE: TableSchema = TableSchema {
    name: "[engine]",
    keys: &[
        CROSSFADE_MS,
        FADE_IN_MS,
        FADE_OUT_MS,
        CLIP,
        INSTABILITY_MARGIN_DB,
        INSTABILITY_HOLD_MS,
        FALLBACK,
        GAIN_RELEASE_MS,
    ],
};

pub(crate) const B: &str = "b";
pub(crate) const A: &str = "a";
pub(crate) const DIFFERENCE_EQUATION_TABLE: TableSchema = TableSchema {
    name: "difference_equation",
    keys: &[B, A],
};

pub(crate) const ZEROS: &str = "zeros";
pub(crate) const POLES: &str = "poles";
pub(crate) const GAIN: &str = "gain";
pub(crate) const CONJUGATES: &str = "conjugates";
pub(crate) const ROOTS_TABLE: TableSchema = TableSchema {
    name: "[path.roots]",
    keys: &[ZEROS, POLES, GAIN, CONJUGATES],
};

pub(crate) const RADIUS: &str = "radius";
pub(crate) const ANGLE_DEG: &str = "angle_deg";
pub(crate) const ANGLE_RAD: &str = "angle_rad";
pub(crate) const POLAR_TABLE: TableSchema = TableSchema {
    name: "a zero or pole in polar form",
    keys: &[RADIUS, ANGLE_DEG, ANGLE_RAD],
};

pub(crate) const DIRECT_GAIN: &str = "direct_gain";
pub(crate) const DIRECT_DELAY_SAMPLES: &str = "direct_delay_samples";
pub(crate) const TAPS: &str = "taps";
pub(crate) const ECHOES_TABLE: TableSchema = TableSchema {
    name: "[path.echoes]",
    keys: &[DIRECT_GAIN, DIRECT_DELAY_SAMPLES, TAPS],
};

pub(crate) const DELAY_SAMPLES: &str = "delay_samples";
pub(crate) const DELAY_MS: &str = "delay_ms";
pub(crate) const TAP_TABLE: TableSchema = TableSchema {
    name: "an echo tap",
    keys: &[DELAY_SAMPLES, DELAY_MS, GAIN],
};

/// Every table kind, for telling the user where a misplaced key belongs.
pub(crate) const ALL_TABLES: [&TableSchema; 11] = [
    &TOP,
    &LINK_TABLE,
    &PATH_TABLE,
    &DIFFERENCE_EQUATION_TABLE,
    &ROOTS_TABLE,
    &POLAR_TABLE,
    &ECHOES_TABLE,
    &TAP_TABLE,
    &INVERSE_TABLE,
    &AUDIO_TABLE,
    &ENGINE_TABLE,
];
