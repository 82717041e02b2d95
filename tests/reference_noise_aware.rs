//! The band-weighted, noise-regularised (Wiener-style) least-squares FIR inverse against numpy:
//! tests/fixtures/noise_aware, written by scripts/reference/make_noise_aware_fixtures.py with
//! numpy 2.4.6 / scipy 1.17.1 (pinned in scripts/reference/requirements.txt). numpy solves the
//! same objective by numpy.linalg.lstsq on stacked rows, redress by Levinson's recursion on the
//! normal equations; the Wiener inverse spectrum is numpy's conj(H)/(|H|² + |H|²/S) per bin.

use std::path::Path;

use serde::Deserialize;

use redress::design::{correction_band, snr_at, solve_weighted, wiener_factor, SpectralWeights};
use redress::model::{BandEdges, BandSnr, InversePolicy};
use redress::numeric::homomorphic::spectrum_on_grid;

#[derive(Deserialize)]
struct Fixture {
    sample_rate: f64,
    impulse_response: Vec<f64>,
    grid_size: usize,
    taps: usize,
    delay: usize,
    regularization: f64,
    band_hz: [f64; 2],
    band_snr_db: Vec<[f64; 2]>,
    band_weight: Vec<f64>,
    wiener_factor: Vec<f64>,
    wiener_inverse_re: Vec<f64>,
    wiener_inverse_im: Vec<f64>,
    inverse_taps: Vec<f64>,
}

fn fixture(name: &str) -> Fixture {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/noise_aware")
        .join(format!("{name}.json"));
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

#[test]
fn wiener_regularised_band_weighted_fir_matches_numpy() {
    let f = fixture("gallery_ring_feed");
    let policy = InversePolicy {
        correction_band_hz: Some(BandEdges {
            low_hz: f.band_hz[0],
            high_hz: f.band_hz[1],
        }),
        ..InversePolicy::default()
    };
    let band = correction_band(&policy, f.sample_rate);
    let bands: Vec<BandSnr> = f
        .band_snr_db
        .iter()
        .map(|[hz, snr_db]| BandSnr {
            hz: *hz,
            snr_db: *snr_db,
        })
        .collect();
    let weights = SpectralWeights::new(f.grid_size, &band, |hz| snr_at(&bands, hz));
    // The weights by the same definitions, computed apart: to rounding (1e-12).
    for (k, (ours, theirs)) in weights.band.iter().zip(&f.band_weight).enumerate() {
        assert!((ours - theirs).abs() < 1e-12, "band weight at bin {k}");
    }
    for (k, (ours, theirs)) in weights.wiener.iter().zip(&f.wiener_factor).enumerate() {
        assert!((ours - theirs).abs() < 1e-12, "Wiener factor at bin {k}");
    }
    // numpy's Wiener inverse conj(H)/(|H|² + |H|²/S) is (1/H)·S/(1 + S): to 1e-9 relative.
    let spectrum = spectrum_on_grid(&f.impulse_response, f.grid_size);
    for (k, value) in spectrum.iter().enumerate().take(f.grid_size / 2 + 1) {
        let hz = k as f64 * f.sample_rate / f.grid_size as f64;
        let ours = value.inv() * wiener_factor(snr_at(&bands, hz).unwrap());
        let (re, im) = (f.wiener_inverse_re[k], f.wiener_inverse_im[k]);
        let scale = re.hypot(im);
        assert!(
            (ours.re - re).abs() <= 1e-9 * scale && (ours.im - im).abs() <= 1e-9 * scale,
            "Wiener inverse at bin {k}: {ours} against {re} + {im}i"
        );
    }
    // The taps: Levinson on the normal equations against lstsq on the rows. The two differ by
    // the conditioning of the normal equations (its square): 1e-9 of the largest tap.
    let solution = solve_weighted(
        &f.impulse_response,
        f.taps,
        f.delay,
        f.regularization,
        &weights,
    )
    .unwrap();
    let largest = f.inverse_taps.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    let worst = solution
        .taps
        .iter()
        .zip(&f.inverse_taps)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0f64, f64::max);
    eprintln!("taps against numpy.linalg.lstsq: {worst:.2e} of {largest:.3}");
    assert!(worst <= 1e-9 * largest, "worst tap difference {worst:e}");
}
