//! The latency–error table checked against numpy/scipy.
//!
//! The fixtures in tests/fixtures/trade_off are written by
//! scripts/reference/make_trade_off_fixtures.py with numpy 2.4.6 and scipy 1.17.1 (pinned in
//! scripts/reference/requirements.txt and recorded in every file). For each invented channel:
//! the least-squares FIR's residual at every latency of the ladder, by numpy.linalg.lstsq on the
//! same convolution matrix (same taps and delay by the stated rule), and the group delay of the
//! all-pass the minimum-phase substitute leaves, by scipy.signal.group_delay.

mod reference_support;

use std::path::Path;

use serde::Deserialize;

use reference_support::{read_json, Mismatches};

use redress::analysis::analyse;
use redress::design::{judged_band, trade_off, DesignMethod, LATENCY_LADDER_MS};
use redress::model::{InversePolicy, TransferFunction};
use redress::numeric::response::group_delay;

/// Residuals agree within 0.01 dB (lstsq and Levinson reach the same minimum; both in f64)
/// down to -150 dB (largest difference seen: under 1e-6 dB); below it both are at their rounding floor, and ours need only stay below.
const RESIDUAL_DB: f64 = 0.01;
const RESIDUAL_FLOOR_DB: f64 = -150.0;
/// Group delay in samples. scipy's B_min comes from its cepstrum (|B_min| keeps |B| to about
/// 1e-7), ours from the roots: 1e-4 samples (largest difference seen: 5.9e-7).
const GROUP_DELAY_SAMPLES: f64 = 1e-4;
/// The largest group delay over the same grid, in ms (largest difference seen: 1.4e-7 ms).
const GROUP_DELAY_MS: f64 = 2e-6;

#[derive(Deserialize)]
struct Row {
    latency_samples: usize,
    total_delay_samples: usize,
    taps: usize,
    lstsq_residual_db: f64,
}

#[derive(Deserialize)]
struct Fixture {
    name: String,
    sample_rate: f64,
    b: Vec<f64>,
    a: Vec<f64>,
    fir_rows: Vec<Row>,
    all_pass_omegas: Vec<f64>,
    all_pass_group_delay_samples: Vec<f64>,
    all_pass_group_delay_max_ms: f64,
}

fn fixtures() -> Vec<Fixture> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/trade_off");
    ["silo_hop", "relay_with_ringing"]
        .iter()
        .map(|n| read_json(&dir.join(format!("{n}.json"))))
        .collect()
}

#[test]
fn table_against_numpy_and_scipy() {
    let mut bad = Mismatches(Vec::new());
    for f in fixtures() {
        let channel = TransferFunction::new(f.b.clone(), f.a.clone());
        let analysis = analyse(&channel, 1e-9).unwrap();
        let policy = whole_axis(f.sample_rate);
        let table = trade_off(
            &channel,
            &analysis,
            &policy,
            f.sample_rate,
            judged_band(&policy, f.sample_rate),
            None,
            &LATENCY_LADDER_MS,
        )
        .unwrap();
        let firs: Vec<_> = table
            .rows
            .iter()
            .filter(|r| r.method == DesignMethod::LeastSquaresFir)
            .collect();
        assert_eq!(firs.len(), f.fir_rows.len(), "{}", f.name);
        for (ours, reference) in firs.iter().zip(&f.fir_rows) {
            let case = format!("{} at {} samples", f.name, reference.latency_samples);
            assert_eq!(ours.latency_samples, reference.latency_samples, "{case}");
            assert_eq!(
                ours.total_delay_samples, reference.total_delay_samples,
                "{case}"
            );
            assert_eq!(ours.taps, Some(reference.taps), "{case}");
            // Unregularised, so the same problem as lstsq's.
            assert_eq!(ours.regularization, Some(0.0), "{case}");
            let residual = ours.figures.residual_error_db;
            if reference.lstsq_residual_db > RESIDUAL_FLOOR_DB {
                bad.close(
                    &case,
                    "residual_db",
                    residual,
                    reference.lstsq_residual_db,
                    RESIDUAL_DB,
                );
            } else if residual > RESIDUAL_FLOOR_DB {
                bad.note(&case, "residual_db", format!("{residual} above the floor"));
            }
        }
        // The all-pass of the minimum-phase substitute (the table's first row).
        let substitute = &table.minimum_phase_design;
        let all_pass = substitute.all_pass.as_ref().expect("zeros were reflected");
        let stripped = &f.b[analysis.bulk_delay..];
        // B/B_min = channel numerator over the substitute's numerator-to-be: the inverse's
        // denominator is B_min (monic scaled), its numerator A.
        for (w, reference) in f
            .all_pass_omegas
            .iter()
            .zip(&f.all_pass_group_delay_samples)
        {
            let ours =
                group_delay(stripped, &[1.0], *w) - group_delay(&substitute.inverse.a, &[1.0], *w);
            bad.close(
                &f.name,
                &format!("group delay at {w}"),
                ours,
                *reference,
                GROUP_DELAY_SAMPLES,
            );
        }
        bad.close(
            &f.name,
            "largest group delay (ms)",
            all_pass.group_delay_max_ms,
            f.all_pass_group_delay_max_ms,
            GROUP_DELAY_MS,
        );
    }
    bad.assert_none();
}

/// The latency-knee rule (README) over (latency, residual) pairs whose other conditions hold:
/// the least latency within `margin` dB of the best, residuals below `floor` counting as it.
fn knee_latency(rows: &[(usize, f64)], margin: f64, floor: f64) -> Option<usize> {
    let best = rows
        .iter()
        .map(|r| r.1.max(floor))
        .fold(f64::INFINITY, f64::min);
    rows.iter()
        .filter(|r| r.1.max(floor) <= best + margin)
        .map(|r| r.0)
        .min()
}

// The latency-knee method on the fixtures' channels picks the latency the same rule picks over
// numpy's residuals (pre-ringing and boost taken from our rows, which the first test holds to
// numpy's residuals), for budgets across the ladder.
#[test]
fn latency_knee_against_the_numpy_residuals() {
    use redress::design::{
        design_inverse, KNEE_MARGIN_DB, PRE_RINGING_LIMIT_DB, RESIDUAL_FLOOR_DB,
    };
    use redress::model::InverseMethod;
    let mut bad = Mismatches(Vec::new());
    for f in fixtures() {
        let channel = TransferFunction::new(f.b.clone(), f.a.clone());
        let analysis = analyse(&channel, 1e-9).unwrap();
        for budget_ms in [1.0, 2.0, 5.0, 10.0, 20.0] {
            let policy = InversePolicy {
                method: InverseMethod::LatencyKnee,
                knee_budget_seconds: budget_ms / 1000.0,
                ..whole_axis(f.sample_rate)
            };
            let d = design_inverse(&channel, &analysis, &policy, f.sample_rate).unwrap();
            let knee = d.knee.as_ref().unwrap();
            let table = knee.table.as_ref().unwrap();
            let budget = (budget_ms * f.sample_rate / 1000.0).round() as usize;
            let mut candidates: Vec<(usize, f64)> = Vec::new();
            // The substitute's residual is ours (numpy has no such row); the FIRs' are numpy's.
            let substitute = &table.rows[0];
            if substitute.figures.pre_ringing_db <= PRE_RINGING_LIMIT_DB {
                candidates.push((0, substitute.figures.residual_error_db));
            }
            for (ours, reference) in table.rows[1..].iter().zip(&f.fir_rows) {
                if ours.latency_samples <= budget
                    && ours.figures.pre_ringing_db <= PRE_RINGING_LIMIT_DB
                    && ours.peak_boost_db <= 20.0
                {
                    candidates.push((reference.latency_samples, reference.lstsq_residual_db));
                }
            }
            let expected =
                knee_latency(&candidates, KNEE_MARGIN_DB, RESIDUAL_FLOOR_DB).unwrap_or(0);
            let picked = knee.picked.as_ref().unwrap().latency_samples;
            if picked != expected {
                bad.note(
                    &f.name,
                    &format!("knee at a {budget_ms} ms budget"),
                    format!("expected {expected} samples, picked {picked}"),
                );
            }
            assert_eq!(d.added_latency_samples, picked, "{}", f.name);
        }
    }
    bad.assert_none();
}

/// The references solve whole-axis problems, so the designs correct from 0 Hz to half the
/// sample rate (the correction band is tests/correction_band.rs's subject).
fn whole_axis(sample_rate: f64) -> InversePolicy {
    InversePolicy {
        correction_band_hz: Some(redress::model::BandEdges {
            low_hz: 0.0,
            high_hz: sample_rate / 2.0,
        }),
        ..InversePolicy::default()
    }
}
