//! The optional `[path.inverse]` table: which inverse to build and its safety limits.

use super::band_keys::{read_band_snr, read_correction_band};
use super::schema::{
    BAND_SNR_DB, BOOST_CAP_DB, CORRECTION_BAND_HZ, FIR_DELAY_SAMPLES, FIR_LATENCY_BUDGET_MS,
    FIR_REGULARIZATION, FIR_TAPS, INVERSE_TABLE, LATENCY_BUDGET_MS, METHOD, STRUCTURE_FALLBACK,
    UNITY_AT_HZ,
};
use super::tree::{Node, Table};
use crate::model::error::{ConfigError, ConfigErrorKind};
use crate::model::{FirDelay, InverseMethod, InversePolicy, MAX_FIR_TAPS};

/// Boost caps above this are refused: 60 dB is a thousandfold amplitude boost, beyond any
/// sensible correction of a real link.
const MAX_BOOST_CAP_DB: f64 = 60.0;

/// Reads `[path.inverse]`, or the defaults when the path has none.
pub(crate) fn read_inverse(
    node: Option<Node<'_>>,
    sample_rate: f64,
) -> Result<InversePolicy, ConfigError> {
    let mut policy = InversePolicy::default();
    let Some(node) = node else {
        return Ok(policy);
    };
    let table = node.table(&INVERSE_TABLE)?;
    if let Some(n) = table.get(METHOD) {
        policy.method = n.choice(&[
            ("exact", InverseMethod::Exact),
            ("minimum_phase", InverseMethod::MinimumPhase),
            ("least_squares_fir", InverseMethod::LeastSquaresFir),
            ("latency_knee", InverseMethod::LatencyKnee),
        ])?;
    }
    if let Some(n) = table.get(BOOST_CAP_DB) {
        let cap = n.number()?;
        if !(cap > 0.0 && cap <= MAX_BOOST_CAP_DB) {
            return Err(n.fail(
                ConfigErrorKind::OutOfRange,
                format!(
                    "a boost cap of {cap} dB is not usable: it must be above 0 dB (a cap at or \
                     below 0 dB would forbid any correction) and at most {MAX_BOOST_CAP_DB} dB"
                ),
                "leave boost_cap_db out for the default of 20 dB, or give a value such as 12 or 24",
            ));
        }
        policy.boost_cap_db = cap;
    }
    if let Some(n) = table.get(UNITY_AT_HZ) {
        let f = n.number()?;
        if !(f >= 0.0 && f < sample_rate / 2.0) {
            return Err(n.fail(
                ConfigErrorKind::OutOfRange,
                format!(
                    "{f} Hz is not a frequency of this link: it must lie from 0 up to below half \
                     the sample rate ({} Hz)",
                    sample_rate / 2.0
                ),
                "name a frequency in the passband, e.g. 1000",
            ));
        }
        policy.unity_at_hz = Some(f);
    }
    if let Some(n) = table.get(STRUCTURE_FALLBACK) {
        policy.structure_fallback = n.boolean()?;
    }
    if let Some(n) = table.get(CORRECTION_BAND_HZ) {
        policy.correction_band_hz = Some(read_correction_band(&n, sample_rate)?);
    }
    if let Some(n) = table.get(BAND_SNR_DB) {
        policy.band_snr = read_band_snr(&n, sample_rate)?;
    }
    read_fir(&table, sample_rate, &mut policy)?;
    read_knee_budget(&table, sample_rate, &mut policy)?;
    Ok(policy)
}

/// `latency_budget_ms`: only with method = "latency_knee", at least one sample.
fn read_knee_budget(
    table: &Table<'_>,
    sample_rate: f64,
    policy: &mut InversePolicy,
) -> Result<(), ConfigError> {
    let Some(n) = table.get(LATENCY_BUDGET_MS) else {
        return Ok(());
    };
    if policy.method != InverseMethod::LatencyKnee {
        return Err(n.fail(
            ConfigErrorKind::ConflictingKeys,
            format!(
                "`{LATENCY_BUDGET_MS}` is the latency-knee method's budget, but method is not \
                 \"latency_knee\""
            ),
            "set method = \"latency_knee\", or remove latency_budget_ms (a least-squares FIR \
             takes fir_latency_budget_ms)",
        ));
    }
    let ms = n.number()?;
    let one_sample_ms = 1000.0 / sample_rate;
    let largest = crate::model::MAX_KNEE_BUDGET_MS;
    if !(ms >= one_sample_ms && ms <= largest) {
        return Err(n.fail(
            ConfigErrorKind::OutOfRange,
            format!(
                "a latency budget of {ms} ms is outside what the latency-knee method tries: from \
                 one sample ({one_sample_ms:.4} ms at {sample_rate} Hz) to {largest} ms"
            ),
            "give a budget such as 5 (ms); 0 latency is the minimum-phase substitute",
        ));
    }
    policy.knee_budget_seconds = ms / 1000.0;
    Ok(())
}

fn read_fir(
    table: &Table<'_>,
    sample_rate: f64,
    policy: &mut InversePolicy,
) -> Result<(), ConfigError> {
    let fir_keys = [
        FIR_TAPS,
        FIR_DELAY_SAMPLES,
        FIR_LATENCY_BUDGET_MS,
        FIR_REGULARIZATION,
    ];
    if policy.method != InverseMethod::LeastSquaresFir {
        if let Some(key) = fir_keys.iter().find(|k| table.get(k).is_some()) {
            let n = table.get(key).expect("found just above");
            return Err(n.fail(
                ConfigErrorKind::ConflictingKeys,
                format!(
                    "`{key}` sets up a least-squares FIR inverse, but method is not \
                     \"least_squares_fir\": the two policies contradict each other"
                ),
                "set method = \"least_squares_fir\", or remove the fir_ keys",
            ));
        }
        return Ok(());
    }
    if let Some(n) = table.get(FIR_TAPS) {
        let taps = n.integer()?;
        if taps < 2 || taps > MAX_FIR_TAPS as i64 {
            return Err(n.fail(
                ConfigErrorKind::OutOfRange,
                format!("fir_taps must be from 2 to {MAX_FIR_TAPS}, not {taps}"),
                "a few hundred taps suit most links; latency does not depend on the length",
            ));
        }
        policy.fir.taps = taps as usize;
    }
    match (
        table.get(FIR_DELAY_SAMPLES),
        table.get(FIR_LATENCY_BUDGET_MS),
    ) {
        (Some(_), Some(budget)) => {
            return Err(budget.fail(
                ConfigErrorKind::ConflictingKeys,
                "both a fixed delay (fir_delay_samples) and a latency budget to search \
                 (fir_latency_budget_ms) are given",
                "keep one: a fixed delay, or a budget within which the best delay is searched",
            ))
        }
        (Some(n), None) => {
            let d = n.integer()?;
            if d < 0 || d > 2 * MAX_FIR_TAPS as i64 {
                return Err(n.fail(
                    ConfigErrorKind::OutOfRange,
                    format!(
                        "fir_delay_samples must be from 0 to {}, not {d}",
                        2 * MAX_FIR_TAPS
                    ),
                    "give the delay in whole samples, e.g. 32 (about half the taps suits a \
                     channel with zeros outside the circle)",
                ));
            }
            policy.fir.delay = FirDelay::Fixed {
                samples: d as usize,
            };
        }
        (None, Some(n)) => {
            let ms = n.number()?;
            let one_sample_ms = 1000.0 / sample_rate;
            if ms.is_nan() || ms < one_sample_ms {
                return Err(n.fail(
                    ConfigErrorKind::OutOfRange,
                    format!(
                        "a latency budget of {ms} ms is less than one sample ({one_sample_ms:.4} \
                         ms at {sample_rate} Hz), so no delay can be searched"
                    ),
                    "give a budget of at least one sample, e.g. 5 (ms)",
                ));
            }
            policy.fir.delay = FirDelay::Search {
                budget_seconds: ms / 1000.0,
            };
        }
        (None, None) => {}
    }
    if let Some(n) = table.get(FIR_REGULARIZATION) {
        let lambda = n.number()?;
        if lambda < 0.0 {
            return Err(n.fail(
                ConfigErrorKind::OutOfRange,
                format!("fir_regularization must be 0 or more, not {lambda}"),
                "use 0 for none, or a small value such as 1e-4 to tame the taps",
            ));
        }
        policy.fir.regularization = lambda;
    }
    Ok(())
}
