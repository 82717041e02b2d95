//! What an inverse does inside and outside its correction band, and how much noise it adds.
//!
//! All figures come from one dense FFT grid of G = B/A (B and A transformed apart, so the
//! values at the grid points are exact): the largest gain inside the band's edges and outside
//! them, and the white-noise gain: the power gain for white noise, the mean of |G|² over the
//! circle, which is Σ g[n]² by Parseval's theorem (common practice). Where that power comes
//! from is told by IEC 61260-1 octave band: the band holding the largest share of it.

use serde::Serialize;

use super::correction_band::CorrectionBand;
use crate::numeric::fractional_octave::{octave_ratio, Band, REFERENCE_HZ};
use crate::numeric::homomorphic::spectrum_on_grid;

/// Smallest grid (points over the whole circle): 0.37 Hz apart at 48 kHz.
const MIN_GRID: usize = 1 << 17;
/// Largest grid.
const MAX_GRID: usize = 1 << 21;

/// A level and where it is reached.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LevelAt {
    pub db: f64,
    pub hz: f64,
}

/// Figures of an inverse against its band.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BandFigures {
    /// Largest gain inside the band's edges.
    pub inside: LevelAt,
    /// Largest gain outside them (roll-off included); `None` when the band is the whole axis.
    pub outside: Option<LevelAt>,
    /// White-noise gain, 10·log10(Σ g²) (dB).
    pub noise_gain_db: f64,
    /// Nominal centre of the octave band that holds the largest share of that noise power.
    pub noise_mostly_from_hz: f64,
    /// That share (0 … 1).
    pub noise_share: f64,
    /// Share of the noise power that lies inside the band's edges (0 … 1).
    pub noise_share_in_band: f64,
}

/// Grid size for a filter of `length` coefficients against `band`: fine enough for the band's
/// roll-off (16 points across it) and for the filter (8 points per coefficient).
pub fn grid_size(length: usize, band: &CorrectionBand) -> usize {
    let roll_points = (16.0 * band.sample_rate_hz / band.narrowest_roll_hz()).ceil() as usize;
    (8 * length)
        .max(roll_points)
        .next_power_of_two()
        .clamp(MIN_GRID, MAX_GRID)
}

/// |G|² at k·fs/size for k = 0 … size/2.
pub fn power_on_half_grid(b: &[f64], a: &[f64], size: usize) -> Vec<f64> {
    let (nb, na) = (spectrum_on_grid(b, size), spectrum_on_grid(a, size));
    (0..=size / 2).map(|k| (nb[k] / na[k]).norm_sqr()).collect()
}

/// The figures of G = `b`/`a` against `band`.
pub fn band_figures(b: &[f64], a: &[f64], band: &CorrectionBand) -> BandFigures {
    let size = grid_size(b.len().max(a.len()), band);
    let power = power_on_half_grid(b, a, size);
    figures_from_power(&power, size, band)
}

/// As [`band_figures`], from |G|² on the half grid of a `size`-point circle.
pub fn figures_from_power(power: &[f64], size: usize, band: &CorrectionBand) -> BandFigures {
    let fs = band.sample_rate_hz;
    let mut inside = LevelAt {
        db: f64::NEG_INFINITY,
        hz: 0.0,
    };
    let mut outside = LevelAt {
        db: f64::NEG_INFINITY,
        hz: 0.0,
    };
    let mut total = 0.0;
    let mut in_band = 0.0;
    let mut by_octave: Vec<(i32, f64)> = Vec::new();
    let g_ln = octave_ratio().ln();
    for (k, &p) in power.iter().enumerate() {
        let hz = k as f64 * fs / size as f64;
        let db = 10.0 * p.log10();
        let level = if band.contains(hz) {
            &mut inside
        } else {
            &mut outside
        };
        if db > level.db || db.is_nan() {
            *level = LevelAt { db, hz };
        }
        // Bins 1 … size/2 − 1 stand for themselves and their mirror image.
        let share = if k == 0 || k == size / 2 { p } else { 2.0 * p };
        total += share;
        if band.contains(hz) {
            in_band += share;
        }
        // Octave band x holds fm·G^(∓1/2) around fm = 1000·G^x.
        let x = if hz > 0.0 {
            ((hz / REFERENCE_HZ).ln() / g_ln).round() as i32
        } else {
            i32::MIN
        };
        match by_octave.last_mut() {
            Some((last, sum)) if *last == x => *sum += share,
            _ => by_octave.push((x, share)),
        }
    }
    let (top_index, top_power) = by_octave
        .iter()
        .copied()
        .max_by(|x, y| x.1.total_cmp(&y.1))
        .unwrap_or((0, 0.0));
    let top_index = if top_index == i32::MIN {
        by_octave.get(1).map_or(0, |x| x.0)
    } else {
        top_index
    };
    BandFigures {
        inside,
        outside: (!band.is_whole()).then_some(outside),
        noise_gain_db: 10.0 * (total / size as f64).log10(),
        noise_mostly_from_hz: Band::new(1, top_index).nominal_mid_hz(),
        noise_share: if total > 0.0 { top_power / total } else { 0.0 },
        noise_share_in_band: if total > 0.0 { in_band / total } else { 0.0 },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::correction_band::correction_band;
    use crate::model::InversePolicy;

    // Source: Parseval's theorem (common practice): the white-noise gain of an FIR is Σ g².
    #[test]
    fn noise_gain_is_the_sum_of_squared_taps() {
        let band = correction_band(&InversePolicy::default(), 48_000.0);
        let g = [1.0, -0.5, 0.25, 2.0];
        let f = band_figures(&g, &[1.0], &band);
        let expected = 10.0 * g.iter().map(|x| x * x).sum::<f64>().log10();
        assert!(
            (f.noise_gain_db - expected).abs() < 1e-9,
            "{}",
            f.noise_gain_db
        );
        // One pole: Σ (0.9ⁿ)² = 1/(1 − 0.81) (geometric series, common practice).
        let f = band_figures(&[1.0], &[1.0, -0.9], &band);
        assert!((f.noise_gain_db - 10.0 * (1.0 / 0.19f64).log10()).abs() < 1e-6);
        // Its power is at low frequencies: the lowest octave bands hold the most.
        assert!(
            f.noise_mostly_from_hz <= 1000.0,
            "{}",
            f.noise_mostly_from_hz
        );
        // The largest gain, 20 dB at 0 Hz, is outside the default band.
        let out = f.outside.unwrap();
        assert!((out.db - 20.0).abs() < 1e-9 && out.hz == 0.0);
        assert!(f.inside.db < 20.0 && (f.inside.hz - band.low_hz).abs() < 1.0);
    }
}
