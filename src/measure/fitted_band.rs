//! The `[path.inverse]` table `identify` writes for each channel: the band it trusted as the
//! band to correct, and the SNR it measured there, one-third-octave band by band (IEC 61260-1
//! base-10 bands), for the noise-aware design.

use std::fmt::Write;

use super::identify::ChannelFit;
use crate::numeric::fractional_octave::bands_within;

/// The table's text (empty when the channel has no trusted band, which `identify` refuses).
pub fn inverse_table(fit: &ChannelFit, sample_rate: f64) -> String {
    let Some((low, high)) = fit.trusted.band_hz else {
        return String::new();
    };
    let high = high.min(sample_rate / 2.0);
    if high <= low {
        return String::new();
    }
    let mut t = String::new();
    let _ = writeln!(t, "[path.inverse]");
    let _ = writeln!(
        t,
        "# the band this measurement trusts: corrected inside, unity gain outside"
    );
    let _ = writeln!(t, "correction_band_hz = [{low:.1}, {high:.1}]");
    let bands = band_snr_pairs(fit, low, high);
    if !bands.is_empty() {
        let _ = writeln!(
            t,
            "# SNR measured per one-third-octave band [centre_hz, snr_db]: no more gain where the \
             measurement is no better than its noise"
        );
        let items: Vec<String> = bands
            .iter()
            .map(|(hz, snr)| format!("[{hz:.1}, {snr:.1}]"))
            .collect();
        let lines: Vec<String> = items
            .chunks(4)
            .map(|chunk| format!("    {},", chunk.join(", ")))
            .collect();
        let _ = writeln!(t, "band_snr_db = [\n{}\n]", lines.join("\n"));
    }
    t
}

/// Mean SNR (power mean of the smoothed per-bin values) of each one-third-octave band wholly
/// inside [`low`, `high`] that holds at least one bin.
pub fn band_snr_pairs(fit: &ChannelFit, low: f64, high: f64) -> Vec<(f64, f64)> {
    let snr = &fit.band_snr;
    bands_within(3, low, high)
        .iter()
        .filter_map(|band| {
            let values: Vec<f64> = snr
                .frequencies_hz
                .iter()
                .zip(&snr.snr_db)
                .filter(|(f, _)| **f >= band.lower_hz && **f < band.upper_hz)
                .map(|(_, s)| 10f64.powf(s / 10.0))
                .collect();
            (!values.is_empty()).then(|| {
                let mean = values.iter().sum::<f64>() / values.len() as f64;
                (band.exact_mid_hz, 10.0 * mean.log10())
            })
        })
        .collect()
}
