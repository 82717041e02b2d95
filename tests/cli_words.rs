//! What a newcomer reads: one spelling per thing, one minus sign, no internals, figures that add
//! up, and help that describes every argument and every exit code a command can give.
//!
//! Source for the conventions checked here: the README's "Numbering and spellings" section
//! (which these tests keep true); for the figures, the definitions they are quoted with.

mod cli_support;

use serde_json::Value;

use cli_support::{code, example_configs, redress, redress_paths, squeeze, stderr, stdout};

/// The typographic minus sign: redress prints the ASCII one everywhere.
const MINUS_SIGN: char = '\u{2212}';

fn check_text(config: &str) -> String {
    let run = redress(&["check", config]);
    assert!(
        code(&run) == 0 || code(&run) == 3,
        "{config}: {}",
        stderr(&run)
    );
    stdout(&run)
}

fn check_json(config: &str) -> Value {
    serde_json::from_str(&stdout(&redress(&["check", config, "--json"]))).expect("JSON")
}

// Source: README "Numbering and spellings": one minus sign (ASCII), keys in JSON as in the
// config, display names in the text.
#[test]
fn reports_print_one_minus_and_no_internals() {
    for config in example_configs() {
        let name = config.display().to_string();
        for args in [
            vec!["check"],
            vec!["check", "--json"],
            vec!["bench", "--blocks", "5"],
        ] {
            let mut all: Vec<&dyn AsRef<std::ffi::OsStr>> = args.iter().map(|a| a as _).collect();
            all.insert(1, &config);
            let run = redress_paths(&all);
            let out = stdout(&run) + &stderr(&run);
            assert!(
                !out.contains(MINUS_SIGN),
                "{name} {args:?}: typographic minus"
            );
            for internal in ["Engine::process", "Avx512", "..=", "os error", "src/"] {
                assert!(!out.contains(internal), "{name} {args:?}: {internal}");
            }
        }
    }
    let demo = redress(&["demo", "--seconds", "0.2"]);
    assert!(!stdout(&demo).contains(MINUS_SIGN));
}

// Source: common practice — the two members of a conjugate pair at ±ω are one tone of |ω|·fs/2π
// Hz; a listener has no use for a negative frequency.
#[test]
fn the_roots_table_gives_a_pair_one_tone_frequency() {
    let report = stdout(&redress_paths(&[
        &"check",
        &cli_support::repo().join("configs/paging_delay.toml"),
    ]));
    let header = report
        .lines()
        .position(|l| l.contains("tone Hz"))
        .expect("roots table");
    let rows: Vec<&str> = report.lines().skip(header + 1).take(2).collect();
    // paging_delay's two zeros are the pair at angle ±2.3025 rad: 5863.3 Hz at 16 kHz.
    for row in &rows {
        let columns: Vec<&str> = row.split_whitespace().collect();
        assert_eq!(columns[4], "5863.3", "{row}");
    }
    assert_ne!(
        rows[0].split_whitespace().nth(3),
        rows[1].split_whitespace().nth(3)
    );
}

// Source: common practice — text copied from a document often carries U+2212.
#[test]
fn a_typographic_minus_on_the_command_line_is_a_minus() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("quiet.wav");
    let run = redress_paths(&[
        &"stimulus",
        &file,
        &"--level-dbfs",
        &"\u{2212}30",
        &"--seconds",
        &"0.2",
    ]);
    assert_eq!(code(&run), 0, "{}", stderr(&run));
    assert!(stdout(&run).contains("peak -30 dBFS"), "{}", stdout(&run));
    // −30 dBFS is a peak of 10^(−30/20) ≈ 0.0316 (definition of dBFS).
    let (samples, _) = redress::io::read_wav(&file).unwrap();
    let peak = samples.iter().fold(0.0f32, |m, v| m.max(v.abs()));
    assert!((peak - 0.031_623).abs() < 1e-4, "{peak}");
}

// Source: the README's description of the FIR report; the configured taps are 192
// (configs/mast_relay_fir.toml), the water-tower echo 12 samples apart, so the inverse's taps
// fall on multiples of 12: 0, 12, …, 180 (16 of them), the last 11 of the 192 zero.
#[test]
fn the_fir_report_adds_up_and_prints_one_total_delay() {
    let text = squeeze(&check_text("configs/mast_relay_fir.toml"));
    let json = check_json("configs/mast_relay_fir.toml");
    let inverse = &json["paths"][0]["inverse"];
    let b: Vec<f64> = inverse["coefficients"]["b"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    let non_zero = b.iter().filter(|v| **v != 0.0).count();
    let running = b.iter().rposition(|v| *v != 0.0).unwrap() + 1;
    let taps = inverse["fir"]["taps"].as_u64().unwrap() as usize;
    assert_eq!((taps, non_zero, running), (192, 16, 181));
    for phrase in [
        format!(
            "FIR {taps} taps ({non_zero} non-zero; the last {} are zero, so the filter is \
             {running} taps long)",
            taps - running
        ),
        format!("({non_zero} terms in all;"),
        format!("touches {non_zero} of the {running} coefficients"),
    ] {
        assert!(text.contains(&phrase), "{phrase}\n{text}");
    }
    let total = inverse["total_delay_samples"].as_u64().unwrap();
    let bulk = json["paths"][0]["bulk_delay_samples"].as_u64().unwrap();
    let added = inverse["added_latency_samples"].as_u64().unwrap();
    assert_eq!(total, bulk + added);
    assert_eq!(total, 192);
    assert!(
        text.contains("total delay 192 samples (4 ms) = bulk delay 0 + added latency 192; compare the equalized output with --delay 192"),
        "{text}"
    );
    assert!(text.contains("residual delay none"), "{text}");
    // The default structure was "sections"; the pipeline's own choice for an FIR is explained,
    // not reported as overruling anyone.
    assert!(!text.contains("switched from"), "{text}");
    assert!(!text.contains("asked for"), "{text}");
    assert!(text.contains("chosen because"), "{text}");
}

// Source: README "Numbering and spellings".
#[test]
fn each_thing_has_one_spelling_in_text_and_json() {
    let notch = check_text("configs/notch_feed.toml");
    assert!(
        notch.contains("described as      zeros and poles"),
        "{notch}"
    );
    assert!(!notch.contains("zeros poles"));
    // A conjugate pair on the circle is one tone: 60 Hz, not "-60 Hz, 60 Hz".
    assert!(notch.contains("on the unit circle (at 60 Hz)"), "{notch}");
    assert!(notch.contains("a substitute"), "{notch}");
    let notch_json = check_json("configs/notch_feed.toml");
    assert_eq!(notch_json["paths"][0]["form"], "roots");
    assert_eq!(notch_json["paths"][0]["form_name"], "zeros and poles");
    assert_eq!(notch_json["schema_version"], 4);

    // The paging link corrected over the whole axis keeps its recursive inverse, a direct form
    // (under the default band it is a band-limited FIR).
    let whole =
        std::env::temp_dir().join(format!("redress-paging-whole-{}.toml", std::process::id()));
    let text = std::fs::read_to_string("configs/paging_delay.toml").unwrap();
    std::fs::write(
        &whole,
        format!("{text}\n[path.inverse]\ncorrection_band_hz = [0, 8000]\n"),
    )
    .unwrap();
    let paging = check_json(whole.to_str().unwrap());
    std::fs::remove_file(&whole).unwrap();
    let realization = &paging["paths"][0]["realization"];
    assert_eq!(realization["structure"], "direct_form_2t");
    assert!(
        realization["coefficients"]["direct_form_2t"].is_object(),
        "{realization}"
    );

    // The echo line asks for no structure: the pipeline's choice is explained, not said to
    // overrule anyone, and carries no advice meant for someone who asked for another structure.
    let echo = check_text("configs/echo_line.toml");
    assert!(
        echo.contains("chosen because  the inverse's difference equation"),
        "{echo}"
    );
    assert!(!echo.contains("switched from"), "{echo}");
    assert!(!echo.contains("asked for"), "{echo}");
    assert!(
        !echo.contains("describe the design by its zeros and poles"),
        "{echo}"
    );
    // Asked for a lattice-ladder, the same link says it was overruled, and why.
    let dir = tempfile::tempdir().unwrap();
    let asked = cli_support::write_file(
        dir.path(),
        "asked.toml",
        "[link]\nsample_rate_hz = 48000\nchannel_count = 1\n\n[[path]]\nchannels = [0]\n\
         structure = \"lattice_ladder\"\n[path.echoes]\ndirect_gain = 0.92\n\
         taps = [{ delay_samples = 37, gain = 0.28 }, { delay_samples = 120, gain = -0.15 }]\n\
         [path.inverse]\ncorrection_band_hz = [0, 24000]\n",
    );
    let asked = stdout(&redress_paths(&[&"check", &asked]));
    assert!(
        asked.contains("switched from   lattice-ladder (asked for in the config): the inverse's"),
        "{asked}"
    );
    // No delay, no sermon about advancing time.
    assert!(echo.contains("residual delay  none"), "{echo}");
    assert!(
        !echo.contains("no causal filter can advance time"),
        "{echo}"
    );
    let paging_text = check_text("configs/paging_delay.toml");
    assert_eq!(
        paging_text
            .matches("no causal filter can advance time")
            .count(),
        1,
        "{paging_text}"
    );
}

// Source: README "Numbering and spellings" (paths counted from 1 everywhere).
#[test]
fn config_errors_count_paths_as_the_reports_do() {
    let dir = tempfile::tempdir().unwrap();
    let config = cli_support::write_file(
        dir.path(),
        "two.toml",
        "[link]\nsample_rate_hz = 48000\nchannel_count = 2\n\n[[path]]\nchannels = [0]\n\
         difference_equation = { b = [1.0], a = [1.0] }\n\n[[path]]\nchannels = [1]\n\
         structure = \"lattice-ladder\"\ndifference_equation = { b = [1.0], a = [1.0] }\n",
    );
    let run = redress_paths(&[&"check", &config]);
    assert_eq!(code(&run), 2);
    let err = stderr(&run);
    assert!(err.contains("two.toml:11:13: path 2, `structure`"), "{err}");
    assert!(!err.contains("path[1]"), "{err}");
}

// Source: common practice — a rounding residue of a few units in the last place is not a term.
#[test]
fn rounding_noise_is_not_printed_as_a_term() {
    for config in example_configs() {
        let json: Value =
            serde_json::from_str(&stdout(&redress_paths(&[&"check", &config, &"--json"]))).unwrap();
        for path in json["paths"].as_array().unwrap() {
            let Some(equation) = path["inverse"]["difference_equation"].as_str() else {
                continue;
            };
            for term in equation.split(" + ").chain(equation.split(" - ")) {
                let coefficient = term.split(' ').next().unwrap_or("");
                if let Ok(c) = coefficient.parse::<f64>() {
                    assert!(c.abs() > 1e-14, "{}: {equation}", config.display());
                }
            }
        }
    }
}

// Source: the README's demo section ("prints the check summary and the error before and
// after").
#[test]
fn the_demo_prints_a_summary_not_the_full_report() {
    let run = redress(&["demo", "--seconds", "0.5"]);
    assert_eq!(code(&run), 0, "{}", stderr(&run));
    let text = stdout(&run);
    assert!(text.lines().count() < 20, "{text}");
    assert!(!text.contains("[  0]"), "coefficient rows: {text}");
    assert!(
        text.contains("path 1 of 2: left leg to the east rack"),
        "{text}"
    );
    assert!(text.contains("total delay 0 samples"), "{text}");
    assert!(text.contains("error after equalizing"), "{text}");
    assert!(
        text.contains("redress check configs/echo_line.toml"),
        "{text}"
    );
}

/// The arguments and options of a help text that have no description. clap writes either
/// "  <CONFIG>  The link config" on one line or, when lines grow long, the name alone with the
/// description on the next, further indented line.
fn undescribed(help: &str) -> Vec<String> {
    let lines: Vec<&str> = help.lines().collect();
    let mut out = Vec::new();
    let mut in_block = false;
    for (i, line) in lines.iter().enumerate() {
        if *line == "Arguments:" || *line == "Options:" {
            in_block = true;
            continue;
        }
        if !line.starts_with(' ') && !line.is_empty() {
            in_block = false;
            continue;
        }
        let trimmed = line.trim();
        // An argument "<NAME>", an option "--name" or "-n"; not a list item "- sweep: …".
        let names_one = trimmed.starts_with('<')
            || trimmed.starts_with("--")
            || (trimmed.starts_with('-')
                && trimmed[1..].starts_with(|c: char| c.is_ascii_alphabetic()));
        if !in_block || !names_one {
            continue;
        }
        let indent = line.len() - line.trim_start().len();
        let same_line = trimmed
            .split_once("  ")
            .is_some_and(|(_, rest)| !rest.trim().is_empty());
        let next_line = lines.get(i + 1).is_some_and(|next| {
            !next.trim().is_empty() && next.len() - next.trim_start().len() > indent + 2
        });
        if !same_line && !next_line {
            out.push(trimmed.to_string());
        }
    }
    out
}

// Source: clap's help layout (name, then its description); the README's exit-code table.
#[test]
fn help_describes_every_argument_and_the_exit_codes_that_apply() {
    let commands = [
        "check",
        "apply",
        "distort",
        "compare",
        "demo",
        "run",
        "status",
        "devices",
        "bench",
        "stimulus",
        "simulate-recording",
        "identify",
        "plot",
    ];
    for command in commands {
        let help = stdout(&redress(&[command, "--help"]));
        let missing = undescribed(&help);
        assert!(missing.is_empty(), "{command}: {missing:?}\n{help}");
        assert!(help.contains("Exit codes:"), "{command}\n{help}");
        assert!(help.contains("  0    "), "{command}");
    }
    let run = stdout(&redress(&["run", "--help"]));
    for phrase in [
        "Caution:",
        "peak boost",
        "Start with the amplifier turned down",
        "those rules come first",
        "the audio devices could not be opened",
        "130",
    ] {
        assert!(run.contains(phrase), "run --help lacks {phrase:?}\n{run}");
    }
    let top = stdout(&redress(&["--help"]));
    for code in ["  0 ", "  1 ", "  2 ", "  3 ", "  130 "] {
        assert!(top.contains(code), "{code}\n{top}");
    }
    // Commands that cannot give a code do not list it.
    let compare = stdout(&redress(&["compare", "--help"]));
    assert!(!compare.contains("  3    "), "{compare}");
    assert!(!compare.contains("130"), "{compare}");
}

// Source: README (run section) — the caution sits near the top of it, before the signals.
#[test]
fn the_readme_cautions_before_the_service_runs_and_shows_no_internals() {
    let readme = std::fs::read_to_string(cli_support::repo().join("README.md")).unwrap();
    let run = readme.find("### `redress run").expect("run section");
    let caution = readme[run..]
        .find("**Caution")
        .expect("caution in the run section");
    let signals = readme[run..].find("**SIGHUP**").expect("signals");
    assert!(caution < signals, "the caution comes first");
    assert!(!readme.contains(MINUS_SIGN), "README: one minus sign");
    let speed = readme.find("## Speed").expect("speed section");
    let after = &readme[speed..];
    let end = after[3..].find("\n## ").map_or(after.len(), |e| e + 3);
    assert!(
        !after[..end].contains("src/"),
        "README speed section names source paths"
    );
}
