//! The measurement and picture subcommands of the `redress` binary: argument parsing and
//! printing only; the work is `redress::measure` and `redress::report::pictures`.

use std::path::{Path, PathBuf};

use clap::{Subcommand, ValueEnum};

use redress::io::{write_wav, WavFormat};
use redress::measure::{
    describe_measurement, equalized_warning, generate_stimulus, identify_files, refusal_reasons,
    simulate_recording_file, FirLength, IdentifySettings, IirOrders, MeasureError,
    RecordingSimulation, StimulusKind, StimulusSpec, DEFAULT_LEVEL_DBFS, DEFAULT_MOST_FIR_TAPS,
};
use redress::model::config::load_link;
use redress::pipeline::LinkPlan;
use redress::report::pictures::{write_index, write_link_pictures, write_measurement_report};

use super::exit;

#[derive(Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Kind {
    /// Exponential sine sweep (Farina).
    Sweep,
    /// Maximum-length sequence.
    Mls,
}

#[derive(Subcommand)]
pub enum MeasureCommand {
    /// Write a measurement stimulus WAV (32-bit float) to play through the link.
    Stimulus {
        output: PathBuf,
        #[arg(long, value_enum, default_value_t = Kind::Sweep)]
        kind: Kind,
        /// Sample rate in Hz.
        #[arg(long, default_value_t = 48_000)]
        rate: u32,
        /// Peak level in dBFS (−80 … −1). The default is a safe starting point: raise it only
        /// while the recording stays well below full scale.
        #[arg(long, default_value_t = DEFAULT_LEVEL_DBFS, allow_negative_numbers = true)]
        level_dbfs: f64,
        /// Sweep length in seconds.
        #[arg(long, default_value_t = 2.0)]
        seconds: f64,
        /// Sweep start frequency in Hz.
        #[arg(long, default_value_t = 20.0)]
        start_hz: f64,
        /// Sweep end frequency in Hz (default: half the sample rate).
        #[arg(long)]
        end_hz: Option<f64>,
        /// Register length of the maximum-length sequence (period 2^order − 1).
        #[arg(long, default_value_t = 16)]
        order: u32,
        /// Periods of the maximum-length sequence.
        #[arg(long, default_value_t = 1)]
        periods: usize,
        /// Half-Hann fade at each end, in ms.
        #[arg(long, default_value_t = 10.0)]
        fade_ms: f64,
        /// Silence after the signal, in seconds, so the link's tail is recorded.
        #[arg(long, default_value_t = 0.5)]
        silence: f64,
        /// Channels of the file (each carries the same signal).
        #[arg(long, default_value_t = 1)]
        channels: usize,
        /// Also write the sweep's inverse filter (for deconvolving a recording elsewhere).
        #[arg(long, value_name = "FILE")]
        inverse_filter: Option<PathBuf>,
    },
    /// Make a recording without a sound card: STIMULUS through the link in CONFIG, after a
    /// latency, with white noise at an SNR.
    SimulateRecording {
        config: PathBuf,
        stimulus: PathBuf,
        output: PathBuf,
        /// Signal-to-noise ratio in dB (leave out for no noise).
        #[arg(long)]
        snr_db: Option<f64>,
        /// Playback-to-capture latency in ms.
        #[arg(long, default_value_t = 10.0)]
        latency_ms: f64,
        /// Seed of the noise.
        #[arg(long, default_value_t = 1)]
        seed: u64,
    },
    /// Identify the link from a stimulus and its recording; write the fitted model as a config.
    Identify {
        stimulus: PathBuf,
        response: PathBuf,
        /// The link config to write.
        output: PathBuf,
        /// FIR model of exactly this many taps (default: chosen by minimum description length).
        #[arg(long, conflicts_with = "most_taps")]
        taps: Option<usize>,
        /// Most taps the automatic FIR length may choose.
        #[arg(long, default_value_t = DEFAULT_MOST_FIR_TAPS)]
        most_taps: usize,
        /// Fit B/A of these orders (Steiglitz–McBride) and write it instead of the FIR model.
        #[arg(long, num_args = 2, value_names = ["NUMERATOR", "DENOMINATOR"])]
        iir: Option<Vec<usize>>,
        /// Write pictures and an index.html of the measurement and the fitted link here.
        #[arg(long, value_name = "DIR")]
        report: Option<PathBuf>,
    },
    /// Write pictures of a link config (pole–zero diagrams, responses, the inverse's impulse
    /// response) and an index.html into DIR.
    Plot { config: PathBuf, dir: PathBuf },
}

pub fn run(command: MeasureCommand) -> u8 {
    match command {
        MeasureCommand::Stimulus {
            output,
            kind,
            rate,
            level_dbfs,
            seconds,
            start_hz,
            end_hz,
            order,
            periods,
            fade_ms,
            silence,
            channels,
            inverse_filter,
        } => {
            let kind = match kind {
                Kind::Sweep => StimulusKind::Sweep {
                    start_hz,
                    end_hz: end_hz.unwrap_or(f64::from(rate) / 2.0),
                    seconds,
                },
                Kind::Mls => StimulusKind::Mls { order, periods },
            };
            let spec = StimulusSpec {
                kind,
                sample_rate: rate,
                level_dbfs,
                fade_ms,
                silence_seconds: silence,
                channels,
            };
            stimulus(&spec, &output, inverse_filter.as_deref())
        }
        MeasureCommand::SimulateRecording {
            config,
            stimulus,
            output,
            snr_db,
            latency_ms,
            seed,
        } => simulate(&config, &stimulus, &output, snr_db, latency_ms, seed),
        MeasureCommand::Identify {
            stimulus,
            response,
            output,
            taps,
            most_taps,
            iir,
            report,
        } => {
            let settings = IdentifySettings {
                fir_length: match taps {
                    Some(n) => FirLength::Fixed(n),
                    None => FirLength::Automatic { most: most_taps },
                },
                iir: iir.map(|o| IirOrders {
                    numerator: o[0],
                    denominator: o[1],
                }),
            };
            identify(&stimulus, &response, &output, settings, report.as_deref())
        }
        MeasureCommand::Plot { config, dir } => plot(&config, &dir),
    }
}

fn stimulus(spec: &StimulusSpec, output: &Path, inverse: Option<&Path>) -> u8 {
    let made = match generate_stimulus(spec) {
        Ok(s) => s,
        Err(e) => {
            eprintln!("error: {e}");
            return exit::INVALID_CONFIG;
        }
    };
    let format = WavFormat::float32(spec.channels, spec.sample_rate);
    if let Err(e) = write_wav(output, &made.interleaved(), format) {
        eprintln!("error: {e}");
        return exit::FAILED;
    }
    println!("stimulus {}: {}", output.display(), spec.describe());
    println!(
        "  {} frames ({:.2} s), {}",
        made.samples.len(),
        made.samples.len() as f64 / f64::from(spec.sample_rate),
        format.describe()
    );
    if let Some(path) = inverse {
        let Some(filter) = made.inverse_filter() else {
            eprintln!("error: --inverse-filter: only a sweep has an inverse filter");
            return exit::INVALID_CONFIG;
        };
        let samples: Vec<f32> = filter.iter().map(|&v| v as f32).collect();
        if let Err(e) = write_wav(path, &samples, WavFormat::float32(1, spec.sample_rate)) {
            eprintln!("error: {e}");
            return exit::FAILED;
        }
        println!(
            "inverse filter {}: {} frames",
            path.display(),
            samples.len()
        );
    }
    println!(
        "caution: start playback quietly and raise the level gradually; protect ears and \
         loudspeakers"
    );
    exit::OK
}

fn simulate(
    config: &Path,
    stimulus: &Path,
    output: &Path,
    snr_db: Option<f64>,
    latency_ms: f64,
    seed: u64,
) -> u8 {
    let link = match load_link(config) {
        Ok(link) => link,
        Err(e) => {
            eprintln!("error: {e}");
            return exit::INVALID_CONFIG;
        }
    };
    if !(latency_ms.is_finite() && (0.0..=10_000.0).contains(&latency_ms)) {
        eprintln!("error: --latency-ms {latency_ms}: give 0 to 10000 ms");
        return exit::INVALID_CONFIG;
    }
    if snr_db.is_some_and(|s| !(s.is_finite() && (-20.0..=200.0).contains(&s))) {
        eprintln!("error: --snr-db: give an SNR from −20 to 200 dB");
        return exit::INVALID_CONFIG;
    }
    let simulation = RecordingSimulation {
        latency_frames: (latency_ms / 1000.0 * link.sample_rate).round() as usize,
        snr_db,
        seed,
    };
    match simulate_recording_file(&link, stimulus, output, &simulation) {
        Ok(format) => {
            println!(
                "simulated recording {}: {} through {} after {} frames of latency, {}; {}",
                output.display(),
                stimulus.display(),
                config.display(),
                simulation.latency_frames,
                snr_db.map_or("no noise".to_string(), |s| format!("{s} dB SNR")),
                format.describe()
            );
            exit::OK
        }
        Err(e) => fail(&e),
    }
}

fn fail(e: &MeasureError) -> u8 {
    eprintln!("error: {e}");
    match e {
        MeasureError::BadStimulus { .. }
        | MeasureError::OrdersTooHigh { .. }
        | MeasureError::FirTooLong { .. } => exit::INVALID_CONFIG,
        MeasureError::NotRunnable { .. } => exit::NOT_RUNNABLE,
        _ => exit::FAILED,
    }
}

fn identify(
    stimulus: &Path,
    response: &Path,
    output: &Path,
    settings: IdentifySettings,
    report: Option<&Path>,
) -> u8 {
    let outcome = match identify_files(stimulus, response, settings, Some(output)) {
        Ok(o) => o,
        Err(e) => return fail(&e),
    };
    let refused = refusal_reasons(&outcome);
    if !refused.is_empty() {
        print!("{}", describe_measurement(&outcome));
        eprintln!(
            "error: the measurement gives no model fit to equalize with; {} was not written:",
            output.display()
        );
        for reason in &refused {
            eprintln!("  - {reason}");
        }
        eprintln!(
            "  help: raise the stimulus level (carefully) or lengthen the sweep for more SNR, \
             then measure again"
        );
        return exit::NOT_RUNNABLE;
    }
    if let Err(e) = std::fs::write(output, &outcome.config_text) {
        eprintln!(
            "error: {}: the fitted config could not be written: {e}\n  help: check that the \
             folder exists and is writable",
            output.display()
        );
        return exit::FAILED;
    }
    let summary = describe_measurement(&outcome);
    print!("{summary}");
    if let Some(warning) = equalized_warning(&outcome) {
        println!("  warning: {warning}");
    }
    println!("fitted config: {}", output.display());
    if let Some(dir) = report {
        match write_measurement_report(&outcome, dir, &summary) {
            Ok(index) => println!("report: {}", index.display()),
            Err(e) => {
                eprintln!("error: {e}");
                return exit::FAILED;
            }
        }
    }
    println!(
        "next: redress check {} (then apply it to audio recorded through the link)",
        output.display()
    );
    exit::OK
}

/// Pictures of `plan` into `dir`, with `report_text` on the index page; says where they are (on
/// standard error when standard output carries JSON).
pub fn write_pictures(plan: &LinkPlan, dir: &Path, report_text: &str, json: bool) -> u8 {
    let sections = match write_link_pictures(plan, dir, &[]) {
        Ok(s) => s,
        Err(e) => {
            eprintln!("error: {e}");
            return exit::FAILED;
        }
    };
    match write_index(dir, "redress: link pictures", report_text, &sections) {
        Ok(index) => {
            let count: usize = sections.iter().map(|s| s.files.len()).sum();
            let line = format!("pictures: {} ({count} SVG files)", index.display());
            if json {
                eprintln!("{line}");
            } else {
                println!("{line}");
            }
            exit::OK
        }
        Err(e) => {
            eprintln!("error: {e}");
            exit::FAILED
        }
    }
}

fn plot(config: &Path, dir: &Path) -> u8 {
    let link = match load_link(config) {
        Ok(link) => link,
        Err(e) => {
            eprintln!("error: {e}");
            return exit::INVALID_CONFIG;
        }
    };
    let plan = redress::pipeline::plan_link(&link);
    let report = redress::report::link_report(&plan, link.source.as_deref());
    write_pictures(&plan, dir, &redress::report::render_text(&report), false)
}
