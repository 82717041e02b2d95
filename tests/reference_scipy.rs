//! redress checked against numpy/scipy.
//!
//! The fixtures in tests/fixtures/reference are written by scripts/reference/make_fixtures.py
//! with numpy 2.4.6 and scipy 1.17.1 (pinned in scripts/reference/requirements.txt and recorded
//! in every file); scripts/reference/check_fixtures.sh regenerates them and diffs. The channels
//! are invented links of our own. Every number compared here came out of numpy or scipy, not
//! out of redress.
//!
//! Each test walks every channel and collects all mismatches before failing, so one run names
//! every channel, quantity, expected value and actual value that disagree.

mod reference_support;

use std::path::{Path, PathBuf};

use num_complex::Complex64;
use serde::Deserialize;

use reference_support::{compare_vectors, max_abs, read_json, worst_relative, Mismatches};

use redress::analysis::{analyse, ChannelAnalysis, Placement};
use redress::design::{design_exact, DesignError, InverseDesign};
use redress::model::{CoefficientPrecision, Structure, TransferFunction};
use redress::numeric::response::response_at;
use redress::numeric::roots::Root;
use redress::realize::{realize, Filter, Realization};

// ---------------------------------------------------------------------------------------------
// Tolerances (why each is what it is).

/// Simple roots: numpy.roots and our companion-matrix solver both polish to a few ulps; 1e-9
/// (times max(1, |z|)) leaves room for ill-conditioned clusters like the 24 echo zeros.
const SIMPLE_ROOT_TOLERANCE: f64 = 1e-9;

/// An m-fold root is perturbed by round-off to about ε^(1/m) (common practice: a double root
/// moves by √ε, a triple by ∛ε). numpy.roots does not gather clusters, so its copies scatter
/// that far; we allow 16·ε^(1/m): 2.4e-7 for a double root, 9.7e-5 for a triple.
fn root_tolerance(multiplicity: usize) -> f64 {
    if multiplicity <= 1 {
        SIMPLE_ROOT_TOLERANCE
    } else {
        16.0 * f64::EPSILON.powf(1.0 / multiplicity as f64)
    }
}

/// Our gathered repeated root against its exact value (known by construction).
const CONSTRUCTED_ROOT_TOLERANCE: f64 = 1e-9;

/// Inverse coefficients: one division per coefficient on both sides.
const COEFFICIENT_TOLERANCE: f64 = 1e-12;

/// |G(e^jω)| relative to scipy.signal.freqz.
const MAGNITUDE_TOLERANCE: f64 = 1e-10;

/// Peak boost of the inverse, in dB.
const PEAK_DB_TOLERANCE: f64 = 0.01;

/// Peak frequency, in radians per sample (0.076 Hz at 48 kHz). Both searches refine far below
/// this; it only absorbs the flatness of a broad maximum.
const PEAK_OMEGA_TOLERANCE: f64 = 1e-5;

// ---------------------------------------------------------------------------------------------
// Fixtures.

#[derive(Debug, Deserialize)]
struct Fixture {
    channel: String,
    sample_rate: f64,
    circle_tolerance: f64,
    b: Vec<f64>,
    a: Vec<f64>,
    bulk_delay: usize,
    zeros: Vec<[f64; 2]>,
    poles: Vec<[f64; 2]>,
    tf2zpk: CrossCheck,
    zeros_inside: usize,
    zeros_on_circle: usize,
    zeros_outside: usize,
    poles_inside: usize,
    poles_on_circle: usize,
    poles_outside: usize,
    max_zero_radius: f64,
    channel_stable: bool,
    invertible: bool,
    verdict: String,
    constructed_zeros: Option<Vec<ConstructedRoot>>,
    inverse: Option<Inverse>,
    source: Source,
}

#[derive(Debug, Deserialize)]
struct CrossCheck {
    zeros: Vec<[f64; 2]>,
    poles: Vec<[f64; 2]>,
}

#[derive(Debug, Deserialize)]
struct ConstructedRoot {
    value: [f64; 2],
    multiplicity: usize,
}

#[derive(Debug, Deserialize)]
struct Inverse {
    b: Vec<f64>,
    a: Vec<f64>,
    gain: f64,
    impulse_response: Vec<f64>,
    cascade_impulse_response: Vec<f64>,
    magnitude: Magnitude,
    peak: PeakFixture,
    signal_output_sections: Vec<f64>,
    signal_output_direct: Vec<f64>,
}

#[derive(Debug, Deserialize)]
struct Magnitude {
    omega: Vec<f64>,
    magnitude: Vec<f64>,
}

#[derive(Debug, Deserialize)]
struct PeakFixture {
    level_db: f64,
    omegas: Vec<f64>,
}

#[derive(Debug, Deserialize)]
struct Source {
    numpy: String,
    scipy: String,
}

#[derive(Debug, Deserialize)]
struct SignalFixture {
    signal: Vec<f64>,
    source: SignalSource,
}

#[derive(Debug, Deserialize)]
struct SignalSource {
    numpy: String,
}

/// The channels make_fixtures.py defines; a fixture missing from disk is a failure, not a skip.
const CHANNELS: [&str; 13] = [
    "east_rack_line",
    "silo_reflection_hop",
    "paging_feed_delay3",
    "order8_minphase",
    "notch_on_circle",
    "repeated_zero",
    "fir_only",
    "quarry_hop_resonance",
    "vault_intercom_scaled",
    "tie_line_echo24",
    "ring_main_near_circle",
    "north_mast_maxphase",
    "feedback_howl_unstable",
];

fn fixture_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/reference")
}

fn fixtures() -> Vec<Fixture> {
    CHANNELS
        .iter()
        .map(|name| {
            let f: Fixture = read_json(&fixture_dir().join(format!("{name}.json")));
            assert_eq!(f.channel, *name, "fixture file and channel name disagree");
            f
        })
        .collect()
}

fn channel(f: &Fixture) -> TransferFunction {
    TransferFunction::new(f.b.clone(), f.a.clone())
}

fn analysed(f: &Fixture) -> Result<ChannelAnalysis, String> {
    analyse(&channel(f), f.circle_tolerance).map_err(|e| format!("analyse failed: {e}"))
}

/// The exact inverse, for fixtures scipy found invertible (None for the others).
fn designed(f: &Fixture) -> Option<Result<(InverseDesign, &Inverse), String>> {
    let reference = f.inverse.as_ref()?;
    Some(analysed(f).and_then(|analysis| {
        design_exact(&channel(f), &analysis, f.sample_rate)
            .map(|design| (design, reference))
            .map_err(|e| format!("design_exact failed: {e}"))
    }))
}

// ---------------------------------------------------------------------------------------------
// Helpers.

impl Mismatches {
    /// The analysis of `f`, or None with the failure noted.
    fn analysis(&mut self, f: &Fixture) -> Option<ChannelAnalysis> {
        analysed(f)
            .map_err(|e| self.note(&f.channel, "analysis", e))
            .ok()
    }

    /// The exact inverse of an invertible `f` with its scipy reference, or None (not invertible,
    /// or the failure noted).
    fn design<'f>(&mut self, f: &'f Fixture) -> Option<(InverseDesign, &'f Inverse)> {
        designed(f)?
            .map_err(|e| self.note(&f.channel, "design", e))
            .ok()
    }
}

fn complex(pair: &[f64; 2]) -> Complex64 {
    Complex64::new(pair[0], pair[1])
}

/// Matches our roots (with multiplicity) to numpy's as multisets: each copy of each of our
/// roots takes the nearest numpy root not yet taken; the distance must be within the tolerance
/// for that multiplicity, times max(1, |z|).
fn match_roots(ours: &[Root], reference: &[[f64; 2]]) -> Result<(), String> {
    let count: usize = ours.iter().map(|r| r.multiplicity).sum();
    if count != reference.len() {
        return Err(format!(
            "expected {} roots, got {count} (counting multiplicity): {:?}",
            reference.len(),
            ours.iter()
                .map(|r| (r.value, r.multiplicity))
                .collect::<Vec<_>>()
        ));
    }
    let mut left: Vec<Complex64> = reference.iter().map(complex).collect();
    for root in ours {
        let tolerance = root_tolerance(root.multiplicity);
        for _ in 0..root.multiplicity {
            let (index, distance) = left
                .iter()
                .enumerate()
                .map(|(i, z)| (i, (z - root.value).norm()))
                .min_by(|x, y| x.1.total_cmp(&y.1))
                .expect("counts agree, so a reference root is left");
            let allowed = tolerance * left[index].norm().max(1.0);
            if distance > allowed {
                return Err(format!(
                    "expected {} (nearest unmatched), got {} (multiplicity {}): distance \
                     {distance:.3e} > {allowed:.1e}",
                    left[index], root.value, root.multiplicity
                ));
            }
            left.swap_remove(index);
        }
    }
    Ok(())
}

fn roots_of(placed: &[redress::analysis::PlacedRoot]) -> Vec<Root> {
    placed.iter().map(|p| p.root).collect()
}

/// (inside, on circle, outside), counting multiplicity.
fn placement_counts(placed: &[redress::analysis::PlacedRoot]) -> (usize, usize, usize) {
    let mut counts = (0, 0, 0);
    for p in placed {
        let m = p.root.multiplicity;
        match p.placement {
            Placement::Inside => counts.0 += m,
            Placement::OnCircle => counts.1 += m,
            Placement::Outside => counts.2 += m,
        }
    }
    counts
}

// ---------------------------------------------------------------------------------------------
// The fixtures themselves.

#[test]
fn fixtures_come_from_the_pinned_versions() {
    // Source: scripts/reference/requirements.txt pins numpy 2.4.6 and scipy 1.17.1.
    for f in fixtures() {
        assert_eq!(f.source.numpy, "2.4.6", "{}", f.channel);
        assert_eq!(f.source.scipy, "1.17.1", "{}", f.channel);
    }
    let signal: SignalFixture = read_json(&fixture_dir().join("signal.json"));
    assert_eq!(signal.source.numpy, "2.4.6");
    assert_eq!(signal.signal.len(), 512);
}

// ---------------------------------------------------------------------------------------------
// Analysis.

#[test]
fn bulk_delay_matches_where_scipy_puts_the_cascade_impulse() {
    let mut m = Mismatches::default();
    for f in fixtures() {
        let Some(analysis) = m.analysis(&f) else {
            continue;
        };
        if analysis.bulk_delay != f.bulk_delay {
            m.note(
                &f.channel,
                "bulk delay (leading zero taps of b)",
                format!("expected {}, got {}", f.bulk_delay, analysis.bulk_delay),
            );
        }
        // Source: scipy 1.17.1 scipy.signal.lfilter — the channel run on the inverse's impulse
        // response peaks at n = D, the delay no causal inverse can remove.
        if let Some(inverse) = &f.inverse {
            let cascade = &inverse.cascade_impulse_response;
            let at = (0..cascade.len())
                .max_by(|&i, &j| cascade[i].abs().total_cmp(&cascade[j].abs()))
                .unwrap();
            if analysis.bulk_delay != at {
                m.note(
                    &f.channel,
                    "bulk delay vs lfilter cascade peak",
                    format!("expected {at}, got {}", analysis.bulk_delay),
                );
            }
        }
    }
    m.assert_none();
}

#[test]
fn zeros_and_poles_match_numpy_roots() {
    let mut m = Mismatches::default();
    for f in fixtures() {
        let Some(analysis) = m.analysis(&f) else {
            continue;
        };
        // Source: numpy 2.4.6 numpy.roots on b with its leading zero taps stripped.
        if let Err(e) = match_roots(&roots_of(&analysis.zeros), &f.zeros) {
            m.note(&f.channel, "zeros (numpy.roots)", e);
        }
        // Source: numpy 2.4.6 numpy.roots on a.
        if let Err(e) = match_roots(&roots_of(&analysis.poles), &f.poles) {
            m.note(&f.channel, "poles (numpy.roots)", e);
        }
    }
    m.assert_none();
}

#[test]
fn zeros_and_poles_match_tf2zpk() {
    let mut m = Mismatches::default();
    for f in fixtures() {
        let Some(analysis) = m.analysis(&f) else {
            continue;
        };
        // Source: scipy 1.17.1 scipy.signal.tf2zpk (zeros from the stripped b, poles from a,
        // each on its own so tf2zpk's dropping of leading zeros cannot hide anything).
        if let Err(e) = match_roots(&roots_of(&analysis.zeros), &f.tf2zpk.zeros) {
            m.note(&f.channel, "zeros (tf2zpk)", e);
        }
        if let Err(e) = match_roots(&roots_of(&analysis.poles), &f.tf2zpk.poles) {
            m.note(&f.channel, "poles (tf2zpk)", e);
        }
    }
    m.assert_none();
}

#[test]
fn repeated_zeros_are_gathered_with_their_multiplicity() {
    let mut m = Mismatches::default();
    let mut checked = 0;
    for f in fixtures() {
        let Some(constructed) = &f.constructed_zeros else {
            continue;
        };
        checked += 1;
        let Some(analysis) = m.analysis(&f) else {
            continue;
        };
        // Source: construction in make_fixtures.py — b = 0.75·(1 − 0.5z⁻¹)²·(1 + 0.25z⁻¹)³,
        // whose coefficients are exact in binary, so the zeros are exactly 0.5 (twice) and
        // −0.25 (three times).
        for want in constructed {
            let target = complex(&want.value);
            let found = analysis
                .zeros
                .iter()
                .min_by(|x, y| {
                    (x.root.value - target)
                        .norm()
                        .total_cmp(&(y.root.value - target).norm())
                })
                .map(|p| p.root);
            match found {
                Some(r)
                    if r.multiplicity == want.multiplicity
                        && (r.value - target).norm() <= CONSTRUCTED_ROOT_TOLERANCE => {}
                other => m.note(
                    &f.channel,
                    "repeated zero",
                    format!(
                        "expected {target} with multiplicity {}, got {:?}",
                        want.multiplicity,
                        other.map(|r| (r.value, r.multiplicity))
                    ),
                ),
            }
        }
    }
    assert!(checked > 0, "no fixture has constructed zeros");
    m.assert_none();
}

#[test]
fn placement_and_verdict_match_numpy_radii() {
    let mut m = Mismatches::default();
    for f in fixtures() {
        let Some(analysis) = m.analysis(&f) else {
            continue;
        };
        // Source: numpy 2.4.6 numpy.roots — |z| against 1 with the same circle tolerance (1e-9).
        let zeros = placement_counts(&analysis.zeros);
        let want = (f.zeros_inside, f.zeros_on_circle, f.zeros_outside);
        if zeros != want {
            m.note(
                &f.channel,
                "zeros (inside, on circle, outside)",
                format!("expected {want:?}, got {zeros:?}"),
            );
        }
        let poles = placement_counts(&analysis.poles);
        let want = (f.poles_inside, f.poles_on_circle, f.poles_outside);
        if poles != want {
            m.note(
                &f.channel,
                "poles (inside, on circle, outside)",
                format!("expected {want:?}, got {poles:?}"),
            );
        }
        if analysis.channel_stable != f.channel_stable {
            m.note(
                &f.channel,
                "channel stable",
                format!(
                    "expected {}, got {}",
                    f.channel_stable, analysis.channel_stable
                ),
            );
        }
        let zeros_fine = f.zeros_on_circle == 0 && f.zeros_outside == 0;
        if analysis.verdict.is_invertible() != zeros_fine {
            m.note(
                &f.channel,
                "verdict",
                format!(
                    "expected {} ({}), got {:?}",
                    zeros_fine, f.verdict, analysis.verdict
                ),
            );
        }
        let invertible = analysis.channel_stable && analysis.verdict.is_invertible();
        if invertible != f.invertible {
            m.note(
                &f.channel,
                "stable causal inverse exists",
                format!("expected {}, got {invertible}", f.invertible),
            );
        }
    }
    m.assert_none();
}

#[test]
fn step_down_agrees_with_numpy_radii_away_from_the_circle() {
    let mut m = Mismatches::default();
    for f in fixtures() {
        let Some(analysis) = m.analysis(&f) else {
            continue;
        };
        // Source: numpy 2.4.6 numpy.roots — all roots strictly inside ⇔ every |k| < 1
        // (Schur–Cohn, common practice). Exactly on the circle |k| = 1 ± round-off, so
        // channels with roots on the circle are left out of this check.
        if f.zeros_on_circle == 0 {
            let want = f.zeros_outside == 0;
            if analysis.zero_steps.all_inside() != want {
                m.note(
                    &f.channel,
                    "step-down on b says all zeros inside",
                    format!("expected {want}, got {}", analysis.zero_steps.all_inside()),
                );
            }
        }
        if f.poles_on_circle == 0 {
            let want = f.poles_outside == 0;
            if analysis.pole_steps.all_inside() != want {
                m.note(
                    &f.channel,
                    "step-down on a says all poles inside",
                    format!("expected {want}, got {}", analysis.pole_steps.all_inside()),
                );
            }
        }
        if f.zeros_on_circle == 0 && f.poles_on_circle == 0 && !analysis.disagreements.is_empty() {
            m.note(
                &f.channel,
                "roots and step-down disagreements",
                format!("expected none, got {:?}", analysis.disagreements),
            );
        }
    }
    m.assert_none();
}

// ---------------------------------------------------------------------------------------------
// Design.

#[test]
fn design_refuses_exactly_the_channels_scipy_cannot_invert() {
    let mut m = Mismatches::default();
    for f in fixtures() {
        let Some(analysis) = m.analysis(&f) else {
            continue;
        };
        let result = design_exact(&channel(&f), &analysis, f.sample_rate);
        // Source: numpy 2.4.6 numpy.roots radii (the fixture's verdict).
        let ok = match (f.verdict.as_str(), &result) {
            ("invertible", Ok(_)) => true,
            ("channel_unstable", Err(DesignError::UnstableChannel { .. })) => true,
            ("zeros_on_circle", Err(DesignError::NoStableInverse { on_circle, .. })) => {
                on_circle.iter().map(|p| p.root.multiplicity).sum::<usize>() == f.zeros_on_circle
            }
            ("zeros_outside", Err(DesignError::NoStableInverse { outside, .. })) => {
                outside.iter().map(|p| p.root.multiplicity).sum::<usize>() == f.zeros_outside
            }
            _ => false,
        };
        if !ok {
            m.note(
                &f.channel,
                "design_exact outcome",
                format!("expected {}, got {:?}", f.verdict, result.map(|d| d.method)),
            );
        }
    }
    m.assert_none();
}

#[test]
fn inverse_coefficients_match_a_over_stripped_b() {
    let mut m = Mismatches::default();
    for f in fixtures() {
        let Some((design, reference)) = m.design(&f) else {
            continue;
        };
        // Source: make_fixtures.py, G = A/B′ divided by b′₀ in Python floats; the same G gives
        // scipy 1.17.1 scipy.signal.lfilter's cascade δ(n − D) in the fixture.
        compare_vectors(
            &mut m,
            &f.channel,
            "inverse b",
            &design.inverse.b,
            &reference.b,
            COEFFICIENT_TOLERANCE,
        );
        compare_vectors(
            &mut m,
            &f.channel,
            "inverse a",
            &design.inverse.a,
            &reference.a,
            COEFFICIENT_TOLERANCE,
        );
        if (design.gain - reference.gain).abs() > COEFFICIENT_TOLERANCE * reference.gain.abs() {
            m.note(
                &f.channel,
                "inverse gain a₀/b′₀",
                format!("expected {}, got {}", reference.gain, design.gain),
            );
        }
        if design.residual_delay_samples != f.bulk_delay {
            m.note(
                &f.channel,
                "residual delay",
                format!(
                    "expected {}, got {}",
                    f.bulk_delay, design.residual_delay_samples
                ),
            );
        }
    }
    m.assert_none();
}

#[test]
fn inverse_magnitude_matches_freqz() {
    let mut m = Mismatches::default();
    for f in fixtures() {
        let Some((design, reference)) = m.design(&f) else {
            continue;
        };
        // Source: scipy 1.17.1 scipy.signal.freqz at 32 frequencies from 0 to π.
        let grid = &reference.magnitude;
        for (w, want) in grid.omega.iter().zip(&grid.magnitude) {
            let got = response_at(&design.inverse.b, &design.inverse.a, *w).norm();
            let error = (got - want).abs() / want;
            if error > MAGNITUDE_TOLERANCE {
                m.note(
                    &f.channel,
                    "|G(e^jω)|",
                    format!(
                        "at ω = {w}: expected {want}, got {got} (relative error {error:.2e} > \
                         {MAGNITUDE_TOLERANCE:.0e})"
                    ),
                );
            }
        }
    }
    m.assert_none();
}

#[test]
fn peak_boost_matches_dense_freqz() {
    let mut m = Mismatches::default();
    for f in fixtures() {
        let Some((design, reference)) = m.design(&f) else {
            continue;
        };
        // Source: scipy 1.17.1 scipy.signal.freqz on 65536 points (Nyquist included), each
        // maximum refined by scipy.optimize.minimize_scalar.
        let peak = &reference.peak;
        if (design.peak_boost_db - peak.level_db).abs() > PEAK_DB_TOLERANCE {
            m.note(
                &f.channel,
                "peak boost (dB)",
                format!(
                    "expected {}, got {} (tolerance {PEAK_DB_TOLERANCE} dB)",
                    peak.level_db, design.peak_boost_db
                ),
            );
        }
        // Several equal maxima (evenly spaced echoes) are all listed; any of them will do.
        let omega = design.peak_boost_hz * 2.0 * std::f64::consts::PI / f.sample_rate;
        let nearest = peak
            .omegas
            .iter()
            .map(|w| (w - omega).abs())
            .fold(f64::INFINITY, f64::min);
        if nearest > PEAK_OMEGA_TOLERANCE {
            m.note(
                &f.channel,
                "peak boost frequency",
                format!(
                    "expected ω in {:?} (Hz: {:?}), got ω = {omega} ({} Hz)",
                    peak.omegas,
                    peak.omegas
                        .iter()
                        .map(|w| w * f.sample_rate / (2.0 * std::f64::consts::PI))
                        .collect::<Vec<_>>(),
                    design.peak_boost_hz
                ),
            );
        }
    }
    m.assert_none();
}

// ---------------------------------------------------------------------------------------------
// Realizations, run sample by sample.

/// Impulse responses and the cascade: recursions of a few hundred steps, each step a few ulps.
const IMPULSE_TOLERANCE: f64 = 1e-10;

/// The 512-sample test signal through each structure, relative to the output's largest sample.
const SIGNAL_TOLERANCE: f64 = 1e-9;

const STRUCTURES: [Structure; 3] = [
    Structure::DirectForm2T,
    Structure::Sections,
    Structure::LatticeLadder,
];

fn run(filter: &mut Filter, input: &[f64]) -> Vec<f64> {
    input.iter().map(|&x| filter.process_sample(x)).collect()
}

fn impulse(length: usize) -> Vec<f64> {
    let mut x = vec![0.0; length];
    x[0] = 1.0;
    x
}

/// The channel itself, run as its difference equation
/// a₀·y[n] = Σ bₖ·x[n−k] − Σ_{k≥1} aₖ·y[n−k] (common practice), to build the cascade.
fn run_channel(b: &[f64], a: &[f64], input: &[f64]) -> Vec<f64> {
    let mut y = vec![0.0; input.len()];
    for n in 0..input.len() {
        let feed: f64 = (0..b.len().min(n + 1)).map(|k| b[k] * input[n - k]).sum();
        let back: f64 = (1..a.len().min(n + 1)).map(|k| a[k] * y[n - k]).sum();
        y[n] = (feed - back) / a[0];
    }
    y
}

/// Each structure realized from the design in f64; a refusal is noted as a mismatch.
fn realizations(m: &mut Mismatches, f: &Fixture, design: &InverseDesign) -> Vec<Realization> {
    STRUCTURES
        .iter()
        .filter_map(|&structure| {
            match realize(&design.inverse, structure, CoefficientPrecision::F64) {
                Ok(r) => Some(r),
                Err(e) => {
                    m.note(
                        &f.channel,
                        &format!("realize {}", structure.name()),
                        format!("expected a filter, got an error: {e}"),
                    );
                    None
                }
            }
        })
        .collect()
}

fn compare_signals(
    m: &mut Mismatches,
    channel: &str,
    quantity: &str,
    ours: &[f64],
    reference: &[f64],
    tolerance: f64,
) {
    let (i, e) = worst_relative(ours, reference, max_abs(reference));
    if ours.len() != reference.len() || e > tolerance {
        m.note(
            channel,
            quantity,
            format!(
                "[{i}] expected {}, got {} (error {e:.2e} of the largest sample > {tolerance:.0e})",
                reference[i], ours[i]
            ),
        );
    }
}

#[test]
fn inverse_impulse_response_matches_lfilter_in_every_structure() {
    let mut m = Mismatches::default();
    for f in fixtures() {
        let Some((design, reference)) = m.design(&f) else {
            continue;
        };
        let input = impulse(reference.impulse_response.len());
        for Realization {
            structure,
            mut filter,
            ..
        } in realizations(&mut m, &f, &design)
        {
            // Source: scipy 1.17.1 scipy.signal.lfilter(G_b, G_a, δ), 256 samples.
            compare_signals(
                &mut m,
                &f.channel,
                &format!("impulse response, {}", structure.name()),
                &run(&mut filter, &input),
                &reference.impulse_response,
                IMPULSE_TOLERANCE,
            );
        }
    }
    m.assert_none();
}

#[test]
fn channel_then_inverse_is_a_delayed_impulse() {
    let mut m = Mismatches::default();
    for f in fixtures() {
        let Some((design, reference)) = m.design(&f) else {
            continue;
        };
        let input = impulse(reference.cascade_impulse_response.len());
        for Realization {
            structure,
            mut filter,
            ..
        } in realizations(&mut m, &f, &design)
        {
            let cascade = run_channel(&f.b, &f.a, &run(&mut filter, &input));
            // Source: scipy 1.17.1 scipy.signal.lfilter, channel applied to the inverse's
            // impulse response: δ(n − D) up to round-off.
            compare_signals(
                &mut m,
                &f.channel,
                &format!("cascade channel∘inverse, {}", structure.name()),
                &cascade,
                &reference.cascade_impulse_response,
                IMPULSE_TOLERANCE,
            );
        }
    }
    m.assert_none();
}

#[test]
fn realizations_match_sosfilt_and_lfilter_on_the_test_signal() {
    let signal: SignalFixture = read_json(&fixture_dir().join("signal.json"));
    let mut m = Mismatches::default();
    for f in fixtures() {
        let Some((design, reference)) = m.design(&f) else {
            continue;
        };
        for Realization {
            structure,
            mut filter,
            ..
        } in realizations(&mut m, &f, &design)
        {
            let output = run(&mut filter, &signal.signal);
            // Source: scipy 1.17.1 scipy.signal.sosfilt with the sections of
            // scipy.signal.tf2sos(G_b, G_a), on a numpy 2.4.6 default_rng signal.
            compare_signals(
                &mut m,
                &f.channel,
                &format!("test signal vs sosfilt, {}", structure.name()),
                &output,
                &reference.signal_output_sections,
                SIGNAL_TOLERANCE,
            );
            // Source: scipy 1.17.1 scipy.signal.lfilter(G_b, G_a, signal).
            compare_signals(
                &mut m,
                &f.channel,
                &format!("test signal vs lfilter, {}", structure.name()),
                &output,
                &reference.signal_output_direct,
                SIGNAL_TOLERANCE,
            );
        }
    }
    m.assert_none();
}

#[test]
fn realized_pole_radius_matches_numpy_zero_radius() {
    let mut m = Mismatches::default();
    for f in fixtures() {
        let Some((design, _)) = m.design(&f) else {
            continue;
        };
        for r in realizations(&mut m, &f, &design) {
            // Source: numpy 2.4.6 numpy.roots — the inverse's poles are the channel's zeros, so
            // the largest pole radius in f64 is the largest |zero|. A repeated zero is only
            // known to numpy within its scatter (see root_tolerance).
            let multiplicity = f
                .constructed_zeros
                .as_ref()
                .map_or(1, |c| c.iter().map(|z| z.multiplicity).max().unwrap_or(1));
            let tolerance = root_tolerance(multiplicity);
            if (r.max_pole_radius - f.max_zero_radius).abs() > tolerance {
                m.note(
                    &f.channel,
                    &format!("largest pole radius, {}", r.structure.name()),
                    format!(
                        "expected {}, got {} (tolerance {tolerance:.1e})",
                        f.max_zero_radius, r.max_pole_radius
                    ),
                );
            }
        }
    }
    m.assert_none();
}
