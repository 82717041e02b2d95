//! The inverse's impulse response over time: how long it rings, and whether it reaches ahead of
//! its main tap (a delayed FIR inverse) or only after it (a causal IIR inverse).

use std::path::Path;

use plotters::prelude::*;

use super::style::{caption, failed, label, y_range, PictureError, GUIDE, INVERSE};
use crate::numeric::impulse::decayed_impulse_response;

/// Most samples drawn: past this the tail is below what a picture can show anyway.
const MOST_SAMPLES: usize = 4096;

/// Writes the impulse response of b/a at `sample_rate` into `file`.
pub fn draw_impulse(
    file: &Path,
    title: &str,
    b: &[f64],
    a: &[f64],
    sample_rate: f64,
) -> Result<(), PictureError> {
    let mut h = decayed_impulse_response(b, a, MOST_SAMPLES);
    // Shown until the response stays 60 dB below its peak (a quarter more for context): the
    // rest is too small to see.
    let peak = h.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let last = h.iter().rposition(|v| v.abs() > 1e-3 * peak).unwrap_or(0);
    h.truncate((last + last / 4 + 1).max(16).min(h.len()));
    if h.len() < 16 {
        h.resize(16, 0.0);
    }
    let ms = |n: usize| 1000.0 * n as f64 / sample_rate;
    let root = SVGBackend::new(file, (1100, 460)).into_drawing_area();
    root.fill(&WHITE).map_err(failed(file))?;
    let (ylo, yhi) = y_range(&h, 0.2, 0.0);
    let (ylo, yhi) = (ylo.min(-0.05 * yhi.abs()), yhi.max(0.05 * ylo.abs()));
    let end = ms(h.len());
    let mut chart = ChartBuilder::on(&root)
        .caption(title, caption())
        .margin(12)
        .x_label_area_size(45)
        .y_label_area_size(70)
        .build_cartesian_2d(-0.02 * end..end * 1.02, ylo..yhi)
        .map_err(failed(file))?;
    chart
        .configure_mesh()
        .x_desc("time (ms), until the response stays 60 dB below its peak")
        .y_desc("amplitude (per unit impulse)")
        .axis_desc_style(label())
        .label_style(label())
        .draw()
        .map_err(failed(file))?;
    chart
        .draw_series([PathElement::new(
            vec![(0.0, 0.0), (end, 0.0)],
            GUIDE.mix(0.6),
        )])
        .map_err(failed(file))?;
    // Stems: one vertical line per sample, with a dot when few enough to tell apart.
    chart
        .draw_series(h.iter().enumerate().map(|(n, &v)| {
            PathElement::new(vec![(ms(n), 0.0), (ms(n), v)], INVERSE.stroke_width(1))
        }))
        .map_err(failed(file))?;
    if h.len() <= 200 {
        chart
            .draw_series(
                h.iter()
                    .enumerate()
                    .map(|(n, &v)| Circle::new((ms(n), v), 3, INVERSE.filled())),
            )
            .map_err(failed(file))?;
    }
    root.present().map_err(failed(file))
}
