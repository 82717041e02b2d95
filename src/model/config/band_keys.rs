//! The two band keys of `[path.inverse]`: `correction_band_hz`, the band the inverse corrects,
//! and `band_snr_db`, the SNR `identify` measured per band, which limits the gain band by band.

use super::tree::Node;
use crate::model::error::{ConfigError, ConfigErrorKind};
use crate::model::{BandEdges, BandSnr};

/// Reads `correction_band_hz = [low, high]` (Hz, 0 ≤ low < high ≤ fs/2).
pub(crate) fn read_correction_band(
    node: &Node<'_>,
    sample_rate: f64,
) -> Result<BandEdges, ConfigError> {
    let edges = node.numbers()?;
    let nyquist = sample_rate / 2.0;
    let help = format!(
        "give the band's lower and upper edges in Hz, e.g. [20, 18000]; 0 as the lower edge and \
         {nyquist} (half the sample rate) as the upper one correct to the ends"
    );
    let [low, high] = edges[..] else {
        return Err(node.fail(
            ConfigErrorKind::WrongType,
            format!(
                "a correction band has two edges, lower and upper; {} number(s) given",
                edges.len()
            ),
            help,
        ));
    };
    if !(low >= 0.0 && high > low && high <= nyquist) {
        return Err(node.fail(
            ConfigErrorKind::OutOfRange,
            format!(
                "[{low}, {high}] Hz is not a band of this link: the lower edge must be 0 or more \
                 and below the upper one, which may be at most half the sample rate ({nyquist} Hz)"
            ),
            help,
        ));
    }
    Ok(BandEdges {
        low_hz: low,
        high_hz: high,
    })
}

/// Reads `band_snr_db = [[hz, snr_db], …]`: band centres rising, each inside (0, fs/2).
pub(crate) fn read_band_snr(
    node: &Node<'_>,
    sample_rate: f64,
) -> Result<Vec<BandSnr>, ConfigError> {
    let help =
        "write one [centre_hz, snr_db] pair per band, centres rising, as `redress identify` \
                writes them, e.g. [[1000.0, 42.5], [1258.9, 41.0]]";
    let mut bands: Vec<BandSnr> = Vec::new();
    for item in node.array()? {
        let pair = item.numbers()?;
        let [hz, snr_db] = pair[..] else {
            return Err(item.fail(
                ConfigErrorKind::WrongType,
                format!(
                    "each band is [centre_hz, snr_db]; {} number(s) given",
                    pair.len()
                ),
                help,
            ));
        };
        let rising = bands.last().is_none_or(|last| hz > last.hz);
        if !(hz > 0.0 && hz < sample_rate / 2.0 && rising) {
            return Err(item.fail(
                ConfigErrorKind::OutOfRange,
                format!(
                    "band centre {hz} Hz must lie above 0, below half the sample rate ({} Hz) \
                     and above the previous band's centre",
                    sample_rate / 2.0
                ),
                help,
            ));
        }
        bands.push(BandSnr { hz, snr_db });
    }
    Ok(bands)
}
