//! What latency buys when no exact stable causal inverse exists: the minimum-phase substitute
//! (no added latency, phase left) against the least-squares FIR at a ladder of added latencies,
//! each judged on the cascade channel∘inverse by [`CascadeJudge`].
//!
//! Taps of the FIR at total delay D (channel's bulk delay plus the added latency): the channel's
//! response length (up to its last sample above -60 dB of its peak) plus 2·D, at least [`DEFAULT_FIR_TAPS`] and at most [`MAX_FIR_TAPS`], so that
//! the taps reach D samples ahead of the channel's energy and as far again after it. Each FIR
//! starts from the configured regularisation (0 unless the path is a least-squares FIR) and is
//! regularised further until it respects the boost cap ([`fir_under_cap`]), its peak read on an
//! FFT grid of 16 points per tap.

use serde::Serialize;

use super::cascade_figures::{CascadeFigures, CascadeJudge, JUDGED_FRACTION};
use super::fir_under_cap::fir_under_cap;
use super::least_squares_fir::FirSystem;
use super::substitute::design_inverse;
use super::{DesignError, DesignMethod, InverseDesign};
use crate::analysis::ChannelAnalysis;
use crate::model::{
    InverseMethod, InversePolicy, TransferFunction, DEFAULT_FIR_TAPS, MAX_FIR_TAPS,
};
use crate::numeric::homomorphic::magnitude_on_grid;
use crate::numeric::impulse::decayed_impulse_response;
use crate::numeric::response::Peak;

/// Added latencies tried (ms): 0, then a ladder up to [`LARGEST_LATENCY_MS`].
pub const LATENCY_LADDER_MS: [f64; 8] = [0.0, 0.25, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0];

/// The largest added latency the table tries (ms).
pub const LARGEST_LATENCY_MS: f64 = crate::model::MAX_KNEE_BUDGET_MS;

/// Longest channel impulse response the FIR designs use (samples), as the configured FIR.
const LONGEST_CHANNEL_RESPONSE: usize = 1 << 16;

/// The rule for the taps, in words (for the reports).
pub const TAPS_RULE: &str =
    "the channel's response to -60 dB plus twice the total delay, 256 to 4096 taps";

/// One candidate inverse and its figures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TradeOffRow {
    pub method: DesignMethod,
    /// Latency the inverse adds (samples), beyond the channel's own bulk delay.
    pub latency_samples: usize,
    pub latency_ms: f64,
    /// Delay of the target impulse: bulk delay + added latency (samples).
    pub total_delay_samples: usize,
    #[serde(flatten)]
    pub figures: CascadeFigures,
    /// Largest gain of the inverse (dB).
    pub peak_boost_db: f64,
    /// Taps of an FIR inverse.
    pub taps: Option<usize>,
    /// Order of a recursive inverse (its larger polynomial's degree).
    pub order: Option<usize>,
    /// Regularisation of an FIR inverse, after any raise for the cap.
    pub regularization: Option<f64>,
    /// Broadband reduction applied to respect the cap (dB).
    pub level_reduction_db: f64,
}

/// The whole table of one path.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TradeOff {
    /// The range the band levels are judged in (Hz).
    pub band_low_hz: f64,
    pub band_high_hz: f64,
    /// Bandwidth designator of the bands (3: one-third octaves).
    pub band_fraction: u32,
    pub largest_latency_ms: f64,
    pub taps_rule: &'static str,
    pub boost_cap_db: f64,
    /// The minimum-phase substitute first, then the FIR at each latency, rising.
    pub rows: Vec<TradeOffRow>,
    /// The inverse the config asked for, judged the same way (absent when it failed).
    pub configured: Option<TradeOffRow>,
    /// Points of the FFT grid the figures were computed on.
    pub grid_points: usize,
    /// The minimum-phase substitute of the first row, kept for a method that picks it.
    #[serde(skip)]
    pub minimum_phase_design: Box<InverseDesign>,
}

/// Taps for a total delay `delay` on a channel whose response lasts `channel_length` samples.
pub fn taps_for(channel_length: usize, delay: usize) -> usize {
    (channel_length + 2 * delay).clamp(DEFAULT_FIR_TAPS, MAX_FIR_TAPS)
}

/// The table for one path. `configured` is the design the config asked for, when there is one:
/// a minimum-phase design is reused rather than built again (on long channels it is most of the
/// work). `latencies_ms` are the added latencies for the FIR (the ladder, or part of it).
pub fn trade_off(
    channel: &TransferFunction,
    analysis: &ChannelAnalysis,
    policy: &InversePolicy,
    sample_rate: f64,
    band_hz: (f64, f64),
    configured: Option<&InverseDesign>,
    latencies_ms: &[f64],
) -> Result<TradeOff, DesignError> {
    let h = decayed_impulse_response(&channel.b, &channel.a, LONGEST_CHANNEL_RESPONSE);
    let bulk = analysis.bulk_delay;
    let mut latencies: Vec<usize> = latencies_ms
        .iter()
        .map(|ms| (ms * sample_rate / 1000.0).round() as usize)
        .collect();
    latencies.dedup();
    let longest_delay = bulk + latencies.iter().copied().max().unwrap_or(0);
    let reach = response_reach(&h);
    let longest_taps = taps_for(reach, longest_delay);

    let minimum_phase = match configured {
        Some(d) if d.method == DesignMethod::MinimumPhase => d.clone(),
        _ => design_inverse(
            channel,
            analysis,
            &InversePolicy {
                method: InverseMethod::MinimumPhase,
                ..policy.clone()
            },
            sample_rate,
        )?,
    };
    let recursive_length = |d: &InverseDesign| {
        if d.inverse.a.len() > 1 {
            (d.decay_60db_seconds * sample_rate).min(1e9) as usize + d.inverse.b.len()
        } else {
            d.inverse.b.len()
        }
    };
    let longest_inverse = recursive_length(&minimum_phase)
        .max(longest_taps)
        .max(configured.map_or(0, recursive_length));
    let judge = CascadeJudge::new(channel, h.len(), longest_inverse, sample_rate, band_hz);

    let mut rows = vec![design_row(&judge, &minimum_phase, sample_rate)];
    let system = FirSystem::new(&h, longest_taps);
    let start = if policy.method == InverseMethod::LeastSquaresFir {
        policy.fir.regularization
    } else {
        0.0
    };
    for latency in latencies {
        let delay = bulk + latency;
        let taps = taps_for(reach, delay);
        let Some(capped) = fir_under_cap(
            |lambda| system.solve(taps, delay, lambda),
            grid_peak,
            start,
            policy.boost_cap_db,
        ) else {
            continue;
        };
        let figures = judge.judge(&capped.solution.taps, &[1.0], delay);
        rows.push(TradeOffRow {
            method: DesignMethod::LeastSquaresFir,
            latency_samples: latency,
            latency_ms: 1000.0 * latency as f64 / sample_rate,
            total_delay_samples: delay,
            figures,
            peak_boost_db: capped.peak.level_db,
            taps: Some(taps),
            order: None,
            regularization: Some(capped.solution.regularization),
            level_reduction_db: capped.level_reduction_db,
        });
    }
    Ok(TradeOff {
        band_low_hz: band_hz.0,
        band_high_hz: band_hz.1,
        band_fraction: JUDGED_FRACTION,
        largest_latency_ms: latencies_ms.iter().copied().fold(0.0, f64::max),
        taps_rule: TAPS_RULE,
        boost_cap_db: policy.boost_cap_db,
        rows,
        configured: configured.map(|d| design_row(&judge, d, sample_rate)),
        grid_points: judge.grid_size(),
        minimum_phase_design: Box::new(minimum_phase),
    })
}

/// Samples up to the last one above -60 dB of the response's peak.
fn response_reach(h: &[f64]) -> usize {
    let peak = h.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    h.iter()
        .rposition(|x| x.abs() > 1e-3 * peak)
        .map_or(1, |i| i + 1)
}

/// A design as a row of the table.
fn design_row(judge: &CascadeJudge, d: &InverseDesign, sample_rate: f64) -> TradeOffRow {
    let delay = d.residual_delay_samples + d.added_latency_samples;
    let recursive = d.inverse.a.len() > 1;
    let level_reduction_db = d.fir.as_ref().map_or(
        d.boost_cap.as_ref().map_or(0.0, |c| c.level_reduction_db),
        |f| f.level_reduction_db,
    );
    TradeOffRow {
        method: d.method,
        latency_samples: d.added_latency_samples,
        latency_ms: 1000.0 * d.added_latency_samples as f64 / sample_rate,
        total_delay_samples: delay,
        figures: judge.judge(&d.inverse.b, &d.inverse.a, delay),
        peak_boost_db: d.peak_boost_db,
        taps: (!recursive).then_some(d.inverse.b.len()),
        order: recursive.then(|| d.inverse.b.len().max(d.inverse.a.len()) - 1),
        regularization: d.fir.as_ref().map(|f| f.regularization),
        level_reduction_db,
    }
}

/// Largest gain of FIR taps, read on an FFT grid of 16 points per tap (at least 2¹³): between
/// grid points an L-tap response moves by well under 0.1 dB at that density (common practice).
fn grid_peak(taps: &[f64]) -> Peak {
    let size = (16 * taps.len()).max(1 << 13).next_power_of_two();
    let magnitude = magnitude_on_grid(taps, size);
    let (i, m) = magnitude[..=size / 2]
        .iter()
        .enumerate()
        .fold(
            (0, 0.0f64),
            |(i, m), (k, &x)| if x > m { (k, x) } else { (i, m) },
        );
    Peak {
        level_db: 20.0 * m.log10(),
        omega: std::f64::consts::TAU * i as f64 / size as f64,
    }
}
