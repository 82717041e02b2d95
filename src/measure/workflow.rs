//! The whole identification from two WAV files: read, check, identify, write the model as a
//! config, read it back as `check` would, plan its inverse and equalize the measurement with it.

use std::path::Path;

use super::equalized_check::{equalized_error, EqualizedError};
use super::error::MeasureError;
use super::fitted_config::{fitted_config, MeasurementSources};
use super::identify::{identify, Identification, IdentifySettings};
use super::recording_checks::{check_pair, CheckedPair, NamedSignal};
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
    pub pair: CheckedPair,
}

/// Identifies the link from in-memory signals (names for messages and the config header).
pub fn identify_signals(
    stimulus: NamedSignal<'_>,
    response: NamedSignal<'_>,
    settings: IdentifySettings,
    config_name: Option<&Path>,
) -> Result<MeasurementOutcome, MeasureError> {
    let pair = check_pair(stimulus, response)?;
    let identification = identify(&pair, response.name, settings)?;
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
    let config_text = fitted_config(&identification, &sources);
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
    })
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
