//! Holding a recursive inverse (exact or minimum-phase) to its correction band and its noise.
//!
//! When the inverse G boosts outside its band by more than [`OUTSIDE_TOLERANCE_DB`], or the
//! measured SNR asks for less gain somewhere in the band, G is replaced by the minimum-phase
//! filter with the magnitude ln|G_b| = w(f)·(ln|G| + ln(S/(1 + S))): w from
//! [`CorrectionBand::weight`] (1 in the band, rolled to 0 outside), S/(1 + S) the Wiener factor
//! of `noise_weight`. That magnitude is not a ratio of short polynomials, so G_b is a
//! minimum-phase FIR built by the cepstrum (`numeric::homomorphic`), as short as its magnitude
//! allows within [`FIT_TOLERANCE_DB`] (powers of two up to [`MAX_BAND_LIMITED_TAPS`]). In the
//! band it corrects the magnitude as G did; its phase there is the minimum phase of the new
//! magnitude, which differs from G's only by what the roll outside the band changes.

use serde::Serialize;

use super::band_figures::{band_figures, grid_size, BandFigures, LevelAt};
use super::correction_band::{correction_band, CorrectionBand};
use super::noise_weight::{log_wiener_at, NOISE_AWARE_BELOW_DB};
use super::{decay_60db_samples, InverseDesign};
use crate::model::{BandSnr, InversePolicy, TransferFunction};
use crate::numeric::homomorphic::{from_log_magnitude, spectrum_on_grid};
use crate::numeric::response::peak_magnitude;

/// A boost outside the band up to this (dB) is left alone (the roll of a design that hardly
/// boosts there would cost more than it saves).
pub const OUTSIDE_TOLERANCE_DB: f64 = 0.1;
/// Largest |20·log10(|G_b| / target)| the FIR may leave anywhere on the grid (dB).
pub const FIT_TOLERANCE_DB: f64 = 0.1;
/// Longest band-limited FIR (taps).
pub const MAX_BAND_LIMITED_TAPS: usize = 1 << 15;
/// Shortest band-limited FIR tried (taps).
const MIN_BAND_LIMITED_TAPS: usize = 256;

/// What the band (and the measured noise) did to an inverse.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BandOutcome {
    pub band: CorrectionBand,
    /// True when the design was redone to respect the band or the noise.
    pub limited: bool,
    /// True when a measured SNR per band shaped the design.
    pub noise_aware: bool,
    /// Lowest SNR the config gave inside the band (dB), when it gave any.
    pub lowest_snr_db: Option<f64>,
    /// Largest gain outside the band before it was limited (`None` for a whole-axis band).
    pub outside_before: Option<LevelAt>,
    /// Largest deviation of the limited FIR from its target magnitude (dB; 0 when not limited
    /// or for the least-squares FIR, whose error is its own figure).
    pub fit_error_db: f64,
    /// The figures of the inverse as it runs.
    pub figures: BandFigures,
}

/// Does the design need limiting: does it boost outside the band, or does the SNR cost more
/// than 0.1 dB somewhere in it?
pub fn needs_limiting(figures: &BandFigures, band: &CorrectionBand, snr: &[BandSnr]) -> bool {
    let boosts_outside = figures.outside.is_some_and(|o| o.db > OUTSIDE_TOLERANCE_DB);
    boosts_outside || lowest_snr_in(band, snr).is_some_and(|s| s < NOISE_AWARE_BELOW_DB)
}

/// Lowest SNR given for a band centre inside the correction band.
pub fn lowest_snr_in(band: &CorrectionBand, snr: &[BandSnr]) -> Option<f64> {
    snr.iter()
        .filter(|b| band.contains(b.hz))
        .map(|b| b.snr_db)
        .reduce(f64::min)
}

/// `design` (exact or minimum-phase) held to its band and noise, with the figures to show it.
pub fn limit_recursive_design(
    channel: &TransferFunction,
    mut design: InverseDesign,
    policy: &InversePolicy,
    sample_rate: f64,
) -> InverseDesign {
    let band = correction_band(policy, sample_rate);
    let before = band_figures(&design.inverse.b, &design.inverse.a, &band);
    let lowest_snr_db = lowest_snr_in(&band, &policy.band_snr);
    let as_designed = |mut design: InverseDesign, before: BandFigures| {
        design.band = Some(BandOutcome {
            band,
            limited: false,
            noise_aware: false,
            lowest_snr_db,
            outside_before: before.outside,
            fit_error_db: 0.0,
            figures: before,
        });
        design
    };
    if !needs_limiting(&before, &band, &policy.band_snr) {
        return as_designed(design, before);
    }
    let target = BandTarget {
        channel,
        unity_scale_db: design.unity_scale_db,
        cap_db: policy.boost_cap_db,
        band: &band,
        snr: &policy.band_snr,
    };
    let Some((mut taps, fit_error_db)) = band_limited_taps(&target) else {
        // Left as designed (and reported so): the target is not finite on the grid.
        return as_designed(design, before);
    };
    // The target never exceeds the design's own peak; the FIR's fit error may, by a hair.
    let mut peak = peak_magnitude(&taps, &[1.0]);
    if peak.level_db > policy.boost_cap_db {
        let scale = 10f64.powf((policy.boost_cap_db - peak.level_db) / 20.0);
        taps.iter_mut().for_each(|t| *t *= scale);
        peak.level_db = policy.boost_cap_db;
    }
    let length = taps.len();
    design.inverse = TransferFunction::new(taps, vec![1.0]);
    design.gain = design.inverse.b[0];
    design.peak_boost_db = peak.level_db;
    design.peak_boost_hz = peak.omega * sample_rate / (2.0 * std::f64::consts::PI);
    design.decay_60db_seconds = decay_60db_samples(0.0, length) / sample_rate;
    let figures = band_figures(&design.inverse.b, &design.inverse.a, &band);
    design.band = Some(BandOutcome {
        band,
        limited: true,
        noise_aware: !policy.band_snr.is_empty(),
        lowest_snr_db,
        outside_before: before.outside,
        fit_error_db,
        figures,
    });
    design
}

/// The magnitude a band-limited inverse is built to: in the band 1/|H| (scaled as the design
/// was, for `unity_at_hz`) times the Wiener factor, never above the cap; rolled to unity outside.
/// Built from the channel, not from the recursive design: outside the band the cap's
/// compromises (zeros near z = ±1 pulled in, the level lowered) no longer need to reach in.
pub struct BandTarget<'a> {
    pub channel: &'a TransferFunction,
    pub unity_scale_db: f64,
    pub cap_db: f64,
    pub band: &'a CorrectionBand,
    pub snr: &'a [BandSnr],
}

impl BandTarget<'_> {
    /// ln of the target magnitude at k·fs/size for k = 0 … size − 1.
    fn log_magnitude(&self, size: usize) -> Vec<f64> {
        let fs = self.band.sample_rate_hz;
        let (nb, na) = (
            spectrum_on_grid(&self.channel.b, size),
            spectrum_on_grid(&self.channel.a, size),
        );
        let ln_db = std::f64::consts::LN_10 / 20.0;
        let (scale, cap) = (self.unity_scale_db * ln_db, self.cap_db * ln_db);
        (0..size)
            .map(|k| {
                let hz = k.min(size - k) as f64 * fs / size as f64;
                let w = self.band.weight(hz);
                if w == 0.0 {
                    return 0.0;
                }
                let ln_inverse = -(nb[k] / na[k]).norm().ln() + scale;
                w * (ln_inverse + log_wiener_at(self.snr, hz)).min(cap)
            })
            .collect()
    }
}

/// The minimum-phase FIR with the target's magnitude, and its largest deviation from it (dB).
/// `None` when the target is not finite on the grid.
pub fn band_limited_taps(target: &BandTarget<'_>) -> Option<(Vec<f64>, f64)> {
    // One grid for the longest FIR: 8 points per tap and 16 across the band's narrowest roll
    // (2¹⁸ points at 48 kHz). The target is smooth on it, its peaks capped, so its cepstrum is
    // not aliased at this size; the fit below measures what is left.
    let size = grid_size(MAX_BAND_LIMITED_TAPS, target.band);
    let wanted = target.log_magnitude(size);
    if wanted.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let full = from_log_magnitude(&wanted, MAX_BAND_LIMITED_TAPS);
    let mut length = MIN_BAND_LIMITED_TAPS;
    loop {
        let taps = &full[..length.min(full.len())];
        let got = spectrum_on_grid(taps, size);
        let error = (0..=size / 2)
            .map(|k| ((got[k].norm().ln() - wanted[k]) * 20.0 / std::f64::consts::LN_10).abs())
            .fold(0.0f64, f64::max);
        if error <= FIT_TOLERANCE_DB || length >= MAX_BAND_LIMITED_TAPS {
            return Some((taps.to_vec(), error));
        }
        length *= 2;
    }
}
