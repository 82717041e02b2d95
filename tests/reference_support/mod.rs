//! Helpers shared by the tests that compare redress with the committed numpy/scipy fixtures:
//! reading a fixture, and collecting every mismatch so that one failing run reports all of them.
#![allow(dead_code)]

use std::path::Path;

use serde::Deserialize;

pub fn read_json<T: for<'de> Deserialize<'de>>(path: &Path) -> T {
    let text = std::fs::read_to_string(path)
        .unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("cannot parse {}: {e}", path.display()))
}

/// Every mismatch found, as "case: quantity: detail".
#[derive(Default)]
pub struct Mismatches(pub Vec<String>);

impl Mismatches {
    pub fn note(&mut self, case: &str, quantity: &str, detail: String) {
        self.0.push(format!("{case}: {quantity}: {detail}"));
    }

    /// Notes a mismatch when |ours − reference| > tolerance.
    pub fn close(&mut self, case: &str, quantity: &str, ours: f64, reference: f64, tolerance: f64) {
        let error = (ours - reference).abs();
        if error.is_nan() || error > tolerance {
            self.note(
                case,
                quantity,
                format!("expected {reference}, got {ours} (error {error:.3e} > {tolerance:.0e})"),
            );
        }
    }

    pub fn assert_none(self) {
        assert!(
            self.0.is_empty(),
            "{} mismatch(es) against numpy/scipy:\n  {}",
            self.0.len(),
            self.0.join("\n  ")
        );
    }
}

/// Compares two vectors element by element, relative to the reference's largest magnitude.
pub fn compare_vectors(
    m: &mut Mismatches,
    case: &str,
    quantity: &str,
    ours: &[f64],
    reference: &[f64],
    tolerance: f64,
) {
    if ours.len() != reference.len() {
        m.note(
            case,
            quantity,
            format!(
                "expected {} values, got {} ({reference:?} vs {ours:?})",
                reference.len(),
                ours.len()
            ),
        );
        return;
    }
    let (i, e) = worst_relative(ours, reference, max_abs(reference));
    if e.is_nan() || e > tolerance {
        m.note(
            case,
            quantity,
            format!(
                "[{i}] expected {}, got {} (relative error {e:.2e} > {tolerance:.0e})",
                reference[i], ours[i]
            ),
        );
    }
}

/// Largest |x − y| relative to `scale` (floored at 1e-300 so an all-zero reference still
/// works), with where it happened; a NaN wins.
pub fn worst_relative(ours: &[f64], reference: &[f64], scale: f64) -> (usize, f64) {
    ours.iter()
        .zip(reference)
        .map(|(x, y)| (x - y).abs() / scale.max(1e-300))
        .enumerate()
        .fold((0, 0.0), |best, (i, e)| {
            if e > best.1 || e.is_nan() {
                (i, e)
            } else {
                best
            }
        })
}

pub fn max_abs(x: &[f64]) -> f64 {
    x.iter().fold(0.0, |m, v| m.max(v.abs()))
}
