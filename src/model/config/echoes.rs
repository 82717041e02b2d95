//! `[path.echoes]`: the channel as a direct path plus delayed reflections,
//! B(z) = direct_gain·z^(−D) + Σ gainₖ·z^(−(D + delayₖ)), A(z) = 1.
//!
//! Conventions, chosen so that each tap reads the way a reflection is measured:
//! - `direct_delay_samples` (D, default 0) is the transmission delay of the direct path; it
//!   becomes D leading zero taps of B (a bulk delay, which an inverse cannot undo).
//! - A tap's delay counts from the direct arrival, not from the input: a reflection always
//!   arrives after the direct path, so a tap delay must be at least one sample.
//! - `delay_ms` is converted to samples at the link's sample rate and rounded to the nearest
//!   sample (halves away from zero); it must come to at least one sample.
//! - Taps that land on the same sample add their gains (two reflections arriving together
//!   superpose); this is how two `delay_ms` values a fraction of a sample apart behave.

use super::schema::{
    DELAY_MS, DELAY_SAMPLES, DIRECT_DELAY_SAMPLES, DIRECT_GAIN, ECHOES_TABLE, GAIN, TAPS, TAP_TABLE,
};
use super::tree::Node;
use crate::model::error::{ConfigError, ConfigErrorKind};
use crate::model::{TransferFunction, MAX_ORDER};

pub(crate) fn read_echoes(
    node: &Node<'_>,
    sample_rate: f64,
) -> Result<TransferFunction, ConfigError> {
    let table = node.table(&ECHOES_TABLE)?;
    let direct_gain = match table.get(DIRECT_GAIN) {
        None => 1.0,
        Some(n) => n.number()?,
    };
    let direct_delay = match table.get(DIRECT_DELAY_SAMPLES) {
        None => 0,
        Some(n) => {
            let d = n.integer()?;
            if d < 0 {
                return Err(n.fail(
                    ConfigErrorKind::OutOfRange,
                    "a negative delay would mean the output comes before the input",
                    "give the transmission delay in samples, 0 or more",
                ));
            }
            if d > MAX_ORDER as i64 {
                return Err(n.fail(
                    ConfigErrorKind::TooLong,
                    format!("a delay of {d} samples exceeds the longest supported, {MAX_ORDER}"),
                    "delays this long are better removed before the link is modelled",
                ));
            }
            d as usize
        }
    };

    let mut taps = Vec::new();
    if let Some(list) = table.get(TAPS) {
        for tap in list.array()? {
            taps.push(read_tap(&tap, sample_rate, direct_delay)?);
        }
    }

    let last = taps.iter().map(|&(at, _)| at).max().unwrap_or(0);
    let mut b = vec![0.0; direct_delay.max(last) + 1];
    b[direct_delay] += direct_gain;
    for (at, gain) in taps {
        b[at] += gain;
    }
    if b.iter().all(|&c| c == 0.0) {
        return Err(node.fail(
            ConfigErrorKind::AllZero,
            "the direct path and the taps add up to no signal at all",
            "give the direct path a non-zero direct_gain, or add a tap with a non-zero gain",
        ));
    }
    Ok(TransferFunction::new(b, vec![1.0]))
}

/// One tap: (index into B, gain).
fn read_tap(
    tap: &Node<'_>,
    sample_rate: f64,
    direct_delay: usize,
) -> Result<(usize, f64), ConfigError> {
    let table = tap.table(&TAP_TABLE)?;
    let gain = table
        .require(
            GAIN,
            "give the reflection's gain relative to the input, e.g. gain = 0.3",
        )?
        .number()?;
    let (delay_node, delay) = match (table.get(DELAY_SAMPLES), table.get(DELAY_MS)) {
        (Some(n), None) => {
            let d = n.integer()?;
            (n, d)
        }
        (None, Some(n)) => {
            let ms = n.number()?;
            if ms <= 0.0 {
                return Err(not_after_direct(&n, &format!("{ms} ms")));
            }
            let samples = (ms * sample_rate / 1000.0).round();
            if samples < 1.0 {
                return Err(n.fail(
                    ConfigErrorKind::OutOfRange,
                    format!(
                        "{ms} ms is under half a sample at {sample_rate} Hz, so it rounds to no \
                         delay at all"
                    ),
                    "a reflection arriving with the direct path belongs in direct_gain; \
                     otherwise give at least one sample's delay",
                ));
            }
            // Clamped so the cast below is exact; anything this large fails the length check.
            (n, samples.min((2 * MAX_ORDER) as f64) as i64)
        }
        (Some(_), Some(ms)) => {
            return Err(ms.fail(
                ConfigErrorKind::ConflictingKeys,
                "this tap gives both delay_samples and delay_ms",
                "keep one of them",
            ))
        }
        (None, None) => {
            return Err(table.missing(
                DELAY_SAMPLES,
                ConfigErrorKind::MissingKey,
                "this tap has no delay",
                "give delay_samples = … (whole samples) or delay_ms = … (milliseconds)",
            ))
        }
    };
    if delay < 1 {
        return Err(not_after_direct(&delay_node, &format!("{delay} samples")));
    }
    let at = (direct_delay as i64).saturating_add(delay);
    if at > MAX_ORDER as i64 {
        return Err(delay_node.fail(
            ConfigErrorKind::TooLong,
            format!(
                "this tap lands {at} samples after the input (direct delay {direct_delay} + \
                 {delay}); the longest supported is {MAX_ORDER}"
            ),
            "leave out reflections this late, or shorten the direct delay",
        ));
    }
    Ok((at as usize, gain))
}

fn not_after_direct(node: &Node<'_>, delay: &str) -> ConfigError {
    node.fail(
        ConfigErrorKind::OutOfRange,
        format!(
            "a tap delay of {delay}: tap delays count from the direct arrival, and a \
             reflection arrives after it"
        ),
        "give a delay of at least one sample; a reflection arriving with the direct path \
         belongs in direct_gain",
    )
}
