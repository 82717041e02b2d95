//! The delay each channel's design adds on purpose: 0 for an exact IIR inverse or a
//! minimum-phase substitute, D samples for a delayed least-squares FIR inverse. The link's own
//! bulk delay is reported beside it: it stays in the cascade, but the inverse does not add it.

use serde::Serialize;

use crate::pipeline::LinkPlan;

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ChannelLatency {
    pub channel: usize,
    pub path: String,
    /// `exact`, `minimum_phase` or `least_squares_fir` (null when the path has no design).
    pub method: Option<String>,
    /// The same in plain words ("exact inverse", …), as `check` names it.
    pub method_name: Option<String>,
    /// Structure the channel runs (`direct_form_2t`, `sections`, `lattice_ladder`).
    pub structure: Option<String>,
    /// The same in plain words ("second-order sections", …).
    pub structure_name: Option<String>,
    pub order: Option<usize>,
    /// Delay the inverse adds (InverseDesign::added_latency_samples).
    pub algorithmic_latency_samples: Option<usize>,
    pub algorithmic_latency_ms: Option<f64>,
    /// The link's own delay, which no causal inverse can remove (not added by redress).
    pub link_bulk_delay_samples: Option<usize>,
}

/// One entry per audio channel, in channel order.
pub fn channel_latencies(plan: &LinkPlan) -> Vec<ChannelLatency> {
    (0..plan.channel_count)
        .map(|channel| {
            let path = plan.path_for_channel(channel);
            let design = path
                .and_then(|p| p.design.as_ref())
                .and_then(|d| d.as_ref().ok());
            let realization = path.and_then(|p| p.runnable());
            ChannelLatency {
                channel,
                path: path.map_or_else(String::new, |p| p.path.label.clone()),
                method: design.map(|d| method_key(d.method)),
                method_name: design.map(|d| d.method.name().to_string()),
                structure: realization.map(|r| structure_key(r.structure)),
                structure_name: realization.map(|r| r.structure.name().to_string()),
                order: realization.map(|r| r.filter.order()),
                algorithmic_latency_samples: design.map(|d| d.added_latency_samples),
                algorithmic_latency_ms: design
                    .map(|d| 1000.0 * d.added_latency_samples as f64 / plan.sample_rate),
                link_bulk_delay_samples: design.map(|d| d.residual_delay_samples),
            }
        })
        .collect()
}

fn method_key(method: crate::design::DesignMethod) -> String {
    serde_json::to_value(method)
        .ok()
        .and_then(|v| v.as_str().map(str::to_string))
        .unwrap_or_else(|| method.name().to_string())
}

fn structure_key(structure: crate::model::Structure) -> String {
    serde_json::to_value(structure)
        .ok()
        .and_then(|v| v.as_str().map(str::to_string))
        .unwrap_or_else(|| structure.name().to_string())
}
