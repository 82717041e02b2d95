//! From a checked stimulus/response pair to a channel model per response channel: find where
//! the stimulus arrives, fit the FIR model (which also measures the noise), optionally the IIR
//! model, and judge how far each can be trusted.

use super::band_snr::{
    band_snr, opening_frequency_hz, trusted_range_above, BandSnr, TrustedRange, TRUST_SNR_DB,
};
use super::delay::find_delay;
use super::error::MeasureError;
use super::fir_fit::{
    check_length, fit_fir, tap_scatter, FirFit, FirLength, DEFAULT_MOST_FIR_TAPS, MOST_FIR_TAPS,
};
use super::iir_fit::{filter, fit_iir, IirFit, IirOrders};
use super::recording_checks::CheckedPair;
use crate::model::MAX_ORDER;

/// The onset is searched at least this many frames before the correlation peak (and a quarter
/// of the longest model, when that is more): a link's response may build up before its
/// largest sample (a precursor, or a non-minimum-phase channel).
pub const ONSET_SEARCH_FRAMES: usize = 128;
/// A tap smaller than this fraction of the largest (−60 dB) does not mark the onset.
const ONSET_FRACTION: f64 = 1e-3;
/// Nor does a tap within this many standard deviations of its own noise scatter (a Gaussian
/// passes 6σ with probability 2·10⁻⁹ per tap, common practice).
const ONSET_SIGMAS: f64 = 6.0;
/// Below this measured SNR (dB) the report warns that the model is rough.
pub const LOW_SNR_DB: f64 = 20.0;

/// What to fit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct IdentifySettings {
    pub fir_length: FirLength,
    /// Fit B/A of these orders too, and write it rather than the FIR model.
    pub iir: Option<IirOrders>,
    /// The stimulus holds this many identical copies back to back: the captures are averaged
    /// before fitting, and compared with each other (1: a single capture).
    pub repeats: usize,
}

impl Default for IdentifySettings {
    fn default() -> Self {
        Self {
            fir_length: FirLength::Automatic {
                most: DEFAULT_MOST_FIR_TAPS,
            },
            iir: None,
            repeats: 1,
        }
    }
}

/// One response channel, identified.
#[derive(Debug, Clone, PartialEq)]
pub struct ChannelFit {
    pub channel: usize,
    /// Lag of the correlation peak (frames from the stimulus's start).
    pub peak_lag: usize,
    pub prominence_db: f64,
    /// Where the response begins: the model's first tap lines up with this frame.
    pub onset: usize,
    pub fir: FirFit,
    pub iir: Option<IirFit>,
    /// Model output power over the stimulus's span against the residual's variance (dB).
    pub snr_db: f64,
    pub band_snr: BandSnr,
    pub trusted: TrustedRange,
}

impl ChannelFit {
    /// The model written to the config: the IIR fit when there is one, else the FIR taps.
    pub fn model(&self) -> (Vec<f64>, Vec<f64>) {
        match &self.iir {
            Some(fit) => (fit.b.clone(), fit.a.clone()),
            None => (self.fir.taps.clone(), vec![1.0]),
        }
    }

    /// Output error of the written model relative to the response (dB).
    pub fn model_error_db(&self) -> f64 {
        match &self.iir {
            Some(fit) => fit.fit_error_db(),
            None => self.fir.residual_db(),
        }
    }
}

/// Every channel identified, and what the user should know.
#[derive(Debug, Clone, PartialEq)]
pub struct Identification {
    pub sample_rate: u32,
    pub settings: IdentifySettings,
    pub channels: Vec<ChannelFit>,
    /// The earliest onset: the delay common to every channel, left out of the models.
    pub common_delay: usize,
    /// Per channel: onset − common delay, kept in the model as leading zero taps.
    pub relative_delays: Vec<usize>,
    pub warnings: Vec<String>,
}

impl Identification {
    /// Channel `c`'s model with its relative delay as leading zeros of b.
    pub fn channel_model(&self, c: usize) -> (Vec<f64>, Vec<f64>) {
        let (b, a) = self.channels[c].model();
        let mut delayed = vec![0.0; self.relative_delays[c]];
        delayed.extend(b);
        (delayed, a)
    }
}

/// Identifies every channel of `pair`; `response_name` names the recording in messages.
pub fn identify(
    pair: &CheckedPair,
    response_name: &str,
    settings: IdentifySettings,
) -> Result<Identification, MeasureError> {
    let mut warnings = pair.warnings.clone();
    let mut channels = Vec::with_capacity(pair.response.len());
    for (c, response) in pair.response.iter().enumerate() {
        let stimulus = pair.stimulus_for(c);
        let fit = identify_channel(
            stimulus,
            response,
            f64::from(pair.sample_rate),
            c,
            response_name,
            settings,
            &mut warnings,
        )?;
        channels.push(fit);
    }
    let common_delay = channels.iter().map(|f| f.onset).min().unwrap_or(0);
    let mut relative_delays: Vec<usize> = channels.iter().map(|f| f.onset - common_delay).collect();
    for (c, fit) in channels.iter().enumerate() {
        let length = relative_delays[c] + fit.model().0.len();
        if length > MAX_ORDER + 1 {
            warnings.push(format!(
                "channel {c} arrives {} frames after the earliest channel: too long to keep in \
                 the model, so the offset between channels is left out",
                relative_delays[c]
            ));
            relative_delays[c] = 0;
        }
    }
    Ok(Identification {
        sample_rate: pair.sample_rate,
        settings,
        channels,
        common_delay,
        relative_delays,
        warnings,
    })
}

fn identify_channel(
    stimulus: &[f64],
    response: &[f64],
    sample_rate: f64,
    channel: usize,
    response_name: &str,
    settings: IdentifySettings,
    warnings: &mut Vec<String>,
) -> Result<ChannelFit, MeasureError> {
    let found = find_delay(stimulus, response, response_name, channel)?;
    // A length the data cannot carry is refused before any fitting.
    check_length(
        stimulus.len(),
        response.len().saturating_sub(found.peak_lag),
        settings.fir_length,
    )?;
    let too_short = |from: usize| MeasureError::TooShort {
        signal: format!("{response_name}, channel {channel},"),
        frames: response.len(),
        needed: from + stimulus.len(),
        why: format!(
            "the stimulus arrives at frame {from} and lasts {} frames, so the recording stops \
             before the stimulus has been heard whole",
            stimulus.len()
        ),
    };
    let longest = match settings.fir_length {
        FirLength::Fixed(taps) => taps,
        FirLength::Automatic { most } => most,
    };
    // A long response can build up for a good part of its length before the correlation peaks
    // (a room's strongest arrival is often a cluster of reflections, and a sweep's correlation
    // weights the low frequencies): search back a quarter of the longest model, at least the
    // stated minimum.
    let search_back = ONSET_SEARCH_FRAMES.max(longest / 4);
    let search_from = found.peak_lag - found.peak_lag.min(search_back);
    if response.len() < search_from + stimulus.len() {
        return Err(too_short(search_from));
    }
    // The first look must hold the whole response: a model cut short (it once stopped 64 taps
    // after the peak) cannot express the tail, and least squares spreads what it cannot express
    // over the taps it has, the leading ones too; with a long stimulus the noise threshold falls
    // under that leakage and the onset was read up to 128 frames early. So its length is chosen
    // as the final model's is, with room for the frames searched before the peak.
    let first_look = fit_fir(
        stimulus,
        &response[search_from..],
        FirLength::Automatic {
            most: (found.peak_lag - search_from + longest.max(64)).min(MOST_FIR_TAPS),
        },
    )?;
    let first_tap = onset_of(&first_look, stimulus);
    if first_tap == 0 && search_from > 0 {
        warnings.push(format!(
            "{response_name}, channel {channel}: the response is already under way {} frames \
             before its correlation peak, the farthest the onset is searched; a longer build-up \
             is left out of the model (allow more taps: the search reaches back a quarter of \
             them)",
            found.peak_lag - search_from
        ));
    }
    let onset = search_from + first_tap;
    if response.len() < onset + stimulus.len() {
        return Err(too_short(onset));
    }
    let aligned = &response[onset..];
    let fir = fit_fir(stimulus, aligned, settings.fir_length)?;
    if aligned.len() < stimulus.len() + fir.taps.len() {
        warnings.push(format!(
            "{response_name}, channel {channel}: the recording stops {} frames after the \
             stimulus ends, before the {}-tap response has died away; record a little longer",
            aligned.len() - stimulus.len(),
            fir.taps.len()
        ));
    }
    if fir.automatic && fir.taps.len() == fir.most_taps {
        warnings.push(format!(
            "channel {channel}: the automatic FIR length reached its limit of {} taps; the \
             response may be longer (allow more taps)",
            fir.most_taps
        ));
    }
    let model_output = filter(&fir.taps, &[1.0], stimulus, fir.frames);
    let residual: Vec<f64> = aligned[..fir.frames]
        .iter()
        .zip(&model_output)
        .map(|(y, m)| y - m)
        .collect();
    let span = stimulus.len().min(fir.frames);
    let signal_power = model_output[..span].iter().map(|v| v * v).sum::<f64>() / span as f64;
    let snr_db = 10.0 * (signal_power / fir.noise_variance()).log10();
    let bands = band_snr(&model_output, &residual, sample_rate);
    let lowest_excited = opening_frequency_hz(stimulus, sample_rate).unwrap_or(0.0);
    let trusted = trusted_range_above(&bands, TRUST_SNR_DB, lowest_excited);
    if snr_db < LOW_SNR_DB {
        warnings.push(format!(
            "channel {channel}: the measured SNR is only {snr_db:.1} dB; the model is rough — \
             raise the level (carefully) or use a longer stimulus"
        ));
    }
    match trusted.band_hz {
        None => warnings.push(format!(
            "channel {channel}: no band reaches {TRUST_SNR_DB} dB SNR; do not trust this model"
        )),
        Some(_) if trusted.coverage < 0.9 => warnings.push(format!(
            "channel {channel}: only {:.0} % of the trusted band reaches {TRUST_SNR_DB} dB SNR; \
             the gaps are likely deep notches of the link or bands the stimulus missed",
            100.0 * trusted.coverage
        )),
        Some(_) => {}
    }
    let iir = match settings.iir {
        Some(orders) => {
            let fit = fit_iir(stimulus, aligned, fir.frames, orders)?;
            if !fit.converged {
                warnings.push(format!(
                    "channel {channel}: the Steiglitz–McBride iteration did not settle in {} \
                     passes; the IIR model is the last pass",
                    fit.iterations
                ));
            }
            if fit.reflected_poles > 0 {
                warnings.push(format!(
                    "channel {channel}: {} pole(s) of an IIR pass fell on or outside the unit \
                     circle and were reflected inside",
                    fit.reflected_poles
                ));
            }
            if fit.fit_error_db() > fir.residual_db() + 3.0 {
                warnings.push(format!(
                    "channel {channel}: the IIR model of orders {}/{} explains less than the \
                     FIR model (fit error {:.1} dB against {:.1} dB): its orders may be too low",
                    orders.numerator,
                    orders.denominator,
                    fit.fit_error_db(),
                    fir.residual_db()
                ));
            }
            Some(fit)
        }
        None => None,
    };
    Ok(ChannelFit {
        channel,
        peak_lag: found.peak_lag,
        prominence_db: found.prominence_db,
        onset,
        fir,
        iir,
        snr_db,
        band_snr: bands,
        trusted,
    })
}

/// The first tap of `fit` that stands clear of both the noise and −60 dB of the largest tap.
fn onset_of(fit: &FirFit, stimulus: &[f64]) -> usize {
    let peak = fit.taps.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    // A tap's scatter follows the stimulus's spectrum, not only its energy: a sweep's pink
    // spectrum leaves its thin top octaves to set it (the white-stimulus figure σ/√(Σs²) was
    // several times too small, and at 30 dB SNR noise taps passed for the onset).
    let tap_noise = tap_scatter(stimulus, fit.taps.len(), fit.noise_variance());
    let threshold = (ONSET_FRACTION * peak).max(ONSET_SIGMAS * tap_noise);
    // The largest tap is part of the response whatever the threshold says.
    let largest = fit.taps.iter().position(|v| v.abs() == peak).unwrap_or(0);
    fit.taps
        .iter()
        .position(|v| v.abs() >= threshold)
        .map_or(largest, |first| first.min(largest))
}
