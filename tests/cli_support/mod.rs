//! Helpers shared by the command-line tests: run the real binary, find the example configs,
//! write throw-away configs and WAV files.

#![allow(dead_code)] // each test file uses its own subset

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The crate root, where `configs/` lives.
pub fn repo() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

/// Runs `redress ARGS…` from the crate root, with no standard input.
pub fn redress(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_redress"))
        .args(args)
        .current_dir(repo())
        .stdin(std::process::Stdio::null())
        .output()
        .expect("the redress binary runs")
}

/// Same, with paths as arguments.
pub fn redress_paths(args: &[&dyn AsRef<std::ffi::OsStr>]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_redress"))
        .args(args.iter().map(|a| a.as_ref()))
        .current_dir(repo())
        .stdin(std::process::Stdio::null())
        .output()
        .expect("the redress binary runs")
}

pub fn stdout(output: &Output) -> String {
    String::from_utf8_lossy(&output.stdout).into_owned()
}

pub fn stderr(output: &Output) -> String {
    String::from_utf8_lossy(&output.stderr).into_owned()
}

pub fn code(output: &Output) -> i32 {
    output
        .status
        .code()
        .expect("exited, not killed by a signal")
}

/// Every example config, sorted.
pub fn example_configs() -> Vec<PathBuf> {
    let mut configs: Vec<PathBuf> = std::fs::read_dir(repo().join("configs"))
        .expect("configs/ exists")
        .map(|entry| entry.expect("readable").path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    configs.sort();
    assert!(!configs.is_empty(), "no configs/*.toml");
    configs
}

/// Writes `text` to `dir/name` and returns the path.
pub fn write_file(dir: &Path, name: &str, text: &str) -> PathBuf {
    let path = dir.join(name);
    std::fs::write(&path, text).expect("temp file written");
    path
}

/// Parses the first number after `label` in `text` (accepting "−" as a minus sign).
pub fn number_after(text: &str, label: &str) -> f64 {
    let start = text
        .find(label)
        .unwrap_or_else(|| panic!("`{label}` not in:\n{text}"))
        + label.len();
    let rest = text[start..].trim_start().replace('−', "-");
    let number: String = rest
        .chars()
        .take_while(|c| c.is_ascii_digit() || matches!(c, '-' | '.' | 'e' | '+'))
        .collect();
    number
        .parse()
        .unwrap_or_else(|_| panic!("no number after `{label}`: {rest:.40}"))
}

/// `text` with every run of spaces shrunk to one, so checks do not depend on column alignment.
pub fn squeeze(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    let mut last_space = false;
    for c in text.chars() {
        if c == ' ' {
            if !last_space {
                out.push(' ');
            }
            last_space = true;
        } else {
            out.push(c);
            last_space = false;
        }
    }
    out
}
