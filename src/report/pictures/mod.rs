//! Pictures of a link as SVG files: per path, the pole–zero diagrams (channel, exact inverse,
//! and the substitute when one is used), the responses of channel, inverse and cascade, the
//! inverse's impulse response and, for a path with no exact inverse, the latency–error picture;
//! per measured channel, what the measurement found. An `index.html` in the same folder shows
//! them all with the text report.
//!
//! Presentation only: every figure comes from the plan or the measurement; the pictures only
//! evaluate responses on a frequency grid to draw them.

mod impulse;
mod index_page;
mod measurement;
mod pole_zero;
mod responses;
mod style;
mod trade_off;

use std::path::{Path, PathBuf};

pub use impulse::draw_impulse;
pub use index_page::{write_index, IndexSection};
pub use measurement::draw_measurement;
pub use pole_zero::{draw_pole_zero, PoleZeroPanel};
pub use responses::{draw_responses, Curve, ResponsePicture};
pub use style::PictureError;
pub use trade_off::draw_trade_off;

use crate::design::DesignMethod;
use crate::measure::MeasurementOutcome;
use crate::numeric::poly::leading_zeros;
use crate::pipeline::LinkPlan;

/// Writes every path's pictures into `dir` (created when missing) and returns one index
/// section per path. `trusted_hz` shades a measured link's trusted band, per path.
pub fn write_link_pictures(
    plan: &LinkPlan,
    dir: &Path,
    trusted_hz: &[Option<(f64, f64)>],
) -> Result<Vec<IndexSection>, PictureError> {
    std::fs::create_dir_all(dir).map_err(|e| PictureError {
        file: dir.to_path_buf(),
        why: e.to_string(),
    })?;
    let fs = plan.sample_rate;
    let mut sections = Vec::new();
    for (i, p) in plan.paths.iter().enumerate() {
        let n = i + 1;
        let label = &p.path.label;
        let channel = &p.path.channel;
        let design = p.design.as_ref().and_then(|d| d.as_ref().ok());
        let mut files = Vec::new();

        let mut panels = vec![PoleZeroPanel::from_coefficients(
            format!("channel H(z): {label}"),
            &channel.b,
            &channel.a,
        )];
        let stripped = &channel.b[leading_zeros(&channel.b).min(channel.b.len())..];
        match design {
            Some(d) if d.method == DesignMethod::Exact => {
                panels.push(PoleZeroPanel::from_coefficients(
                    "inverse G(z): exact, 1/H".into(),
                    &d.inverse.b,
                    &d.inverse.a,
                ));
            }
            Some(d) => {
                panels.push(PoleZeroPanel::from_coefficients(
                    "exact inverse 1/H(z): not used".into(),
                    &channel.a,
                    stripped,
                ));
                panels.push(PoleZeroPanel::from_coefficients(
                    format!("inverse G(z) used: {}", d.method.name()),
                    &d.inverse.b,
                    &d.inverse.a,
                ));
            }
            None => {
                panels.push(PoleZeroPanel::from_coefficients(
                    "exact inverse 1/H(z): no inverse designed".into(),
                    &channel.a,
                    stripped,
                ));
            }
        }
        let file = dir.join(format!("path{n}_pole_zero.svg"));
        draw_pole_zero(&file, &panels)?;
        files.push(file);

        let bulk = leading_zeros(&channel.b);
        let picture = ResponsePicture {
            title: format!("path {n}: {label} — channel, inverse and what is left"),
            sample_rate: fs,
            channel: Curve {
                b: channel.b.clone(),
                a: channel.a.clone(),
                delay: bulk,
            },
            inverse: design.map(|d| Curve {
                b: d.inverse.b.clone(),
                a: d.inverse.a.clone(),
                delay: d.added_latency_samples,
            }),
            trusted_hz: trusted_hz.get(i).copied().flatten(),
        };
        let file = dir.join(format!("path{n}_response.svg"));
        draw_responses(&file, &picture)?;
        files.push(file);

        if let Some(d) = design {
            let file = dir.join(format!("path{n}_inverse_impulse.svg"));
            draw_impulse(
                &file,
                &format!(
                    "path {n}: impulse response of the inverse ({})",
                    d.method.name()
                ),
                &d.inverse.b,
                &d.inverse.a,
                fs,
            )?;
            files.push(file);
        }
        if let Some(Ok(table)) = &p.trade_off {
            let file = dir.join(format!("path{n}_trade_off.svg"));
            draw_trade_off(
                &file,
                &format!("path {n}: residual error against added latency"),
                table,
            )?;
            files.push(file);
        }
        sections.push(IndexSection {
            heading: format!("path {n}: {label}"),
            files,
        });
    }
    Ok(sections)
}

/// Writes the measurement's pictures (one per channel, then the fitted link's) and the index
/// into `dir`; `report_text` is shown at the top of the index. Returns the index's path.
pub fn write_measurement_report(
    outcome: &MeasurementOutcome,
    dir: &Path,
    report_text: &str,
) -> Result<PathBuf, PictureError> {
    std::fs::create_dir_all(dir).map_err(|e| PictureError {
        file: dir.to_path_buf(),
        why: e.to_string(),
    })?;
    let id = &outcome.identification;
    let fs = f64::from(id.sample_rate);
    let mut sections = Vec::new();
    for fit in &id.channels {
        let file = dir.join(format!("measured_channel{}.svg", fit.channel));
        draw_measurement(&file, fit, fs, outcome.equalized.as_ref().ok())?;
        sections.push(IndexSection {
            heading: format!("channel {} as measured", fit.channel),
            files: vec![file],
        });
    }
    let trusted: Vec<Option<(f64, f64)>> = outcome
        .link
        .paths
        .iter()
        .map(|p| {
            p.channels
                .first()
                .and_then(|&c| id.channels.get(c))
                .and_then(|f| f.trusted.band_hz)
        })
        .collect();
    sections.extend(write_link_pictures(&outcome.plan, dir, &trusted)?);
    // The linearity check as JSON beside the pictures, for tools that read the measurement.
    let linearity = dir.join("linearity.json");
    let text = serde_json::to_string_pretty(&crate::measure::linearity_json(&outcome.linearity))
        .unwrap_or_default();
    std::fs::write(&linearity, text + "\n").map_err(|e| PictureError {
        file: linearity.clone(),
        why: e.to_string(),
    })?;
    write_index(dir, "redress: link measurement", report_text, &sections)
}
