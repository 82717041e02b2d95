//! The `redress` command: parses arguments, calls the library, prints. No signal processing here.

mod measure_commands;

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use clap::{Parser, Subcommand};

use redress::control::{
    default_socket_path, init_logging, query_status, render_status_text, run_service, ServiceError,
    ServiceOptions, SourceChoice,
};
use redress::io::{self, FileRunOptions, FileRunSummary, ProgrammeSpec};
use redress::model::config::{load_link, parse_link};
use redress::model::Link;
use redress::pipeline::{plan_link, LinkPlan};
use redress::report::{link_report, render_json, render_text};

/// Exit codes, as documented in `--help` and the README.
mod exit {
    /// The command did what was asked.
    pub const OK: u8 = 0;
    /// Something outside the config went wrong: a file could not be read or written, a WAV
    /// file was unusable, a comparison could not be made.
    pub const FAILED: u8 = 1;
    /// The config is invalid (or the arguments are: clap uses 2 for those too).
    pub const INVALID_CONFIG: u8 = 2;
    /// The config is valid, but some path has no runnable inverse (no stable causal inverse and
    /// no substitute allowed, or refused at design or realization).
    pub const NOT_RUNNABLE: u8 = 3;
}

const EXIT_CODES: &str = "\
Exit codes:
  0  done (for `check`: every path has an inverse ready to run)
  1  a file could not be read or written, or a WAV file was unusable
  2  the config (or the command line) is invalid
  3  the config is valid but some path has no runnable inverse (for identify: the measurement
     gives no model fit to equalize with, and none is written)";

/// The demo's link when no config is named: a line with one echo, built into the binary so the
/// demo needs no files.
const DEMO_CONFIG_NAME: &str = "configs/echo_line.toml";
const DEMO_CONFIG: &str = include_str!("../configs/echo_line.toml");

/// Derive, check and run stable causal inverse filters for measured audio links.
#[derive(Parser)]
#[command(name = "redress", version, about, after_help = EXIT_CODES)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Analyse every path of a link config: zeros, poles, verdict, inverse, realization.
    #[command(after_help = EXIT_CODES)]
    Check {
        /// The link config (TOML).
        config: PathBuf,
        /// Print the report as JSON (schema in the README) instead of text.
        #[arg(long)]
        json: bool,
        /// Also write pictures (SVG) of every path and an index.html into this folder.
        #[arg(long, value_name = "DIR")]
        plot: Option<PathBuf>,
    },
    /// Equalize a WAV file with the link's inverse, block by block.
    #[command(after_help = EXIT_CODES)]
    Apply {
        config: PathBuf,
        /// Input WAV: 16/24/32-bit integer or 32-bit float, the link's channel count and rate.
        input: PathBuf,
        /// Output WAV: 32-bit float unless --keep-format.
        output: PathBuf,
        /// Write the input's own sample format (integer output is rounded and clamped).
        #[arg(long)]
        keep_format: bool,
        /// Frames per processing block.
        #[arg(long, default_value_t = io::DEFAULT_BLOCK_FRAMES as u32,
              value_parser = clap::value_parser!(u32).range(1..=1_048_576))]
        block: u32,
    },
    /// Run a WAV file through the link itself (the simulated channel), to make test material.
    #[command(after_help = EXIT_CODES)]
    Distort {
        config: PathBuf,
        input: PathBuf,
        output: PathBuf,
        /// Write the input's own sample format (integer output is rounded and clamped).
        #[arg(long)]
        keep_format: bool,
    },
    /// Error of TEST against REF in dB: 10·log10(Σ(test − ref delayed)² / Σ ref delayed²).
    #[command(after_help = EXIT_CODES)]
    Compare {
        /// The reference (e.g. the original programme).
        reference: PathBuf,
        /// The signal to judge (e.g. the equalized output).
        test: PathBuf,
        /// Delay the reference by this many frames first (the link's bulk delay).
        #[arg(long, default_value_t = 0)]
        delay: usize,
        /// Leave out this many frames at the start.
        #[arg(long, default_value_t = 0)]
        skip: usize,
    },
    /// Generate programme material, pass it through the simulated link, equalize it, and print
    /// the error before and after. Needs no sound card and no files.
    #[command(after_help = EXIT_CODES)]
    Demo {
        /// The link config (default: the built-in configs/echo_line.toml).
        config: Option<PathBuf>,
        /// Length of the generated material in seconds.
        #[arg(long, default_value_t = 5.0)]
        seconds: f64,
    },
    /// Run the live service: equalize the link continuously. SIGHUP re-reads the config (a bad
    /// one is logged and the running filters stay), SIGTERM/SIGINT fade out and stop.
    #[command(after_help = EXIT_CODES)]
    Run {
        config: PathBuf,
        /// Drive the engine from a real-time simulated link instead of sound devices.
        #[arg(long)]
        simulate: bool,
        /// With --simulate: the config describing what the link really does (default: CONFIG).
        #[arg(long, requires = "simulate", value_name = "FILE")]
        true_link: Option<PathBuf>,
        /// Stop by itself after this many seconds.
        #[arg(long = "for", value_name = "SECONDS")]
        run_for: Option<f64>,
        /// Status socket (default: $XDG_RUNTIME_DIR/redress/status.sock).
        #[arg(long)]
        socket: Option<PathBuf>,
        /// More log lines (-v: debug).
        #[arg(short, long, action = clap::ArgAction::Count, conflicts_with = "quiet")]
        verbose: u8,
        /// Errors only.
        #[arg(short, long)]
        quiet: bool,
    },
    /// Ask a running service what it is doing.
    #[command(after_help = EXIT_CODES)]
    Status {
        /// Print the status document as JSON.
        #[arg(long)]
        json: bool,
        /// Status socket (default: $XDG_RUNTIME_DIR/redress/status.sock).
        #[arg(long)]
        socket: Option<PathBuf>,
    },
    /// List the audio devices and the configurations they support.
    Devices,
    /// Time the configured filters in the real engine (callback time against the block's
    /// deadline) and report the delay each channel's design adds; with --round-trip, also
    /// measure the device path with its output looped back to its input.
    #[command(after_help = EXIT_CODES)]
    Bench {
        config: PathBuf,
        /// Print every figure as JSON.
        #[arg(long)]
        json: bool,
        /// Callbacks to time.
        #[arg(long, default_value_t = redress::bench::DEFAULT_BENCH_BLOCKS as u32,
              value_parser = clap::value_parser!(u32).range(1..=1_000_000))]
        blocks: u32,
        /// Frames per callback (default: the config's [audio] buffer_frames, else 256).
        #[arg(long, value_parser = clap::value_parser!(u32).range(1..=65_536))]
        block_frames: Option<u32>,
        /// Also play a test signal on the output device and find it on the input device (the
        /// output must be looped back to the input).
        #[arg(long)]
        round_trip: bool,
        /// With --round-trip: capture device (default: the config's input_device).
        #[arg(long, requires = "round_trip", value_name = "DEVICE")]
        input_device: Option<String>,
        /// With --round-trip: playback device (default: the config's output_device).
        #[arg(long, requires = "round_trip", value_name = "DEVICE")]
        output_device: Option<String>,
    },
    #[command(flatten)]
    Measure(measure_commands::MeasureCommand),
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let code = match cli.command {
        Command::Check { config, json, plot } => check(&config, json, plot.as_deref()),
        Command::Apply {
            config,
            input,
            output,
            keep_format,
            block,
        } => apply(
            &config,
            &input,
            &output,
            FileRunOptions {
                block_frames: block as usize,
                keep_format,
            },
        ),
        Command::Distort {
            config,
            input,
            output,
            keep_format,
        } => distort(
            &config,
            &input,
            &output,
            FileRunOptions {
                keep_format,
                ..FileRunOptions::default()
            },
        ),
        Command::Compare {
            reference,
            test,
            delay,
            skip,
        } => compare(&reference, &test, delay, skip),
        Command::Demo { config, seconds } => demo(config.as_deref(), seconds),
        Command::Run {
            config,
            simulate,
            true_link,
            run_for,
            socket,
            verbose,
            quiet,
        } => run(
            config,
            simulate,
            true_link,
            run_for,
            socket,
            if quiet { -1 } else { verbose as i8 },
        ),
        Command::Status { json, socket } => status(json, socket),
        Command::Devices => devices(),
        Command::Bench {
            config,
            json,
            blocks,
            block_frames,
            round_trip,
            input_device,
            output_device,
        } => bench(
            &config,
            json,
            blocks as usize,
            block_frames.map(|b| b as usize),
            round_trip.then_some((input_device, output_device)),
        ),
        Command::Measure(command) => measure_commands::run(command),
    };
    ExitCode::from(code)
}

/// Reads the config, or says why not.
fn load(config: &Path) -> Result<Link, u8> {
    load_link(config).map_err(|e| {
        eprintln!("error: {e}");
        exit::INVALID_CONFIG
    })
}

fn check(config: &Path, json: bool, plot: Option<&Path>) -> u8 {
    let link = match load(config) {
        Ok(link) => link,
        Err(code) => return code,
    };
    let plan = plan_link(&link);
    let report = link_report(&plan, link.source.as_deref());
    let text = render_text(&report);
    if json {
        println!("{}", render_json(&report));
    } else {
        print!("{text}");
    }
    if let Some(dir) = plot {
        let code = measure_commands::write_pictures(&plan, dir, &text, json);
        if code != exit::OK {
            return code;
        }
    }
    if plan.is_runnable() {
        exit::OK
    } else {
        exit::NOT_RUNNABLE
    }
}

fn apply(config: &Path, input: &Path, output: &Path, options: FileRunOptions) -> u8 {
    let link = match load(config) {
        Ok(link) => link,
        Err(code) => return code,
    };
    let plan = plan_link(&link);
    let result = io::apply_file(&plan, input, output, options, &mut print_progress);
    finish_run("equalized", input, output, result)
}

fn distort(config: &Path, input: &Path, output: &Path, options: FileRunOptions) -> u8 {
    let link = match load(config) {
        Ok(link) => link,
        Err(code) => return code,
    };
    let result = io::distort_file(&link, input, output, options, &mut print_progress);
    finish_run("distorted", input, output, result)
}

fn print_progress(percent: u32) {
    eprintln!("progress: {percent:>3} %");
}

fn finish_run(
    done: &str,
    input: &Path,
    output: &Path,
    result: Result<FileRunSummary, io::OfflineError>,
) -> u8 {
    match result {
        Ok(summary) => {
            println!(
                "{done} {} → {}: {} frames ({}) written as {}",
                input.display(),
                output.display(),
                summary.frames,
                summary.input_format.describe(),
                summary.output_format.describe()
            );
            println!(
                "clipped samples: {} (at or beyond full scale{})",
                summary.clipped_samples,
                match summary.output_format.encoding {
                    io::SampleEncoding::Int => ", clamped",
                    io::SampleEncoding::Float => ", kept in the float file",
                }
            );
            exit::OK
        }
        Err(e @ io::OfflineError::NotRunnable { .. }) => {
            eprintln!("error: {e}");
            exit::NOT_RUNNABLE
        }
        Err(e) => {
            eprintln!("error: {e}");
            exit::FAILED
        }
    }
}

fn compare(reference: &Path, test: &Path, delay: usize, skip: usize) -> u8 {
    match io::compare_files(test, reference, delay, skip) {
        Ok(measure) => {
            println!(
                "error of {} against {} (delayed {delay}, first {skip} skipped): {}",
                test.display(),
                reference.display(),
                io::format_db(measure.db)
            );
            println!("frames compared: {}", measure.frames);
            exit::OK
        }
        Err(e) => {
            eprintln!("error: {e}");
            exit::FAILED
        }
    }
}

fn demo(config: Option<&Path>, seconds: f64) -> u8 {
    let link = match config {
        Some(path) => match load(path) {
            Ok(link) => link,
            Err(code) => return code,
        },
        None => match parse_link(DEMO_CONFIG, Some(Path::new(DEMO_CONFIG_NAME))) {
            Ok(link) => link,
            Err(e) => {
                eprintln!("error: the built-in demo config is invalid: {e}");
                return exit::FAILED;
            }
        },
    };
    if !(seconds.is_finite() && (0.1..=600.0).contains(&seconds)) {
        eprintln!("error: --seconds {seconds}: give a length from 0.1 to 600 seconds");
        return exit::INVALID_CONFIG;
    }
    let plan: LinkPlan = plan_link(&link);
    let report = link_report(&plan, link.source.as_deref());
    print!("{}", render_text(&report));
    println!();
    let spec = ProgrammeSpec::new(link.sample_rate, link.channel_count, seconds, 1);
    match io::run_demo(&link, &plan, &spec) {
        Ok(outcome) => {
            print!("{}", outcome.describe());
            exit::OK
        }
        Err(e @ io::OfflineError::NotRunnable { .. }) => {
            eprintln!("error: {e}");
            exit::NOT_RUNNABLE
        }
        Err(e) => {
            eprintln!("error: {e}");
            exit::FAILED
        }
    }
}

fn run(
    config: PathBuf,
    simulate: bool,
    true_link: Option<PathBuf>,
    run_for: Option<f64>,
    socket: Option<PathBuf>,
    verbosity: i8,
) -> u8 {
    init_logging(verbosity);
    let run_for = match run_for {
        None => None,
        Some(s) if s.is_finite() && s > 0.0 => Some(std::time::Duration::from_secs_f64(s)),
        Some(s) => {
            eprintln!("error: --for {s}: give a positive number of seconds");
            return exit::INVALID_CONFIG;
        }
    };
    let options = ServiceOptions {
        config,
        socket: socket.unwrap_or_else(default_socket_path),
        source: if simulate {
            SourceChoice::Simulated {
                truth: true_link,
                seed: 1,
            }
        } else {
            SourceChoice::Devices
        },
        run_for,
    };
    match run_service(options) {
        Ok(()) => exit::OK,
        Err(e @ ServiceError::Config(_)) => {
            log::error!("{e}");
            exit::INVALID_CONFIG
        }
        Err(e @ ServiceError::NotRunnable(_)) => {
            log::error!("{e}");
            exit::NOT_RUNNABLE
        }
        Err(e) => {
            log::error!("{e}");
            exit::FAILED
        }
    }
}

fn status(json: bool, socket: Option<PathBuf>) -> u8 {
    let path = socket.unwrap_or_else(default_socket_path);
    match query_status(&path) {
        Ok(doc) => {
            if json {
                println!("{doc}");
            } else {
                print!("{}", render_status_text(&doc));
            }
            exit::OK
        }
        Err(e) => {
            eprintln!("error: {e}");
            exit::FAILED
        }
    }
}

fn devices() -> u8 {
    match io::live::list_devices() {
        Ok(listing) => {
            print!("{listing}");
            exit::OK
        }
        Err(e) => {
            eprintln!("error: {e}");
            exit::FAILED
        }
    }
}

fn bench(
    config: &Path,
    json: bool,
    blocks: usize,
    block_frames: Option<usize>,
    round_trip: Option<(Option<String>, Option<String>)>,
) -> u8 {
    use redress::bench::{bench_link, render_text as render_bench, BenchOptions, RoundTripOptions};
    let link = match load(config) {
        Ok(link) => link,
        Err(code) => return code,
    };
    let plan = plan_link(&link);
    let audio = &link.runtime.audio;
    let round_trip = round_trip.map(|(input, output)| RoundTripOptions {
        input_device: input.unwrap_or_else(|| audio.input_device.clone()),
        output_device: output.unwrap_or_else(|| audio.output_device.clone()),
        sample_rate: link.sample_rate.round() as u32,
        channels: link.channel_count as u16,
        buffer_frames: block_frames.map(|b| b as u32).or(audio.buffer_frames),
        settle: std::time::Duration::from_millis(1500),
        max_round_trip: std::time::Duration::from_secs(1),
    });
    let asked_round_trip = round_trip.is_some();
    let options = BenchOptions {
        blocks,
        block_frames,
        round_trip,
    };
    match bench_link(&link, &plan, &options) {
        Ok(report) => {
            if json {
                println!(
                    "{}",
                    serde_json::to_string_pretty(&report).unwrap_or_default()
                );
            } else {
                print!("{}", render_bench(&report));
            }
            let found = report.round_trip.as_ref().is_some_and(|r| r.found);
            if asked_round_trip && !found {
                exit::FAILED
            } else {
                exit::OK
            }
        }
        Err(e) => {
            eprintln!("error: {e}");
            exit::NOT_RUNNABLE
        }
    }
}
