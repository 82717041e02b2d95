//! Long channels against outside references: room responses from pyroomacoustics' image-source
//! model (0.10.1), with scipy.signal.minimum_phase (homomorphic, half=False, n_fft = 2²⁰) and
//! numpy.linalg.lstsq results (numpy 2.4.6, scipy 1.17.1), in tests/fixtures/long_channels,
//! written by scripts/reference/make_long_channel_fixtures.py.

use std::path::Path;

mod cap_residual;

use num_complex::Complex64;
use serde::Deserialize;

use cap_residual::left_by_cap;
use redress::design::{DesignMethod, InverseDesign};
use redress::model::config::parse_link;
use redress::numeric::homomorphic::{magnitude_on_grid, minimum_phase};
use redress::numeric::poly::eval_z_inverse;
use redress::numeric::stepdown::step_down;
use redress::pipeline::{plan_link, LinkPlan};

#[derive(Deserialize)]
struct Fixture {
    name: String,
    sample_rate: f64,
    b: Vec<f64>,
    omegas: Vec<f64>,
    magnitude_db: Vec<f64>,
    minimum_phase_magnitude_db: Vec<f64>,
    minimum_phase_b: Vec<f64>,
    fir_taps: usize,
    fir_delay: usize,
    fir_lstsq_taps: Vec<f64>,
    fir_residual_db: f64,
    zeros_outside_numpy_roots: usize,
    zeros_near_circle_numpy_roots: usize,
}

fn fixtures() -> Vec<Fixture> {
    ["room_256", "room_1024"]
        .iter()
        .map(|name| {
            let path = Path::new(env!("CARGO_MANIFEST_DIR"))
                .join("tests/fixtures/long_channels")
                .join(format!("{name}.json"));
            serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap()
        })
        .collect()
}

fn db_at(c: &[f64], omega: f64) -> f64 {
    20.0 * eval_z_inverse(c, Complex64::from_polar(1.0, omega))
        .norm()
        .log10()
}

fn plan(f: &Fixture, b: &[f64], inverse: &str) -> LinkPlan {
    let list = b
        .iter()
        .map(|x| format!("{x:?}"))
        .collect::<Vec<_>>()
        .join(", ");
    // The references solve the whole-axis problems, so the path is corrected from 0 Hz to half
    // the sample rate (the default band is tests/correction_band.rs's subject).
    let inverse = if inverse.is_empty() {
        "[path.inverse]\n".to_string()
    } else {
        inverse.to_string()
    };
    let text = format!(
        "[link]\nsample_rate_hz = {}\nchannel_count = 1\n\n[[path]]\nlabel = \"{}\"\n\
         channels = [0]\ndifference_equation = {{ b = [{list}], a = [1.0] }}\n{inverse}\
         correction_band_hz = [0, {}]\n",
        f.sample_rate,
        f.name,
        f.sample_rate / 2.0
    );
    plan_link(&parse_link(&text, None).unwrap())
}

fn design(plan: &LinkPlan) -> &InverseDesign {
    plan.paths[0].design.as_ref().unwrap().as_ref().unwrap()
}

/// Frequencies where the channel is within 60 dB of its largest level (the depth of a notch
/// is where two cepstral computations may differ most; it is not a magnitude anyone keeps).
fn in_band(f: &Fixture) -> Vec<usize> {
    let top = f
        .magnitude_db
        .iter()
        .copied()
        .fold(f64::NEG_INFINITY, f64::max);
    (0..f.omegas.len())
        .filter(|&i| f.magnitude_db[i] > top - 60.0)
        .collect()
}

// Source: scipy.signal.minimum_phase 1.17.1 (homomorphic, half=False, n_fft = 2²⁰) — the
// reflected channel's magnitude within 0.01 dB of scipy's over the band; and common practice
// (the step-down test): the result's zeros all lie inside the circle.
#[test]
fn reflection_keeps_the_magnitude_scipy_finds() {
    for f in fixtures() {
        let ours = minimum_phase(f.b.len(), 32 * f.b.len(), &|size| {
            magnitude_on_grid(&f.b, size)
        });
        for i in in_band(&f) {
            let w = f.omegas[i];
            let mine = db_at(&ours.coefficients, w);
            assert!(
                (mine - f.minimum_phase_magnitude_db[i]).abs() < 0.01,
                "{} at ω = {w}: ours {mine} dB, scipy {} dB",
                f.name,
                f.minimum_phase_magnitude_db[i]
            );
            // And scipy.signal.freqz's |B| itself.
            assert!(
                (mine - f.magnitude_db[i]).abs() < 0.01,
                "{} at ω = {w}",
                f.name
            );
        }
        let steps = step_down(&ours.coefficients).unwrap();
        assert!(
            steps.all_inside(),
            "{}: step-down stopped at {:?}",
            f.name,
            steps.stopped_at
        );
    }
}

// Source: numpy.roots 2.4.6 — the number of zeros outside the circle, which the analysis finds
// by the argument principle (at 1023 zeros, not listed) or from its own roots (255).
#[test]
fn zeros_outside_counted_as_numpy_finds() {
    for f in fixtures() {
        assert_eq!(f.zeros_near_circle_numpy_roots, 0, "{}", f.name);
        let plan = plan(&f, &f.b, "");
        let analysis = plan.paths[0].analysis.as_ref().unwrap();
        assert_eq!(
            analysis.zero_count.outside, f.zeros_outside_numpy_roots,
            "{}",
            f.name
        );
        assert_eq!(analysis.zero_count.listed, f.b.len() <= 257, "{}", f.name);
    }
}

// Source: scipy.signal.minimum_phase 1.17.1 for |H| — channel ∘ default inverse is 0 dB but for
// what the cap's moves leave (closed form per moved zero), within 0.05 dB over the band.
#[test]
fn default_policy_inverse_of_room_responses() {
    for f in fixtures() {
        let plan = plan(&f, &f.b, "");
        assert!(plan.is_runnable(), "{}: {:?}", f.name, plan.problems());
        let d = design(&plan);
        assert_eq!(d.method, DesignMethod::MinimumPhase, "{}", f.name);
        assert!(d.peak_boost_db <= 20.0 + 1e-9, "{}", f.name);
        for i in in_band(&f) {
            let w = f.omegas[i];
            let cascade =
                f.minimum_phase_magnitude_db[i] + db_at(&d.inverse.b, w) - db_at(&d.inverse.a, w);
            let expected = left_by_cap(d, w);
            assert!(
                (cascade - expected).abs() < 0.05,
                "{} at ω = {w}: cascade {cascade} dB, expected {expected} dB",
                f.name
            );
        }
    }
}

// Regression, against the outside reference: the same rooms made minimum phase first by
// scipy.signal.minimum_phase (full length) were declared invertible, then failed under the
// default policy because the capped zeros were expanded back into one polynomial.
#[test]
fn scipy_minimum_phase_rooms_get_a_capped_inverse() {
    for f in fixtures() {
        let plan = plan(&f, &f.minimum_phase_b, "");
        assert!(plan.is_runnable(), "{}: {:?}", f.name, plan.problems());
        let d = design(&plan);
        assert!(d.peak_boost_db <= 20.0 + 1e-9, "{}", f.name);
        assert!(
            matches!(d.method, DesignMethod::MinimumPhase | DesignMethod::Exact),
            "{}",
            f.name
        );
    }
}

// Source: numpy.linalg.lstsq 2.4.6 on the convolution matrix — the same taps (to 1e-6 of the
// largest) and residual (to 0.01 dB) at the same delay.
#[test]
fn least_squares_fir_matches_lstsq() {
    for f in fixtures() {
        let plan = plan(
            &f,
            &f.b,
            &format!(
                "[path.inverse]\nmethod = \"least_squares_fir\"\nfir_taps = {}\n\
                 fir_delay_samples = {}\n",
                f.fir_taps, f.fir_delay
            ),
        );
        assert!(plan.is_runnable(), "{}: {:?}", f.name, plan.problems());
        let d = design(&plan);
        let fir = d.fir.as_ref().unwrap();
        assert!(
            (fir.residual_error_db - f.fir_residual_db).abs() < 0.01,
            "{}: {} dB against lstsq {} dB",
            f.name,
            fir.residual_error_db,
            f.fir_residual_db
        );
        let top = f.fir_lstsq_taps.iter().fold(0.0f64, |m, x| m.max(x.abs()));
        for (k, (mine, theirs)) in d.inverse.b.iter().zip(&f.fir_lstsq_taps).enumerate() {
            assert!(
                (mine - theirs).abs() < 1e-6 * top,
                "{} tap {k}: {mine} against {theirs}",
                f.name
            );
        }
    }
}
