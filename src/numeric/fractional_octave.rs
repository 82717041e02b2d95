//! Fractional-octave bands on the base-10 system of IEC 61260-1:2014: the octave ratio is
//! G = 10^(3/10) and the reference frequency 1000 Hz. For a bandwidth designator b (1 for
//! octaves, 3 for one-third octaves), band x has its exact mid-band frequency at
//!   fm = 1000·G^(x/b)            when b is odd,
//!   fm = 1000·G^((2x + 1)/(2b))  when b is even,
//! and its edges at fm·G^(∓1/(2b)). Adjacent bands share an edge, so the bands tile the axis.
//!
//! Anything that judges a response "per band" uses these bands, so every report speaks of the
//! same frequencies a sound level meter or analyser would.

/// Octave frequency ratio of the base-10 system, G = 10^(3/10) (about 1.9953).
pub fn octave_ratio() -> f64 {
    10f64.powf(0.3)
}

/// Reference frequency of the band numbering (Hz).
pub const REFERENCE_HZ: f64 = 1000.0;

/// One band of a fractional-octave set.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Band {
    /// Band number x relative to the band at (or, for even b, just above) 1 kHz.
    pub index: i32,
    /// Bandwidth designator b: 1 = octave, 3 = one-third octave.
    pub fraction: u32,
    pub exact_mid_hz: f64,
    pub lower_hz: f64,
    pub upper_hz: f64,
}

impl Band {
    /// Band `index` of the 1/`fraction`-octave set (`fraction` ≥ 1).
    pub fn new(fraction: u32, index: i32) -> Band {
        let b = f64::from(fraction.max(1));
        let g = octave_ratio();
        let exponent = if fraction % 2 == 1 {
            f64::from(index) / b
        } else {
            f64::from(2 * index + 1) / (2.0 * b)
        };
        let mid = REFERENCE_HZ * g.powf(exponent);
        let half = g.powf(1.0 / (2.0 * b));
        Band {
            index,
            fraction: fraction.max(1),
            exact_mid_hz: mid,
            lower_hz: mid / half,
            upper_hz: mid * half,
        }
    }

    /// The nominal mid-band frequency used to label the band, for octave and one-third-octave
    /// bands: the exact frequency rounded onto the R10 preferred numbers (1, 1.25, 1.6, 2, 2.5,
    /// 3.15, 4, 5, 6.3, 8 times a power of ten), which is how the base-10 one-third-octave
    /// frequencies fall (common practice). Other fractions are labelled with the exact
    /// frequency to three significant figures.
    pub fn nominal_mid_hz(&self) -> f64 {
        // The R10 steps times 100 Hz, as whole numbers, so scaling by a power of ten (a product
        // or quotient of whole numbers) lands exactly on the printed value.
        const R10_HUNDREDS: [f64; 10] =
            [100., 125., 160., 200., 250., 315., 400., 500., 630., 800.];
        if self.fraction == 1 || self.fraction == 3 {
            // One-third-octave band x sits at 10^(x/10) kHz: step x mod 10 of the R10 series.
            let third_index = if self.fraction == 1 {
                3 * self.index
            } else {
                self.index
            };
            let decade = third_index.div_euclid(10) + 1;
            let step = third_index.rem_euclid(10) as usize;
            let scale = 10f64.powi(decade.abs());
            if decade >= 0 {
                R10_HUNDREDS[step] * scale
            } else {
                R10_HUNDREDS[step] / scale
            }
        } else {
            let digits = self.exact_mid_hz.log10().floor() as i32 - 2;
            let unit = 10f64.powi(digits);
            (self.exact_mid_hz / unit).round() * unit
        }
    }

    /// True when the whole band lies inside [`low_hz`, `high_hz`].
    pub fn lies_within(&self, low_hz: f64, high_hz: f64) -> bool {
        self.lower_hz >= low_hz && self.upper_hz <= high_hz
    }
}

/// Every band of the 1/`fraction`-octave set that lies wholly inside [`low_hz`, `high_hz`], in
/// rising order. Empty when the range is narrower than one band or not positive.
pub fn bands_within(fraction: u32, low_hz: f64, high_hz: f64) -> Vec<Band> {
    if !(low_hz > 0.0 && high_hz > low_hz && high_hz.is_finite()) {
        return Vec::new();
    }
    let b = f64::from(fraction.max(1));
    let g = octave_ratio();
    // Band numbers bracketing the range, widened by one on each side and then filtered.
    let first = ((low_hz / REFERENCE_HZ).ln() / g.ln() * b).floor() as i32 - 1;
    let last = ((high_hz / REFERENCE_HZ).ln() / g.ln() * b).ceil() as i32 + 1;
    (first..=last)
        .map(|x| Band::new(fraction, x))
        .filter(|band| band.lies_within(low_hz, high_hz))
        .collect()
}

/// Points per band when a band's mean level is integrated: enough that a single resonance or
/// notch as narrow as the band still moves the mean (common practice for band averaging is a
/// dense logarithmic grid).
pub const POINTS_PER_BAND: usize = 64;

/// Mean power of `power_at(f)` (for example |H(e^{jωT})|² at frequency f in Hz) over the band,
/// integrated on a logarithmic grid of [`POINTS_PER_BAND`] points (midpoint rule in log f, so
/// each point stands for an equal share of the band as a constant-percentage analyser weighs
/// it), in dB (10·log10). A band with no power gives −∞.
pub fn band_mean_power_db(band: &Band, power_at: impl Fn(f64) -> f64) -> f64 {
    let (lo, hi) = (band.lower_hz.ln(), band.upper_hz.ln());
    let step = (hi - lo) / POINTS_PER_BAND as f64;
    let total: f64 = (0..POINTS_PER_BAND)
        .map(|i| power_at((lo + (i as f64 + 0.5) * step).exp()))
        .sum();
    10.0 * (total / POINTS_PER_BAND as f64).log10()
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: IEC 61260-1:2014, annex E, table of exact and nominal mid-band frequencies for
    // one-third-octave filters, base-10 system (from memory): bands -16 … 13 run from 25 Hz to
    // 20 kHz nominal, with exact mid-band frequencies 1000·10^(x/10).
    const NOMINAL_THIRD_OCTAVES: [f64; 30] = [
        25.0, 31.5, 40.0, 50.0, 63.0, 80.0, 100.0, 125.0, 160.0, 200.0, 250.0, 315.0, 400.0, 500.0,
        630.0, 800.0, 1000.0, 1250.0, 1600.0, 2000.0, 2500.0, 3150.0, 4000.0, 5000.0, 6300.0,
        8000.0, 10000.0, 12500.0, 16000.0, 20000.0,
    ];

    #[test]
    fn third_octave_mid_frequencies_follow_the_standard_table() {
        for (k, &nominal) in NOMINAL_THIRD_OCTAVES.iter().enumerate() {
            let x = k as i32 - 16;
            let band = Band::new(3, x);
            let exact = 1000.0 * 10f64.powf(f64::from(x) / 10.0);
            assert!(
                (band.exact_mid_hz - exact).abs() <= 1e-12 * exact,
                "band {x}: {} against {exact}",
                band.exact_mid_hz
            );
            assert_eq!(band.nominal_mid_hz(), nominal, "band {x}");
            // The nominal label stays within 2 % of the exact frequency (the table's values
            // differ from the exact ones by at most 1.6 %, at 31.5 against 31.62 Hz).
            assert!(
                (band.nominal_mid_hz() / exact - 1.0).abs() < 0.02,
                "band {x}"
            );
        }
    }

    // Source: IEC 61260-1:2014, same table (from memory): exact mid-band frequencies printed to
    // five significant figures.
    #[test]
    fn exact_mid_frequencies_match_printed_values() {
        for (x, printed) in [
            (-13, 50.119),
            (-10, 100.00),
            (-7, 199.53),
            (1, 1258.9),
            (5, 3162.3),
            (13, 19953.0),
        ] {
            let mid = Band::new(3, x).exact_mid_hz;
            assert!((mid / printed - 1.0).abs() < 1e-4, "band {x}: {mid}");
        }
    }

    // Source: IEC 61260-1:2014 base-10 formulas (from memory): octave band 0 is 1 kHz with edges
    // 1000·G^(∓1/2) = 707.95 and 1412.5 Hz; for even b the bands straddle 1 kHz, so the lowest
    // edge of band 0 of a sixth-octave set is exactly 1000 Hz.
    #[test]
    fn band_edges_follow_the_base_ten_formula() {
        let octave = Band::new(1, 0);
        assert!(
            (octave.lower_hz - 707.946).abs() < 1e-3,
            "{}",
            octave.lower_hz
        );
        assert!(
            (octave.upper_hz - 1412.538).abs() < 1e-3,
            "{}",
            octave.upper_hz
        );
        assert_eq!(octave.nominal_mid_hz(), 1000.0);
        assert_eq!(Band::new(1, -5).nominal_mid_hz(), 31.5);
        assert_eq!(Band::new(1, 4).nominal_mid_hz(), 16000.0);
        let sixth = Band::new(6, 0);
        assert!((sixth.lower_hz - 1000.0).abs() < 1e-9, "{}", sixth.lower_hz);
        // Adjacent bands share their edge, for odd and even designators alike.
        for fraction in [1, 3, 6, 12, 24] {
            for x in -40..40 {
                let (a, b) = (Band::new(fraction, x), Band::new(fraction, x + 1));
                assert!(
                    (a.upper_hz / b.lower_hz - 1.0).abs() < 1e-12,
                    "1/{fraction}: {x}"
                );
            }
        }
    }

    #[test]
    fn bands_within_a_range_are_whole_and_complete() {
        let bands = bands_within(3, 20.0, 20000.0);
        // 25 Hz (lower edge 22.4 Hz) up to 16 kHz (upper edge 17.8 kHz); the 20 kHz band ends at
        // 22.4 kHz, outside the range.
        assert_eq!(bands.first().unwrap().nominal_mid_hz(), 25.0);
        assert_eq!(bands.last().unwrap().nominal_mid_hz(), 16000.0);
        assert_eq!(bands.len(), 29);
        assert!(bands.windows(2).all(|w| w[1].index == w[0].index + 1));
        assert!(bands_within(3, 1000.0, 1100.0).is_empty());
        assert!(bands_within(3, 0.0, 1000.0).is_empty());
        assert!(bands_within(3, f64::NAN, 1000.0).is_empty());
    }

    #[test]
    fn band_mean_of_a_flat_response_is_its_level_and_a_notch_pulls_it_down() {
        let band = Band::new(3, 0);
        let flat = band_mean_power_db(&band, |_| 4.0);
        assert!((flat - 10.0 * 4f64.log10()).abs() < 1e-12, "{flat}");
        // A notch over the lower half of the band (in log f) halves the mean power: -3.01 dB.
        let split = (band.lower_hz * band.upper_hz).sqrt();
        let half = band_mean_power_db(&band, |f| if f < split { 0.0 } else { 1.0 });
        assert!((half + 10.0 * 2f64.log10()).abs() < 1e-9, "{half}");
        assert_eq!(band_mean_power_db(&band, |_| 0.0), f64::NEG_INFINITY);
    }
}
