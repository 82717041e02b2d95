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
    Files {
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
            &["nowhere/out.wav", "help:"],
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
            &["channel"],
        ),
    ]
}

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
