//! Audio in and out: WAV files read and written block by block, generated programme material,
//! a simulated link that applies a configured channel to audio, and the error measure used to
//! judge an equalized signal against its original.

pub mod band_levels;
mod demo;
mod error;
pub mod error_metric;
pub mod live;
pub mod offline;
pub mod output_files;
pub mod paced_link;
pub mod programme;
pub mod simulated_link;
pub mod wav;

pub use demo::{run_demo, DemoOutcome};
pub use error::IoError;
pub use error_metric::{error_db, error_db_per_channel, format_db, ErrorMeasure, MetricError};
pub use offline::{
    apply_file, compare_files, distort_file, equalizer_for, run_file, BlockProcessor, Comparison,
    FileRunOptions, FileRunSummary, OfflineError, ProgressSteps,
};
pub use output_files::{check_output_files, check_output_folder, Existing};
pub use programme::{generate, ProgrammeSpec};
pub use simulated_link::{SimulatedLink, SimulationError};
pub use wav::{
    read_wav, write_wav, SampleEncoding, WavBlockReader, WavBlockWriter, WavFormat, WriteSummary,
    DEFAULT_BLOCK_FRAMES,
};
