//! The fitted model as a link config that `check`, `apply` and `run` read unchanged, headed by
//! comments that record how it was measured.

use std::fmt::Write;

use super::identify::Identification;
use super::linearity::{describe_linearity, ChannelLinearity};
use crate::io::format_db;

/// Where the measurement came from, for the header.
#[derive(Debug, Clone, PartialEq)]
pub struct MeasurementSources {
    pub stimulus: String,
    pub response: String,
    /// Frames of stimulus signal (trailing silence left out).
    pub stimulus_frames: usize,
    pub stimulus_peak_dbfs: f64,
    pub response_channels: usize,
}

/// The config text. Coefficients are written in Rust's shortest round-trip form, so reading the
/// file back gives exactly the fitted numbers.
pub fn fitted_config(
    id: &Identification,
    sources: &MeasurementSources,
    linearity: &[ChannelLinearity],
) -> String {
    let fs = f64::from(id.sample_rate);
    let mut t = String::new();
    let _ = writeln!(
        t,
        "# Link measured by `redress identify` (redress {}).",
        env!("CARGO_PKG_VERSION")
    );
    let _ = writeln!(
        t,
        "# stimulus  {}: {} frames of signal at {} Hz, peak {:.1} dBFS",
        sources.stimulus, sources.stimulus_frames, id.sample_rate, sources.stimulus_peak_dbfs
    );
    let _ = writeln!(
        t,
        "# response  {}: {} channel(s)",
        sources.response, sources.response_channels
    );
    let _ = writeln!(
        t,
        "# delay     {} frames ({:.3} ms) from the stimulus's start to the earliest onset, found \
         by cross-correlation;",
        id.common_delay,
        1000.0 * id.common_delay as f64 / fs
    );
    let _ = writeln!(
        t,
        "#           left out of the model (no inverse could undo it); compare with --delay {}",
        id.common_delay
    );
    let model = match id.settings.iir {
        Some(o) => format!(
            "IIR B/A of orders {}/{} by Steiglitz–McBride iterations (started from an FIR \
             least-squares fit)",
            o.numerator, o.denominator
        ),
        None => match id.settings.fir_length {
            super::FirLength::Fixed(n) => format!("FIR of {n} taps by least squares"),
            super::FirLength::Automatic { most } => format!(
                "FIR by least squares, length by minimum description length (at most {most} taps)"
            ),
        },
    };
    let _ = writeln!(t, "# model     {model}");
    for (c, fit) in id.channels.iter().enumerate() {
        let band = match fit.trusted.band_hz {
            Some((lo, hi)) => format!(
                "trusted {lo:.0}–{hi:.0} Hz (SNR ≥ {:.0} dB in {:.0} % of it)",
                fit.trusted.threshold_db,
                100.0 * fit.trusted.coverage
            ),
            None => "no band reaches the trusted SNR".to_string(),
        };
        let _ = writeln!(
            t,
            "# channel {c} SNR {:.1} dB; {band}; model error {}; FIR residual {} with {} taps; \
             onset +{} frames",
            fit.snr_db,
            format_db(fit.model_error_db()),
            format_db(fit.fir.residual_db()),
            fit.fir.taps.len(),
            id.relative_delays[c]
        );
    }
    // The linearity check as comments: the file stays a plain link config, and whoever reads
    // it later sees what the inverse could not correct.
    t.push_str(&describe_linearity(linearity, "# "));
    for w in &id.warnings {
        let _ = writeln!(t, "# warning   {w}");
    }
    let _ = writeln!(t);
    let _ = writeln!(t, "[link]");
    let _ = writeln!(
        t,
        "format_version = {}",
        crate::model::CONFIG_FORMAT_VERSION
    );
    let _ = writeln!(t, "sample_rate_hz = {}", id.sample_rate);
    let _ = writeln!(t, "channel_count = {}", id.channels.len());
    for c in 0..id.channels.len() {
        let (b, a) = id.channel_model(c);
        let _ = writeln!(t);
        let _ = writeln!(t, "[[path]]");
        let _ = writeln!(t, "label = \"channel {c} as measured\"");
        let _ = writeln!(t, "channels = [{c}]");
        let _ = writeln!(
            t,
            "difference_equation = {{ b = {}, a = {} }}",
            number_list(&b),
            number_list(&a)
        );
        t.push_str(&super::fitted_band::inverse_table(&id.channels[c], fs));
    }
    t
}

/// `[x, y, …]`, broken over lines of eight numbers when long (a TOML array may span lines even
/// inside an inline table).
fn number_list(values: &[f64]) -> String {
    let items: Vec<String> = values.iter().map(|v| format!("{v:?}")).collect();
    if items.len() <= 8 {
        return format!("[{}]", items.join(", "));
    }
    let lines: Vec<String> = items
        .chunks(8)
        .map(|chunk| format!("    {},", chunk.join(", ")))
        .collect();
    format!("[\n{}\n]", lines.join("\n"))
}
