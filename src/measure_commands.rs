//! The measurement and picture subcommands of the `redress` binary: argument parsing and
//! printing only; the work is `redress::measure` and `redress::report::pictures`.

use std::path::{Path, PathBuf};

use clap::{Subcommand, ValueEnum};

use redress::io::{check_output_folder, write_wav, WavFormat};
use redress::measure::{
    describe_measurement, equalized_warning, generate_stimulus, identify_files, refusal_reasons,
    simulate_recording_file, FirLength, IdentifySettings, IirOrders, MeasureError,
    RecordingSimulation, StimulusKind, StimulusSpec, DEFAULT_FADE_MS, DEFAULT_LEVEL_DBFS,
    DEFAULT_MLS_ORDER, DEFAULT_MOST_FIR_TAPS, DEFAULT_SILENCE_SECONDS, DEFAULT_START_HZ,
    DEFAULT_SWEEP_SECONDS,
};
use redress::model::config::load_link;
use redress::pipeline::LinkPlan;
use redress::report::pictures::{write_index, write_link_pictures, write_measurement_report};

use super::number_arg::number;
use super::{existing, exit, outputs_allowed};

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
    #[command(after_help = exit::STIMULUS)]
    Stimulus {
        /// The WAV file to write (an existing file only with --replace).
        output: PathBuf,
        /// Which signal: an exponential sine sweep, or a maximum-length sequence.
        #[arg(long, value_enum, default_value_t = Kind::Sweep)]
        kind: Kind,
        /// Sample rate in Hz.
        #[arg(long, default_value_t = 48_000)]
        rate: u32,
        /// Peak level in dBFS (-80 to -1). The default is a safe starting point: raise it only
        /// while the recording stays well below full scale.
        #[arg(long, default_value_t = DEFAULT_LEVEL_DBFS, allow_negative_numbers = true,
              value_parser = number)]
        level_dbfs: f64,
        /// Sweep only: length in seconds [default: 2].
        #[arg(long, value_parser = number)]
        seconds: Option<f64>,
        /// Sweep only: start frequency in Hz [default: 20].
        #[arg(long, value_parser = number)]
        start_hz: Option<f64>,
        /// Sweep only: end frequency in Hz [default: half the sample rate].
        #[arg(long, value_parser = number)]
        end_hz: Option<f64>,
        /// Sequence only: register length of the maximum-length sequence (period 2^order - 1)
        /// [default: 16].
        #[arg(long)]
        order: Option<u32>,
        /// Sequence only: periods of the maximum-length sequence [default: 1].
        #[arg(long)]
        periods: Option<usize>,
        /// Half-Hann fade at each end, in ms.
        #[arg(long, default_value_t = DEFAULT_FADE_MS, value_parser = number)]
        fade_ms: f64,
        /// Silence after the signal, in seconds, so the link's tail is recorded.
        #[arg(long, default_value_t = DEFAULT_SILENCE_SECONDS, value_parser = number)]
        silence: f64,
        /// Channels of the file (each carries the same signal).
        #[arg(long, default_value_t = 1)]
        channels: usize,
        /// Sweep only: also write the sweep's inverse filter to this WAV (for deconvolving a
        /// recording elsewhere).
        #[arg(long, value_name = "FILE")]
        inverse_filter: Option<PathBuf>,
        /// Play the signal (and its silence) this many times back to back, for `identify
        /// --repeats`: averaging N captures lowers the noise by 10*log10(N) dB, and comparing
        /// them shows whether the link changes.
        #[arg(long, default_value_t = 1, value_parser = clap::value_parser!(u16).range(1..=64))]
        repeats: u16,
        /// Write over OUTPUT (and the inverse filter's file) if they exist.
        #[arg(long)]
        replace: bool,
    },
    /// Make a recording without a sound card: STIMULUS through the link in CONFIG, after a
    /// latency, with white noise at an SNR.
    #[command(after_help = exit::SIMULATE_RECORDING)]
    SimulateRecording {
        /// The link config (TOML) standing in for the real link.
        config: PathBuf,
        /// The stimulus WAV (as `redress stimulus` writes it), at the link's rate.
        stimulus: PathBuf,
        /// The recording to write (32-bit float). Never an input; an existing file only with
        /// --replace.
        output: PathBuf,
        /// Signal-to-noise ratio in dB (leave out for no noise).
        #[arg(long, value_parser = number)]
        snr_db: Option<f64>,
        /// Playback-to-capture latency in ms (0 to 10000).
        #[arg(long, default_value_t = 10.0, value_parser = number)]
        latency_ms: f64,
        /// Seed of the noise.
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Write over OUTPUT if it exists (never over an input).
        #[arg(long)]
        replace: bool,
    },
    /// Identify the link from a stimulus and its recording; write the fitted model as a config.
    #[command(after_help = exit::IDENTIFY)]
    Identify {
        /// The stimulus WAV as it was played.
        stimulus: PathBuf,
        /// The recording of the link's output, at the stimulus's sample rate.
        response: PathBuf,
        /// The link config to write. Never an input; an existing file only with --replace.
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
        /// The stimulus holds this many copies back to back (`redress stimulus --repeats`): the
        /// captures are averaged before fitting and compared with each other.
        #[arg(long, default_value_t = 1, value_parser = clap::value_parser!(u16).range(1..=64))]
        repeats: u16,
        /// Write pictures, an index.html and linearity.json (harmonic distortion and change
        /// between captures) of the measurement and the fitted link into this folder (created
        /// when missing).
        #[arg(long, value_name = "DIR")]
        report: Option<PathBuf>,
        /// Write over OUTPUT if it exists (never over an input).
        #[arg(long)]
        replace: bool,
    },
    /// Write pictures of a link config (pole–zero diagrams, responses, the inverse's impulse
    /// response) and an index.html into DIR.
    #[command(after_help = exit::PLOT)]
    Plot {
        /// The link config (TOML).
        config: PathBuf,
        /// The folder for the pictures (created when missing).
        dir: PathBuf,
    },
}

/// The stimulus options that belong to one kind only, as the user gave them.
struct KindOptions {
    seconds: Option<f64>,
    start_hz: Option<f64>,
    end_hz: Option<f64>,
    inverse_filter: bool,
    order: Option<u32>,
    periods: Option<usize>,
}

/// The signal `kind` asks for, or an error naming an option that does nothing for it.
fn stimulus_kind(kind: Kind, rate: u32, given: &KindOptions) -> Result<StimulusKind, String> {
    let refuse = |option: &str, other: &str| {
        Err(format!(
            "{option} does nothing for {}\n  help: leave {option} out, or choose --kind {other}",
            match kind {
                Kind::Sweep => "a sweep (it sets the maximum-length sequence)",
                Kind::Mls => "a maximum-length sequence (it sets the sweep)",
            }
        ))
    };
    match kind {
        Kind::Sweep => {
            if given.order.is_some() {
                return refuse("--order", "mls");
            }
            if given.periods.is_some() {
                return refuse("--periods", "mls");
            }
            Ok(StimulusKind::Sweep {
                start_hz: given.start_hz.unwrap_or(DEFAULT_START_HZ),
                end_hz: given.end_hz.unwrap_or(f64::from(rate) / 2.0),
                seconds: given.seconds.unwrap_or(DEFAULT_SWEEP_SECONDS),
            })
        }
        Kind::Mls => {
            for (option, given) in [
                ("--seconds", given.seconds.is_some()),
                ("--start-hz", given.start_hz.is_some()),
                ("--end-hz", given.end_hz.is_some()),
                ("--inverse-filter", given.inverse_filter),
            ] {
                if given {
                    return refuse(option, "sweep");
                }
            }
            Ok(StimulusKind::Mls {
                order: given.order.unwrap_or(DEFAULT_MLS_ORDER),
                periods: given.periods.unwrap_or(1),
            })
        }
    }
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
            repeats,
            replace,
        } => {
            let given = KindOptions {
                seconds,
                start_hz,
                end_hz,
                inverse_filter: inverse_filter.is_some(),
                order,
                periods,
            };
            let kind = match stimulus_kind(kind, rate, &given) {
                Ok(kind) => kind,
                Err(e) => {
                    eprintln!("error: {e}");
                    return exit::INVALID;
                }
            };
            let spec = StimulusSpec {
                kind,
                sample_rate: rate,
                level_dbfs,
                fade_ms,
                silence_seconds: silence,
                channels,
            };
            // Settings first (exit 2), then the files (exit 1), then any writing.
            if let Err(e) = spec.validate() {
                eprintln!("error: {e}");
                return exit::INVALID;
            }
            let mut outputs = vec![output.as_path()];
            outputs.extend(inverse_filter.as_deref());
            if !outputs_allowed(&outputs, &[], existing(replace)) {
                return exit::FAILED;
            }
            stimulus(
                &spec,
                &output,
                inverse_filter.as_deref(),
                usize::from(repeats),
            )
        }
        MeasureCommand::SimulateRecording {
            config,
            stimulus,
            output,
            snr_db,
            latency_ms,
            seed,
            replace,
        } => {
            if !outputs_allowed(&[&output], &[&config, &stimulus], existing(replace)) {
                return exit::FAILED;
            }
            simulate(&config, &stimulus, &output, snr_db, latency_ms, seed)
        }
        MeasureCommand::Identify {
            stimulus,
            response,
            output,
            taps,
            most_taps,
            iir,
            repeats,
            report,
            replace,
        } => {
            let inputs = [stimulus.as_path(), response.as_path()];
            if !outputs_allowed(&[&output], &inputs, existing(replace)) {
                return exit::FAILED;
            }
            if let Some(dir) = &report {
                if let Err(e) = check_output_folder(dir, &[&stimulus, &response, &output]) {
                    eprintln!("error: {e}");
                    return exit::FAILED;
                }
            }
            let settings = IdentifySettings {
                fir_length: match taps {
                    Some(n) => FirLength::Fixed(n),
                    None => FirLength::Automatic { most: most_taps },
                },
                iir: iir.map(|o| IirOrders {
                    numerator: o[0],
                    denominator: o[1],
                }),
                repeats: usize::from(repeats),
            };
            identify(&stimulus, &response, &output, settings, report.as_deref())
        }
        MeasureCommand::Plot { config, dir } => {
            if let Err(e) = check_output_folder(&dir, &[&config]) {
                eprintln!("error: {e}");
                return exit::FAILED;
            }
            plot(&config, &dir)
        }
    }
}

fn stimulus(spec: &StimulusSpec, output: &Path, inverse: Option<&Path>, repeats: usize) -> u8 {
    let made = match generate_stimulus(spec) {
        Ok(s) => s,
        Err(e) => {
            eprintln!("error: {e}");
            return exit::INVALID;
        }
    };
    let format = WavFormat::float32(spec.channels, spec.sample_rate);
    if let Err(e) = write_wav(output, &made.repeated_interleaved(repeats), format) {
        eprintln!("error: {e}");
        return exit::FAILED;
    }
    println!("stimulus {}: {}", output.display(), spec.describe());
    let frames = made.samples.len() * repeats;
    println!(
        "  {} frames ({:.2} s){}, {}",
        frames,
        frames as f64 / f64::from(spec.sample_rate),
        if repeats > 1 {
            format!(", {repeats} copies back to back (identify with --repeats {repeats})")
        } else {
            String::new()
        },
        format.describe()
    );
    if let Some(path) = inverse {
        let Some(filter) = made.inverse_filter() else {
            eprintln!("error: --inverse-filter: only a sweep has an inverse filter");
            return exit::INVALID;
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
            return exit::INVALID;
        }
    };
    if !(latency_ms.is_finite() && (0.0..=10_000.0).contains(&latency_ms)) {
        eprintln!("error: --latency-ms {latency_ms}: give 0 to 10000 ms");
        return exit::INVALID;
    }
    if snr_db.is_some_and(|s| !(s.is_finite() && (-20.0..=200.0).contains(&s))) {
        eprintln!("error: --snr-db: give an SNR from -20 to 200 dB");
        return exit::INVALID;
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
        | MeasureError::FirTooLong { .. } => exit::INVALID,
        MeasureError::NotRunnable { .. } | MeasureError::Simulation(_) => exit::NOT_RUNNABLE,
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
            "error: {}: the fitted config could not be written: {}\n  help: check that you may \
             write in its folder",
            output.display(),
            redress::os_error::plain_os_error(&e)
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
            return exit::INVALID;
        }
    };
    let plan = redress::pipeline::plan_link(&link);
    let report = redress::report::link_report(&plan, link.source.as_deref());
    write_pictures(&plan, dir, &redress::report::render_text(&report), false)
}
