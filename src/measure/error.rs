//! What can go wrong in a measurement, told with the file, channel and figures concerned and
//! what to do about it.

use std::fmt;

use crate::io::{IoError, SimulationError};

/// Why a stimulus could not be made or a recording could not be identified.
#[derive(Debug)]
pub enum MeasureError {
    /// A stimulus setting is out of range.
    BadStimulus {
        setting: &'static str,
        value: String,
        why: String,
        help: String,
    },
    /// Stimulus and response were recorded at different sample rates.
    SampleRateMismatch {
        stimulus: String,
        stimulus_rate: u32,
        response: String,
        response_rate: u32,
    },
    /// The channel counts do not pair up (a stereo stimulus with a mono response, or 2 with 3).
    ChannelMismatch {
        stimulus: String,
        stimulus_channels: usize,
        response: String,
        response_channels: usize,
    },
    /// A signal is too short for what is asked of it.
    TooShort {
        signal: String,
        frames: usize,
        needed: usize,
        why: String,
    },
    /// A signal carries nothing (peak below the silence threshold).
    Silent {
        signal: String,
        channel: usize,
        peak_dbfs: f64,
    },
    /// A signal reaches full scale: the converter clipped, so the link was not heard linearly.
    Clipped {
        signal: String,
        channel: usize,
        samples: usize,
        first_frame: usize,
    },
    /// The response holds the stimulus only from part way through: recording started too late.
    ResponseStartsLate {
        response: String,
        channel: usize,
        frames: usize,
    },
    /// Nothing in the response correlates clearly with the stimulus.
    NoCorrelationPeak {
        response: String,
        channel: usize,
        prominence_db: f64,
        needed_db: f64,
    },
    /// More IIR coefficients than the data can determine, or orders past the limit.
    OrdersTooHigh {
        numerator: usize,
        denominator: usize,
        frames: usize,
        why: String,
    },
    /// An FIR model longer than the data or the limit allows.
    FirTooLong {
        taps: usize,
        frames: usize,
        most: usize,
    },
    /// The stimulus was said to hold several identical copies, and does not.
    NotRepeated {
        stimulus: String,
        repeats: usize,
        why: String,
    },
    /// A least-squares system could not be solved.
    Numerical { what: String },
    /// The fitted link has no runnable inverse, so its equalized error cannot be measured.
    NotRunnable { problems: Vec<String> },
    /// The fitted config did not read back (a fault in redress, reported rather than hidden).
    FittedConfigUnreadable(Box<crate::model::ConfigError>),
    /// A WAV file could not be read or written.
    Io(IoError),
    /// The link used to simulate a recording cannot run.
    Simulation(SimulationError),
}

impl fmt::Display for MeasureError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            MeasureError::BadStimulus {
                setting,
                value,
                why,
                help,
            } => write!(f, "stimulus {setting} = {value}: {why}\n  help: {help}"),
            MeasureError::SampleRateMismatch {
                stimulus,
                stimulus_rate,
                response,
                response_rate,
            } => write!(
                f,
                "{stimulus} is at {stimulus_rate} Hz but {response} is at {response_rate} Hz; a \
                 link is measured at one rate\n  help: record the response at the stimulus's rate \
                 ({stimulus_rate} Hz), or make the stimulus at the recorder's rate with \
                 `redress stimulus --rate {response_rate}`"
            ),
            MeasureError::ChannelMismatch {
                stimulus,
                stimulus_channels,
                response,
                response_channels,
            } => write!(
                f,
                "{stimulus} has {stimulus_channels} channel(s) and {response} has \
                 {response_channels}; each response channel needs its own stimulus channel, or \
                 one mono stimulus for all\n  help: use a mono stimulus, or record as many \
                 channels as the stimulus has"
            ),
            MeasureError::TooShort {
                signal,
                frames,
                needed,
                why,
            } => write!(
                f,
                "{signal} is too short: {frames} frames, at least {needed} needed ({why})\n  \
                 help: use a longer stimulus, or keep recording until the response has died away"
            ),
            MeasureError::Silent {
                signal,
                channel,
                peak_dbfs,
            } => write!(
                f,
                "{signal}, channel {channel}, is silent (peak {peak_dbfs:.1} dBFS)\n  help: check \
                 the connections and levels, and that the right channel was recorded"
            ),
            MeasureError::Clipped {
                signal,
                channel,
                samples,
                first_frame,
            } => write!(
                f,
                "{signal}, channel {channel}, is clipped: {samples} sample(s) at or beyond full \
                 scale, the first at frame {first_frame}; a clipped recording is not the link's \
                 linear response\n  help: lower the playback level (e.g. `redress stimulus \
                 --level-dbfs -26`) or the recording gain, and measure again"
            ),
            MeasureError::ResponseStartsLate {
                response,
                channel,
                frames,
            } => write!(
                f,
                "{response}, channel {channel}: the stimulus best lines up {frames} frames before \
                 the recording starts, so its beginning was not recorded\n  help: start \
                 recording before playback starts"
            ),
            MeasureError::NoCorrelationPeak {
                response,
                channel,
                prominence_db,
                needed_db,
            } => write!(
                f,
                "{response}, channel {channel}: no clear correlation peak with the stimulus \
                 (peak {prominence_db:.1} dB above the correlation's RMS, {needed_db:.0} dB \
                 needed); the recording does not seem to contain the stimulus\n  help: check \
                 that this is the recording of this stimulus, that the link passed signal, and \
                 that the noise is not louder than the stimulus"
            ),
            MeasureError::OrdersTooHigh {
                numerator,
                denominator,
                frames,
                why,
            } => write!(
                f,
                "orders {numerator}/{denominator} are too high for {frames} frames of data: \
                 {why}\n  help: lower the orders, or measure with a longer stimulus"
            ),
            MeasureError::FirTooLong { taps, frames, most } => write!(
                f,
                "an FIR model of {taps} taps cannot be fitted to {frames} frames (at most \
                 {most} taps here)\n  help: ask for fewer taps, or measure with a longer stimulus"
            ),
            MeasureError::NotRepeated {
                stimulus,
                repeats,
                why,
            } => write!(
                f,
                "{stimulus} does not hold {repeats} identical copies of one stimulus: {why}\n  \
                 help: give --repeats the number the stimulus was made with (`redress stimulus \
                 --repeats N`), or leave it out for a single capture"
            ),
            MeasureError::Numerical { what } => write!(
                f,
                "the least-squares fit failed: {what}\n  help: the stimulus may not excite the \
                 link enough; use a sweep or a maximum-length sequence"
            ),
            MeasureError::NotRunnable { problems } => {
                write!(f, "the fitted link has no runnable inverse:")?;
                for p in problems {
                    write!(f, "\n  - {p}")?;
                }
                write!(
                    f,
                    "\n  help: run `redress check` on the fitted config for the details"
                )
            }
            MeasureError::FittedConfigUnreadable(e) => write!(
                f,
                "the fitted config does not read back ({e}); this is a fault in redress, please \
                 report it with the two WAV files"
            ),
            MeasureError::Io(e) => e.fmt(f),
            MeasureError::Simulation(e) => e.fmt(f),
        }
    }
}

impl std::error::Error for MeasureError {}

impl From<IoError> for MeasureError {
    fn from(e: IoError) -> Self {
        MeasureError::Io(e)
    }
}

impl From<SimulationError> for MeasureError {
    fn from(e: SimulationError) -> Self {
        MeasureError::Simulation(e)
    }
}
