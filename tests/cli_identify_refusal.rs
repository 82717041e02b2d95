//! `identify` through the real binary when the measurement cannot stand behind a model: the
//! command exits with the "cannot run" code (3, as `--help` lists it), writes no config, and
//! says why and what to do. The same measurement with enough SNR writes its config (exit 0),
//! so the refusal is the noise's doing and not the command's.
//!
//! Source: common practice (a measuring tool refuses a result it cannot stand behind, and its
//! exit status says so to a script); the exit codes are the ones `redress identify --help` lists.

mod cli_support;

use std::path::Path;

use cli_support::{code, redress_paths, stderr, stdout};

/// The default sweep through the hillside relay at `snr_db`, then `identify`; returns the
/// exit code, stdout and stderr.
fn measure_at(dir: &Path, snr_db: &str) -> (i32, String, String) {
    let sweep = dir.join("sweep.wav");
    let recorded = dir.join("recorded.wav");
    let fitted = dir.join("fitted.toml");
    let truth = cli_support::repo().join("configs/hillside_relay.toml");
    assert_eq!(code(&redress_paths(&[&"stimulus", &sweep])), 0);
    let simulated = redress_paths(&[
        &"simulate-recording",
        &truth,
        &sweep,
        &recorded,
        &"--snr-db",
        &snr_db,
        &"--seed",
        &"7",
    ]);
    assert_eq!(code(&simulated), 0, "{}", stderr(&simulated));
    let output = redress_paths(&[&"identify", &sweep, &recorded, &fitted]);
    (code(&output), stdout(&output), stderr(&output))
}

#[test]
fn a_measurement_too_noisy_to_help_exits_3_and_writes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let (exit, out, err) = measure_at(dir.path(), "5");
    assert_eq!(exit, 3, "{out}\n{err}");
    assert!(
        !dir.path().join("fitted.toml").exists(),
        "a refused model must not be written"
    );
    assert!(err.contains("fitted.toml was not written"), "{err}");
    assert!(err.contains("help:"), "the refusal says what to do: {err}");
    // The measurement itself is still shown, so the user sees why.
    assert!(out.contains("measured SNR"), "{out}");
}

#[test]
fn the_same_measurement_with_enough_snr_writes_its_config() {
    let dir = tempfile::tempdir().unwrap();
    let (exit, out, err) = measure_at(dir.path(), "50");
    assert_eq!(exit, 0, "{out}\n{err}");
    assert!(dir.path().join("fitted.toml").exists());
}
