//! The trade-off table and the latency-knee choice as text: one row per candidate, aligned.

use std::fmt::Write;

use super::numbers::{fixed, significant};
use super::schema::{KneeEntry, TradeOffEntry, TradeOffRowEntry};

/// The table under a path's inverse.
pub(super) fn trade_off_block(out: &mut String, t: &TradeOffEntry) {
    let _ = writeln!(
        out,
        "  latency-error trade-off (no exact stable causal inverse within the {} dB cap)",
        significant(t.boost_cap_db)
    );
    let _ = writeln!(
        out,
        "    judged on channel∘inverse against a delayed impulse, bands 1/{}-octave from {} to {} Hz",
        t.band_fraction,
        significant(t.band_low_hz),
        significant(t.band_high_hz),
    );
    let _ = writeln!(out, "    FIR taps: {}", t.taps_rule);
    let _ = writeln!(
        out,
        "    {:<26}{:>9}{:>11}{:>20}{:>13}{:>9}  cost",
        "inverse", "latency", "residual", "worst band", "pre-ringing", "boost"
    );
    for row in &t.rows {
        table_row(out, row, "");
    }
    if let Some(c) = &t.configured {
        table_row(out, c, "  <- configured");
    }
    let _ = writeln!(
        out,
        "    (latency in ms beyond the link's own delay; residual, worst band, pre-ringing and \
         boost in dB)"
    );
}

fn table_row(out: &mut String, r: &TradeOffRowEntry, note: &str) {
    let name = match r.method.as_str() {
        "least_squares_fir" => "least-squares FIR",
        "minimum_phase" => "minimum-phase substitute",
        _ => "exact inverse",
    };
    let band = match (r.worst_band_deviation_db, r.worst_band_hz) {
        (Some(d), Some(hz)) => format!("{:+.1} at {} Hz", round_tenth(d), significant(hz)),
        _ => "no band".to_string(),
    };
    let cost = match (r.taps, r.order) {
        (Some(taps), _) => format!("{taps} taps"),
        (_, Some(order)) => format!("order {order}"),
        _ => String::new(),
    };
    let _ = writeln!(
        out,
        "    {name:<26}{:>9}{:>11}{band:>20}{:>13}{:>9}  {cost}{note}",
        fixed(r.latency_ms, 2),
        fixed(r.residual_error_db, 1),
        db_or_none(r.pre_ringing_db),
        fixed(r.peak_boost_db, 1),
    );
}

/// A signed figure rounded to a tenth, with "-0.0" written "0.0" (printed with `{:+}`: "+0.0").
fn round_tenth(x: f64) -> f64 {
    let r = (x * 10.0).round() / 10.0;
    if r == 0.0 {
        0.0
    } else {
        r
    }
}

fn db_or_none(db: f64) -> String {
    if db.is_finite() {
        fixed(db, 1)
    } else {
        "none".to_string()
    }
}

/// What the latency-knee method picked, why, and the runner-up.
pub(super) fn knee_lines(out: &mut String, k: &KneeEntry) {
    let _ = writeln!(
        out,
        "    chosen by       the latency knee (budget {} ms, margin {} dB, pre-ringing under {} dB)",
        significant(k.budget_ms),
        significant(k.margin_db),
        significant(k.pre_ringing_limit_db)
    );
    if let Some(p) = &k.picked {
        let _ = writeln!(out, "    picked          {}", summary(p));
    }
    let _ = writeln!(out, "    because         {}", k.why);
    if let Some(b) = &k.best {
        let _ = writeln!(out, "    best in budget  {}", summary(b));
    }
    match &k.runner_up {
        Some(r) => {
            let _ = writeln!(out, "    runner-up       {}", summary(r));
        }
        None if k.picked.is_some() => {
            let _ = writeln!(
                out,
                "    runner-up       none (no other candidate qualifies)"
            );
        }
        None => {}
    }
}

fn summary(r: &TradeOffRowEntry) -> String {
    format!(
        "{} at {} ms: residual {} dB, pre-ringing {}, boost {} dB",
        r.method_name,
        fixed(r.latency_ms, 2),
        fixed(r.residual_error_db, 1),
        if r.pre_ringing_db.is_finite() {
            format!("{} dB", fixed(r.pre_ringing_db, 1))
        } else {
            "none".to_string()
        },
        fixed(r.peak_boost_db, 1)
    )
}
