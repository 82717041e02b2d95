//! Whether an identification may be used: the reasons to refuse it, if any.
//!
//! A model is refused when its own inverse, run over the measurement, leaves the recording
//! further from the stimulus than it was (equalizing with it would do harm), when that inverse
//! cannot run at all, or when no band of a channel reaches the trusted SNR. The model is then
//! not written; `identify` says why and exits non-zero.

use super::band_snr::TRUST_SNR_DB;
use super::workflow::MeasurementOutcome;

/// Plain-language reasons not to use `outcome`'s model (empty when it may be used).
pub fn refusal_reasons(outcome: &MeasurementOutcome) -> Vec<String> {
    let mut reasons = Vec::new();
    for fit in &outcome.identification.channels {
        if fit.trusted.band_hz.is_none() {
            reasons.push(format!(
                "channel {}: no band reaches {TRUST_SNR_DB} dB SNR (measured SNR {:.1} dB), so \
                 nothing in the model stands clear of the noise",
                fit.channel, fit.snr_db
            ));
        }
    }
    match &outcome.equalized {
        Ok(e) if e.after.db >= e.before.db => reasons.push(format!(
            "the fitted inverse makes the measurement worse, not better: error {:.1} dB after \
             equalizing against {:.1} dB before (measured SNR {})",
            e.after.db,
            e.before.db,
            snr_list(outcome)
        )),
        Ok(_) => {}
        Err(e) => reasons.push(format!("the fitted inverse cannot be checked: {e}")),
    }
    reasons
}

fn snr_list(outcome: &MeasurementOutcome) -> String {
    outcome
        .identification
        .channels
        .iter()
        .map(|f| format!("{:.1} dB", f.snr_db))
        .collect::<Vec<_>>()
        .join(", ")
}
