//! The example links in `configs/` parse, and say what their header comments claim: the
//! invertible ones have every zero and pole strictly inside the unit circle and an inverse with
//! a moderate peak boost; the quarry hop has a zero outside.

use std::path::Path;

use redress::model::config::load_link;
use redress::model::{Link, ModelForm, TransferFunction};
use redress::numeric::poly::leading_zeros;
use redress::numeric::response::peak_magnitude;
use redress::numeric::roots::find_roots;

/// Boost above which an exact inverse is unpleasant to run (noise and headroom): we keep the
/// examples under it so they demonstrate the exact case, not the substitutes.
const MODERATE_BOOST_DB: f64 = 20.0;

fn example(name: &str) -> Link {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("configs")
        .join(format!("{name}.toml"));
    load_link(&path).unwrap_or_else(|e| panic!("{e}"))
}

/// B with its bulk delay (leading zero taps) stripped: what an inverse divides by.
fn stripped_b(channel: &TransferFunction) -> &[f64] {
    &channel.b[leading_zeros(&channel.b)..]
}

fn largest_radius(coefficients: &[f64]) -> f64 {
    find_roots(coefficients)
        .expect("roots")
        .iter()
        .map(|r| r.radius())
        .fold(0.0, f64::max)
}

/// Peak of the exact inverse A(z)/B'(z) over the band, in dB.
fn inverse_peak_db(channel: &TransferFunction) -> f64 {
    peak_magnitude(&channel.a, stripped_b(channel)).level_db
}

fn assert_invertible(link: &Link) {
    for path in &link.paths {
        let zeros = largest_radius(stripped_b(&path.channel));
        let poles = largest_radius(&path.channel.a);
        assert!(
            zeros < 1.0 - 1e-3,
            "{}: a zero at radius {zeros}",
            path.label
        );
        assert!(
            poles < 1.0 - 1e-3,
            "{}: a pole at radius {poles}",
            path.label
        );
        let boost = inverse_peak_db(&path.channel);
        assert!(
            boost < MODERATE_BOOST_DB,
            "{}: inverse peaks at {boost} dB",
            path.label
        );
    }
}

#[test]
fn echo_line_is_invertible_with_a_small_boost() {
    let link = example("echo_line");
    assert_eq!(link.channel_count, 2);
    assert!(link.paths.iter().all(|p| p.form == ModelForm::EchoPaths));
    assert_invertible(&link);
    // Source: worked by hand (common practice). With every tap weaker in sum than the direct
    // path, |B| is smallest at z = −1, where the odd-delay taps flip sign:
    // left 0.92 − 0.28 − 0.15 = 0.49, right 0.9 − 0.25 − 0.17 − 0.08 = 0.40.
    let expected = [-20.0 * 0.49f64.log10(), -20.0 * 0.40f64.log10()];
    for (path, want) in link.paths.iter().zip(expected) {
        let got = inverse_peak_db(&path.channel);
        assert!((got - want).abs() < 1e-6, "{}: {got} dB", path.label);
    }
}

#[test]
fn echo_line_taps_land_where_the_comments_say() {
    let link = example("echo_line");
    let right = &link.paths[1].channel.b;
    // 2.5 ms and 4.1 ms at 48 kHz: 120 and 196.8 → 197 samples.
    assert_eq!(right.len(), 198);
    assert_eq!(right[0], 0.9);
    assert_eq!(right[41], 0.25);
    assert_eq!(right[120], -0.17);
    assert_eq!(right[197], 0.08);
}

#[test]
fn rack_feed_is_order_six_minimum_phase_both_ways() {
    let link = example("rack_feed_order6");
    let forms: Vec<_> = link.paths.iter().map(|p| p.form).collect();
    assert_eq!(forms, [ModelForm::ZerosPoles, ModelForm::Sections]);
    for path in &link.paths {
        assert!(path.channel.order() >= 6, "{}", path.label);
    }
    assert_invertible(&link);
    // Source: Python 3 cmath evaluation of the same zeros, poles and gain on a 4001-point grid
    // (hand-run while choosing the example): the inverse peaks at Nyquist, about 12.9 dB left
    // and 12.5 dB right.
    let left = peak_magnitude(&link.paths[0].channel.a, &link.paths[0].channel.b);
    let right = peak_magnitude(&link.paths[1].channel.a, &link.paths[1].channel.b);
    assert!((left.level_db - 12.87).abs() < 0.01, "{left:?}");
    assert!((right.level_db - 12.49).abs() < 0.01, "{right:?}");
    assert!((left.omega - std::f64::consts::PI).abs() < 1e-6);
}

#[test]
fn quarry_hop_has_a_zero_outside_the_circle() {
    let link = example("quarry_hop");
    let b = stripped_b(&link.paths[0].channel);
    // The silo reflection (0.8 at 43 samples) outweighs the direct path (0.45): B(z) then has
    // zeros near radius (0.8 / 0.45)^(1/43) ≈ 1.0135 (common practice: roots of a + c·z⁻ᴺ).
    let outside = largest_radius(b);
    assert!(outside > 1.01, "largest zero radius {outside}");
}

#[test]
fn paging_delay_is_a_bulk_delay_in_front_of_an_invertible_channel() {
    let link = example("paging_delay");
    let channel = &link.paths[0].channel;
    assert_eq!(leading_zeros(&channel.b), 6);
    assert_invertible(&link);
    // Source: worked by hand — at z = −1, |A| = 1.15 and |B'| = 0.7 − 0.25 + 0.05 = 0.5.
    let got = inverse_peak_db(channel);
    assert!((got - 20.0 * 2.3f64.log10()).abs() < 1e-6, "{got}");
}
