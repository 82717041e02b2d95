//! What every picture shares: sizes, fonts, colours, the frequency grid and the error type.

use std::fmt;
use std::path::{Path, PathBuf};

use plotters::style::{RGBColor, TextStyle};

/// Font family for every label: left to the SVG viewer, so no font file is needed here.
pub const FONT: &str = "sans-serif";
pub const CAPTION_SIZE: u32 = 22;
pub const LABEL_SIZE: u32 = 16;

/// Colours of the three things every picture compares.
pub const CHANNEL: RGBColor = RGBColor(0x1f, 0x5f, 0xbf);
pub const INVERSE: RGBColor = RGBColor(0xd0, 0x5a, 0x10);
pub const CASCADE: RGBColor = RGBColor(0x20, 0x90, 0x40);
pub const GUIDE: RGBColor = RGBColor(0x80, 0x80, 0x80);
pub const TRUSTED: RGBColor = RGBColor(0xe6, 0xf2, 0xe6);

pub fn caption() -> TextStyle<'static> {
    (FONT, CAPTION_SIZE).into()
}

pub fn label() -> TextStyle<'static> {
    (FONT, LABEL_SIZE).into()
}

/// Why a picture could not be written.
#[derive(Debug, Clone, PartialEq)]
pub struct PictureError {
    pub file: PathBuf,
    pub why: String,
}

impl fmt::Display for PictureError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{}: the picture could not be written: {}\n  help: check that you may write in \
             its folder",
            self.file.display(),
            crate::os_error::without_error_number(&self.why)
        )
    }
}

impl std::error::Error for PictureError {}

/// Turns a drawing error into a [`PictureError`] about `file`.
pub fn failed<E: fmt::Display>(file: &Path) -> impl Fn(E) -> PictureError + '_ {
    move |e| PictureError {
        file: file.to_path_buf(),
        why: e.to_string(),
    }
}

/// Log-spaced frequencies (Hz) from a thousandth of the Nyquist frequency (at least 10 Hz) up
/// to just below it: where audio links are judged, one point per ~0.6 %, fine enough for the combs that echoes make.
pub fn frequency_grid(sample_rate: f64) -> Vec<f64> {
    let nyquist = sample_rate / 2.0;
    let low = (nyquist / 1000.0).max(10.0);
    let high = nyquist * 0.999;
    let points = 1200;
    (0..points)
        .map(|i| low * (high / low).powf(i as f64 / (points - 1) as f64))
        .collect()
}

/// A y range that shows `values` (finite ones) with a little room, at least `min_span` tall,
/// leaving out the lowest and highest `trim` share (spikes at a zero on the circle).
pub fn y_range(values: &[f64], min_span: f64, trim: f64) -> (f64, f64) {
    let mut v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
    if v.is_empty() {
        return (-1.0, 1.0);
    }
    v.sort_by(f64::total_cmp);
    let cut = ((v.len() as f64) * trim) as usize;
    let (lo, hi) = (
        v[cut.min(v.len() - 1)],
        v[v.len() - 1 - cut.min(v.len() - 1)],
    );
    let mid = 0.5 * (lo + hi);
    let half = (0.5 * (hi - lo)).max(0.5 * min_span) * 1.1;
    (mid - half, mid + half)
}

/// "1 k", "200", "20 k": frequency tick labels that stay short.
pub fn hz_label(v: &f64) -> String {
    if *v >= 1000.0 {
        format!("{} k", trim_number(v / 1000.0))
    } else {
        trim_number(*v)
    }
}

fn trim_number(v: f64) -> String {
    let s = format!("{v:.1}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}
