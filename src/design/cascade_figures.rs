//! How close channel∘inverse comes to a delayed impulse, judged four ways: the residual
//! waveform error, the worst one-third-octave band's level, where the peak lands and how much
//! energy rings ahead of it.
//!
//! Everything is computed from the cascade's spectrum on one FFT grid, C = (B_h/A_h)·(B_g/A_g),
//! so a recursive inverse needs no impulse response of its own; the grid is long enough that the
//! cascade's response has died away before it wraps (see [`CascadeJudge::new`]).

use rustfft::{num_complex::Complex64, FftPlanner};
use serde::Serialize;

use crate::model::TransferFunction;
use crate::numeric::fractional_octave::{band_mean_power_db, bands_within, Band};
use crate::numeric::homomorphic::spectrum_on_grid;

/// Bandwidth designator of the bands the level is judged in: one-third octaves (the resolution
/// of the usual room and line measurements; common practice).
pub const JUDGED_FRACTION: u32 = 3;

/// Shortest grid (points); the grid also gives every judged band at least eight bins.
const SHORTEST_GRID: usize = 1 << 12;
/// Longest grid (points): 2²⁰, 16 MiB per complex buffer.
const LONGEST_GRID: usize = 1 << 20;

/// The four figures of one cascade.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CascadeFigures {
    /// ‖h∗g − δ(n − D)‖² in dB against the unit impulse.
    pub residual_error_db: f64,
    /// The band level furthest from 0 dB (signed, dB), when any band lies in the judged range.
    pub worst_band_deviation_db: Option<f64>,
    /// That band's nominal mid-band frequency (Hz).
    pub worst_band_hz: Option<f64>,
    /// Energy of the cascade before its largest sample, in dB against its whole energy
    /// (−∞ when there is none).
    pub pre_ringing_db: f64,
    /// Where the cascade's largest sample lies (samples).
    pub main_peak_sample: usize,
}

/// A channel's spectrum on a grid, and the bands to judge in, ready for many inverses.
pub struct CascadeJudge {
    size: usize,
    channel: Vec<Complex64>,
    bands: Vec<Band>,
    sample_rate: f64,
}

impl CascadeJudge {
    /// `channel_length` and `longest_inverse` are how long the channel's and the inverses'
    /// impulse responses last (samples); the grid holds four times their sum, so what wraps is
    /// far down their decay, and resolves the lowest judged band with at least eight points.
    pub fn new(
        channel: &TransferFunction,
        channel_length: usize,
        longest_inverse: usize,
        sample_rate: f64,
        band_hz: (f64, f64),
    ) -> Self {
        let bands = bands_within(JUDGED_FRACTION, band_hz.0, band_hz.1);
        let narrowest = bands
            .first()
            .map_or(sample_rate, |b| b.upper_hz - b.lower_hz);
        let for_bands = (8.0 * sample_rate / narrowest).ceil() as usize;
        let size = (4 * (channel_length + longest_inverse))
            .max(for_bands)
            .max(SHORTEST_GRID)
            .next_power_of_two()
            .min(LONGEST_GRID);
        let b = spectrum_on_grid(&channel.b, size);
        let a = spectrum_on_grid(&channel.a, size);
        CascadeJudge {
            size,
            channel: b.iter().zip(&a).map(|(b, a)| b / a).collect(),
            bands,
            sample_rate,
        }
    }

    /// Points of the FFT grid.
    pub fn grid_size(&self) -> usize {
        self.size
    }

    /// The figures of channel∘(b/a) against δ(n − `delay`).
    pub fn judge(&self, b: &[f64], a: &[f64], delay: usize) -> CascadeFigures {
        let gb = spectrum_on_grid(b, self.size);
        // An FIR (a = [a₀]) needs no second transform: half the work for most rows.
        let mut cascade: Vec<Complex64> = match a {
            [a0] => self
                .channel
                .iter()
                .zip(&gb)
                .map(|(h, b)| h * b / *a0)
                .collect(),
            _ => {
                let ga = spectrum_on_grid(a, self.size);
                self.channel
                    .iter()
                    .zip(gb.iter().zip(&ga))
                    .map(|(h, (b, a))| h * b / a)
                    .collect()
            }
        };
        let power: Vec<f64> = cascade.iter().map(|c| c.norm_sqr()).collect();
        FftPlanner::<f64>::new()
            .plan_fft_inverse(self.size)
            .process(&mut cascade);
        let scale = 1.0 / self.size as f64;
        let c: Vec<f64> = cascade.iter().map(|x| x.re * scale).collect();

        let residual: f64 = c
            .iter()
            .enumerate()
            .map(|(n, &x)| {
                let e = if n == delay { x - 1.0 } else { x };
                e * e
            })
            .sum::<f64>()
            + if delay >= c.len() { 1.0 } else { 0.0 };
        let peak = c
            .iter()
            .enumerate()
            .fold(
                (0, 0.0f64),
                |(i, m), (n, x)| {
                    if x.abs() > m {
                        (n, x.abs())
                    } else {
                        (i, m)
                    }
                },
            )
            .0;
        let total: f64 = c.iter().map(|x| x * x).sum();
        let before: f64 = c[..peak].iter().map(|x| x * x).sum();
        let (worst, worst_hz) = self.worst_band(&power);
        CascadeFigures {
            residual_error_db: db(residual),
            worst_band_deviation_db: worst,
            worst_band_hz: worst_hz,
            pre_ringing_db: if total > 0.0 {
                db(before / total)
            } else {
                f64::NEG_INFINITY
            },
            main_peak_sample: peak,
        }
    }

    /// The band whose mean level lies furthest from 0 dB, and its nominal frequency.
    fn worst_band(&self, power: &[f64]) -> (Option<f64>, Option<f64>) {
        let bins_per_hz = self.size as f64 / self.sample_rate;
        // |C|² between grid points, linearly interpolated (the grid resolves every band).
        let power_at = |f: f64| {
            let x = f * bins_per_hz;
            let i = x.floor() as usize;
            let t = x - i as f64;
            let p0 = power[i.min(self.size - 1)];
            let p1 = power[(i + 1).min(self.size - 1)];
            p0 + t * (p1 - p0)
        };
        self.bands
            .iter()
            .map(|band| (band_mean_power_db(band, power_at), band.nominal_mid_hz()))
            .max_by(|x, y| x.0.abs().total_cmp(&y.0.abs()))
            .map_or((None, None), |(d, hz)| (Some(d), Some(hz)))
    }
}

fn db(energy: f64) -> f64 {
    if energy > 0.0 {
        10.0 * energy.log10()
    } else {
        f64::NEG_INFINITY
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — the exact inverse of a minimum-phase channel leaves a delayed
    // impulse: no residual, no pre-ringing, every band at 0 dB.
    #[test]
    fn exact_inverse_leaves_an_impulse() {
        let channel = TransferFunction::new(vec![0.0, 0.0, 1.0, 0.5], vec![1.0, -0.3]);
        let judge = CascadeJudge::new(&channel, 200, 200, 48_000.0, (20.0, 20_000.0));
        let f = judge.judge(&[1.0, -0.3], &[1.0, 0.5], 2);
        assert!(f.residual_error_db < -250.0, "{}", f.residual_error_db);
        assert!(f.worst_band_deviation_db.unwrap().abs() < 1e-9);
        assert_eq!(f.main_peak_sample, 2);
        assert!(f.pre_ringing_db < -250.0);
    }

    // Source: common practice — with no inverse at all (g = 1) the residual against the
    // channel's own delay is ‖h − δ‖², the band level follows |H|, and an echo stronger than the
    // direct sound puts the direct sound's energy ahead of the peak.
    #[test]
    fn figures_of_a_strong_echo() {
        let mut b = vec![0.0; 44];
        b[0] = 0.45;
        b[43] = 0.8;
        let channel = TransferFunction::new(b, vec![1.0]);
        let judge = CascadeJudge::new(&channel, 44, 1, 48_000.0, (20.0, 20_000.0));
        let f = judge.judge(&[1.0], &[1.0], 0);
        let expected = 10.0 * ((0.45f64 - 1.0).powi(2) + 0.64).log10();
        assert!((f.residual_error_db - expected).abs() < 1e-9);
        assert_eq!(f.main_peak_sample, 43);
        let pre = 10.0 * (0.2025f64 / (0.2025 + 0.64)).log10();
        assert!((f.pre_ringing_db - pre).abs() < 1e-9);
        // The band levels from the grid against the same bands integrated on the exact
        // response (no grid): within 0.01 dB.
        let exact_worst = bands_within(JUDGED_FRACTION, 20.0, 20_000.0)
            .iter()
            .map(|band| {
                band_mean_power_db(band, |f| {
                    let w = std::f64::consts::TAU * f / 48_000.0;
                    crate::numeric::response::response_at(&channel.b, &channel.a, w).norm_sqr()
                })
            })
            .max_by(|x, y| x.abs().total_cmp(&y.abs()))
            .unwrap();
        let worst = f.worst_band_deviation_db.unwrap();
        assert!(
            (worst - exact_worst).abs() < 0.01,
            "{worst} vs {exact_worst}"
        );
        assert!(worst.abs() > 1.0, "{worst}");
    }
}
