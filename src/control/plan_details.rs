//! What `redress run -v` adds: each path's design and realization in figures, at start-up and
//! after every accepted reload, so a log shows exactly what is running without a `check`.

use log::debug;

use crate::pipeline::LinkPlan;

/// Logs one debug line per path (nothing unless the log level is debug).
pub fn log_plan_details(plan: &LinkPlan) {
    if !log::log_enabled!(log::Level::Debug) {
        return;
    }
    for (i, p) in plan.paths.iter().enumerate() {
        let (Some(Ok(design)), Some(realization)) = (&p.design, p.runnable()) else {
            continue;
        };
        let order = design.inverse.b.len().max(design.inverse.a.len()) - 1;
        debug!(
            "path {} `{}` (audio channels {:?}): {} of order {order} in {} with {} \
             coefficients; peak boost {:.2} dB at {:.0} Hz; 60 dB decay {:.3} ms; total delay \
             {} samples ({} residual + {} added); largest pole radius {:.6} after rounding{}",
            i + 1,
            p.path.label,
            p.path.channels,
            design.method.name(),
            realization.structure.name(),
            match realization.precision {
                crate::model::CoefficientPrecision::F32 => "f32",
                crate::model::CoefficientPrecision::F64 => "f64",
            },
            design.peak_boost_db,
            design.peak_boost_hz,
            design.decay_60db_seconds * 1000.0,
            design.residual_delay_samples + design.added_latency_samples,
            design.residual_delay_samples,
            design.added_latency_samples,
            realization.max_pole_radius,
            p.switched
                .as_ref()
                .map(|s| format!("; switched from {}", s.requested.name()))
                .unwrap_or_default()
        );
    }
}
