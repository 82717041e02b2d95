//! How well the fitted model's inverse undoes the measured link, on the measurement itself: the
//! recording, equalized with the inverse `check` would run, against the stimulus.
//!
//! Before: the recording against the stimulus (both lined up at the onset). After: the
//! equalized recording against the stimulus delayed by what the inverse cannot undo (the
//! relative delay between channels, and the latency a least-squares FIR inverse adds). The
//! measure is [`crate::io::error_metric`]'s.

use super::error::MeasureError;
use super::identify::Identification;
use super::recording_checks::CheckedPair;
use crate::io::{equalizer_for, error_db_per_channel, ErrorMeasure, DEFAULT_BLOCK_FRAMES};
use crate::pipeline::LinkPlan;

/// Error of the measurement before and after equalizing it.
#[derive(Debug, Clone, PartialEq)]
pub struct EqualizedError {
    pub before: ErrorMeasure,
    pub after: ErrorMeasure,
    /// Per channel: the delay the reference was given before and after (frames).
    pub link_delays: Vec<usize>,
    pub cascade_delays: Vec<usize>,
}

/// Equalizes the recording in `pair` with `plan` (the fitted link's) and measures the error.
pub fn equalized_error(
    id: &Identification,
    pair: &CheckedPair,
    plan: &LinkPlan,
) -> Result<EqualizedError, MeasureError> {
    let mut equalizer = equalizer_for(plan).map_err(|_| MeasureError::NotRunnable {
        problems: plan.problems(),
    })?;
    let width = pair.response.len();
    let longest_model = id
        .channels
        .iter()
        .map(|c| c.fir.taps.len())
        .max()
        .unwrap_or(0);
    let frames = pair
        .response
        .iter()
        .enumerate()
        .map(|(c, r)| {
            let wanted = pair.stimulus_for(c).len() + longest_model;
            r.len().saturating_sub(id.common_delay).min(wanted)
        })
        .min()
        .unwrap_or(0);
    let mut recorded = vec![0.0f32; frames * width];
    let mut reference = vec![0.0f32; frames * width];
    for c in 0..width {
        let r = &pair.response[c][id.common_delay..];
        let s = pair.stimulus_for(c);
        for n in 0..frames {
            recorded[n * width + c] = r[n] as f32;
            reference[n * width + c] = s.get(n).copied().unwrap_or(0.0) as f32;
        }
    }
    let mut equalized = vec![0.0f32; recorded.len()];
    for (block_in, block_out) in recorded
        .chunks(DEFAULT_BLOCK_FRAMES * width)
        .zip(equalized.chunks_mut(DEFAULT_BLOCK_FRAMES * width))
    {
        equalizer.process_interleaved(block_in, block_out);
    }
    let mut link_delays = Vec::with_capacity(width);
    let mut cascade_delays = Vec::with_capacity(width);
    for c in 0..width {
        let (bulk, added) = plan.path_for_channel(c).map_or((0, 0), |p| {
            let bulk = p.analysis.as_ref().map_or(0, |a| a.bulk_delay);
            let added = match &p.design {
                Some(Ok(d)) => d.added_latency_samples,
                _ => 0,
            };
            (bulk, added)
        });
        link_delays.push(bulk);
        cascade_delays.push(bulk + added);
    }
    let metric = |e| MeasureError::Numerical {
        what: format!("the equalized error could not be measured: {e}"),
    };
    let before = error_db_per_channel(&recorded, &reference, &link_delays, 0).map_err(metric)?;
    let after = error_db_per_channel(&equalized, &reference, &cascade_delays, 0).map_err(metric)?;
    Ok(EqualizedError {
        before,
        after,
        link_delays,
        cascade_delays,
    })
}
