//! The `redress` command: parses arguments, calls the library, prints. No signal processing here.

mod closed_pipe;
mod exit_codes;
mod manual;
mod measure_commands;
mod number_arg;

use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use clap::{CommandFactory, FromArgMatches, Parser, Subcommand};

use exit_codes as exit;
use number_arg::{number, whole_in};
use redress::control::{
    init_logging, locate_status_socket, query_openmetrics, query_status, render_status_text,
    run_service, FaultDrill, ServiceError, ServiceOptions, SourceChoice, CAUTION,
};
use redress::io::{self, check_output_files, Existing, FileRunOptions, FileRunSummary};
use redress::model::config::{load_link, parse_link};
use redress::model::Link;
use redress::pipeline::{add_trade_offs, plan_link};
use redress::report::{link_report, render_json, render_summary, render_text};

/// The demo's link when no config is named: a line with one echo, built into the binary so the
/// demo needs no files.
const DEMO_CONFIG_NAME: &str = "configs/echo_line.toml";
const DEMO_CONFIG: &str = include_str!("../configs/echo_line.toml");

/// Derive, check and run stable causal inverse filters for measured audio links.
#[derive(Parser)]
#[command(name = "redress", version, about, after_help = exit::ALL)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Analyse every path of a link config: zeros, poles, verdict, inverse, realization.
    #[command(after_help = exit::CHECK)]
    Check {
        /// The link config (TOML).
        config: PathBuf,
        /// Print the report as JSON (schema in the README) instead of text.
        #[arg(long)]
        json: bool,
        /// Also write pictures (SVG) of every path and an index.html into this folder (created
        /// when missing).
        #[arg(long, value_name = "DIR")]
        plot: Option<PathBuf>,
    },
    /// Equalize a WAV file with the link's inverse, block by block.
    #[command(after_help = exit::APPLY)]
    Apply {
        /// The link config (TOML).
        config: PathBuf,
        /// Input WAV: 16/24/32-bit integer or 32-bit float, the link's channel count and rate.
        input: PathBuf,
        /// Output WAV: 32-bit float unless --keep-format. Never the input; an existing file
        /// only with --replace.
        output: PathBuf,
        /// Write the input's own sample format (integer output is rounded and clamped).
        #[arg(long)]
        keep_format: bool,
        /// Frames per processing block.
        #[arg(long, default_value_t = io::DEFAULT_BLOCK_FRAMES as u32,
              value_parser = whole_in(1, 1_048_576))]
        block: u32,
        /// Write over OUTPUT if it exists (never over an input).
        #[arg(long)]
        replace: bool,
    },
    /// Run a WAV file through the link itself (the simulated channel), to make test material.
    #[command(after_help = exit::DISTORT)]
    Distort {
        /// The link config (TOML) whose channels to apply.
        config: PathBuf,
        /// Input WAV: the link's channel count and rate.
        input: PathBuf,
        /// Output WAV: 32-bit float unless --keep-format. Never the input; an existing file
        /// only with --replace.
        output: PathBuf,
        /// Write the input's own sample format (integer output is rounded and clamped).
        #[arg(long)]
        keep_format: bool,
        /// Write over OUTPUT if it exists (never over an input).
        #[arg(long)]
        replace: bool,
    },
    /// Error of TEST against REF in dB: 10·log10(Σ(test - ref delayed)² / Σ ref delayed²),
    /// and the level error per one-third-octave band (TEST against REF), worst band named.
    #[command(after_help = exit::COMPARE)]
    Compare {
        /// The reference WAV (e.g. the original programme).
        reference: PathBuf,
        /// The WAV to judge (e.g. the equalized output): same channel count and rate.
        test: PathBuf,
        /// Delay the reference by this many frames first: the total delay `check` prints
        /// (the link's bulk delay plus any latency the inverse adds).
        #[arg(long, default_value_t = 0, conflicts_with = "find_delay")]
        delay: usize,
        /// Find the delay instead, by cross-correlation of the two files (their channels
        /// summed): for when the delay is not known.
        #[arg(long)]
        find_delay: bool,
        /// Leave out this many frames at the start.
        #[arg(long, default_value_t = 0)]
        skip: usize,
    },
    /// Generate programme material, pass it through the simulated link, equalize it, and print
    /// a summary of each path and the error before and after. Needs no sound card and no files.
    #[command(after_help = exit::DEMO)]
    Demo {
        /// The link config (default: the built-in configs/echo_line.toml).
        config: Option<PathBuf>,
        /// Length of the generated material in seconds (0.1 to 600).
        #[arg(long, default_value_t = 5.0, value_parser = number)]
        seconds: f64,
    },
    /// Run the live service: equalize the link continuously. SIGHUP re-reads the config (a bad
    /// one is logged and the running filters stay), SIGTERM/SIGINT fade out and stop.
    Run {
        /// The link config (TOML); its [audio] table names the devices.
        config: PathBuf,
        /// Drive the engine from a real-time simulated link instead of sound devices.
        #[arg(long)]
        simulate: bool,
        /// With --simulate: the config describing what the link really does (default: CONFIG);
        /// it must have CONFIG's sample rate and channel count.
        #[arg(long, requires = "simulate", value_name = "FILE")]
        true_link: Option<PathBuf>,
        /// Stop by itself after this many seconds.
        #[arg(long = "for", value_name = "SECONDS", value_parser = number)]
        run_for: Option<f64>,
        /// Status socket (default: $XDG_RUNTIME_DIR/redress/status.sock, else
        /// /tmp/redress-UID/status.sock).
        #[arg(long)]
        socket: Option<PathBuf>,
        /// Rewrite this file every few seconds with the running figures in the Prometheus text
        /// format (for a textfile collector; written whole, by renaming a temporary file).
        #[arg(long, value_name = "PATH")]
        metrics_file: Option<PathBuf>,
        /// With --simulate: rehearse a fault to check the watchdog, restarts and alerts:
        /// `stall@S` (the stream stops for good S seconds after start) or `loss@S+D` (the
        /// device vanishes at S and can be opened again D seconds later).
        #[arg(long, requires = "simulate", value_name = "DRILL")]
        fault_drill: Option<FaultDrill>,
        /// Debug lines too: each path's design in figures (order, structure, precision, peak
        /// boost, decay, delays, pole radius after rounding) at start and after every reload.
        #[arg(short, long, conflicts_with = "quiet")]
        verbose: bool,
        /// Errors only.
        #[arg(short, long)]
        quiet: bool,
    },
    /// Ask a running service what it is doing.
    #[command(after_help = exit::STATUS)]
    Status {
        /// Print the status document as JSON.
        #[arg(long)]
        json: bool,
        /// Print the running figures in the OpenMetrics text format (counters over the
        /// service's whole life, callback-time histogram, levels per channel).
        #[arg(long, conflicts_with = "json")]
        openmetrics: bool,
        /// Status socket (default: $XDG_RUNTIME_DIR/redress/status.sock, else
        /// /tmp/redress-UID/status.sock, else the system service's /run/redress/status.sock).
        #[arg(long)]
        socket: Option<PathBuf>,
    },
    /// List the audio devices and what each supports: the names to give as input_device and
    /// output_device, their channel counts, rates and periods.
    #[command(after_help = exit::DEVICES)]
    Devices {
        /// Also say why each unavailable device could not be opened, and let the audio
        /// libraries' own messages through.
        #[arg(short, long)]
        verbose: bool,
    },
    /// Time the configured filters in the real engine (callback time against the block's
    /// deadline) and report the delay each channel's design adds; with --round-trip, also
    /// measure the device path with its output looped back to its input.
    #[command(after_help = exit::BENCH)]
    Bench {
        /// The link to time (not needed with --fir-taps or --recursion-limits).
        #[arg(required_unless_present_any = ["fir_taps", "recursion_limits"])]
        config: Option<PathBuf>,
        /// Print every figure as JSON.
        #[arg(long)]
        json: bool,
        /// Also time this config in the same run and compare callback time per channel.
        #[arg(long, value_name = "CONFIG", conflicts_with_all = ["fir_taps", "recursion_limits"])]
        against: Option<PathBuf>,
        /// Instead of a config: an invented long FIR of each of these lengths on every channel,
        /// as a partitioned convolution and as a direct form (e.g. 1024,4096,16384).
        #[arg(long, value_delimiter = ',', value_name = "TAPS",
              value_parser = clap::value_parser!(u32).range(1..=65_536))]
        fir_taps: Option<Vec<u32>>,
        /// With --fir-taps: audio channels.
        #[arg(long, default_value_t = 8, requires = "fir_taps",
              value_parser = clap::value_parser!(u32).range(1..=64))]
        channels: u32,
        /// With --fir-taps: run the direct form too up to this many taps.
        #[arg(long, default_value_t = 16_384, requires = "fir_taps")]
        direct_up_to: u32,
        /// Instead of a config: the recursive kernels' cycles per sample per section or stage
        /// against the chain of dependent operations their recurrence sets, on this processor.
        #[arg(long, conflicts_with = "fir_taps")]
        recursion_limits: bool,
        /// Callbacks to time.
        #[arg(long, default_value_t = redress::bench::DEFAULT_BENCH_BLOCKS as u32,
              value_parser = whole_in(1, 1_000_000))]
        blocks: u32,
        /// Frames per callback (default: the config's [audio] buffer_frames, else 256).
        #[arg(long, value_parser = whole_in(1, 65_536))]
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
    /// Write the manual pages and the bash, zsh and fish completions into a folder (used when
    /// the package is built).
    #[command(hide = true)]
    PackageFiles {
        /// The folder (created when missing).
        dir: PathBuf,
    },
}

/// The command-line definition as the binary uses it (and as the manual and the completions
/// describe it): `run --help` carries the caution the service logs at start-up, which is the
/// library's text.
fn cli_definition() -> clap::Command {
    Cli::command().mut_subcommand("run", |run| {
        run.after_help(format!("{CAUTION}\n\n{}", exit::RUN))
    })
}

fn main() -> ExitCode {
    let cli = match Cli::from_arg_matches(&cli_definition().get_matches()) {
        Ok(cli) => cli,
        Err(e) => e.exit(),
    };
    if !matches!(cli.command, Command::Run { .. } | Command::Status { .. }) {
        closed_pipe::end_quietly_on_closed_pipe();
    }
    let code = match cli.command {
        Command::Check { config, json, plot } => check(&config, json, plot.as_deref()),
        Command::Apply {
            config,
            input,
            output,
            keep_format,
            block,
            replace,
        } => file_run(
            true,
            &config,
            &input,
            &output,
            FileRunOptions {
                block_frames: block as usize,
                keep_format,
            },
            existing(replace),
        ),
        Command::Distort {
            config,
            input,
            output,
            keep_format,
            replace,
        } => file_run(
            false,
            &config,
            &input,
            &output,
            FileRunOptions {
                keep_format,
                ..FileRunOptions::default()
            },
            existing(replace),
        ),
        Command::Compare {
            reference,
            test,
            delay,
            find_delay,
            skip,
        } => compare(&reference, &test, (!find_delay).then_some(delay), skip),
        Command::Demo { config, seconds } => demo(config.as_deref(), seconds),
        Command::Run {
            config,
            simulate,
            true_link,
            run_for,
            socket,
            metrics_file,
            fault_drill,
            verbose,
            quiet,
        } => run(
            ServiceOptions {
                config,
                socket,
                source: if simulate {
                    SourceChoice::Simulated {
                        truth: true_link,
                        seed: 1,
                        drill: fault_drill,
                    }
                } else {
                    SourceChoice::Devices
                },
                run_for: None,
                metrics_file,
            },
            run_for,
            if quiet { -1 } else { i8::from(verbose) },
        ),
        Command::Status {
            json,
            openmetrics,
            socket,
        } => status(json, openmetrics, socket),
        Command::PackageFiles { dir } => manual::write_package_files(cli_definition(), &dir),
        Command::Devices { verbose } => devices(verbose),
        Command::Bench {
            config,
            json,
            against,
            fir_taps,
            channels,
            direct_up_to,
            recursion_limits,
            blocks,
            block_frames,
            round_trip,
            input_device,
            output_device,
        } => match (config, fir_taps) {
            _ if recursion_limits => bench_recursion_limits(json),
            (_, Some(taps)) => bench_long_firs(
                &taps,
                channels as usize,
                direct_up_to as usize,
                json,
                blocks as usize,
                block_frames.map_or(64, |b| b as usize),
            ),
            (Some(config), None) => bench(
                &config,
                against.as_deref(),
                json,
                blocks as usize,
                block_frames.map(|b| b as usize),
                round_trip.then_some((input_device, output_device)),
            ),
            (None, None) => exit::INVALID,
        },
        Command::Measure(command) => measure_commands::run(command),
    };
    ExitCode::from(code)
}

/// What to do with an output that exists: `--replace` writes over it.
pub(crate) fn existing(replace: bool) -> Existing {
    if replace {
        Existing::Replace
    } else {
        Existing::Keep
    }
}

/// Reads the config, or says why not.
pub(crate) fn load(config: &Path) -> Result<Link, u8> {
    load_link(config).map_err(|e| {
        eprintln!("error: {e}");
        exit::INVALID
    })
}

/// Checks a command's outputs before anything is read or written; says why not.
pub(crate) fn outputs_allowed(outputs: &[&Path], inputs: &[&Path], existing: Existing) -> bool {
    match check_output_files(outputs, inputs, existing) {
        Ok(()) => true,
        Err(e) => {
            eprintln!("error: {e}");
            false
        }
    }
}

fn check(config: &Path, json: bool, plot: Option<&Path>) -> u8 {
    if let Some(dir) = plot {
        if let Err(e) = io::check_output_folder(dir, &[config]) {
            eprintln!("error: {e}");
            return exit::FAILED;
        }
    }
    let link = match load(config) {
        Ok(link) => link,
        Err(code) => return code,
    };
    let mut plan = plan_link(&link);
    add_trade_offs(&mut plan);
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

/// For a command that reads CONFIG and INPUT and writes OUTPUT: the output is checked first
/// (never an input, an existing file only when asked), then the config is read.
fn load_to_write(
    config: &Path,
    input: &Path,
    output: &Path,
    existing: Existing,
) -> Result<Link, u8> {
    if !outputs_allowed(&[output], &[config, input], existing) {
        return Err(exit::FAILED);
    }
    load(config)
}

/// `apply` (`equalize`: the link's inverse) or `distort` (the link itself), INPUT to OUTPUT.
fn file_run(
    equalize: bool,
    config: &Path,
    input: &Path,
    output: &Path,
    options: FileRunOptions,
    existing: Existing,
) -> u8 {
    let link = match load_to_write(config, input, output, existing) {
        Ok(link) => link,
        Err(code) => return code,
    };
    let progress = &mut print_progress;
    if equalize {
        let result = io::apply_file(&plan_link(&link), input, output, options, progress);
        finish_run("equalized", input, output, result)
    } else {
        let result = io::distort_file(&link, input, output, options, progress);
        finish_run("distorted", input, output, result)
    }
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
        Err(e) => {
            eprintln!("error: {e}");
            match e {
                io::OfflineError::NotRunnable { .. } | io::OfflineError::Simulation(_) => {
                    exit::NOT_RUNNABLE
                }
                _ => exit::FAILED,
            }
        }
    }
}

/// `delay`: the given delay, or `None` to find it by cross-correlation.
fn compare(reference: &Path, test: &Path, delay: Option<usize>, skip: usize) -> u8 {
    let delay = match delay {
        Some(d) => d,
        None => match redress::measure::delay_between_files(reference, test) {
            Ok(found) => {
                println!(
                    "delay found by cross-correlation: {} frames (peak {:.1} dB above the \
                     correlation's RMS)",
                    found.peak_lag, found.prominence_db
                );
                found.peak_lag
            }
            Err(e) => {
                eprintln!("error: {e}");
                return exit::FAILED;
            }
        },
    };
    match io::compare_files(test, reference, delay, skip) {
        Ok(comparison) => {
            println!(
                "error of {} against {} (delayed {delay}, first {skip} skipped): {}",
                test.display(),
                reference.display(),
                io::format_db(comparison.measure.db)
            );
            println!("frames compared: {}", comparison.measure.frames);
            print!("{}", comparison.bands.render_text());
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
        return exit::INVALID;
    }
    let plan = plan_link(&link);
    let report = link_report(&plan, link.source.as_deref());
    print!("{}", render_summary(&report));
    println!();
    let spec = io::ProgrammeSpec::new(link.sample_rate, link.channel_count, seconds, 1);
    match io::run_demo(&link, &plan, &spec) {
        Ok(outcome) => {
            print!("{}", outcome.describe());
            println!(
                "(the full analysis of every path: redress check {})",
                config.map_or(DEMO_CONFIG_NAME.into(), |c| c.display().to_string())
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

fn run(mut options: ServiceOptions, run_for: Option<f64>, verbosity: i8) -> u8 {
    init_logging(verbosity);
    options.run_for = match run_for {
        None => None,
        Some(s) if s.is_finite() && s > 0.0 => Some(std::time::Duration::from_secs_f64(s)),
        Some(s) => {
            eprintln!("error: --for {s}: give a positive number of seconds");
            return exit::INVALID;
        }
    };
    match run_service(options) {
        Ok(()) => exit::OK,
        Err(e @ ServiceError::Config(_)) => {
            log::error!("{e}");
            exit::INVALID
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

/// Prints `text` on standard output, or on standard error with `error: ` in front, without
/// panicking when the pipe is closed. For the commands during which SIGPIPE may be ignored:
/// `status` keeps it ignored (it talks to a socket that may close first), and the audio
/// libraries `devices` and `bench --round-trip` load set it to ignored themselves (the JACK
/// client does). A closed pipe then ends them quietly all the same.
fn print_quietly(text: &str, error: bool) {
    let _ = if error {
        writeln!(std::io::stderr(), "error: {text}")
    } else {
        std::io::stdout().lock().write_all(text.as_bytes())
    };
}

fn status(json: bool, openmetrics: bool, socket: Option<PathBuf>) -> u8 {
    let path = socket.unwrap_or_else(locate_status_socket);
    if openmetrics {
        return match query_openmetrics(&path) {
            Ok(text) => {
                print_quietly(&text, false);
                exit::OK
            }
            Err(e) => {
                print_quietly(&e.to_string(), true);
                exit::FAILED
            }
        };
    }
    match query_status(&path) {
        Ok(doc) if json => print_quietly(&format!("{doc}\n"), false),
        Ok(doc) => print_quietly(&render_status_text(&doc), false),
        Err(e) => {
            print_quietly(&e.to_string(), true);
            return exit::FAILED;
        }
    }
    exit::OK
}

fn devices(verbose: bool) -> u8 {
    match io::live::list_devices(verbose) {
        Ok(listing) => {
            print_quietly(&listing, false);
            exit::OK
        }
        Err(e) => {
            print_quietly(&e.to_string(), true);
            exit::FAILED
        }
    }
}

fn print_json<T: serde::Serialize>(value: &T) {
    println!(
        "{}",
        serde_json::to_string_pretty(value).unwrap_or_default()
    );
}

fn bench_recursion_limits(json: bool) -> u8 {
    let limits = redress::bench::measure_recursion_limits();
    if json {
        print_json(&limits);
    } else {
        print!("{}", redress::bench::render_recursion_limits(&limits));
    }
    exit::OK
}

fn bench_long_firs(
    taps: &[u32],
    channels: usize,
    direct_up_to: usize,
    json: bool,
    blocks: usize,
    block_frames: usize,
) -> u8 {
    let taps: Vec<usize> = taps.iter().map(|&t| t as usize).collect();
    let rows = redress::bench::bench_long_firs(
        &taps,
        channels,
        48_000.0,
        block_frames,
        blocks,
        direct_up_to,
    );
    if json {
        print_json(&rows);
    } else {
        print!("{}", redress::bench::render_long_firs(&rows));
    }
    exit::OK
}

fn bench(
    config: &Path,
    against: Option<&Path>,
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
    let baseline = match against.map(load) {
        None => None,
        Some(Ok(other)) => Some(other),
        Some(Err(code)) => return code,
    };
    let options = BenchOptions {
        blocks,
        block_frames,
        round_trip,
        baseline,
    };
    match bench_link(&link, &plan, &options) {
        Ok(report) => {
            if json {
                let text = serde_json::to_string_pretty(&report).unwrap_or_default();
                print_quietly(&format!("{text}\n"), false);
            } else {
                print_quietly(&render_bench(&report), false);
            }
            let found = report.round_trip.as_ref().is_some_and(|r| r.found);
            if asked_round_trip && !found {
                exit::FAILED
            } else {
                exit::OK
            }
        }
        Err(e) => {
            print_quietly(&e.to_string(), true);
            exit::NOT_RUNNABLE
        }
    }
}
