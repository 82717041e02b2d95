//! What a measurement found, per channel: the measured response (the long FIR model) with the
//! model written to the config over it and the trusted band shaded, the SNR per band against
//! the trust threshold, and the measured impulse response.

use std::f64::consts::TAU;
use std::path::Path;

use plotters::prelude::*;

use super::style::{
    caption, failed, frequency_grid, hz_label, label, y_range, PictureError, CASCADE, CHANNEL,
    GUIDE, INVERSE, TRUSTED,
};
use crate::io::format_db;
use crate::measure::{ChannelFit, EqualizedError};
use crate::numeric::response::magnitude_db;

/// Writes channel `fit`'s picture into `file`.
pub fn draw_measurement(
    file: &Path,
    fit: &ChannelFit,
    sample_rate: f64,
    equalized: Option<&EqualizedError>,
) -> Result<(), PictureError> {
    let freqs = frequency_grid(sample_rate);
    let (lo, hi) = (freqs[0], freqs[freqs.len() - 1]);
    let root = SVGBackend::new(file, (1100, 1200)).into_drawing_area();
    root.fill(&WHITE).map_err(failed(file))?;
    let (title_area, body) = root.split_vertically(40);
    let equalized_text = equalized.map_or(String::new(), |e| {
        format!(
            "; measurement equalized: error {} → {}",
            format_db(e.before.db),
            format_db(e.after.db)
        )
    });
    title_area
        .titled(
            &format!(
                "channel {} as measured: SNR {:.1} dB, model error {}{equalized_text}",
                fit.channel,
                fit.snr_db,
                format_db(fit.model_error_db())
            ),
            caption(),
        )
        .map_err(failed(file))?;
    let panels = body.split_evenly((3, 1));

    // Magnitude: the FIR estimate and the written model.
    let w = |hz: f64| TAU * hz / sample_rate;
    let measured: Vec<f64> = freqs
        .iter()
        .map(|&f| magnitude_db(&fit.fir.taps, &[1.0], w(f)))
        .collect();
    let (b, a) = fit.model();
    let model: Vec<f64> = freqs.iter().map(|&f| magnitude_db(&b, &a, w(f))).collect();
    let both: Vec<f64> = measured.iter().chain(&model).copied().collect();
    let (ylo, yhi) = y_range(&both, 12.0, 0.0);
    let mut chart = ChartBuilder::on(&panels[0])
        .margin(12)
        .x_label_area_size(45)
        .y_label_area_size(70)
        .build_cartesian_2d((lo..hi).log_scale(), ylo..yhi)
        .map_err(failed(file))?;
    shade_trusted(&mut chart, fit, (lo, hi), (ylo, yhi), file)?;
    mesh(&mut chart, "magnitude (dB)", file)?;
    let model_name = match &fit.iir {
        Some(iir) => format!(
            "IIR model {}/{} (written to the config)",
            iir.b.len() - 1,
            iir.a.len() - 1
        ),
        None => "FIR model (written to the config)".to_string(),
    };
    line(
        &mut chart,
        &freqs,
        &measured,
        CHANNEL,
        format!("measured ({}-tap least-squares FIR)", fit.fir.taps.len()),
        false,
        file,
    )?;
    if fit.iir.is_some() {
        line(&mut chart, &freqs, &model, INVERSE, model_name, true, file)?;
    }
    legend(&mut chart, file)?;

    // SNR per band.
    let snr = &fit.band_snr;
    let (slo, shi) = y_range(&snr.snr_db, 30.0, 0.0);
    let (slo, shi) = (slo.min(fit.trusted.threshold_db - 10.0), shi);
    let mut chart = ChartBuilder::on(&panels[1])
        .margin(12)
        .x_label_area_size(45)
        .y_label_area_size(70)
        .build_cartesian_2d((lo..hi).log_scale(), slo..shi)
        .map_err(failed(file))?;
    shade_trusted(&mut chart, fit, (lo, hi), (slo, shi), file)?;
    mesh(&mut chart, "SNR per third octave (dB)", file)?;
    let points: Vec<(f64, f64)> = snr
        .frequencies_hz
        .iter()
        .zip(&snr.snr_db)
        .filter(|(f, v)| **f >= lo && **f <= hi && v.is_finite())
        .map(|(f, v)| (*f, *v))
        .collect();
    chart
        .draw_series(LineSeries::new(points, CASCADE.stroke_width(2)))
        .map_err(failed(file))?
        .label("measured SNR")
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], CASCADE.stroke_width(2)));
    let threshold = fit.trusted.threshold_db;
    chart
        .draw_series([PathElement::new(
            vec![(lo, threshold), (hi, threshold)],
            GUIDE.stroke_width(2),
        )])
        .map_err(failed(file))?
        .label(format!("trust threshold ({threshold:.0} dB)"))
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], GUIDE.stroke_width(2)));
    legend(&mut chart, file)?;

    // Measured impulse response (the FIR taps).
    let taps = &fit.fir.taps;
    let ms = |n: usize| 1000.0 * n as f64 / sample_rate;
    let end = ms(taps.len().max(16));
    let (tlo, thi) = y_range(taps, 0.2, 0.0);
    let mut chart = ChartBuilder::on(&panels[2])
        .margin(12)
        .x_label_area_size(45)
        .y_label_area_size(70)
        .build_cartesian_2d(-0.02 * end..end * 1.02, tlo.min(0.0)..thi.max(0.0))
        .map_err(failed(file))?;
    chart
        .configure_mesh()
        .x_desc("time after the onset (ms)")
        .y_desc("measured impulse response")
        .axis_desc_style(label())
        .label_style(label())
        .draw()
        .map_err(failed(file))?;
    chart
        .draw_series(taps.iter().enumerate().map(|(n, &v)| {
            PathElement::new(vec![(ms(n), 0.0), (ms(n), v)], CHANNEL.stroke_width(1))
        }))
        .map_err(failed(file))?;
    if taps.len() <= 200 {
        chart
            .draw_series(
                taps.iter()
                    .enumerate()
                    .map(|(n, &v)| Circle::new((ms(n), v), 3, CHANNEL.filled())),
            )
            .map_err(failed(file))?;
    }
    root.present().map_err(failed(file))
}

type FreqChart<'a, 'b> = ChartContext<
    'a,
    SVGBackend<'b>,
    Cartesian2d<
        plotters::coord::combinators::LogCoord<f64>,
        plotters::coord::types::RangedCoordf64,
    >,
>;

fn shade_trusted(
    chart: &mut FreqChart<'_, '_>,
    fit: &ChannelFit,
    (lo, hi): (f64, f64),
    (ylo, yhi): (f64, f64),
    file: &Path,
) -> Result<(), PictureError> {
    if let Some((tlo, thi)) = fit.trusted.band_hz {
        chart
            .draw_series([Rectangle::new(
                [(tlo.max(lo), ylo), (thi.min(hi), yhi)],
                TRUSTED.filled(),
            )])
            .map_err(failed(file))?
            .label(format!("trusted band {tlo:.0}–{thi:.0} Hz"))
            .legend(|(x, y)| Rectangle::new([(x, y - 5), (x + 20, y + 5)], TRUSTED.filled()));
    }
    Ok(())
}

fn mesh(chart: &mut FreqChart<'_, '_>, y_name: &str, file: &Path) -> Result<(), PictureError> {
    chart
        .configure_mesh()
        .x_desc("frequency (Hz)")
        .y_desc(y_name)
        .axis_desc_style(label())
        .label_style(label())
        .x_label_formatter(&hz_label)
        .draw()
        .map_err(failed(file))
}

/// A curve over frequency; `dashed` for one drawn over another it may hide.
fn line(
    chart: &mut FreqChart<'_, '_>,
    freqs: &[f64],
    values: &[f64],
    color: RGBColor,
    name: String,
    dashed: bool,
    file: &Path,
) -> Result<(), PictureError> {
    let points: Vec<(f64, f64)> = freqs
        .iter()
        .zip(values)
        .filter(|(_, v)| v.is_finite())
        .map(|(f, v)| (*f, *v))
        .collect();
    let drawn = if dashed {
        chart.draw_series(DashedLineSeries::new(points, 10, 6, color.stroke_width(3)))
    } else {
        chart.draw_series(LineSeries::new(points, color.stroke_width(2)))
    };
    drawn
        .map_err(failed(file))?
        .label(name)
        .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], color.stroke_width(2)));
    Ok(())
}

fn legend<'a, 'b: 'a>(chart: &mut FreqChart<'a, 'b>, file: &Path) -> Result<(), PictureError> {
    chart
        .configure_series_labels()
        .label_font(label())
        .background_style(WHITE.mix(0.85))
        .border_style(GUIDE)
        .position(SeriesLabelPosition::LowerLeft)
        .draw()
        .map_err(failed(file))
}
