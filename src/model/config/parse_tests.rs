//! What good configs turn into: each model form gives the right B(z)/A(z), and defaults apply.

use std::path::Path as FilePath;

use num_complex::Complex64;

use super::parse_link;
use crate::model::{CoefficientPrecision, Link, ModelForm, Structure, DEFAULT_CIRCLE_TOLERANCE};
use crate::numeric::poly::eval_z_inverse;

fn parse(text: &str) -> Link {
    match parse_link(text, None) {
        Ok(link) => link,
        Err(e) => panic!("config should parse:\n{e}"),
    }
}

fn assert_close(actual: &[f64], expected: &[f64]) {
    assert_eq!(actual.len(), expected.len(), "{actual:?} vs {expected:?}");
    for (x, y) in actual.iter().zip(expected) {
        assert!((x - y).abs() < 1e-12, "{actual:?} vs {expected:?}");
    }
}

const MONO: &str = "[link]\nsample_rate_hz = 48_000\nchannel_count = 1\n";

#[test]
fn difference_equation_with_defaults() {
    let link = parse(&format!(
        "{MONO}[[path]]\nchannels = [0]\ndifference_equation = {{ b = [1, 0.5] }}\n"
    ));
    assert_eq!(link.sample_rate, 48000.0);
    assert_eq!(link.channel_count, 1);
    assert_eq!(link.source, None);
    let path = &link.paths[0];
    assert_eq!(path.label, "path 1");
    assert_eq!(path.channels, vec![0]);
    assert_eq!(path.form, ModelForm::DifferenceEquation);
    assert_eq!(path.channel.b, vec![1.0, 0.5]);
    assert_eq!(path.channel.a, vec![1.0]);
    assert_eq!(path.structure, Structure::DirectForm2T);
    assert_eq!(path.precision, CoefficientPrecision::F32);
    assert_eq!(path.circle_tolerance, DEFAULT_CIRCLE_TOLERANCE);
}

#[test]
fn link_settings_reach_every_path_and_structure_defaults_by_order() {
    let link = parse(
        r#"
[link]
sample_rate_hz = 96000.0
channel_count = 3
circle_tolerance = 1e-6
precision = "f64"

[[path]]
label = "main pair"
channels = [2, 0]
difference_equation = { b = [1.0, 0.1, 0.1, 0.1], a = [1.0] }

[[path]]
channels = [1]
structure = "lattice_ladder"
[path.difference_equation]
b = [1.0, 0.1, 0.1, 0.1]
"#,
    );
    let [first, second] = &link.paths[..] else {
        panic!("two paths expected");
    };
    assert_eq!(first.label, "main pair");
    assert_eq!(first.channels, vec![2, 0]);
    // Order 3 > 2: sections by default (common practice for higher orders).
    assert_eq!(first.structure, Structure::Sections);
    assert_eq!(second.label, "path 2");
    assert_eq!(second.structure, Structure::LatticeLadder);
    for path in &link.paths {
        assert_eq!(path.precision, CoefficientPrecision::F64);
        assert_eq!(path.circle_tolerance, 1e-6);
    }
    assert_eq!(
        link.path_for_channel(0).map(|p| p.label.as_str()),
        Some("main pair")
    );
    assert_eq!(
        link.path_for_channel(1).map(|p| p.label.as_str()),
        Some("path 2")
    );
}

#[test]
fn trailing_zero_coefficients_are_dropped_and_bulk_delay_kept() {
    let link = parse(&format!(
        "{MONO}[[path]]\nchannels = [0]\n\
         difference_equation = {{ b = [0, 0, 1.0, 0.5, 0, 0], a = [1.0, -0.5, 0.0] }}\n"
    ));
    let channel = &link.paths[0].channel;
    assert_eq!(channel.b, vec![0.0, 0.0, 1.0, 0.5]);
    assert_eq!(channel.a, vec![1.0, -0.5]);
    // The inverse's order ignores the bulk delay: 1, so direct form.
    assert_eq!(link.paths[0].structure, Structure::DirectForm2T);
}

#[test]
fn echoes_become_taps_of_b() {
    let link = parse(
        r#"
[link]
sample_rate_hz = 8000
channel_count = 1

[[path]]
channels = [0]
[path.echoes]
direct_gain = 0.9
direct_delay_samples = 3
taps = [
    { delay_samples = 2, gain = 0.5 },
    { delay_ms = 0.5, gain = -0.25 },   # 4 samples at 8 kHz
    { delay_samples = 4, gain = 0.05 }, # same sample as the one before: gains add
]
"#,
    );
    let path = &link.paths[0];
    assert_eq!(path.form, ModelForm::EchoPaths);
    // Direct path at sample 3; taps count from it (3 + 2, 3 + 4).
    assert_close(&path.channel.b, &[0.0, 0.0, 0.0, 0.9, 0.0, 0.5, 0.0, -0.2]);
    assert_eq!(path.channel.a, vec![1.0]);
}

#[test]
fn echo_defaults_and_half_sample_rounding() {
    // 0.0625 ms at 8 kHz is exactly half a sample: rounds away from zero, to 1.
    // 0.1875 ms is 1.5 samples: rounds to 2.
    let link = parse(
        r#"
[link]
sample_rate_hz = 8000
channel_count = 1
[[path]]
channels = [0]
[path.echoes]
taps = [{ delay_ms = 0.0625, gain = 0.5 }, { delay_ms = 0.1875, gain = 0.25 }]
"#,
    );
    assert_close(&link.paths[0].channel.b, &[1.0, 0.5, 0.25]);
}

#[test]
fn roots_expand_to_a_polynomial_that_vanishes_at_them() {
    let link = parse(&format!(
        "{MONO}[[path]]\nchannels = [0]\n[path.roots]\n\
         zeros = [0.3, [0.5, 0.2], [0.5, -0.2], {{ radius = 0.9, angle_deg = 30 }}, \
                  {{ radius = 0.9, angle_rad = -0.5235987755982988 }}]\n\
         poles = [-0.4, {{ radius = 0.5, angle_deg = 90 }}, {{ radius = 0.5, angle_deg = -90 }}]\n\
         gain = 2.0\n"
    ));
    let path = &link.paths[0];
    assert_eq!(path.form, ModelForm::ZerosPoles);
    let b = &path.channel.b;
    assert_eq!(b.len(), 6);
    let zeros = [
        Complex64::new(0.3, 0.0),
        Complex64::new(0.5, 0.2),
        Complex64::new(0.5, -0.2),
        Complex64::from_polar(0.9, std::f64::consts::FRAC_PI_6),
        Complex64::from_polar(0.9, -std::f64::consts::FRAC_PI_6),
    ];
    // Source: common practice — B(z) vanishes at each of its zeros.
    for z in zeros {
        assert!(eval_z_inverse(b, z).norm() < 1e-12, "B({z}) != 0");
    }
    // Source: Vieta's formulas (common practice), worked by hand:
    // b0 = gain; b1/b0 = −Σz = −(0.3 + 1.0 + 1.8·cos 30°); b5/b0 = −Πz = −0.3·0.29·0.81.
    assert_eq!(b[0], 2.0);
    let sum = 0.3 + 1.0 + 1.8 * 30f64.to_radians().cos();
    assert!((b[1] + 2.0 * sum).abs() < 1e-12);
    assert!((b[5] + 2.0 * 0.3 * 0.29 * 0.81).abs() < 1e-12);
    // (1 + 0.4z⁻¹)(1 + 0.25z⁻²), multiplied out by hand.
    assert_close(&path.channel.a, &[1.0, 0.4, 0.25, 0.1]);
    assert_eq!(path.structure, Structure::Sections);
}

#[test]
fn missing_conjugates_are_added_when_asked_and_not_doubled() {
    for zeros in ["[[0.5, 0.2]]", "[[0.5, 0.2], [0.5, -0.2]]"] {
        let link = parse(&format!(
            "{MONO}[[path]]\nchannels = [0]\n[path.roots]\nzeros = {zeros}\nconjugates = \"add\"\n"
        ));
        // (1 − (0.5+0.2j)z⁻¹)(1 − (0.5−0.2j)z⁻¹) = 1 − z⁻¹ + 0.29z⁻², by hand.
        assert_close(&link.paths[0].channel.b, &[1.0, -1.0, 0.29]);
    }
}

#[test]
fn polar_value_on_the_real_axis_needs_no_conjugate() {
    let link = parse(&format!(
        "{MONO}[[path]]\nchannels = [0]\n[path.roots]\n\
         zeros = [{{ radius = 0.5, angle_deg = 180 }}]\n"
    ));
    assert_eq!(link.paths[0].channel.b, vec![1.0, 0.5]);
    assert_eq!(link.paths[0].channel.a, vec![1.0]);
}

#[test]
fn sections_multiply_into_one_channel() {
    let link = parse(&format!(
        "{MONO}[[path]]\nchannels = [0]\n\
         sections = [[1, 0.5, 0, 1, -0.2, 0], [2, 0, -0.5, 1, 0, 0.25]]\n"
    ));
    let path = &link.paths[0];
    assert_eq!(path.form, ModelForm::Sections);
    // (1 + 0.5z⁻¹)(2 − 0.5z⁻²) and (1 − 0.2z⁻¹)(1 + 0.25z⁻²), multiplied out by hand; the
    // trailing zero each first-order section leaves is dropped.
    assert_close(&path.channel.b, &[2.0, 1.0, -0.5, -0.25]);
    assert_close(&path.channel.a, &[1.0, -0.2, 0.25, -0.05]);
}

#[test]
fn source_is_recorded() {
    let file = FilePath::new("configs/somewhere.toml");
    let link = parse_link(
        &format!("{MONO}[[path]]\nchannels = [0]\nsections = [[1, 0, 0, 1, 0, 0]]\n"),
        Some(file),
    )
    .expect("parses");
    assert_eq!(link.source.as_deref(), Some(file));
}

#[test]
fn crlf_files_parse_and_place_errors_on_the_right_line() {
    let good = "[link]\r\nsample_rate_hz = 48000\r\nchannel_count = 1\r\n\r\n[[path]]\r\n\
                channels = [0]\r\ndifference_equation = { b = [1.0] }\r\n";
    assert!(parse_link(good, None).is_ok());
    let bad = good.replace("b = [1.0]", "b = [1.0], c = 2");
    let error = parse_link(&bad, None).unwrap_err();
    // The stray key `c` is the 36th character of line 7, counted by hand.
    assert_eq!(error.key.as_deref(), Some("path[0].difference_equation.c"));
    assert_eq!((error.line, error.column), (Some(7), Some(36)));
}

// Source: README, Config format — format_version is optional, 1 today; a newer one is refused,
// 0 is not a format; a whole sample rate may be written with a decimal point, a fractional one
// is refused.
#[test]
fn format_version_and_whole_sample_rates() {
    let body = "channel_count = 1\n\n[[path]]\nchannels = [0]\ndifference_equation = { b = [1] }\n";
    let with = |head: &str| parse_link(&format!("[link]\n{head}\n{body}"), None);
    assert!(with("format_version = 1\nsample_rate_hz = 48000").is_ok());
    assert!(with("sample_rate_hz = 48000.0").is_ok());
    let newer = with("format_version = 2\nsample_rate_hz = 48000").unwrap_err();
    assert_eq!(newer.kind, crate::model::ConfigErrorKind::NewerFormat);
    assert!(newer.problem.contains("format 2"), "{newer}");
    let zero = with("format_version = 0\nsample_rate_hz = 48000").unwrap_err();
    assert!(zero.problem.contains("1 or more"), "{zero}");
    let fractional = with("sample_rate_hz = 44100.5").unwrap_err();
    assert!(
        fractional.problem.contains("not a whole number"),
        "{fractional}"
    );
    let outside = with("sample_rate_hz = 100").unwrap_err();
    assert!(outside.problem.contains("4000 to 384000"), "{outside}");
    assert!(!outside.problem.contains("..="), "{outside}");
}

#[test]
fn latency_knee_with_its_budget() {
    let link = parse(&format!(
        "{MONO}[[path]]\nchannels = [0]\ndifference_equation = {{ b = [0.5, 1] }}\n\
         [path.inverse]\nmethod = \"latency_knee\"\nlatency_budget_ms = 5\n"
    ));
    let policy = &link.paths[0].inverse;
    assert_eq!(policy.method, crate::model::InverseMethod::LatencyKnee);
    assert!((policy.knee_budget_seconds - 0.005).abs() < 1e-15);
    let default = parse(&format!(
        "{MONO}[[path]]\nchannels = [0]\ndifference_equation = {{ b = [0.5, 1] }}\n\
         [path.inverse]\nmethod = \"latency_knee\"\n"
    ));
    assert_eq!(
        default.paths[0].inverse.knee_budget_seconds,
        crate::model::DEFAULT_KNEE_BUDGET_SECONDS
    );
}
