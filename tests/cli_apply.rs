//! `redress apply`, `distort` and `compare` on WAV files made in a temporary folder.
//!
//! The material is the library's generated programme (peak 0.25); the "received" signal is that
//! programme through the configured channel. Equalizing it must give the programme back, up to the
//! rounding of the file formats involved. The bounds below follow from the formats' resolution
//! (quantisation noise of a step q has power q²/12 — common practice) and the programme's level,
//! with the inverse's boost (6–8 dB for the echo line) and a margin on top. So that the file
//! formats are what is measured, the format tests run the echo line with f64 coefficients; the
//! f32 coefficients of the shipped config add their own rounding (see `cli_demo.rs`).

mod cli_support;

use std::path::{Path, PathBuf};

use cli_support::{code, number_after, redress_paths, repo, stderr, stdout, write_file};
use redress::io::{
    error_db, generate, read_wav, write_wav, ProgrammeSpec, SimulatedLink, WavFormat,
};
use redress::model::config::load_link;

const ECHO_LINE: &str = "configs/echo_line.toml";

/// The echo line's programme and what the line makes of it (both interleaved stereo, 48 kHz).
fn programme_and_received() -> (Vec<f32>, Vec<f32>) {
    let link = load_link(&repo().join(ECHO_LINE)).expect("example config loads");
    let original = generate(&ProgrammeSpec::new(48_000.0, 2, 1.0, 42));
    let received = SimulatedLink::new(&link).unwrap().apply(&original);
    (original, received)
}

fn apply(config: &Path, input: &Path, output: &Path, extra: &[&str]) -> std::process::Output {
    let mut args: Vec<&dyn AsRef<std::ffi::OsStr>> = vec![&"apply", &config, &input, &output];
    for e in extra {
        args.push(e);
    }
    redress_paths(&args)
}

fn echo_line() -> PathBuf {
    repo().join(ECHO_LINE)
}

/// The echo line with its inverse's coefficients kept in f64, written into `dir`.
fn echo_line_f64(dir: &Path) -> PathBuf {
    let text = std::fs::read_to_string(echo_line()).unwrap();
    let text = text.replacen(
        "channel_count = 2\n",
        "channel_count = 2\nprecision = \"f64\"\n",
        1,
    );
    assert!(
        text.contains("precision = \"f64\""),
        "echo_line.toml changed shape"
    );
    write_file(dir, "echo_line_f64.toml", &text)
}

/// Equalizes `received` stored as `format` and returns the error against `original` (dB) and
/// the output file's format.
fn equalize_as(format: WavFormat, keep_format: bool) -> (f64, WavFormat, String) {
    let (original, received) = programme_and_received();
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("received.wav");
    let output = dir.path().join("equalized.wav");
    write_wav(&input, &received, format).unwrap();
    let extra: &[&str] = if keep_format { &["--keep-format"] } else { &[] };
    let run = apply(&echo_line_f64(dir.path()), &input, &output, extra);
    assert_eq!(code(&run), 0, "{}", stderr(&run));
    let (equalized, written) = read_wav(&output).unwrap();
    let measure = error_db(&equalized, &original, 2, 0, 0).unwrap();
    (measure.db, written, stdout(&run))
}

#[test]
fn float_input_equalizes_to_below_minus_120_db() {
    // f32 keeps 24 significant bits: rounding the received signal and the output to f32 leaves
    // an error near −150 dB of the signal; even boosted 6 dB by the inverse it stays far under
    // −120 dB.
    let (db, written, text) = equalize_as(WavFormat::float32(2, 48_000), false);
    assert!(db < -120.0, "{db} dB");
    assert_eq!(written, WavFormat::float32(2, 48_000));
    assert!(text.contains("clipped samples: 0"), "{text}");
}

#[test]
fn int32_input_equalizes_to_below_minus_120_db() {
    // 32-bit integers are read into f32, so the f32 bound above applies.
    let (db, written, _) = equalize_as(WavFormat::int(2, 48_000, 32), false);
    assert!(db < -120.0, "{db} dB");
    assert_eq!(
        written,
        WavFormat::float32(2, 48_000),
        "float output by default"
    );
}

#[test]
fn int24_input_equalizes_to_below_minus_100_db() {
    // q = 2⁻²³: q²/12 ≈ 1.2e-15 against a received power of a few 1e-3 is about −125 dB;
    // boosted by the inverse and with margin, under −100 dB.
    let (db, _, _) = equalize_as(WavFormat::int(2, 48_000, 24), false);
    assert!(db < -100.0, "{db} dB");
}

#[test]
fn int16_input_equalizes_to_below_minus_60_db() {
    // q = 2⁻¹⁵: q²/12 ≈ 7.8e-11, about −77 dB against the received power; boosted by the
    // inverse and with margin, under −60 dB. (Not better: 16 bits is what the input carried.)
    let (db, _, _) = equalize_as(WavFormat::int(2, 48_000, 16), false);
    assert!(db < -60.0, "{db} dB");
    assert!(db > -100.0, "16-bit input cannot be this exact: {db} dB");
}

#[test]
fn keep_format_writes_the_input_format() {
    let (db, written, _) = equalize_as(WavFormat::int(2, 48_000, 24), true);
    assert_eq!(written, WavFormat::int(2, 48_000, 24));
    // Output rounding to 24 bits adds about as much noise as the input's did.
    assert!(db < -100.0, "{db} dB");
}

#[test]
fn hot_input_reports_its_clipped_samples() {
    // A channel that halves the level: its inverse doubles it. Of 0.3, 0.6, −0.5, −0.7, 0.2 the
    // doubled 1.2, −1.0 and −1.4 are at or beyond full scale: 3 clipped samples, clamped.
    let dir = tempfile::tempdir().unwrap();
    let config = write_file(
        dir.path(),
        "pad.toml",
        "[link]\nsample_rate_hz = 48000\nchannel_count = 1\n\n[[path]]\n\
         label = \"6 dB pad at the stage box\"\nchannels = [0]\n\
         difference_equation = { b = [0.5], a = [1.0] }\n\
         [path.inverse]\ncorrection_band_hz = [0, 24000]\n",
    );
    let input = dir.path().join("hot.wav");
    let output = dir.path().join("out.wav");
    write_wav(
        &input,
        &[0.3, 0.6, -0.5, -0.7, 0.2],
        WavFormat::int(1, 48_000, 16),
    )
    .unwrap();
    let run = apply(&config, &input, &output, &["--keep-format"]);
    assert_eq!(code(&run), 0, "{}", stderr(&run));
    assert!(
        stdout(&run).contains("clipped samples: 3"),
        "{}",
        stdout(&run)
    );
    let (samples, _) = read_wav(&output).unwrap();
    assert_eq!(
        samples[1],
        32_767.0 / 32_768.0,
        "clamped to the largest code"
    );
    assert_eq!(samples[2], -1.0);
    assert_eq!(samples[3], -1.0, "clamped to the smallest code");
}

#[test]
fn distort_then_apply_gives_the_original_back_after_the_bulk_delay() {
    // The paging feed delays by 6 samples; the inverse equalizes the rest and leaves the delay.
    // Corrected over the whole axis (not the default band), the exact inverse undoes it all.
    let dir = tempfile::tempdir().unwrap();
    let paging = std::fs::read_to_string(repo().join("configs/paging_delay.toml")).unwrap();
    let config = write_file(
        dir.path(),
        "paging_whole.toml",
        &format!("{paging}\n[path.inverse]\ncorrection_band_hz = [0, 8000]\n"),
    );
    let original = dir.path().join("original.wav");
    let received = dir.path().join("received.wav");
    let equalized = dir.path().join("equalized.wav");
    let programme = generate(&ProgrammeSpec::new(16_000.0, 1, 1.0, 5));
    write_wav(&original, &programme, WavFormat::float32(1, 16_000)).unwrap();

    let run = redress_paths(&[&"distort", &config, &original, &received]);
    assert_eq!(code(&run), 0, "{}", stderr(&run));
    let run = apply(&config, &received, &equalized, &[]);
    assert_eq!(code(&run), 0, "{}", stderr(&run));

    let delayed = redress_paths(&[&"compare", &original, &equalized, &"--delay", &"6"]);
    assert_eq!(code(&delayed), 0, "{}", stderr(&delayed));
    let db = number_after(&stdout(&delayed), "skipped):");
    assert!(db < -120.0, "{}", stdout(&delayed));

    // Without the delay the same files are far apart: the compare must line them up.
    let undelayed = redress_paths(&[&"compare", &original, &equalized]);
    let db = number_after(&stdout(&undelayed), "skipped):");
    assert!(db > -10.0, "{}", stdout(&undelayed));
}

#[test]
fn compare_of_a_file_with_itself_is_exact() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("same.wav");
    write_wav(
        &file,
        &generate(&ProgrammeSpec::new(48_000.0, 2, 0.2, 9)),
        WavFormat::int(2, 48_000, 24),
    )
    .unwrap();
    let run = redress_paths(&[&"compare", &file, &file]);
    assert_eq!(code(&run), 0, "{}", stderr(&run));
    assert!(
        stdout(&run).contains("-∞ dB (identical)"),
        "{}",
        stdout(&run)
    );
}

#[test]
fn a_missing_input_is_named() {
    let dir = tempfile::tempdir().unwrap();
    let run = apply(
        &echo_line(),
        &dir.path().join("nowhere.wav"),
        &dir.path().join("out.wav"),
        &[],
    );
    assert_eq!(code(&run), 1);
    let message = stderr(&run);
    assert!(message.contains("nowhere.wav: no such file"), "{message}");
    assert!(
        !dir.path().join("out.wav").exists(),
        "no output for a failed input"
    );
}

#[test]
fn a_text_file_is_not_a_wav() {
    let dir = tempfile::tempdir().unwrap();
    let input = write_file(
        dir.path(),
        "notes.wav",
        "levels for the east rack: -12 dBFS\n",
    );
    let run = apply(&echo_line(), &input, &dir.path().join("out.wav"), &[]);
    assert_eq!(code(&run), 1);
    assert!(
        stderr(&run).contains("notes.wav: not a WAV file"),
        "{}",
        stderr(&run)
    );
}

#[test]
fn an_eight_bit_file_is_refused_with_what_to_use() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("old.wav");
    let spec = hound::WavSpec {
        channels: 2,
        sample_rate: 48_000,
        bits_per_sample: 8,
        sample_format: hound::SampleFormat::Int,
    };
    let mut writer = hound::WavWriter::create(&input, spec).unwrap();
    for _ in 0..8 {
        writer.write_sample(0i8).unwrap();
    }
    writer.finalize().unwrap();
    let run = apply(&echo_line(), &input, &dir.path().join("out.wav"), &[]);
    assert_eq!(code(&run), 1);
    let message = stderr(&run);
    assert!(
        message.contains("unsupported WAV sample format (8-bit integer)"),
        "{message}"
    );
    assert!(message.contains("help:"), "{message}");
}

#[test]
fn a_mono_file_for_a_stereo_link_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("mono.wav");
    write_wav(&input, &[0.1; 100], WavFormat::float32(1, 48_000)).unwrap();
    let run = apply(&echo_line(), &input, &dir.path().join("out.wav"), &[]);
    assert_eq!(code(&run), 1);
    assert!(
        stderr(&run).contains("the file has 1 channel but the link has 2"),
        "{}",
        stderr(&run)
    );
}

#[test]
fn a_file_at_another_rate_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("cd.wav");
    write_wav(&input, &[0.1; 100], WavFormat::float32(2, 44_100)).unwrap();
    let run = apply(&echo_line(), &input, &dir.path().join("out.wav"), &[]);
    assert_eq!(code(&run), 1);
    assert!(
        stderr(&run).contains("sample rate 44100 Hz, expected 48000 Hz"),
        "{}",
        stderr(&run)
    );
}

#[test]
fn a_link_that_cannot_run_is_refused_with_its_reasons() {
    // A pole at z = 1.2: the channel itself is unstable, so no inverse is designed.
    let dir = tempfile::tempdir().unwrap();
    let config = write_file(
        dir.path(),
        "unstable.toml",
        "[link]\nsample_rate_hz = 48000\nchannel_count = 1\n\n[[path]]\n\
         label = \"feedback loop in the monitor chain\"\nchannels = [0]\n\
         difference_equation = { b = [1.0, 0.3], a = [1.0, -1.2] }\n",
    );
    let input = dir.path().join("in.wav");
    write_wav(&input, &[0.1; 100], WavFormat::float32(1, 48_000)).unwrap();
    let output = dir.path().join("out.wav");
    let run = apply(&config, &input, &output, &[]);
    let message = stderr(&run);
    assert_eq!(code(&run), 3, "{message}");
    assert!(message.contains("cannot be equalized"), "{message}");
    assert!(
        message.contains("feedback loop in the monitor chain"),
        "{message}"
    );
    assert!(!output.exists());
}

/// Writes `seconds` of programme at `rate` as `original.wav` in `dir`, runs it through the
/// link of `config` (`received.wav`) and equalizes it (`equalized.wav`); returns the three.
fn distorted_and_equalized(
    dir: &Path,
    config: &str,
    rate: f64,
    seconds: f64,
) -> (PathBuf, PathBuf, PathBuf) {
    let config = repo().join(config);
    let [original, received, equalized] =
        ["original.wav", "received.wav", "equalized.wav"].map(|n| dir.join(n));
    let programme = generate(&ProgrammeSpec::new(rate, 1, seconds, 5));
    write_wav(&original, &programme, WavFormat::float32(1, rate as u32)).unwrap();
    let run = redress_paths(&[&"distort", &config, &original, &received]);
    assert_eq!(code(&run), 0, "{}", stderr(&run));
    let run = apply(&config, &received, &equalized, &[]);
    assert_eq!(code(&run), 0, "{}", stderr(&run));
    (original, received, equalized)
}

#[test]
fn compare_finds_the_delay_and_judges_by_band() {
    // The paging feed's 6 samples are found by cross-correlation, and after them the equalized
    // programme matches in waveform and in every band (corrected over the whole axis: the
    // default band would leave the top tenth below 8 kHz as the link shaped it).
    let dir = tempfile::tempdir().unwrap();
    let paging = std::fs::read_to_string(repo().join("configs/paging_delay.toml")).unwrap();
    let whole = write_file(
        dir.path(),
        "paging_whole.toml",
        &format!("{paging}\n[path.inverse]\ncorrection_band_hz = [0, 8000]\n"),
    );
    let (original, _, equalized) =
        distorted_and_equalized(dir.path(), whole.to_str().unwrap(), 16_000.0, 2.0);
    let found = redress_paths(&[&"compare", &original, &equalized, &"--find-delay"]);
    assert_eq!(code(&found), 0, "{}", stderr(&found));
    let text = stdout(&found);
    assert!(
        text.contains("delay found by cross-correlation: 6 frames"),
        "{text}"
    );
    assert!(number_after(&text, "skipped):") < -120.0, "{text}");
    // f32 files: every band within 0.01 dB.
    assert!(number_after(&text, "Hz,").abs() < 0.01, "{text}");
}

#[test]
fn compare_judges_a_magnitude_only_correction_fairly_by_band() {
    // The quarry hop under its minimum-phase substitute: the phase of the silo reflection is
    // left as an all-pass, so the waveform stays far off while every band's level is corrected
    // (Source: common practice — an all-pass leaves |X| unchanged). 4 s of programme at 48 kHz:
    // the waveform error stays above -20 dB (-11 dB here) and every band is within 0.1 dB.
    let dir = tempfile::tempdir().unwrap();
    let (original, received, equalized) =
        distorted_and_equalized(dir.path(), "configs/quarry_hop.toml", 48_000.0, 4.0);
    let run = redress_paths(&[&"compare", &original, &equalized]);
    let text = stdout(&run);
    assert!(number_after(&text, "skipped):") > -20.0, "{text}");
    assert!(number_after(&text, "Hz,").abs() < 0.1, "{text}");
    // Against the received (uncorrected) file the comb of the reflection shows in the bands.
    let run = redress_paths(&[&"compare", &original, &received]);
    assert!(
        number_after(&stdout(&run), "Hz,").abs() > 3.0,
        "{}",
        stdout(&run)
    );
}

#[test]
fn find_delay_and_delay_are_exclusive() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("same.wav");
    write_wav(
        &file,
        &generate(&ProgrammeSpec::new(48_000.0, 1, 0.2, 9)),
        WavFormat::float32(1, 48_000),
    )
    .unwrap();
    let run = redress_paths(&[&"compare", &file, &file, &"--find-delay", &"--delay", &"3"]);
    assert_eq!(code(&run), 2, "{}", stderr(&run));
}
