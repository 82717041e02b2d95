//! The catalogue of bad configs: every file in `tests/fixtures/bad_configs/` must fail with the
//! listed kind, at the listed line, naming the listed key, with a message containing the listed
//! fragment. A fixture without a catalogue entry (or the reverse) fails the test too.

use std::path::{Path, PathBuf};

use proptest::prelude::*;
use redress::model::config::{load_link, parse_link};
use redress::model::ConfigErrorKind::{self, *};

const FIXTURES: &str = "tests/fixtures/bad_configs";

struct Case {
    file: &'static str,
    kind: ConfigErrorKind,
    line: usize,
    key: Option<&'static str>,
    fragment: &'static str,
}

const fn case(
    file: &'static str,
    kind: ConfigErrorKind,
    line: usize,
    key: Option<&'static str>,
    fragment: &'static str,
) -> Case {
    Case {
        file,
        kind,
        line,
        key,
        fragment,
    }
}

#[rustfmt::skip]
const CATALOGUE: &[Case] = &[
    // The file itself.
    case("not_utf8", NotUtf8, 7, None, "not UTF-8"),
    case("syntax_missing_value", Syntax, 4, None, "the value is missing"),
    case("duplicate_key", Syntax, 5, None, "duplicate key"),
    case("unquoted_text", Syntax, 5, None, "write precision = \"f64\""),
    // Keys missing, unknown or misplaced.
    case("missing_link", MissingKey, 1, Some("link"), "no [link] table"),
    case("missing_sample_rate", MissingKey, 2, Some("link.sample_rate_hz"), "`sample_rate_hz` is missing"),
    case("missing_paths", MissingKey, 1, Some("path"), "no [[path]] table"),
    case("missing_channels", MissingKey, 6, Some("path[0].channels"), "`channels` is missing"),
    case("unknown_key_misspelt", UnknownKey, 3, Some("link.sample_rate"), "did you mean `sample_rate_hz`?"),
    case("unknown_key_misplaced", UnknownKey, 8, Some("path[0].precision"), "belongs in [link]"),
    case("unknown_key_in_tap", UnknownKey, 12, Some("path[0].echoes.taps[1].delay_sample"), "did you mean `delay_samples`?"),
    case("unknown_top_level_table", UnknownKey, 2, Some("links"), "did you mean `link`?"),
    case("path_single_table", WrongType, 6, Some("path"), "double brackets"),
    case("empty_paths", EmptyList, 2, Some("path"), "list of paths is empty"),
    // Types and values that are not numbers.
    case("sample_rate_quoted", WrongType, 3, Some("link.sample_rate_hz"), "remove the quotes"),
    case("channel_count_decimal", WrongType, 4, Some("link.channel_count"), "without the decimal point"),
    case("coefficient_not_numeric", WrongType, 8, Some("path[0].difference_equation.b[1]"), "expected a number"),
    case("nan_coefficient", NotFinite, 8, Some("path[0].difference_equation.b[1]"), "nan"),
    case("inf_direct_gain", NotFinite, 10, Some("path[0].echoes.direct_gain"), "inf"),
    case("circle_tolerance_nan", NotFinite, 5, Some("link.circle_tolerance"), "nan"),
    case("number_overflows", NotFinite, 11, Some("path[0].roots.poles[0]"), "too large for 64-bit"),
    // Link settings out of range.
    case("sample_rate_in_khz", OutOfRange, 3, Some("link.sample_rate_hz"), "48000, not 48"),
    case("channel_count_zero", OutOfRange, 4, Some("link.channel_count"), "between 1 and 64"),
    case("channel_count_too_many", OutOfRange, 4, Some("link.channel_count"), "not 65"),
    case("circle_tolerance_too_large", OutOfRange, 5, Some("link.circle_tolerance"), "below 0.1"),
    case("circle_tolerance_zero", OutOfRange, 5, Some("link.circle_tolerance"), "above 0"),
    case("bad_precision", BadChoice, 5, Some("link.precision"), "\"f32\", \"f64\""),
    // Channels.
    case("channel_out_of_range", OutOfRange, 7, Some("path[0].channels[1]"), "channel 2 does not exist"),
    case("channel_in_two_paths", ChannelTwice, 13, Some("path[1].channels[0]"), "already modelled by path 1"),
    case("channel_twice_in_path", ChannelTwice, 7, Some("path[0].channels[1]"), "listed twice"),
    case("channel_not_covered", ChannelNotCovered, 4, Some("link.channel_count"), "channel 1 is not modelled"),
    case("empty_channels", EmptyList, 7, Some("path[0].channels"), "no channel"),
    // The path's model key.
    case("no_model", NoModel, 6, Some("path[0]"), "exactly one of"),
    case("two_models", SeveralModels, 10, Some("path[0].roots"), "`difference_equation` and `roots`"),
    case("bad_structure", BadChoice, 8, Some("path[0].structure"), "did you mean \"lattice_ladder\"?"),
    // Difference equations.
    case("empty_numerator", EmptyList, 8, Some("path[0].difference_equation.b"), "no coefficients"),
    case("all_zero_numerator", AllZero, 8, Some("path[0].difference_equation.b"), "every coefficient of b is zero"),
    case("denominator_leading_zero", LeadingZero, 11, Some("path[0].difference_equation.a"), "a[0] is zero"),
    case("numerator_too_long", TooLong, 8, Some("path[0].difference_equation.b"), "4098 coefficients"),
    // Zeros and poles.
    case("missing_conjugate", MissingConjugate, 10, Some("path[0].roots.zeros[1]"), "conjugates = \"add\""),
    case("conjugate_near_miss", MissingConjugate, 10, Some("path[0].roots.zeros[0]"), "same digits"),
    case("bad_conjugates_choice", BadChoice, 11, Some("path[0].roots.conjugates"), "\"require\", \"add\""),
    case("complex_wrong_length", MalformedComplex, 10, Some("path[0].roots.zeros[1]"), "exactly two numbers"),
    case("negative_radius", MalformedComplex, 11, Some("path[0].roots.poles[0].radius"), "negative"),
    case("polar_both_angles", ConflictingKeys, 11, Some("path[0].roots.zeros[0].angle_rad"), "both angle_deg and angle_rad"),
    case("zero_gain", AllZero, 11, Some("path[0].roots.gain"), "gain of 0"),
    case("too_many_zeros", TooLong, 10, Some("path[0].roots.zeros"), "4097 zeros"),
    case("too_many_conjugates_added", TooLong, 11, Some("path[0].roots.zeros"), "once the missing conjugates are added"),
    // Echoes.
    case("tap_both_delays", ConflictingKeys, 10, Some("path[0].echoes.taps[0].delay_ms"), "both delay_samples and delay_ms"),
    case("tap_without_delay", MissingKey, 10, Some("path[0].echoes.taps[0].delay_samples"), "no delay"),
    case("tap_zero_delay", OutOfRange, 11, Some("path[0].echoes.taps[0].delay_samples"), "0 samples"),
    case("tap_negative_delay_ms", OutOfRange, 10, Some("path[0].echoes.taps[0].delay_ms"), "-1.5 ms"),
    case("tap_rounds_to_no_delay", OutOfRange, 10, Some("path[0].echoes.taps[0].delay_ms"), "under half a sample"),
    case("direct_delay_negative", OutOfRange, 10, Some("path[0].echoes.direct_delay_samples"), "negative delay"),
    case("echo_delay_too_long", TooLong, 11, Some("path[0].echoes.taps[0].delay_ms"), "4344 samples"),
    case("echo_delay_huge", TooLong, 11, Some("path[0].echoes.taps[0].delay_samples"), "longest supported is 4096"),
    case("echoes_add_to_nothing", AllZero, 9, Some("path[0].echoes"), "no signal"),
    // Sections.
    case("section_a0_zero", LeadingZero, 10, Some("path[0].sections[1]"), "a0 (the fourth number) is zero"),
    case("section_wrong_length", WrongLength, 8, Some("path[0].sections[0]"), "5 numbers, not 6"),
    case("empty_sections", EmptyList, 8, Some("path[0].sections"), "no sections"),
    case("too_many_sections", TooLong, 8, Some("path[0].sections"), "2049 sections"),
    // The inverse policy ([path.inverse]).
    case("inverse_contradictory_fir", ConflictingKeys, 12, Some("path[0].inverse.fir_taps"), "contradict each other"),
    case("inverse_budget_below_one_sample", OutOfRange, 12, Some("path[0].inverse.fir_latency_budget_ms"), "less than one sample"),
    case("inverse_cap_zero", OutOfRange, 11, Some("path[0].inverse.boost_cap_db"), "must be above 0 dB"),
    case("inverse_cap_negative", OutOfRange, 11, Some("path[0].inverse.boost_cap_db"), "-6 dB is not usable"),
    case("inverse_fir_too_long", OutOfRange, 12, Some("path[0].inverse.fir_taps"), "from 2 to 4096"),
    case("inverse_regularization_negative", OutOfRange, 12, Some("path[0].inverse.fir_regularization"), "0 or more"),
    case("inverse_delay_and_budget", ConflictingKeys, 13, Some("path[0].inverse.fir_latency_budget_ms"), "keep one"),
    case("inverse_bad_method", BadChoice, 11, Some("path[0].inverse.method"), "did you mean \"minimum_phase\"?"),
    case("inverse_unity_beyond_nyquist", OutOfRange, 11, Some("path[0].inverse.unity_at_hz"), "below half the sample rate"),
    case("inverse_knee_budget_too_long", OutOfRange, 12, Some("path[0].inverse.latency_budget_ms"), "to 20 ms"),
    case("inverse_knee_budget_without_knee", ConflictingKeys, 12, Some("path[0].inverse.latency_budget_ms"), "method is not \"latency_knee\""),
    case("inverse_fallback_not_bool", WrongType, 11, Some("path[0].inverse.structure_fallback"), "true or false"),
    // The live service's settings ([audio], [engine]).
    case("engine_bad_clip", BadChoice, 11, Some("engine.clip"), "did you mean \"soft_limit\"?"),
    case("engine_crossfade_zero", OutOfRange, 11, Some("engine.crossfade_ms"), "from 0.1 to 2000 ms"),
    case("engine_unknown_key", UnknownKey, 11, Some("engine.crosfade_ms"), "did you mean `crossfade_ms`?"),
    case("audio_buffer_too_small", OutOfRange, 11, Some("audio.buffer_frames"), "from 16 to 16384"),
    case("audio_empty_device", OutOfRange, 11, Some("audio.output_device"), "device name is empty"),
];

fn fixture(name: &str) -> PathBuf {
    Path::new(FIXTURES).join(format!("{name}.toml"))
}

#[test]
fn every_bad_config_fails_as_catalogued() {
    let mut mismatches = Vec::new();
    for case in CATALOGUE {
        let path = fixture(case.file);
        let error = match load_link(&path) {
            Ok(_) => {
                mismatches.push(format!("{}: parsed without error", case.file));
                continue;
            }
            Err(e) => e,
        };
        let text = error.to_string();
        let mut wrong = Vec::new();
        if error.kind != case.kind {
            wrong.push(format!("kind {:?}, expected {:?}", error.kind, case.kind));
        }
        if error.line != Some(case.line) {
            wrong.push(format!("line {:?}, expected {}", error.line, case.line));
        }
        if error.key.as_deref() != case.key {
            wrong.push(format!("key {:?}, expected {:?}", error.key, case.key));
        }
        if !text.contains(case.fragment) {
            wrong.push(format!("message lacks {:?}", case.fragment));
        }
        // Every message names the file and its line, and says what is wrong and what to do.
        let place = format!("{}:{}:", path.display(), case.line);
        if !text.starts_with(&place)
            || !text.contains("\n  problem: ")
            || !text.contains("\n  help: ")
        {
            wrong.push("message lacks place, problem or help".to_owned());
        }
        if !wrong.is_empty() {
            mismatches.push(format!("{}: {}\n{text}", case.file, wrong.join("; ")));
        }
    }
    assert!(mismatches.is_empty(), "\n{}", mismatches.join("\n\n"));
}

#[test]
fn catalogue_and_fixture_folder_agree() {
    let mut on_disk: Vec<String> = std::fs::read_dir(FIXTURES)
        .expect("fixture folder")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|x| x == "toml"))
        .map(|p| p.file_stem().expect("stem").to_string_lossy().into_owned())
        .collect();
    on_disk.sort();
    let mut listed: Vec<String> = CATALOGUE.iter().map(|c| c.file.to_owned()).collect();
    listed.sort();
    assert_eq!(on_disk, listed);
}

#[test]
fn values_are_quoted_as_written() {
    let error = load_link(&fixture("denominator_leading_zero")).unwrap_err();
    assert_eq!(error.value.as_deref(), Some("[0.0, 1.0]"));
    assert_eq!(error.column, Some(5));
    let error = load_link(&fixture("sample_rate_quoted")).unwrap_err();
    assert_eq!(error.value.as_deref(), Some("\"48000\""));
    let error = load_link(&fixture("number_overflows")).unwrap_err();
    assert_eq!(error.value.as_deref(), Some("1e400"));
}

#[test]
fn missing_file_is_an_error_not_a_panic() {
    let path = Path::new(FIXTURES).join("no_such_link.toml");
    let error = load_link(&path).unwrap_err();
    assert_eq!(error.kind, FileNotFound);
    assert_eq!(error.file.as_deref(), Some(path.as_path()));
    assert!(error.to_string().contains("no such file"));
}

#[test]
fn directory_is_an_error_not_a_panic() {
    let error = load_link(Path::new(FIXTURES)).unwrap_err();
    assert_eq!(error.kind, IsDirectory);
    assert!(error.to_string().contains("directory"));
}

#[test]
fn errors_without_a_file_still_give_line_and_column() {
    let error =
        parse_link("[link]\nsample_rate_hz = 48000\nchannel_count = -1\n", None).unwrap_err();
    assert_eq!(error.kind, OutOfRange);
    assert!(error.file.is_none());
    assert_eq!((error.line, error.column), (Some(3), Some(17)));
    assert!(error
        .to_string()
        .starts_with("<config>:3:17: `link.channel_count` = -1"));
}

/// A config that parses; the property test below damages it.
const GOOD: &str = r#"[link]
sample_rate_hz = 48000
channel_count = 2
precision = "f64"

[[path]]
channels = [0]
difference_equation = { b = [1.0, 0.5], a = [1.0, -0.2] }

[[path]]
channels = [1]
[path.roots]
zeros = [0.3, [0.5, 0.2], { radius = 0.9, angle_deg = -30 }]
poles = [-0.4]
conjugates = "add"
"#;

#[test]
fn the_undamaged_config_parses() {
    assert!(parse_link(GOOD, None).is_ok());
}

proptest! {
    // Bad input never panics: overwrite a stretch of a good config with TOML-ish debris.
    #[test]
    fn damaged_configs_never_panic(
        at in 0..GOOD.len(),
        cut in 0usize..12,
        debris in "[\\[\\]{}=,.\"0-9a-z_ +\\-\n]{0,12}",
    ) {
        let end = (at + cut).min(GOOD.len());
        let text = format!("{}{}{}", &GOOD[..at], debris, &GOOD[end..]);
        match parse_link(&text, None) {
            Ok(link) => prop_assert!(link.paths.iter().all(|p| p.channel.a[0] != 0.0)),
            Err(e) => prop_assert!(e.line.is_some() && !e.problem.is_empty()),
        }
    }
}
