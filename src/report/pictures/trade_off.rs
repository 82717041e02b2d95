//! The latency–error picture: residual error of channel∘inverse against the latency the inverse
//! adds, one curve per substitute (the least-squares FIR over the ladder, the minimum-phase
//! substitute at no added latency), with the inverse in use marked.

use std::path::Path;

use plotters::prelude::*;

use super::style::{caption, failed, label, y_range, PictureError, CASCADE, CHANNEL, INVERSE};
use crate::design::{DesignMethod, TradeOff, TradeOffRow};

/// Writes the table's picture into `file`.
pub fn draw_trade_off(file: &Path, title: &str, table: &TradeOff) -> Result<(), PictureError> {
    let point = |r: &TradeOffRow| (r.latency_ms, finite_db(r.figures.residual_error_db));
    let points_of = |method: DesignMethod| -> Vec<(f64, f64)> {
        table
            .rows
            .iter()
            .filter(|r| r.method == method)
            .map(point)
            .collect()
    };
    let fir = points_of(DesignMethod::LeastSquaresFir);
    let minimum_phase = points_of(DesignMethod::MinimumPhase);
    let configured: Option<(f64, f64)> = table.configured.as_ref().map(point);
    let all: Vec<f64> = fir
        .iter()
        .chain(&minimum_phase)
        .chain(configured.iter())
        .map(|p| p.1)
        .collect();
    let (ylo, yhi) = y_range(&all, 10.0, 0.0);
    let right = table
        .rows
        .iter()
        .chain(table.configured.iter())
        .map(|r| r.latency_ms)
        .fold(table.largest_latency_ms, f64::max)
        .max(1.0);

    let root = SVGBackend::new(file, (1100, 520)).into_drawing_area();
    root.fill(&WHITE).map_err(failed(file))?;
    let mut chart = ChartBuilder::on(&root)
        .caption(title, caption())
        .margin(12)
        .x_label_area_size(45)
        .y_label_area_size(70)
        .build_cartesian_2d(-0.02 * right..right * 1.03, ylo - 3.0..yhi + 3.0)
        .map_err(failed(file))?;
    chart
        .configure_mesh()
        .x_desc("latency added by the inverse (ms)")
        .y_desc("residual error of channel∘inverse (dB)")
        .axis_desc_style(label())
        .label_style(label())
        .draw()
        .map_err(failed(file))?;
    chart
        .draw_series(LineSeries::new(fir.clone(), INVERSE.stroke_width(2)))
        .map_err(failed(file))?
        .label("least-squares FIR")
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], INVERSE.stroke_width(2)));
    chart
        .draw_series(fir.iter().map(|&p| Circle::new(p, 4, INVERSE.filled())))
        .map_err(failed(file))?;
    chart
        .draw_series(
            minimum_phase
                .iter()
                .map(|&p| TriangleMarker::new(p, 8, CHANNEL.filled())),
        )
        .map_err(failed(file))?
        .label("minimum-phase substitute (phase left)")
        .legend(|(x, y)| TriangleMarker::new((x + 10, y), 8, CHANNEL.filled()));
    if let Some(p) = configured {
        chart
            .draw_series([Circle::new(p, 11, CASCADE.stroke_width(3))])
            .map_err(failed(file))?
            .label("in use (the configured inverse)")
            .legend(|(x, y)| Circle::new((x + 10, y), 8, CASCADE.stroke_width(3)));
    }
    chart
        .configure_series_labels()
        .label_font(label())
        .background_style(WHITE.mix(0.9))
        .border_style(BLACK.mix(0.3))
        .position(SeriesLabelPosition::UpperRight)
        .draw()
        .map_err(failed(file))?;
    root.present().map_err(failed(file))
}

/// Figures below the picture's floor (an exact cascade's −∞) are drawn at the floor.
fn finite_db(db: f64) -> f64 {
    db.max(-200.0)
}
