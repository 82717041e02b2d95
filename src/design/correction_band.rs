//! The correction band: where a path's inverse corrects the link, and how it lets go outside.
//!
//! A measured link is known only inside a band. Below it sit AC coupling (a zero near z = 1)
//! and the stimulus's own low end; near half the sample rate sit the converters' anti-alias
//! and reconstruction filters (zeros on or near the circle close to z = −1). An inverse that
//! chases those boosts infrasound and the top octave up to the cap: subsonic drive into a
//! loudspeaker or a transformer, which no full-scale guard sees. So the inverse corrects fully
//! inside [`CorrectionBand`] and, towards its edges, its gain in dB is scaled down by a raised
//! cosine in log frequency over [`ROLL_OFF_OCTAVES`] (one sixth of a base-10 octave, the
//! distance from a one-third-octave band's centre to its edge), reaching unity gain at the
//! edge: outside the band it never boosts (nor cuts).
//!
//! [`correction_band`] is the one place that says which band a path is corrected in: the
//! config's `correction_band_hz` when given (what `identify` measured as trusted), else the
//! default: from 19.95 Hz (the exact centre of the IEC 61260-1 base-10 one-third-octave band
//! at 20 Hz; full correction from 22.4 Hz, the edge of the 25 Hz band) to 90 % of half the
//! sample rate. Why those: 20 Hz is the lower limit of hearing and below it a correction only
//! moves cones and saturates transformers; converters' anti-alias filters start their roll-off
//! at about 0.45·fs, so the top tenth below half the sample rate is the converter's edge, not
//! the link (both common practice).

use serde::Serialize;

use crate::model::{BandEdges, InversePolicy};
use crate::numeric::fractional_octave::{octave_ratio, Band};

/// Width of the roll from full correction to unity gain beyond each edge, in base-10 octaves.
pub const ROLL_OFF_OCTAVES: f64 = 1.0 / 6.0;

/// Share of half the sample rate under which the default band (with its roll-off) ends.
pub const DEFAULT_NYQUIST_SHARE: f64 = 0.9;

/// Where the band of a path came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum BandSource {
    /// `correction_band_hz` in the path's `[path.inverse]` table.
    Configured,
    /// The default band (no key).
    Default,
}

/// The band a path's inverse corrects.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CorrectionBand {
    pub low_hz: f64,
    pub high_hz: f64,
    pub sample_rate_hz: f64,
    pub source: BandSource,
}

/// The band `policy` asks the inverse of a path at `sample_rate` to correct.
pub fn correction_band(policy: &InversePolicy, sample_rate: f64) -> CorrectionBand {
    let BandEdges { low_hz, high_hz } = policy
        .correction_band_hz
        .unwrap_or_else(|| default_band(sample_rate));
    CorrectionBand {
        low_hz,
        high_hz,
        sample_rate_hz: sample_rate,
        source: if policy.correction_band_hz.is_some() {
            BandSource::Configured
        } else {
            BandSource::Default
        },
    }
}

/// The default band at `sample_rate` (see the module comment).
pub fn default_band(sample_rate: f64) -> BandEdges {
    // Band −17 of the one-third-octave set is the 20 Hz band: exact centre 19.953 Hz.
    let low_hz = Band::new(3, -17).exact_mid_hz;
    let high_hz = DEFAULT_NYQUIST_SHARE * sample_rate / 2.0;
    if high_hz > low_hz * roll_factor().powi(2) {
        BandEdges { low_hz, high_hz }
    } else {
        // A sample rate too low for the default (under about 50 Hz): correct everywhere.
        BandEdges {
            low_hz: 0.0,
            high_hz: sample_rate / 2.0,
        }
    }
}

/// Frequency ratio of the roll-off: G^(1/6) = 10^0.05.
fn roll_factor() -> f64 {
    octave_ratio().powf(ROLL_OFF_OCTAVES)
}

impl CorrectionBand {
    /// Share of the full correction (in dB) the inverse applies at `hz`: 0 outside the band, a
    /// raised cosine in log frequency from 0 at each edge to 1 [`ROLL_OFF_OCTAVES`] inside it,
    /// 1 between. An edge at 0 Hz or at half the sample rate has no roll.
    pub fn weight(&self, hz: f64) -> f64 {
        let ln_g = octave_ratio().ln();
        let mut octaves_in = f64::INFINITY;
        if self.low_hz > 0.0 {
            octaves_in = octaves_in.min((hz.max(0.0) / self.low_hz).ln() / ln_g);
        }
        if self.high_hz < self.sample_rate_hz / 2.0 {
            octaves_in = octaves_in.min((self.high_hz / hz).ln() / ln_g);
        }
        if octaves_in >= ROLL_OFF_OCTAVES {
            1.0
        } else if octaves_in <= 0.0 {
            0.0
        } else {
            0.5 * (1.0 - (std::f64::consts::PI * octaves_in / ROLL_OFF_OCTAVES).cos())
        }
    }

    /// Where the full correction begins and ends (the band less its rolls), in Hz.
    pub fn fully_corrected(&self) -> (f64, f64) {
        let roll = roll_factor();
        let low = if self.low_hz > 0.0 {
            self.low_hz * roll
        } else {
            0.0
        };
        let high = if self.high_hz < self.sample_rate_hz / 2.0 {
            self.high_hz / roll
        } else {
            self.high_hz
        };
        (low, high)
    }

    /// True at frequencies inside the band's edges.
    pub fn contains(&self, hz: f64) -> bool {
        hz >= self.low_hz && hz <= self.high_hz
    }

    /// True when the band covers everything from 0 Hz to half the sample rate.
    pub fn is_whole(&self) -> bool {
        self.low_hz <= 0.0 && self.high_hz >= self.sample_rate_hz / 2.0
    }

    /// Frequency width of the narrower roll (Hz): what an FFT grid must resolve to draw it.
    pub fn narrowest_roll_hz(&self) -> f64 {
        let roll = roll_factor();
        let mut width = self.sample_rate_hz / 2.0;
        if self.low_hz > 0.0 {
            width = width.min(self.low_hz * (roll - 1.0));
        }
        if self.high_hz < self.sample_rate_hz / 2.0 {
            width = width.min(self.high_hz * (1.0 - 1.0 / roll));
        }
        width
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: IEC 61260-1:2014 base-10 one-third-octave frequencies (from memory): the 20 Hz
    // band's exact centre is 1000·10^(−1.7) = 19.953 Hz; one sixth of an octave above it,
    // 10^(1.35) = 22.387 Hz, is the 25 Hz band's lower edge.
    #[test]
    fn default_band_edges() {
        let band = correction_band(&InversePolicy::default(), 48_000.0);
        assert_eq!(band.source, BandSource::Default);
        assert!((band.low_hz - 19.953).abs() < 1e-3, "{}", band.low_hz);
        let (full_low, full_high) = band.fully_corrected();
        assert!((full_low - 22.387).abs() < 1e-3, "{full_low}");
        // Nothing boosted above 0.9 · 24 kHz = 21.6 kHz; full correction to 21.6/1.122 kHz.
        assert!((band.high_hz - 21_600.0).abs() < 1e-9);
        assert!((full_high - 21_600.0 / 10f64.powf(0.05)).abs() < 1e-6);
        assert_eq!(band.weight(band.low_hz * 0.999), 0.0);
        assert_eq!(band.weight(21_600.0 * 1.001), 0.0);
        assert_eq!(band.weight(1000.0), 1.0);
        assert_eq!(band.weight(full_low * 1.0001), 1.0);
        assert_eq!(band.weight(0.0), 0.0);
        // Half way through the roll (in log frequency) the weight is one half.
        let mid = band.low_hz * 10f64.powf(0.025);
        assert!((band.weight(mid) - 0.5).abs() < 1e-12);
    }

    #[test]
    fn configured_band_and_open_edges() {
        let policy = InversePolicy {
            correction_band_hz: Some(BandEdges {
                low_hz: 0.0,
                high_hz: 8000.0,
            }),
            ..InversePolicy::default()
        };
        let band = correction_band(&policy, 16_000.0);
        assert_eq!(band.source, BandSource::Configured);
        assert!(band.is_whole());
        assert_eq!(band.weight(0.0), 1.0);
        assert_eq!(band.weight(8000.0), 1.0);
    }
}
