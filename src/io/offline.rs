//! File-to-file processing: read a WAV file block by block, run each block through a processor
//! (the equalizer, or the simulated link), write the result. Never holds the whole file.

use std::fmt;
use std::path::Path;

use super::band_levels::{band_level_errors, BandLevels};
use super::error_metric::{error_db, ErrorMeasure, MetricError};
use super::simulated_link::{SimulatedLink, SimulationError};
use super::wav::{read_wav, WavBlockReader, WavBlockWriter, WavFormat};
use super::IoError;
use crate::design::judged_band;
use crate::engine::{EngineError, Equalizer};
use crate::model::{InversePolicy, Link};
use crate::pipeline::LinkPlan;

/// Anything that turns interleaved blocks into interleaved blocks of the same size, carrying its
/// state from one block to the next.
pub trait BlockProcessor {
    fn channel_count(&self) -> usize;
    fn process_interleaved(&mut self, input: &[f32], output: &mut [f32]);
}

impl BlockProcessor for SimulatedLink {
    fn channel_count(&self) -> usize {
        SimulatedLink::channel_count(self)
    }
    fn process_interleaved(&mut self, input: &[f32], output: &mut [f32]) {
        SimulatedLink::process_interleaved(self, input, output);
    }
}

impl BlockProcessor for Equalizer {
    fn channel_count(&self) -> usize {
        Equalizer::channel_count(self)
    }
    fn process_interleaved(&mut self, input: &[f32], output: &mut [f32]) {
        Equalizer::process_interleaved(self, input, output);
    }
}

/// How to run a file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FileRunOptions {
    /// Frames per block (at least 1).
    pub block_frames: usize,
    /// Write the input's own format instead of 32-bit float.
    pub keep_format: bool,
}

impl Default for FileRunOptions {
    fn default() -> Self {
        Self {
            block_frames: super::wav::DEFAULT_BLOCK_FRAMES,
            keep_format: false,
        }
    }
}

/// What a file run did.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FileRunSummary {
    pub input_format: WavFormat,
    pub output_format: WavFormat,
    pub frames: u64,
    /// Output samples at or beyond full scale (clamped in integer output).
    pub clipped_samples: u64,
}

/// Why a file run or comparison failed.
#[derive(Debug)]
pub enum OfflineError {
    Io(IoError),
    Metric(MetricError),
    Simulation(SimulationError),
    /// The link has no runnable inverse; one line per reason.
    NotRunnable {
        problems: Vec<String>,
    },
    /// The equalizer could not be built from the plan.
    Engine(EngineError),
    /// The block size is zero.
    EmptyBlock,
}

impl fmt::Display for OfflineError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            OfflineError::Io(e) => e.fmt(f),
            OfflineError::Metric(e) => e.fmt(f),
            OfflineError::Simulation(e) => e.fmt(f),
            OfflineError::NotRunnable { problems } => {
                write!(f, "the link cannot be equalized as configured:")?;
                for problem in problems {
                    write!(f, "\n  - {problem}")?;
                }
                write!(
                    f,
                    "\n  help: run `redress check` on the config for the full analysis"
                )
            }
            OfflineError::Engine(e) => e.fmt(f),
            OfflineError::EmptyBlock => write!(f, "the block size must be at least 1 frame"),
        }
    }
}

impl std::error::Error for OfflineError {}

impl From<IoError> for OfflineError {
    fn from(e: IoError) -> Self {
        OfflineError::Io(e)
    }
}

impl From<MetricError> for OfflineError {
    fn from(e: MetricError) -> Self {
        OfflineError::Metric(e)
    }
}

impl From<SimulationError> for OfflineError {
    fn from(e: SimulationError) -> Self {
        OfflineError::Simulation(e)
    }
}

/// Calls back at every tenth of a long file, so a shell can show progress without flooding.
pub struct ProgressSteps {
    total_frames: u64,
    next_tenth: u64,
    enabled: bool,
}

impl ProgressSteps {
    /// Files shorter than this many seconds finish too soon for progress to be worth showing.
    pub const LONG_FILE_SECONDS: f64 = 10.0;

    pub fn new(total_frames: u64, sample_rate: u32) -> Self {
        Self {
            total_frames,
            next_tenth: 1,
            enabled: total_frames as f64 > Self::LONG_FILE_SECONDS * f64::from(sample_rate),
        }
    }

    /// The percentages (10, 20, …) crossed now that `done` frames are through.
    pub fn crossed(&mut self, done: u64) -> Option<u32> {
        if !self.enabled || self.next_tenth > 10 {
            return None;
        }
        let mut crossed = None;
        while self.next_tenth <= 10 && done * 10 >= self.next_tenth * self.total_frames {
            crossed = Some(self.next_tenth as u32 * 10);
            self.next_tenth += 1;
        }
        crossed
    }
}

/// Runs `input` through `processor` into `output`, block by block. The input must have the
/// processor's channel count and `sample_rate`. `progress` gets each tenth (10, 20, … %) of a
/// file longer than [`ProgressSteps::LONG_FILE_SECONDS`].
pub fn run_file<P: BlockProcessor>(
    processor: &mut P,
    sample_rate: u32,
    input: &Path,
    output: &Path,
    options: FileRunOptions,
    progress: &mut dyn FnMut(u32),
) -> Result<FileRunSummary, OfflineError> {
    if options.block_frames == 0 {
        return Err(OfflineError::EmptyBlock);
    }
    let mut reader = WavBlockReader::open(input)?;
    let input_format = reader.format();
    if input_format.channels != processor.channel_count() {
        return Err(IoError::ChannelMismatch {
            file: input.to_path_buf(),
            found: input_format.channels,
            expected: processor.channel_count(),
        }
        .into());
    }
    if input_format.sample_rate != sample_rate {
        return Err(IoError::SampleRateMismatch {
            file: input.to_path_buf(),
            found: input_format.sample_rate,
            expected: sample_rate,
        }
        .into());
    }
    let output_format = if options.keep_format {
        input_format
    } else {
        WavFormat::float32(input_format.channels, input_format.sample_rate)
    };
    refuse_overwriting_input(input, output)?;
    let mut writer = WavBlockWriter::create(output, output_format)?;
    let mut steps = ProgressSteps::new(reader.frames_total(), sample_rate);
    let block_len = options.block_frames * input_format.channels;
    let mut block_in = vec![0.0f32; block_len];
    let mut block_out = vec![0.0f32; block_len];
    let mut body = || -> Result<(), IoError> {
        loop {
            let frames = reader.read_block(&mut block_in)?;
            if frames == 0 {
                return Ok(());
            }
            let used = frames * input_format.channels;
            processor.process_interleaved(&block_in[..used], &mut block_out[..used]);
            writer.write_block(&block_out[..used])?;
            if let Some(percent) = steps.crossed(reader.frames_read()) {
                progress(percent);
            }
        }
    };
    if let Err(e) = body() {
        // A half-written output would pass for a result: remove it.
        drop(writer);
        let _ = std::fs::remove_file(output);
        return Err(e.into());
    }
    let written = writer.finish()?;
    Ok(FileRunSummary {
        input_format,
        output_format,
        frames: written.frames,
        clipped_samples: written.clipped_samples,
    })
}

/// Refuses an output path that is the input file itself (same file, by device and inode, so a
/// second name or a link to it is caught too): creating the output would truncate the input.
fn refuse_overwriting_input(input: &Path, output: &Path) -> Result<(), IoError> {
    use std::os::unix::fs::MetadataExt;
    let (Ok(i), Ok(o)) = (std::fs::metadata(input), std::fs::metadata(output)) else {
        return Ok(());
    };
    if i.dev() == o.dev() && i.ino() == o.ino() {
        return Err(IoError::OutputIsInput {
            file: output.to_path_buf(),
        });
    }
    Ok(())
}

/// Runs `input` through the link's own channels (the simulated link) into `output`.
pub fn distort_file(
    link: &Link,
    input: &Path,
    output: &Path,
    options: FileRunOptions,
    progress: &mut dyn FnMut(u32),
) -> Result<FileRunSummary, OfflineError> {
    let mut simulated = SimulatedLink::new(link)?;
    run_file(
        &mut simulated,
        link_rate(link),
        input,
        output,
        options,
        progress,
    )
}

/// The equalizer for a plan, or why the plan cannot run.
pub fn equalizer_for(plan: &LinkPlan) -> Result<Equalizer, OfflineError> {
    if !plan.is_runnable() {
        return Err(OfflineError::NotRunnable {
            problems: plan.problems(),
        });
    }
    Equalizer::from_plan(plan, 0).map_err(OfflineError::Engine)
}

/// Equalizes `input` into `output` with the plan's inverses, block by block. Refuses a plan that
/// is not runnable, with its reasons.
pub fn apply_file(
    plan: &LinkPlan,
    input: &Path,
    output: &Path,
    options: FileRunOptions,
    progress: &mut dyn FnMut(u32),
) -> Result<FileRunSummary, OfflineError> {
    let mut equalizer = equalizer_for(plan)?;
    let rate = plan.sample_rate.round() as u32;
    run_file(&mut equalizer, rate, input, output, options, progress)
}

/// The link's sample rate as a WAV header spells it.
pub(crate) fn link_rate(link: &Link) -> u32 {
    link.sample_rate.round() as u32
}

/// What `compare` finds: the waveform error and the level error per one-third-octave band.
#[derive(Debug, Clone, PartialEq)]
pub struct Comparison {
    pub measure: ErrorMeasure,
    /// Band levels in the default judged band (20 Hz up to 20 kHz or 0.9 of Nyquist).
    pub bands: BandLevels,
    pub sample_rate: u32,
}

/// Error of `test` against `reference` (see [`super::error_metric`]) and its band levels (see
/// [`super::band_levels`]). Both files must have the same channel count and sample rate.
pub fn compare_files(
    test: &Path,
    reference: &Path,
    delay: usize,
    skip: usize,
) -> Result<Comparison, OfflineError> {
    let (reference_samples, reference_format) = read_wav(reference)?;
    let (test_samples, test_format) = read_wav(test)?;
    let differ = |unit, found: usize, expected: usize| {
        OfflineError::Io(IoError::NotComparable {
            file: test.to_path_buf(),
            reference: reference.to_path_buf(),
            unit,
            found: found as u32,
            expected: expected as u32,
        })
    };
    if test_format.channels != reference_format.channels {
        return Err(differ(
            "channel",
            test_format.channels,
            reference_format.channels,
        ));
    }
    if test_format.sample_rate != reference_format.sample_rate {
        return Err(differ(
            "Hz",
            test_format.sample_rate as usize,
            reference_format.sample_rate as usize,
        ));
    }
    let measure = error_db(
        &test_samples,
        &reference_samples,
        test_format.channels,
        delay,
        skip,
    )?;
    let rate = f64::from(test_format.sample_rate);
    let bands = band_level_errors(
        &test_samples,
        &reference_samples,
        test_format.channels,
        delay,
        skip,
        rate,
        judged_band(&InversePolicy::default(), rate),
    )?;
    Ok(Comparison {
        measure,
        bands,
        sample_rate: test_format.sample_rate,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn progress_only_for_long_files_and_once_per_tenth() {
        let mut short = ProgressSteps::new(48_000 * 5, 48_000);
        assert_eq!(short.crossed(48_000 * 5), None);
        let total = 48_000 * 20;
        let mut long = ProgressSteps::new(total, 48_000);
        assert_eq!(long.crossed(total / 20), None);
        assert_eq!(long.crossed(total / 10), Some(10));
        assert_eq!(long.crossed(total / 10 + 1), None);
        // A big block may cross several tenths at once: the last one is reported.
        assert_eq!(long.crossed(total / 2), Some(50));
        assert_eq!(long.crossed(total), Some(100));
        assert_eq!(long.crossed(total), None);
    }
}
