//! Whether an identification may be used: the reasons to refuse it, if any.
//!
//! A model is refused when no band of a channel reaches the trusted SNR, when its own inverse
//! cannot run at all, or when that inverse, run over the measurement, brings the recording less
//! than [`LOW_SNR_LEAST_GAIN_DB`] closer to the stimulus and the measured SNR is under
//! [`LOW_SNR_DB`] (the noise, not the link, is what it fitted). The model is then not written; `identify` says why
//! and exits non-zero. With a good SNR a worse equalized error is the chosen substitute's doing
//! (a minimum-phase inverse leaves the phase of zeros outside the circle, and a room's own
//! delay before its main arrival): the model is written, and [`equalized_warning`] says so.

use super::band_snr::TRUST_SNR_DB;
use super::identify::LOW_SNR_DB;
use super::workflow::MeasurementOutcome;

/// Under [`LOW_SNR_DB`] a model whose inverse gains less than this (dB) on its own measurement
/// is refused: kept to its trusted band and held back by the measured noise, a model fitted
/// mostly to noise no longer makes the measurement worse, it just does nothing for it.
pub const LOW_SNR_LEAST_GAIN_DB: f64 = 1.0;

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
    let low_snr = outcome
        .identification
        .channels
        .iter()
        .any(|f| f.snr_db < LOW_SNR_DB);
    match &outcome.equalized {
        Ok(e) if e.after.db > e.before.db - LOW_SNR_LEAST_GAIN_DB && low_snr => {
            reasons.push(format!(
                "the fitted inverse makes the measurement no better, or worse: error {:.1} dB \
                 after equalizing against {:.1} dB before, less than {LOW_SNR_LEAST_GAIN_DB} dB \
                 gained (measured SNR {})",
                e.after.db,
                e.before.db,
                snr_list(outcome)
            ))
        }
        Ok(_) => {}
        Err(e) => reasons.push(format!("the fitted inverse cannot be checked: {e}")),
    }
    reasons
}

/// With a trustworthy model whose inverse still leaves the measurement worse than it was: what
/// to tell the user (`None` when equalizing helps, or when the model was refused anyway).
pub fn equalized_warning(outcome: &MeasurementOutcome) -> Option<String> {
    let e = outcome.equalized.as_ref().ok()?;
    (e.after.db >= e.before.db && refusal_reasons(outcome).is_empty()).then(|| {
        format!(
            "equalizing the measurement with the fitted link's inverse leaves it further from \
             the stimulus ({:.1} dB after against {:.1} dB before) although the SNR is good \
             ({}): the inverse the config asks for corrects the magnitude, not the phase of \
             zeros outside the circle or the delay before the main arrival; for the waveform, \
             set method = \"least_squares_fir\" with a latency budget under [path.inverse]",
            e.after.db,
            e.before.db,
            snr_list(outcome)
        )
    })
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
