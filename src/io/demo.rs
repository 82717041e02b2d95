//! The self-contained demonstration: generated programme → simulated link → equalizer, with the
//! error against the original before and after equalizing. No sound card, no files.

use std::fmt::Write;

use super::error_metric::{error_db_per_channel, format_db, ErrorMeasure};
use super::offline::{equalizer_for, OfflineError};
use super::programme::{generate, ProgrammeSpec};
use super::simulated_link::SimulatedLink;
use super::wav::DEFAULT_BLOCK_FRAMES;
use crate::model::Link;
use crate::pipeline::LinkPlan;

/// What the demo measured.
#[derive(Debug, Clone, PartialEq)]
pub struct DemoOutcome {
    pub seconds: f64,
    pub channels: usize,
    pub sample_rate: f64,
    /// Per audio channel: the delay the link adds that no causal inverse can undo (samples).
    pub link_delays: Vec<usize>,
    /// Per audio channel: the delay of link + inverse together (link delay + any latency the
    /// inverse adds on purpose).
    pub cascade_delays: Vec<usize>,
    /// The link's output against the original (delayed by the link's delay).
    pub error_before: ErrorMeasure,
    /// The equalized output against the original (delayed by the cascade's delay).
    pub error_after: ErrorMeasure,
    /// Largest absolute sample of the original, the link's output and the equalized output.
    pub peak_original: f32,
    pub peak_distorted: f32,
    pub peak_equalized: f32,
}

impl DemoOutcome {
    /// The demo's closing lines, for the command-line shell to print.
    pub fn describe(&self) -> String {
        let mut text = String::new();
        let _ = writeln!(
            text,
            "demo: {} s of generated programme (tones, noise bursts, clicks), {} channel{} at {} Hz",
            self.seconds,
            self.channels,
            if self.channels == 1 { "" } else { "s" },
            self.sample_rate
        );
        let _ = writeln!(
            text,
            "  error before equalizing  {:>22}   (link output against the original, delayed {})",
            format_db(self.error_before.db),
            delays(&self.link_delays)
        );
        let _ = writeln!(
            text,
            "  error after equalizing   {:>22}   (equalized output against the original, delayed {})",
            format_db(self.error_after.db),
            delays(&self.cascade_delays)
        );
        let _ = writeln!(
            text,
            "  peak levels              original {:.3}, through the link {:.3}, equalized {:.3}",
            self.peak_original, self.peak_distorted, self.peak_equalized
        );
        text
    }
}

fn delays(per_channel: &[usize]) -> String {
    let first = per_channel.first().copied().unwrap_or(0);
    if per_channel.iter().all(|&d| d == first) {
        format!("{first} sample{}", if first == 1 { "" } else { "s" })
    } else {
        let list: Vec<String> = per_channel.iter().map(|d| d.to_string()).collect();
        format!("{} samples per channel", list.join("/"))
    }
}

/// Runs the demo on `link`, whose plan is `plan`, with material made to `spec` (its rate and
/// channel count must be the link's).
pub fn run_demo(
    link: &Link,
    plan: &LinkPlan,
    spec: &ProgrammeSpec,
) -> Result<DemoOutcome, OfflineError> {
    let mut equalizer = equalizer_for(plan)?;
    let original = generate(spec);
    let distorted = SimulatedLink::new(link)?.apply(&original);

    // Block by block, as a file or a live stream would be run, so the state carries across.
    let width = spec.channels;
    let mut equalized = vec![0.0f32; distorted.len()];
    for (block_in, block_out) in distorted
        .chunks(DEFAULT_BLOCK_FRAMES * width)
        .zip(equalized.chunks_mut(DEFAULT_BLOCK_FRAMES * width))
    {
        equalizer.process_interleaved(block_in, block_out);
    }

    let mut link_delays = Vec::with_capacity(width);
    let mut cascade_delays = Vec::with_capacity(width);
    for channel in 0..width {
        let (link_delay, inverse_latency) = plan
            .paths
            .iter()
            .find(|p| p.path.channels.contains(&channel))
            .map_or((0, 0), |p| {
                let bulk = p.analysis.as_ref().map_or(0, |a| a.bulk_delay);
                let added = match &p.design {
                    Some(Ok(d)) => d.added_latency_samples,
                    _ => 0,
                };
                (bulk, added)
            });
        link_delays.push(link_delay);
        cascade_delays.push(link_delay + inverse_latency);
    }
    let error_before = error_db_per_channel(&distorted, &original, &link_delays, 0)?;
    let error_after = error_db_per_channel(&equalized, &original, &cascade_delays, 0)?;
    let peak = |x: &[f32]| x.iter().fold(0.0f32, |m, v| m.max(v.abs()));
    Ok(DemoOutcome {
        seconds: spec.frames as f64 / spec.sample_rate,
        channels: width,
        sample_rate: spec.sample_rate,
        link_delays,
        cascade_delays,
        error_before,
        error_after,
        peak_original: peak(&original),
        peak_distorted: peak(&distorted),
        peak_equalized: peak(&equalized),
    })
}
