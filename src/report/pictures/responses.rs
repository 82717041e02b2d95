//! Magnitude, phase and group delay over frequency of the channel, its inverse and the two in
//! cascade. The cascade is what the listener gets: flat at 0 dB, zero phase and constant delay
//! where the inverse undoes the link, and whatever is left uncorrected everywhere else.

use std::f64::consts::TAU;
use std::path::Path;

use num_complex::Complex64;
use plotters::prelude::*;

use super::style::{
    caption, failed, frequency_grid, hz_label, label, y_range, PictureError, CASCADE, CHANNEL,
    GUIDE, INVERSE, TRUSTED,
};
use crate::numeric::response::{group_delay, response_at};

/// A filter to draw: coefficients and the pure delay its phase is shown without (samples).
#[derive(Debug, Clone, PartialEq)]
pub struct Curve {
    pub b: Vec<f64>,
    pub a: Vec<f64>,
    pub delay: usize,
}

/// What the response picture shows.
#[derive(Debug, Clone, PartialEq)]
pub struct ResponsePicture {
    pub title: String,
    pub sample_rate: f64,
    pub channel: Curve,
    /// The inverse, when one was designed.
    pub inverse: Option<Curve>,
    /// A band to shade as trusted (a measured link's), in Hz.
    pub trusted_hz: Option<(f64, f64)>,
}

/// One of the three stacked panels: its axis name, its y range and which values it draws.
type Panel = (&'static str, (f64, f64), fn(&Series) -> &Vec<f64>);

struct Series {
    name: String,
    color: RGBColor,
    magnitude_db: Vec<f64>,
    phase_deg: Vec<f64>,
    delay_ms: Vec<f64>,
}

fn series(name: String, color: RGBColor, parts: &[&Curve], freqs: &[f64], fs: f64) -> Series {
    let delay: usize = parts.iter().map(|c| c.delay).sum();
    let mut magnitude_db = Vec::with_capacity(freqs.len());
    let mut phase = Vec::with_capacity(freqs.len());
    let mut delay_ms = Vec::with_capacity(freqs.len());
    for &hz in freqs {
        let w = TAU * hz / fs;
        let h: Complex64 = parts
            .iter()
            .map(|c| response_at(&c.b, &c.a, w))
            .product::<Complex64>()
            * Complex64::from_polar(1.0, w * delay as f64);
        magnitude_db.push(20.0 * h.norm().log10());
        phase.push(h.arg());
        let gd: f64 = parts.iter().map(|c| group_delay(&c.b, &c.a, w)).sum();
        delay_ms.push(1000.0 * gd / fs);
    }
    // Unwrap: no step between neighbours larger than half a turn.
    let mut offset = 0.0;
    let mut phase_deg = Vec::with_capacity(phase.len());
    for i in 0..phase.len() {
        if i > 0 {
            let step = phase[i] - phase[i - 1];
            if step > std::f64::consts::PI {
                offset -= TAU;
            } else if step < -std::f64::consts::PI {
                offset += TAU;
            }
        }
        phase_deg.push((phase[i] + offset).to_degrees());
    }
    Series {
        name,
        color,
        magnitude_db,
        phase_deg,
        delay_ms,
    }
}

fn delay_note(delay: usize) -> String {
    if delay == 0 {
        String::new()
    } else {
        format!(", phase without its {delay}-sample delay")
    }
}

/// Writes the three panels into `file`.
pub fn draw_responses(file: &Path, picture: &ResponsePicture) -> Result<(), PictureError> {
    let fs = picture.sample_rate;
    let freqs = frequency_grid(fs);
    let mut all = vec![series(
        format!("channel H{}", delay_note(picture.channel.delay)),
        CHANNEL,
        &[&picture.channel],
        &freqs,
        fs,
    )];
    if let Some(inverse) = &picture.inverse {
        all.push(series(
            format!("inverse G{}", delay_note(inverse.delay)),
            INVERSE,
            &[inverse],
            &freqs,
            fs,
        ));
        all.push(series(
            format!(
                "cascade H·G: what is left{}",
                delay_note(picture.channel.delay + inverse.delay)
            ),
            CASCADE,
            &[&picture.channel, inverse],
            &freqs,
            fs,
        ));
    }
    let root = SVGBackend::new(file, (1100, 1200)).into_drawing_area();
    root.fill(&WHITE).map_err(failed(file))?;
    let (title_area, body) = root.split_vertically(40);
    title_area
        .titled(&picture.title, caption())
        .map_err(failed(file))?;
    let panels = body.split_evenly((3, 1));
    let (lo, hi) = (freqs[0], freqs[freqs.len() - 1]);
    let magnitudes: Vec<f64> = all.iter().flat_map(|s| s.magnitude_db.clone()).collect();
    let top = magnitudes
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .fold(f64::NEG_INFINITY, f64::max);
    let (mlo, mhi) = y_range(&magnitudes, 12.0, 0.0);
    let magnitude_range = (mlo.max(top - 80.0), mhi);
    let phases: Vec<f64> = all.iter().flat_map(|s| s.phase_deg.clone()).collect();
    let delays: Vec<f64> = all.iter().flat_map(|s| s.delay_ms.clone()).collect();
    let panels_spec: [Panel; 3] = [
        ("magnitude (dB)", magnitude_range, |s| &s.magnitude_db),
        ("phase (degrees)", y_range(&phases, 90.0, 0.0), |s| {
            &s.phase_deg
        }),
        ("group delay (ms)", y_range(&delays, 0.5, 0.01), |s| {
            &s.delay_ms
        }),
    ];
    for (index, (area, (y_name, (ylo, yhi), pick))) in panels.iter().zip(panels_spec).enumerate() {
        let mut chart = ChartBuilder::on(area)
            .margin(12)
            .x_label_area_size(45)
            .y_label_area_size(70)
            .build_cartesian_2d((lo..hi).log_scale(), ylo..yhi)
            .map_err(failed(file))?;
        // The shade goes first so the grid and the curves are drawn over it.
        if let Some((tlo, thi)) = picture.trusted_hz {
            chart
                .draw_series([Rectangle::new(
                    [(tlo.max(lo), ylo), (thi.min(hi), yhi)],
                    TRUSTED.filled(),
                )])
                .map_err(failed(file))?
                .label(format!(
                    "band the measurement can be trusted in ({tlo:.0}–{thi:.0} Hz)"
                ))
                .legend(|(x, y)| Rectangle::new([(x, y - 5), (x + 20, y + 5)], TRUSTED.filled()));
        }
        chart
            .configure_mesh()
            .x_desc("frequency (Hz)")
            .y_desc(y_name)
            .axis_desc_style(label())
            .label_style(label())
            .x_label_formatter(&hz_label)
            .draw()
            .map_err(failed(file))?;
        for s in &all {
            let points = freqs
                .iter()
                .zip(pick(s))
                .filter(|(_, v)| v.is_finite())
                .map(|(f, v)| (*f, v.clamp(ylo, yhi)));
            let color = s.color;
            chart
                .draw_series(LineSeries::new(points, color.stroke_width(2)))
                .map_err(failed(file))?
                .label(s.name.clone())
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], color.stroke_width(2))
                });
        }
        // One legend, in the top panel: the colours mean the same in all three.
        if index == 0 {
            chart
                .configure_series_labels()
                .label_font(label())
                .background_style(WHITE.mix(0.85))
                .border_style(GUIDE)
                .position(SeriesLabelPosition::LowerLeft)
                .draw()
                .map_err(failed(file))?;
        }
    }
    root.present().map_err(failed(file))
}
