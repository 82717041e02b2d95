//! Measuring a link: make a stimulus, and from its recording through the link identify a
//! channel model that the rest of redress can analyse, invert and run.
//!
//! stimulus (sweep or maximum-length sequence) → played and recorded elsewhere (or simulated
//! here) → checked pair → delay by cross-correlation → FIR model by least squares (length by
//! minimum description length), which also measures the noise → optional IIR model by
//! Steiglitz–McBride → SNR per band and the trusted band → config text → read back, planned,
//! and the measurement equalized with the inverse as a check. Beside the fit, for a sweep:
//! harmonic distortion per band (Farina) and, with repeated captures (averaged before the fit),
//! how much the link changed between them.
//!
//! Entry: [`identify_files`] (or [`identify_signals`]); [`generate_stimulus`] for the stimulus.

mod band_snr;
mod capture_change;
mod delay;
mod equalized_check;
mod error;
mod fft;
mod file_delay;
mod fir_fit;
mod fitted_band;
mod fitted_config;
mod harmonic_distortion;
mod harmonic_windows;
mod identify;
mod iir_fit;
mod lagged_gram;
mod linearity;
mod mls;
mod noise;
mod recording_checks;
mod repeated_captures;
mod simulated_recording;
mod stimulus;
mod summary;
mod sweep;
mod sweep_law;
mod trust;
mod workflow;

pub use band_snr::{
    band_snr, opening_frequency_hz, trusted_range, trusted_range_above, BandSnr, TrustedRange,
    TRUST_SNR_DB,
};
pub use capture_change::{capture_change, BandChange, CaptureChange};
pub use delay::{find_delay, DelayFound, MIN_PROMINENCE_DB};
pub use equalized_check::{equalized_error, EqualizedError};
pub use error::MeasureError;
pub use file_delay::delay_between_files;
pub use fir_fit::{fit_fir, FirFit, FirLength, DEFAULT_MOST_FIR_TAPS, MOST_FIR_TAPS};
pub use fitted_band::{band_snr_pairs, inverse_table};
pub use fitted_config::{fitted_config, MeasurementSources};
pub use harmonic_distortion::{
    harmonic_distortion, BandDistortion, HarmonicDistortion, HarmonicLevel, ABOVE_FLOOR_DB,
    HIGHEST_HARMONIC,
};
pub use harmonic_windows::{deconvolve_recording, harmonic_windows, Deconvolved, HarmonicWindows};
pub use identify::{identify, ChannelFit, Identification, IdentifySettings};
pub use iir_fit::{fit_iir, IirFit, IirOrders, MAX_IIR_ORDER};
pub use linearity::{
    check_linearity, describe_linearity, linearity_json, ChannelLinearity, LinearityInput,
    CHANGE_LIMIT_DB, DISTORTION_LIMIT_DB, REPORT_FRACTION,
};
pub use mls::{maximum_length_sequence, MLS_ORDERS};
pub use noise::GaussianNoise;
pub use recording_checks::{check_pair, CheckedPair, NamedSignal, CLIP_LEVEL, SILENCE_DBFS};
pub use repeated_captures::{average_captures, capture, repeat_period};
pub use simulated_recording::{simulate_recording, simulate_recording_file, RecordingSimulation};
pub use stimulus::{
    generate_stimulus, Stimulus, StimulusKind, StimulusSpec, DEFAULT_FADE_MS, DEFAULT_LEVEL_DBFS,
    DEFAULT_MLS_ORDER, DEFAULT_SILENCE_SECONDS, DEFAULT_START_HZ, DEFAULT_SWEEP_SECONDS,
    LEVEL_RANGE_DBFS,
};
pub use summary::describe_measurement;
pub use sweep::{deconvolve_sweep, exponential_sweep, sweep_frequency_at, sweep_inverse_filter};
pub use sweep_law::{sweep_law, SweepLaw};
pub use trust::{equalized_warning, refusal_reasons};
pub use workflow::{identify_files, identify_signals, MeasurementOutcome};
