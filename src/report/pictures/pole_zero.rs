//! Pole–zero diagrams: the unit circle and every zero (○) and pole (×) of the channel, of its
//! exact inverse, and of the substitute inverse when one had to be used.

use std::path::Path;

use num_complex::Complex64;
use plotters::prelude::*;

use super::style::{caption, failed, label, PictureError, CHANNEL, GUIDE, INVERSE};
use crate::numeric::poly::leading_zeros;
use crate::numeric::roots::{find_roots, Root, AFFORDABLE_ORDER};

/// One diagram: a title and the roots to draw.
pub struct PoleZeroPanel {
    pub title: String,
    pub zeros: Vec<Root>,
    pub poles: Vec<Root>,
}

impl PoleZeroPanel {
    /// The roots of B(z)/A(z) (B's bulk delay left out: it only adds poles at the origin).
    ///
    /// Above [`AFFORDABLE_ORDER`] the roots are not computed (minutes at order 4096): the panel
    /// then shows none of that polynomial's and says so in its title.
    pub fn from_coefficients(title: String, b: &[f64], a: &[f64]) -> Self {
        let stripped = &b[leading_zeros(b).min(b.len())..];
        let affordable = |c: &[f64]| c.len().saturating_sub(1) <= AFFORDABLE_ORDER;
        let roots_of = |c: &[f64]| {
            if affordable(c) {
                find_roots(c).unwrap_or_default()
            } else {
                Vec::new()
            }
        };
        let title = if affordable(stripped) && affordable(a) {
            title
        } else {
            format!("{title} (roots above order {AFFORDABLE_ORDER} not drawn)")
        };
        Self {
            title,
            zeros: roots_of(stripped),
            poles: roots_of(a),
        }
    }
}

/// Frame half-width: everything up to this radius is drawn; roots farther out are counted.
const MOST_RADIUS: f64 = 2.5;

/// Writes the panels side by side into `file`.
pub fn draw_pole_zero(file: &Path, panels: &[PoleZeroPanel]) -> Result<(), PictureError> {
    // Each panel's plotting area comes out square (caption and x labels take about as much
    // height as the y labels take width), so the unit circle looks like one.
    let side = 520u32;
    let root =
        SVGBackend::new(file, (side * panels.len().max(1) as u32, side + 50)).into_drawing_area();
    root.fill(&WHITE).map_err(failed(file))?;
    let areas = root.split_evenly((1, panels.len().max(1)));
    for (area, panel) in areas.iter().zip(panels) {
        draw_panel(file, area, panel)?;
    }
    root.present().map_err(failed(file))
}

fn draw_panel(
    file: &Path,
    area: &DrawingArea<SVGBackend<'_>, plotters::coord::Shift>,
    panel: &PoleZeroPanel,
) -> Result<(), PictureError> {
    let all = panel.zeros.iter().chain(&panel.poles);
    let largest = all.clone().map(|r| r.radius()).fold(0.0f64, f64::max);
    let reach = (largest * 1.15).clamp(1.5, MOST_RADIUS);
    let beyond = all.filter(|r| r.radius() > reach).count();
    let title = if beyond > 0 {
        format!("{} ({beyond} beyond |z| = {reach:.1})", panel.title)
    } else {
        panel.title.clone()
    };
    let mut chart = ChartBuilder::on(area)
        .caption(title, caption())
        .margin(12)
        .x_label_area_size(45)
        .y_label_area_size(55)
        .build_cartesian_2d(-reach..reach, -reach..reach)
        .map_err(failed(file))?;
    chart
        .configure_mesh()
        .x_desc("real part")
        .y_desc("imaginary part")
        .axis_desc_style(label())
        .label_style(label())
        .light_line_style(WHITE.mix(0.0))
        .draw()
        .map_err(failed(file))?;
    let circle: Vec<(f64, f64)> = (0..=360)
        .map(|d| {
            let t = (d as f64).to_radians();
            (t.cos(), t.sin())
        })
        .collect();
    chart
        .draw_series(LineSeries::new(circle, GUIDE.stroke_width(2)))
        .map_err(failed(file))?
        .label("unit circle")
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], GUIDE.stroke_width(2)));
    chart
        .draw_series([
            PathElement::new(vec![(-reach, 0.0), (reach, 0.0)], GUIDE.mix(0.4)),
            PathElement::new(vec![(0.0, -reach), (0.0, reach)], GUIDE.mix(0.4)),
        ])
        .map_err(failed(file))?;
    let shown = |r: &&Root| r.radius() <= reach;
    chart
        .draw_series(
            panel
                .zeros
                .iter()
                .filter(shown)
                .map(|r| Circle::new(xy(r.value), 7, CHANNEL.stroke_width(2))),
        )
        .map_err(failed(file))?
        .label("zero")
        .legend(|(x, y)| Circle::new((x + 10, y), 6, CHANNEL.stroke_width(2)));
    chart
        .draw_series(
            panel
                .poles
                .iter()
                .filter(shown)
                .map(|r| Cross::new(xy(r.value), 7, INVERSE.stroke_width(2))),
        )
        .map_err(failed(file))?
        .label("pole")
        .legend(|(x, y)| Cross::new((x + 10, y), 6, INVERSE.stroke_width(2)));
    let repeated = panel
        .zeros
        .iter()
        .chain(&panel.poles)
        .filter(|r| r.multiplicity > 1 && r.radius() <= reach);
    chart
        .draw_series(repeated.map(|r| {
            let (x, y) = xy(r.value);
            Text::new(
                format!("×{}", r.multiplicity),
                (x + 0.06 * reach, y + 0.06 * reach),
                label(),
            )
        }))
        .map_err(failed(file))?;
    chart
        .configure_series_labels()
        .label_font(label())
        .background_style(WHITE.mix(0.85))
        .border_style(GUIDE)
        .position(SeriesLabelPosition::UpperRight)
        .draw()
        .map_err(failed(file))?;
    Ok(())
}

fn xy(z: Complex64) -> (f64, f64) {
    (z.re, z.im)
}
