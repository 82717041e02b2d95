//! The trade-off table and the latency-knee choice → the report's data.

use super::schema::{KneeEntry, TradeOffEntry, TradeOffRowEntry};
use crate::design::{DesignMethod, KneeChoice, TradeOff, TradeOffRow};

/// The config's spelling of a design method.
pub fn method_key(method: DesignMethod) -> &'static str {
    match method {
        DesignMethod::Exact => "exact",
        DesignMethod::MinimumPhase => "minimum_phase",
        DesignMethod::LeastSquaresFir => "least_squares_fir",
    }
}

pub fn trade_off_entry(t: &TradeOff) -> TradeOffEntry {
    TradeOffEntry {
        band_low_hz: t.band_low_hz,
        band_high_hz: t.band_high_hz,
        band_fraction: t.band_fraction,
        largest_latency_ms: t.largest_latency_ms,
        taps_rule: t.taps_rule.to_string(),
        boost_cap_db: t.boost_cap_db,
        rows: t.rows.iter().map(row_entry).collect(),
        configured: t.configured.as_ref().map(row_entry),
    }
}

pub fn knee_entry(k: &KneeChoice) -> KneeEntry {
    KneeEntry {
        budget_ms: k.budget_ms,
        margin_db: k.margin_db,
        pre_ringing_limit_db: k.pre_ringing_limit_db,
        picked: k.picked.as_ref().map(row_entry),
        best: k.best.as_ref().map(row_entry),
        runner_up: k.runner_up.as_ref().map(row_entry),
        why: k.why.clone(),
    }
}

fn row_entry(r: &TradeOffRow) -> TradeOffRowEntry {
    TradeOffRowEntry {
        method: method_key(r.method).to_string(),
        method_name: r.method.name().to_string(),
        latency_samples: r.latency_samples,
        latency_ms: r.latency_ms,
        residual_error_db: r.figures.residual_error_db,
        worst_band_deviation_db: r.figures.worst_band_deviation_db,
        worst_band_hz: r.figures.worst_band_hz,
        pre_ringing_db: r.figures.pre_ringing_db,
        peak_boost_db: r.peak_boost_db,
        taps: r.taps,
        order: r.order,
        regularization: r.regularization,
        level_reduction_db: r.level_reduction_db,
    }
}
