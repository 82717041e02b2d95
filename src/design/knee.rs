//! The latency-knee method: within a latency budget, the least latency that buys nearly all the
//! correction the budget could buy.
//!
//! Candidates are the rows of the trade-off table (the minimum-phase substitute at no added
//! latency, the least-squares FIR at each latency of the ladder) whose latency fits the budget,
//! whose pre-ringing stays under [`PRE_RINGING_LIMIT_DB`] and whose boost respects the cap. The
//! best is the admissible candidate with the smallest residual error (residuals below
//! [`RESIDUAL_FLOOR_DB`] counting as the floor); the pick is the one with
//! the least latency whose residual is within [`KNEE_MARGIN_DB`] of the best (at equal latency,
//! the smaller residual). The runner-up is what the same rule picks with the pick left out. When
//! an exact inverse exists within the cap there is nothing to trade: it is used.
//!
//! When no candidate keeps its pre-ringing under the limit, the minimum-phase substitute is used
//! (it adds no latency, so it cannot ring ahead of a delay), and the choice says so.

use serde::Serialize;

use super::substitute::{design_inverse, fir_inverse_with};
use super::trade_off::{trade_off, TradeOff, TradeOffRow, LATENCY_LADDER_MS};
use super::{design_exact, judged_band, DesignError, DesignMethod, InverseDesign};
use crate::analysis::ChannelAnalysis;
use crate::model::{FirDelay, FirSettings, InverseMethod, InversePolicy, TransferFunction};

/// A candidate within this many dB of the best residual counts as good as the best.
pub const KNEE_MARGIN_DB: f64 = 1.0;

/// Most pre-ringing a candidate may have (dB against the cascade's whole energy): 1 % of the
/// energy ahead of the main peak (our choice; an echo ahead of every transient is what a
/// delayed inverse trades for its error).
pub const PRE_RINGING_LIMIT_DB: f64 = -20.0;

/// Residual errors below this count as this (dB): beneath the resolution of 20-bit audio, so
/// what separates them is rounding in the design, not correction anyone can hear.
pub const RESIDUAL_FLOOR_DB: f64 = -120.0;

/// The residual the rule compares: the row's, no lower than [`RESIDUAL_FLOOR_DB`].
pub fn judged_residual(row: &TradeOffRow) -> f64 {
    row.figures.residual_error_db.max(RESIDUAL_FLOOR_DB)
}

/// Slack on the boost cap for figures read on a grid (dB).
const CAP_SLACK_DB: f64 = 1e-9;

/// Which rows the rule picks.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct KneeIndices {
    pub picked: usize,
    pub best: usize,
    pub runner_up: Option<usize>,
}

/// True when `row` may be chosen under a budget of `budget_samples` and a cap of `cap_db`.
pub fn admissible(row: &TradeOffRow, budget_samples: usize, cap_db: f64) -> bool {
    row.latency_samples <= budget_samples
        && row.figures.pre_ringing_db <= PRE_RINGING_LIMIT_DB
        && row.peak_boost_db <= cap_db + CAP_SLACK_DB
        && !row.figures.residual_error_db.is_nan()
}

/// The knee among `rows` (see the module comment); `None` when no row is admissible.
pub fn choose_knee(
    rows: &[TradeOffRow],
    budget_samples: usize,
    cap_db: f64,
) -> Option<KneeIndices> {
    let candidates: Vec<usize> = (0..rows.len())
        .filter(|&i| admissible(&rows[i], budget_samples, cap_db))
        .collect();
    let best = *candidates
        .iter()
        .min_by(|&&x, &&y| judged_residual(&rows[x]).total_cmp(&judged_residual(&rows[y])))?;
    let picked = knee_of(rows, &candidates, best)?;
    let rest: Vec<usize> = candidates
        .iter()
        .copied()
        .filter(|&i| i != picked)
        .collect();
    let runner_up = rest
        .iter()
        .copied()
        .min_by(|&x, &y| judged_residual(&rows[x]).total_cmp(&judged_residual(&rows[y])))
        .and_then(|best_rest| knee_of(rows, &rest, best_rest));
    Some(KneeIndices {
        picked,
        best,
        runner_up,
    })
}

/// Among `candidates`, ordered by latency then residual, the first within the margin of `best`.
fn knee_of(rows: &[TradeOffRow], candidates: &[usize], best: usize) -> Option<usize> {
    let bar = judged_residual(&rows[best]) + KNEE_MARGIN_DB;
    let mut ordered = candidates.to_vec();
    ordered.sort_by(|&x, &y| {
        rows[x]
            .latency_samples
            .cmp(&rows[y].latency_samples)
            .then(judged_residual(&rows[x]).total_cmp(&judged_residual(&rows[y])))
    });
    ordered
        .into_iter()
        .find(|&i| judged_residual(&rows[i]) <= bar)
}

/// What the latency-knee method chose, and why.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct KneeChoice {
    pub budget_ms: f64,
    pub margin_db: f64,
    pub pre_ringing_limit_db: f64,
    /// The candidate used (for an exact inverse: its own figures).
    pub picked: Option<TradeOffRow>,
    /// The best residual in the budget, when it is not the pick.
    pub best: Option<TradeOffRow>,
    /// What the rule would pick without the pick.
    pub runner_up: Option<TradeOffRow>,
    /// Why, in one sentence.
    pub why: String,
    /// The table the choice was made from (absent for an exact inverse).
    #[serde(skip)]
    pub table: Option<TradeOff>,
}

/// The latency-knee design (see the module comment).
pub fn knee_inverse(
    channel: &TransferFunction,
    analysis: &ChannelAnalysis,
    policy: &InversePolicy,
    sample_rate: f64,
) -> Result<InverseDesign, DesignError> {
    let budget_ms = 1000.0 * policy.knee_budget_seconds;
    let mut choice = KneeChoice {
        budget_ms,
        margin_db: KNEE_MARGIN_DB,
        pre_ringing_limit_db: PRE_RINGING_LIMIT_DB,
        picked: None,
        best: None,
        runner_up: None,
        why: String::new(),
        table: None,
    };
    if !analysis.channel_stable {
        return design_exact(channel, analysis, sample_rate);
    }
    if let Ok(mut exact) = design_exact(channel, analysis, sample_rate) {
        if exact.peak_boost_db <= policy.boost_cap_db {
            choice.why = format!(
                "an exact stable causal inverse exists within the {:.1} dB cap: nothing to trade",
                policy.boost_cap_db
            );
            exact.knee = Some(choice);
            return Ok(exact);
        }
    }
    let table = trade_off(
        channel,
        analysis,
        policy,
        sample_rate,
        judged_band(policy, sample_rate),
        None,
        &LATENCY_LADDER_MS,
    )?;
    let budget_samples = (policy.knee_budget_seconds * sample_rate).round() as usize;
    let indices = choose_knee(&table.rows, budget_samples, policy.boost_cap_db);
    let mut design = match indices {
        Some(k) => {
            let row = &table.rows[k.picked];
            let best = &table.rows[k.best];
            choice.why = if k.picked == k.best {
                format!(
                    "the smallest residual error within the {budget_ms} ms budget, with \
                     pre-ringing under {PRE_RINGING_LIMIT_DB} dB"
                )
            } else {
                format!(
                    "the least latency within {KNEE_MARGIN_DB} dB of the best residual in the \
                     {budget_ms} ms budget ({:.1} dB at {:.2} ms), with pre-ringing under \
                     {PRE_RINGING_LIMIT_DB} dB",
                    best.figures.residual_error_db, best.latency_ms
                )
            };
            choice.best = (k.picked != k.best).then(|| best.clone());
            choice.runner_up = k.runner_up.map(|i| table.rows[i].clone());
            choice.picked = Some(row.clone());
            build(channel, analysis, policy, sample_rate, row, &table)?
        }
        None => {
            choice.why = format!(
                "no candidate within the {budget_ms} ms budget keeps its pre-ringing under \
                 {PRE_RINGING_LIMIT_DB} dB: the minimum-phase substitute adds no latency"
            );
            choice.picked = table.rows.first().cloned();
            (*table.minimum_phase_design).clone()
        }
    };
    choice.table = Some(table);
    design.knee = Some(choice);
    Ok(design)
}

/// The design behind a row: the minimum-phase substitute, or the FIR at the row's delay, taps
/// and regularisation (raised further only if the exact peak search finds it over the cap).
fn build(
    channel: &TransferFunction,
    analysis: &ChannelAnalysis,
    policy: &InversePolicy,
    sample_rate: f64,
    row: &TradeOffRow,
    table: &TradeOff,
) -> Result<InverseDesign, DesignError> {
    match row.method {
        DesignMethod::LeastSquaresFir => {
            let fir = FirSettings {
                taps: row.taps.unwrap_or(policy.fir.taps),
                delay: FirDelay::Fixed {
                    samples: row.total_delay_samples,
                },
                regularization: row.regularization.unwrap_or(0.0),
            };
            fir_inverse_with(channel, analysis, policy, &fir, sample_rate)
        }
        DesignMethod::MinimumPhase => Ok((*table.minimum_phase_design).clone()),
        DesignMethod::Exact => design_inverse(
            channel,
            analysis,
            &InversePolicy {
                method: InverseMethod::Exact,
                ..policy.clone()
            },
            sample_rate,
        ),
    }
}

#[cfg(test)]
#[path = "knee_tests.rs"]
mod tests;
