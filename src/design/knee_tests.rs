use proptest::prelude::*;

use super::*;
use crate::analysis::analyse;
use crate::design::{CascadeFigures, DesignMethod};

fn row(method: DesignMethod, latency: usize, residual: f64, pre: f64, boost: f64) -> TradeOffRow {
    TradeOffRow {
        method,
        latency_samples: latency,
        latency_ms: latency as f64 / 48.0,
        total_delay_samples: latency,
        figures: CascadeFigures {
            residual_error_db: residual,
            worst_band_deviation_db: None,
            worst_band_hz: None,
            pre_ringing_db: pre,
            main_peak_sample: latency,
        },
        peak_boost_db: boost,
        taps: None,
        order: None,
        regularization: None,
        level_reduction_db: 0.0,
    }
}

/// The rule written as a search over every candidate: a row is the pick when it is admissible,
/// within the margin of every admissible row's residual, and no other such row has less
/// latency, or the same latency and a smaller residual (ties then to the earlier row).
fn brute_force(
    rows: &[TradeOffRow],
    budget: usize,
    cap: f64,
    leave_out: Option<usize>,
) -> Option<usize> {
    let ok = |i: usize| Some(i) != leave_out && admissible(&rows[i], budget, cap);
    let best = (0..rows.len())
        .filter(|&i| ok(i))
        .map(|i| rows[i].figures.residual_error_db.max(RESIDUAL_FLOOR_DB))
        .fold(f64::INFINITY, f64::min);
    let level = |i: usize| rows[i].figures.residual_error_db.max(RESIDUAL_FLOOR_DB);
    let good = |i: usize| ok(i) && level(i) <= best + KNEE_MARGIN_DB;
    (0..rows.len()).find(|&i| {
        good(i)
            && (0..rows.len()).all(|j| {
                j == i
                    || !good(j)
                    || rows[j].latency_samples > rows[i].latency_samples
                    || (rows[j].latency_samples == rows[i].latency_samples
                        && (level(j) > level(i) || (level(j) == level(i) && j > i)))
            })
    })
}

fn rows_strategy() -> impl Strategy<Value = Vec<TradeOffRow>> {
    prop::collection::vec(
        (0usize..6, -160.0f64..5.0, -60.0f64..0.0, 0.0f64..25.0),
        1..10,
    )
    .prop_map(|cells| {
        cells
            .into_iter()
            .enumerate()
            .map(|(i, (step, residual, pre, boost))| {
                let method = if i == 0 {
                    DesignMethod::MinimumPhase
                } else {
                    DesignMethod::LeastSquaresFir
                };
                // Residuals on a 0.5 dB grid so that exact ties and margins are met often.
                let residual = (residual * 2.0).round() / 2.0;
                row(method, [0, 12, 24, 48, 96, 240][step], residual, pre, boost)
            })
            .collect()
    })
}

proptest! {
    // Source: the rule itself (module comment): the pick, and the runner-up, equal a search
    // over every candidate.
    #[test]
    fn knee_equals_a_brute_force_search(
        rows in rows_strategy(),
        budget in prop::sample::select(vec![0usize, 12, 48, 96, 480]),
        cap in 10.0f64..24.0,
    ) {
        let found = choose_knee(&rows, budget, cap);
        let expected = brute_force(&rows, budget, cap, None);
        prop_assert_eq!(found.map(|k| k.picked), expected);
        if let Some(k) = found {
            prop_assert_eq!(k.runner_up, brute_force(&rows, budget, cap, Some(k.picked)));
            let best = &rows[k.best];
            prop_assert!(admissible(best, budget, cap));
            prop_assert!(rows.iter().all(|r| !admissible(r, budget, cap)
                || judged_residual(r) >= judged_residual(best)));
        }
    }
}

/// Over the whole axis: the table's rows are whole-axis designs judged in their own band, so
/// the knee's design is compared with them unlimited (joining the table to the correction band
/// is still to come).
fn policy(budget_ms: f64) -> InversePolicy {
    InversePolicy {
        method: InverseMethod::LatencyKnee,
        knee_budget_seconds: budget_ms / 1000.0,
        correction_band_hz: Some(crate::model::BandEdges {
            low_hz: 0.0,
            high_hz: 24_000.0,
        }),
        ..InversePolicy::default()
    }
}

/// A hop whose echo (0.8 after 43 samples) is stronger than the direct sound (0.45): zeros just
/// outside the circle, as in configs/quarry_hop.toml.
fn strong_echo() -> TransferFunction {
    let mut b = vec![0.0; 106];
    b[0] = 0.45;
    b[43] = 0.8;
    b[105] = -0.12;
    TransferFunction::new(b, vec![1.0])
}

// Source: common practice — on a real channel the method picks what the brute-force search over
// its own table picks, the design it returns is that row's (same method, latency and, for the
// FIR, residual within 0.5 dB: the exact peak search may raise λ a decade the grid did not),
// and it never passes the cap.
#[test]
fn strong_echo_design_is_the_tables_knee() {
    let channel = strong_echo();
    let analysis = analyse(&channel, 1e-9).unwrap();
    for budget_ms in [0.5, 2.0, 5.0, 10.0, 20.0] {
        let d = design_inverse(&channel, &analysis, &policy(budget_ms), 48_000.0).unwrap();
        let knee = d.knee.as_ref().unwrap();
        let table = knee.table.as_ref().unwrap();
        let budget = (budget_ms * 48.0).round() as usize;
        let expected = brute_force(&table.rows, budget, 20.0, None);
        let picked = knee.picked.as_ref().unwrap();
        match expected {
            Some(i) => assert_eq!(picked, &table.rows[i], "budget {budget_ms} ms"),
            None => assert_eq!(picked.method, DesignMethod::MinimumPhase),
        }
        assert_eq!(d.method, picked.method);
        assert_eq!(d.added_latency_samples, picked.latency_samples);
        assert!(d.peak_boost_db <= 20.0 + 1e-9);
        if let Some(fir) = &d.fir {
            assert!(
                (fir.residual_error_db - picked.figures.residual_error_db).abs() < 0.5,
                "{} vs {}",
                fir.residual_error_db,
                picked.figures.residual_error_db
            );
        }
    }
}

// Source: common practice — with a 10 ms budget the hop's FIR converges (the anticausal inverse
// of the echo decays by (0.45/0.8) per 43 samples, 60 dB in about 11 ms), so the method waits;
// with 0.5 ms nothing in budget keeps pre-ringing under the limit and it falls back to the
// minimum-phase substitute, saying so.
#[test]
fn strong_echo_waits_when_allowed_and_falls_back_when_not() {
    let channel = strong_echo();
    let analysis = analyse(&channel, 1e-9).unwrap();
    let long = design_inverse(&channel, &analysis, &policy(10.0), 48_000.0).unwrap();
    assert_eq!(long.method, DesignMethod::LeastSquaresFir);
    assert!(
        long.added_latency_samples >= 240,
        "{}",
        long.added_latency_samples
    );
    let short = design_inverse(&channel, &analysis, &policy(0.5), 48_000.0).unwrap();
    assert_eq!(short.method, DesignMethod::MinimumPhase);
    assert!(short.knee.as_ref().unwrap().why.contains("pre-ringing"));
}

// Source: common practice — a minimum-phase channel has an exact inverse within the cap: the
// method takes it and builds no table.
#[test]
fn exact_inverse_when_one_exists() {
    let channel = TransferFunction::new(vec![1.0, 0.5], vec![1.0, -0.2]);
    let analysis = analyse(&channel, 1e-9).unwrap();
    let d = design_inverse(&channel, &analysis, &policy(5.0), 48_000.0).unwrap();
    assert_eq!(d.method, DesignMethod::Exact);
    let knee = d.knee.as_ref().unwrap();
    assert!(knee.table.is_none());
    assert!(knee.why.contains("exact"));
}
