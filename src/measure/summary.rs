//! The identification told in plain text, for the terminal and the report folder.

use std::fmt::Write;

use super::workflow::MeasurementOutcome;
use crate::io::format_db;

/// Several lines: delay, per-channel model, SNR, trusted band, fit errors, the equalized error
/// on the measurement, and every warning.
pub fn describe_measurement(outcome: &MeasurementOutcome) -> String {
    let id = &outcome.identification;
    let fs = f64::from(id.sample_rate);
    let mut t = String::new();
    let _ = writeln!(
        t,
        "measured {} against {}: {} channel(s) at {} Hz",
        outcome.sources.response,
        outcome.sources.stimulus,
        id.channels.len(),
        id.sample_rate
    );
    let _ = writeln!(
        t,
        "  delay             {} frames ({:.3} ms) to the earliest onset (cross-correlation)",
        id.common_delay,
        1000.0 * id.common_delay as f64 / fs
    );
    for (c, fit) in id.channels.iter().enumerate() {
        let _ = writeln!(t, "  channel {c}");
        let _ = writeln!(
            t,
            "    onset           +{} frames; correlation peak {:.1} dB above its RMS",
            id.relative_delays[c], fit.prominence_db
        );
        let _ = writeln!(t, "    measured SNR    {:.1} dB", fit.snr_db);
        let band = match fit.trusted.band_hz {
            Some((lo, hi)) => format!(
                "{lo:.0} – {hi:.0} Hz (SNR ≥ {:.0} dB over {:.0} % of it)",
                fit.trusted.threshold_db,
                100.0 * fit.trusted.coverage
            ),
            None => "none".to_string(),
        };
        let _ = writeln!(t, "    trusted band    {band}");
        let _ = writeln!(
            t,
            "    FIR model       {} taps{}, residual {}",
            fit.fir.taps.len(),
            if fit.fir.automatic {
                " (length by minimum description length)"
            } else {
                ""
            },
            format_db(fit.fir.residual_db())
        );
        if let Some(iir) = &fit.iir {
            let _ = writeln!(
                t,
                "    IIR model       orders {}/{} by Steiglitz–McBride, {} pass(es){}, fit error {}",
                iir.b.len() - 1,
                iir.a.len() - 1,
                iir.iterations,
                if iir.converged { "" } else { " (not settled)" },
                format_db(iir.fit_error_db())
            );
        }
    }
    match &outcome.equalized {
        Ok(e) => {
            let _ = writeln!(
                t,
                "  equalized error   before {}, after {} (the recording equalized by the fitted \
                 inverse, against the stimulus)",
                format_db(e.before.db),
                format_db(e.after.db)
            );
        }
        Err(e) => {
            let _ = writeln!(t, "  equalized error   not measured: {e}");
        }
    }
    t.push_str(&super::linearity::describe_linearity(
        &outcome.linearity,
        "  ",
    ));
    for w in &id.warnings {
        let _ = writeln!(t, "  warning: {w}");
    }
    t
}
