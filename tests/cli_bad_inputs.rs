//! The catalogue of bad command lines and bad files given on them: every case runs the real
//! binary and must end with the documented exit code and a message that names what is wrong
//! (and, for our own errors, a `help:` line saying what to do). Nothing may panic, hang or
//! destroy a file.
//!
//! Source for the exit codes: the table in the README (0 done, 1 file trouble, 2 invalid config
//! or command line, 3 valid but not runnable); for argument errors, clap's own convention (2).

mod cli_support;

use std::path::{Path, PathBuf};
use std::process::Command;

use cli_support::{code, repo, stderr, stdout, write_file};
use redress::io::{write_wav, WavFormat};

struct Case {
    name: &'static str,
    args: Vec<String>,
    code: i32,
    /// Every fragment must appear in standard error.
    fragments: Vec<&'static str>,
}

fn case(name: &'static str, args: &[&str], code: i32, fragments: &[&'static str]) -> Case {
    Case {
        name,
        args: args.iter().map(|s| s.to_string()).collect(),
        code,
        fragments: fragments.to_vec(),
    }
}

fn p(path: &Path) -> String {
    path.to_string_lossy().into_owned()
}

/// The files the cases point at, made in a temporary folder.
struct Files {
    _dir: tempfile::TempDir,
    dir: PathBuf,
    good_wav: PathBuf,
    mono_wav: PathBuf,
    empty_wav: PathBuf,
    truncated_wav: PathBuf,
    text_wav: PathBuf,
    fifo: PathBuf,
    unstable: PathBuf,
    broken: PathBuf,
    plain_file: PathBuf,
    small: PathBuf,
    /// A hand-written config an output must not replace.
    hand_written: PathBuf,
    fractional_rate: PathBuf,
    newer_format: PathBuf,
    mono_16k: PathBuf,
    unknown_device: PathBuf,
    typographic_minus: PathBuf,
}

fn files() -> Files {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path().to_path_buf();
    // A tone is all these cases need (the programme generator is slow in a debug build).
    let tone = |channels: usize| -> Vec<f32> {
        (0..4800 * channels)
            .map(|i| 0.25 * ((i / channels) as f32 * 0.05).sin())
            .collect()
    };
    let stereo = tone(2);
    let good_wav = d.join("programme.wav");
    write_wav(&good_wav, &stereo, WavFormat::float32(2, 48_000)).unwrap();
    let mono = tone(1);
    let mono_wav = d.join("mono.wav");
    write_wav(&mono_wav, &mono, WavFormat::float32(1, 48_000)).unwrap();
    let empty_wav = write_file(&d, "empty.wav", "");
    // A header announcing 0.2 s of samples, cut off after a few of them.
    let bytes = std::fs::read(&good_wav).unwrap();
    let truncated_wav = d.join("truncated.wav");
    std::fs::write(&truncated_wav, &bytes[..bytes.len() / 3]).unwrap();
    let text_wav = write_file(&d, "levels.wav", "east rack levels: -12 dBFS\n");
    let fifo = d.join("pipe.toml");
    assert!(Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .unwrap()
        .success());
    let unstable = write_file(
        &d,
        "unstable.toml",
        "[link]\nsample_rate_hz = 48000\nchannel_count = 1\n\n[[path]]\nlabel = \"feedback in the \
         monitor chain\"\nchannels = [0]\ndifference_equation = { b = [1.0], a = [1.0, -1.5] }\n",
    );
    let broken = write_file(
        &d,
        "broken.toml",
        "[link]\nsample_rate_hz = 48000\nchannel_count = \n",
    );
    let plain_file = write_file(&d, "not-a-socket", "just a file\n");
    let small = write_file(
        &d,
        "short_line.toml",
        "[link]\nsample_rate_hz = 48000\nchannel_count = 2\n\n[[path]]\nchannels = [0, 1]\n\
         difference_equation = { b = [1.0, -0.5], a = [1.0] }\n",
    );
    let hand_written = write_file(
        &d,
        "mine.toml",
        "# my own notes on the east rack\n[link]\nsample_rate_hz = 48000\nchannel_count = 2\n\n\
         [[path]]\nchannels = [0, 1]\ndifference_equation = { b = [1.0], a = [1.0] }\n",
    );
    let fractional_rate = write_file(
        &d,
        "fractional.toml",
        "[link]\nsample_rate_hz = 44100.5\nchannel_count = 1\n\n[[path]]\nchannels = [0]\n\
         difference_equation = { b = [1.0, 0.5], a = [1.0] }\n",
    );
    let newer_format = write_file(
        &d,
        "newer.toml",
        "[link]\nformat_version = 7\nsample_rate_hz = 48000\nchannel_count = 1\n\n[[path]]\n\
         channels = [0]\ndifference_equation = { b = [1.0, 0.5], a = [1.0] }\n",
    );
    let mono_16k = write_file(
        &d,
        "mono_16k.toml",
        "[link]\nsample_rate_hz = 16000\nchannel_count = 1\n\n[[path]]\nchannels = [0]\n\
         difference_equation = { b = [1.0, -0.5], a = [1.0] }\n",
    );
    let unknown_device = write_file(
        &d,
        "rack_amp.toml",
        "[link]\nsample_rate_hz = 48000\nchannel_count = 1\n\n[[path]]\nchannels = [0]\n\
         difference_equation = { b = [1.0, -0.5], a = [1.0] }\n\n[audio]\n\
         input_device = \"no such rack amp anywhere\"\n",
    );
    let typographic_minus = write_file(
        &d,
        "pasted.toml",
        "[link]\nsample_rate_hz = 48000\nchannel_count = 1\n\n[[path]]\nchannels = [0]\n\
         difference_equation = { b = [1.0, \u{2212}0.5], a = [1.0] }\n",
    );
    Files {
        typographic_minus,
        hand_written,
        fractional_rate,
        newer_format,
        mono_16k,
        unknown_device,
        small,
        _dir: dir,
        dir: d,
        good_wav,
        mono_wav,
        empty_wav,
        truncated_wav,
        text_wav,
        fifo,
        unstable,
        broken,
        plain_file,
    }
}

fn catalogue(f: &Files) -> Vec<Case> {
    // A first-order line: designing it is instant even in a debug build.
    let echo = p(&f.small);
    let out = p(&f.dir.join("out.wav"));
    let good = p(&f.good_wav);
    let configs_dir = p(&repo().join("configs"));
    let missing = p(&f.dir.join("no_such_link.toml"));
    vec![
        // The command line itself.
        case("no command", &[], 2, &["Usage"]),
        case(
            "unknown command",
            &["equalise"],
            2,
            &["unrecognized subcommand"],
        ),
        case(
            "check without a file",
            &["check"],
            2,
            &["required", "<CONFIG>"],
        ),
        case(
            "misspelt option",
            &["check", &echo, "--jsn"],
            2,
            &["--jsn", "--json"],
        ),
        case(
            "apply without an output",
            &["apply", &echo, &good],
            2,
            &["<OUTPUT>"],
        ),
        case(
            "block of zero frames",
            &["apply", &echo, &good, &out, "--block", "0"],
            2,
            &["--block", "0"],
        ),
        case(
            "block not a number",
            &["apply", &echo, &good, &out, "--block", "lots"],
            2,
            &["invalid value 'lots'"],
        ),
        case(
            "negative delay",
            &["compare", &good, &good, "--delay", "-3"],
            2,
            &["unexpected argument '-3'"],
        ),
        case(
            "delay not a number",
            &["compare", &good, &good, "--delay", "3ms"],
            2,
            &["invalid value '3ms'", "--delay"],
        ),
        case(
            "demo too long",
            &["demo", "--seconds", "1e9"],
            2,
            &["--seconds", "0.1 to 600"],
        ),
        case(
            "demo length not a number",
            &["demo", "--seconds", "NaN"],
            2,
            &["--seconds", "0.1 to 600"],
        ),
        case(
            "true link without simulate",
            &["run", &echo, "--true-link", &echo],
            2,
            &["--simulate"],
        ),
        case(
            "fault drill without simulate",
            &["run", &echo, "--fault-drill", "stall@1"],
            2,
            &["--simulate"],
        ),
        case(
            "fault drill of an unknown kind",
            &["run", &echo, "--simulate", "--fault-drill", "melt@3"],
            2,
            &["melt", "help:", "loss@5+3"],
        ),
        case(
            "device loss drill without its absence",
            &["run", &echo, "--simulate", "--fault-drill", "loss@3"],
            2,
            &["+SECONDS"],
        ),
        case(
            "status asked for JSON and figures at once",
            &["status", "--json", "--openmetrics"],
            2,
            &["cannot be used with"],
        ),
        case(
            "verbose and quiet",
            &["run", &echo, "-v", "-q"],
            2,
            &["cannot be used with"],
        ),
        case(
            "run for no time",
            &["run", &echo, "--simulate", "--for", "0"],
            2,
            &["--for", "positive"],
        ),
        // Config files that are not there or not files.
        case(
            "check a missing config",
            &["check", &missing],
            2,
            &["no_such_link.toml", "no such file", "help:"],
        ),
        case(
            "check a directory",
            &["check", &configs_dir],
            2,
            &["directory", "help:"],
        ),
        case(
            "check a named pipe (would block a naive reader)",
            &["check", &p(&f.fifo)],
            2,
            &["named pipe", "help:"],
        ),
        case(
            "check a device",
            &["check", "/dev/zero"],
            2,
            &["device", "help:"],
        ),
        case(
            "run a broken config",
            &[
                "run",
                &p(&f.broken),
                "--simulate",
                "--socket",
                &p(&f.dir.join("r1/s.sock")),
            ],
            2,
            &["broken.toml:3", "help:"],
        ),
        case(
            "run a link that cannot run",
            &[
                "run",
                &p(&f.unstable),
                "--simulate",
                "--socket",
                &p(&f.dir.join("r2/s.sock")),
            ],
            3,
            &["feedback in the monitor chain"],
        ),
        case(
            "simulate a broken true link",
            &[
                "run",
                &echo,
                "--simulate",
                "--true-link",
                &p(&f.broken),
                "--socket",
                &p(&f.dir.join("r3/s.sock")),
            ],
            2,
            &["broken.toml:3"],
        ),
        // Sockets.
        case(
            "status with no service",
            &["status", "--socket", &p(&f.dir.join("nobody/s.sock"))],
            1,
            &["cannot read the status", "help:"],
        ),
        case(
            "status from a plain file",
            &["status", "--socket", &p(&f.plain_file)],
            1,
            &["cannot read the status", "not-a-socket"],
        ),
        case(
            "run on a socket path taken by a file",
            &["run", &echo, "--simulate", "--socket", &p(&f.plain_file)],
            1,
            &["not a socket is in the way"],
        ),
        case(
            "run with a socket where no folder can be made",
            &[
                "run",
                &echo,
                "--simulate",
                "--socket",
                "/proc/no-such-redress-folder/s.sock",
            ],
            1,
            &["cannot create /proc/no-such-redress-folder"],
        ),
        case(
            "run with a socket under a file",
            &[
                "run",
                &echo,
                "--simulate",
                "--socket",
                &p(&f.plain_file.join("s.sock")),
            ],
            1,
            &["not-a-socket"],
        ),
        // WAV files.
        case(
            "apply an empty file",
            &["apply", &echo, &p(&f.empty_wav), &out],
            1,
            &[
                "empty.wav: not a WAV file",
                "shorter than a WAV header",
                "help:",
            ],
        ),
        case(
            "apply a truncated file",
            &["apply", &echo, &p(&f.truncated_wav), &out],
            1,
            &["truncated.wav: damaged WAV file", "truncated", "help:"],
        ),
        case(
            "apply a text file",
            &["apply", &echo, &p(&f.text_wav), &out],
            1,
            &["levels.wav: not a WAV file"],
        ),
        case(
            "apply mono to a stereo link",
            &["apply", &echo, &p(&f.mono_wav), &out],
            1,
            &["1 channel but the link has 2", "help:"],
        ),
        case(
            "apply onto the input itself",
            &["apply", &echo, &good, &good],
            1,
            &["the input file itself", "help:"],
        ),
        case(
            "distort onto the input itself",
            &["distort", &echo, &good, &good],
            1,
            &["the input file itself"],
        ),
        case(
            "apply into a missing folder",
            &["apply", &echo, &good, &p(&f.dir.join("nowhere/out.wav"))],
            1,
            &[
                "nowhere/out.wav",
                "the folder",
                "does not exist",
                "mkdir -p",
            ],
        ),
        case(
            "compare with a missing file",
            &["compare", &good, &p(&f.dir.join("gone.wav"))],
            1,
            &["gone.wav: no such file"],
        ),
        case(
            "compare with a text file",
            &["compare", &good, &p(&f.text_wav)],
            1,
            &["not a WAV file"],
        ),
        case(
            "compare files of different channel counts",
            &["compare", &good, &p(&f.mono_wav)],
            1,
            &[
                "1 channel, but the reference",
                "has 2 channels",
                "same channel count",
            ],
        ),
        // Outputs never replace an input, nor an existing file unless asked (issue 16).
        case(
            "identify onto its own stimulus",
            &["identify", &good, &good, &good],
            1,
            &["the input file itself", "help:"],
        ),
        case(
            "identify onto a hand-written config",
            &["identify", &good, &good, &p(&f.hand_written)],
            1,
            &["mine.toml", "already exists", "--replace"],
        ),
        case(
            "identify with its report over a file",
            &[
                "identify",
                &good,
                &good,
                &p(&f.dir.join("fit.toml")),
                "--report",
                &p(&f.hand_written),
            ],
            1,
            &["a file is in the way of this folder"],
        ),
        case(
            "simulate a recording onto its stimulus",
            &["simulate-recording", &echo, &good, &good, "--replace"],
            1,
            &["the input file itself"],
        ),
        case(
            "apply over an existing file",
            &["apply", &echo, &good, &p(&f.mono_wav)],
            1,
            &["mono.wav", "already exists", "--replace"],
        ),
        case(
            "apply over its own config, even when asked to replace",
            &["apply", &echo, &good, &echo, "--replace"],
            1,
            &["the input file itself"],
        ),
        case(
            "distort over an existing file",
            &["distort", &echo, &good, &p(&f.hand_written)],
            1,
            &["already exists"],
        ),
        case(
            "stimulus and its inverse filter in one file",
            &[
                "stimulus",
                &p(&f.dir.join("sweep.wav")),
                "--inverse-filter",
                &p(&f.dir.join("sweep.wav")),
            ],
            1,
            &["named for two outputs"],
        ),
        case(
            "stimulus over an existing file",
            &["stimulus", &good],
            1,
            &["already exists"],
        ),
        case(
            "plot into a file",
            &["plot", &echo, &p(&f.hand_written)],
            1,
            &["a file is in the way of this folder"],
        ),
        case(
            "check --plot into a file",
            &["check", &echo, "--plot", &p(&f.hand_written)],
            1,
            &["a file is in the way of this folder"],
        ),
        // Options that do nothing for the chosen stimulus are refused.
        case(
            "sweep length for a sequence",
            &[
                "stimulus",
                &p(&f.dir.join("s1.wav")),
                "--kind",
                "mls",
                "--seconds",
                "5",
            ],
            2,
            &[
                "--seconds does nothing for a maximum-length sequence",
                "--kind sweep",
            ],
        ),
        case(
            "sequence order for a sweep",
            &[
                "stimulus",
                &p(&f.dir.join("s2.wav")),
                "--kind",
                "sweep",
                "--order",
                "12",
            ],
            2,
            &["--order does nothing for a sweep", "--kind mls"],
        ),
        case(
            "inverse filter for a sequence",
            &[
                "stimulus",
                &p(&f.dir.join("s3.wav")),
                "--kind",
                "mls",
                "--inverse-filter",
                &p(&f.dir.join("s3-inverse.wav")),
            ],
            2,
            &["--inverse-filter does nothing"],
        ),
        // Configs.
        case(
            "fractional sample rate",
            &["check", &p(&f.fractional_rate)],
            2,
            &["44100.5", "not a whole number", "44100 or 44101"],
        ),
        case(
            "apply with a fractional sample rate",
            &["apply", &p(&f.fractional_rate), &good, &out],
            2,
            &["not a whole number"],
        ),
        case(
            "typographic minus in a config",
            &["check", &p(&f.typographic_minus)],
            2,
            &["pasted.toml:7:", "U+2212", "write the minus as `-`"],
        ),
        case(
            "config from a newer format",
            &["check", &p(&f.newer_format)],
            2,
            &["format 7", "newer than this redress", "format 1", "help:"],
        ),
        case(
            "true link at another rate and channel count",
            &[
                "run",
                &p(&f.mono_16k),
                "--simulate",
                "--true-link",
                &echo,
                "--socket",
                &p(&f.dir.join("r4/s.sock")),
            ],
            1,
            &[
                "short_line.toml",
                "sample rate 48000 Hz",
                "16000 Hz",
                "help:",
            ],
        ),
        case(
            "distort through an unstable channel",
            &["distort", &p(&f.unstable), &p(&f.mono_wav), &out],
            3,
            &[
                "the channel itself is unstable",
                "re-check the channel's poles",
            ],
        ),
        case(
            "simulate a recording through an unstable channel",
            &["simulate-recording", &p(&f.unstable), &p(&f.mono_wav), &out],
            3,
            &["the channel itself is unstable"],
        ),
        case(
            "a device no one has",
            &[
                "run",
                &p(&f.unknown_device),
                "--socket",
                &p(&f.dir.join("r5/s.sock")),
            ],
            1,
            &["no capture device matches", "redress devices"],
        ),
    ]
}

/// Standard error without the lines the audio libraries print by themselves when a device is
/// looked up (ALSA's plugins, the JACK client): ours start with our own words.
fn our_lines(err: &str) -> impl Iterator<Item = &str> {
    err.lines().filter(|l| {
        !["ALSA lib", "Jack", "jack", "Cannot connect"]
            .iter()
            .any(|library| l.starts_with(library))
    })
}

/// What no message may contain: the program's internals and the raw numbers of OS errors.
const NEVER_IN_A_MESSAGE: [&str; 5] = ["os error", "..=", "::", "src/", "\u{2212}"];

// Source: the README's exit-code table and error conventions (file, what is wrong, help line).
#[test]
fn every_bad_command_line_fails_as_catalogued() {
    let f = files();
    let before = std::fs::read(&f.good_wav).unwrap();
    let cases = catalogue(&f);
    let mut wrong = Vec::new();
    for c in &cases {
        let output = Command::new(env!("CARGO_BIN_EXE_redress"))
            .args(&c.args)
            .current_dir(repo())
            .stdin(std::process::Stdio::null())
            .output()
            .expect("the binary runs");
        let err = stderr(&output);
        let got = output.status.code();
        let mut why = Vec::new();
        if got != Some(c.code) {
            why.push(format!("exit {got:?}, expected {}", c.code));
        }
        for fragment in &c.fragments {
            if !err.contains(fragment) {
                why.push(format!("stderr lacks {fragment:?}"));
            }
        }
        if err.contains("panicked") {
            why.push("panicked".to_string());
        }
        for internal in NEVER_IN_A_MESSAGE {
            // The typographic-minus case quotes the user's own line, minus and all.
            let quotes_it = internal == "\u{2212}" && c.name.contains("typographic");
            if !quotes_it && our_lines(&err).any(|l| l.contains(internal)) {
                why.push(format!("stderr shows {internal:?}"));
            }
        }
        if !why.is_empty() {
            wrong.push(format!(
                "{}: {}\n  args {:?}\n  stderr: {err}\n  stdout: {}",
                c.name,
                why.join("; "),
                c.args,
                stdout(&output)
            ));
        }
    }
    assert!(wrong.is_empty(), "\n{}", wrong.join("\n"));
    eprintln!("{} bad command lines catalogued", cases.len());
    assert_eq!(
        std::fs::read(&f.good_wav).unwrap(),
        before,
        "a refused command must not touch its input"
    );
    assert!(
        !f.dir.join("out.wav").exists(),
        "no output from a refused run"
    );
    for (name, file) in [("mine.toml", &f.hand_written), ("mono.wav", &f.mono_wav)] {
        let text = std::fs::read(file).unwrap();
        assert!(
            !text.is_empty() && (name != "mine.toml" || text.starts_with(b"# my own notes")),
            "{name} was replaced"
        );
    }
    for never in [
        "sweep.wav",
        "s1.wav",
        "s2.wav",
        "s3.wav",
        "s3-inverse.wav",
        "fit.toml",
    ] {
        assert!(
            !f.dir.join(never).exists(),
            "{never} written by a refused run"
        );
    }
}

// Source: common practice (Unix tools) — asked to replace, a command writes over its own
// earlier output, and only then.
#[test]
fn replace_writes_over_an_earlier_output() {
    let f = files();
    let out = f.dir.join("again.wav");
    let first = Command::new(env!("CARGO_BIN_EXE_redress"))
        .args(["stimulus", "--seconds", "0.2"])
        .arg(&out)
        .output()
        .unwrap();
    assert_eq!(code(&first), 0, "{}", stderr(&first));
    let refused = Command::new(env!("CARGO_BIN_EXE_redress"))
        .args(["stimulus", "--seconds", "0.3"])
        .arg(&out)
        .output()
        .unwrap();
    assert_eq!(code(&refused), 1);
    let frames_of = |p: &Path| redress::io::read_wav(p).unwrap().0.len();
    // 0.2 s of sweep + 0.5 s of silence at 48 kHz (the defaults).
    assert_eq!(frames_of(&out), 33_600);
    let replaced = Command::new(env!("CARGO_BIN_EXE_redress"))
        .args(["stimulus", "--seconds", "0.3", "--replace"])
        .arg(&out)
        .output()
        .unwrap();
    assert_eq!(code(&replaced), 0, "{}", stderr(&replaced));
    assert_eq!(frames_of(&out), 38_400);
}

#[test]
fn a_second_name_for_the_input_is_caught_too() {
    let f = files();
    let alias = f.dir.join("alias.wav");
    std::os::unix::fs::symlink(&f.good_wav, &alias).unwrap();
    let before = std::fs::read(&f.good_wav).unwrap();
    let output = Command::new(env!("CARGO_BIN_EXE_redress"))
        .arg("apply")
        .arg(&f.small)
        .arg(&f.good_wav)
        .arg(&alias)
        .output()
        .unwrap();
    assert_eq!(code(&output), 1, "{}", stderr(&output));
    assert!(stderr(&output).contains("the input file itself"));
    assert_eq!(std::fs::read(&f.good_wav).unwrap(), before);
}
