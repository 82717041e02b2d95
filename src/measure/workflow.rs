//! The whole identification from two WAV files: read, check, identify, write the model as a
//! config, read it back as `check` would, plan its inverse and equalize the measurement with it.

use std::path::Path;

use super::equalized_check::{equalized_error, EqualizedError};
use super::error::MeasureError;
use super::fitted_config::{fitted_config, MeasurementSources};
use super::identify::{identify, Identification, IdentifySettings};
use super::linearity::{check_linearity, ChannelLinearity, LinearityInput};
use super::recording_checks::{check_pair, CheckedPair, NamedSignal};
use super::repeated_captures::{average_captures, repeat_period};
use crate::io::read_wav;
use crate::model::config::parse_link;
use crate::model::Link;
use crate::pipeline::{plan_link, LinkPlan};

/// Everything an identification produced.
#[derive(Debug)]
pub struct MeasurementOutcome {
    pub identification: Identification,
    pub sources: MeasurementSources,
    /// The fitted link as config text (what `identify` writes).
    pub config_text: String,
    /// That text read back, and the plan `check` would make of it.
    pub link: Link,
    pub plan: LinkPlan,
    /// The measurement equalized by the fitted inverse (an error when it cannot run).
    pub equalized: Result<EqualizedError, MeasureError>,
    /// The pair the model was fitted to: one period of the stimulus and the averaged captures.
    pub pair: CheckedPair,
    /// Harmonic distortion and change between captures, per response channel.
    pub linearity: Vec<ChannelLinearity>,
}

/// Identifies the link from in-memory signals (names for messages and the config header).
pub fn identify_signals(
    stimulus: NamedSignal<'_>,
    response: NamedSignal<'_>,
    settings: IdentifySettings,
    config_name: Option<&Path>,
) -> Result<MeasurementOutcome, MeasureError> {
    let whole = check_pair(stimulus, response)?;
    let repeats = settings.repeats.max(1);
    let period = repeat_period(&whole.stimulus[0], repeats, stimulus.name)?;
    let pair = averaged_pair(&whole, period, repeats);
    let mut identification = identify(&pair, response.name, settings)?;
    let fs = f64::from(pair.sample_rate);
    let linearity: Vec<ChannelLinearity> = (0..pair.response.len())
        .map(|c| {
            check_linearity(&LinearityInput {
                channel: c,
                stimulus: pair.stimulus_for(c),
                averaged: &pair.response[c],
                recording: &whole.response[c],
                period,
                repeats,
                sample_rate: fs,
                judged_hz: identification.channels[c].trusted.band_hz,
            })
        })
        .collect();
    // The warnings join the identification's, so the terminal and the fitted config's header
    // both carry them.
    identification
        .warnings
        .extend(linearity.iter().flat_map(|l| l.warnings()));
    let stimulus_peak = pair
        .stimulus
        .iter()
        .flatten()
        .fold(0.0f64, |m, v| m.max(v.abs()));
    let sources = MeasurementSources {
        stimulus: stimulus.name.to_string(),
        response: response.name.to_string(),
        stimulus_frames: pair.stimulus[0].len(),
        stimulus_peak_dbfs: 20.0 * stimulus_peak.log10(),
        response_channels: pair.response.len(),
    };
    let config_text = fitted_config(&identification, &sources, &linearity);
    let link = parse_link(&config_text, config_name)
        .map_err(|e| MeasureError::FittedConfigUnreadable(Box::new(e)))?;
    let plan = plan_link(&link);
    let equalized = equalized_error(&identification, &pair, &plan);
    Ok(MeasurementOutcome {
        identification,
        sources,
        config_text,
        link,
        plan,
        equalized,
        pair,
        linearity,
    })
}

/// One period of the stimulus and the mean of the captures (the pair itself for one capture).
fn averaged_pair(whole: &CheckedPair, period: usize, repeats: usize) -> CheckedPair {
    if repeats <= 1 {
        return whole.clone();
    }
    let one_period = |s: &Vec<f64>| {
        let mut s = s[..period.min(s.len())].to_vec();
        // The copy's own silence after it goes, as check_pair drops the trailing silence.
        let end = s.iter().rposition(|v| *v != 0.0).map_or(0, |p| p + 1);
        s.truncate(end);
        s
    };
    CheckedPair {
        sample_rate: whole.sample_rate,
        stimulus: whole.stimulus.iter().map(one_period).collect(),
        response: whole
            .response
            .iter()
            .map(|r| average_captures(r, period, repeats))
            .collect(),
        warnings: whole.warnings.clone(),
    }
}

/// [`identify_signals`] on two WAV files.
pub fn identify_files(
    stimulus: &Path,
    response: &Path,
    settings: IdentifySettings,
    config_name: Option<&Path>,
) -> Result<MeasurementOutcome, MeasureError> {
    let (stimulus_samples, stimulus_format) = read_wav(stimulus)?;
    let (response_samples, response_format) = read_wav(response)?;
    let stimulus_name = stimulus.display().to_string();
    let response_name = response.display().to_string();
    identify_signals(
        NamedSignal {
            name: &stimulus_name,
            samples: &stimulus_samples,
            format: stimulus_format,
        },
        NamedSignal {
            name: &response_name,
            samples: &response_samples,
            format: response_format,
        },
        settings,
        config_name,
    )
}
