//! The running filter: block processing, state across blocks, reset, and refusals at the entry.

use num_complex::Complex64;

use crate::model::{CoefficientPrecision, Structure, TransferFunction};
use crate::numeric::poly::from_roots;

use super::{realize, Filter, RealizeError, StructureCoefficients};

const STRUCTURES: [Structure; 3] = [
    Structure::DirectForm2T,
    Structure::Sections,
    Structure::LatticeLadder,
];

/// An invented inverse: the 2 km line to the east amplifier rack has zeros at 0.8∠±0.4 and
/// −0.5 and a pole at 0.3; its inverse swaps them (gain 1.6).
fn east_rack_inverse() -> TransferFunction {
    let z = Complex64::from_polar(0.8, 0.4);
    let b = from_roots(1.6, &[Complex64::new(0.3, 0.0)]).unwrap();
    let a = from_roots(1.0, &[z, z.conj(), Complex64::new(-0.5, 0.0)]).unwrap();
    TransferFunction::new(b, a)
}

fn test_signal(n: usize) -> Vec<f32> {
    // A deterministic chirp-like signal with a step, so every state variable gets exercised.
    (0..n)
        .map(|i| {
            let t = i as f32;
            0.6 * (0.001 * t * t).sin() + if i > n / 2 { 0.25 } else { 0.0 }
        })
        .collect()
}

// Source: common practice — block processing is sample processing in a loop with the state
// carried over; f32 in and out, f64 inside.
#[test]
fn block_equals_sample_by_sample_and_state_carries_across_blocks() {
    let input = test_signal(1000);
    for structure in STRUCTURES {
        for precision in [CoefficientPrecision::F32, CoefficientPrecision::F64] {
            let r = realize(&east_rack_inverse(), structure, precision).unwrap();
            let mut by_sample = r.filter.clone();
            let expected: Vec<f32> = input
                .iter()
                .map(|&x| by_sample.process_sample(f64::from(x)) as f32)
                .collect();

            let mut whole = r.filter.clone();
            let mut out_whole = vec![0.0f32; input.len()];
            whole.process_block(&input, &mut out_whole);
            assert_eq!(out_whole, expected, "{structure:?} {precision:?}");

            let mut split = r.filter.clone();
            let mut out_split = vec![0.0f32; input.len()];
            let mut start = 0;
            for len in [1, 7, 0, 64, 3, 300, 125].into_iter().cycle() {
                if start >= input.len() {
                    break;
                }
                let end = (start + len).min(input.len());
                split.process_block(&input[start..end], &mut out_split[start..end]);
                start = end;
            }
            assert_eq!(
                out_split, expected,
                "{structure:?} {precision:?} uneven blocks"
            );
        }
    }
}

// Source: common practice — reset returns the filter to its initial (all-zero) state.
#[test]
fn reset_clears_the_state() {
    let input = test_signal(300);
    for structure in STRUCTURES {
        let r = realize(&east_rack_inverse(), structure, CoefficientPrecision::F64).unwrap();
        let mut fresh = r.filter.clone();
        let mut first = vec![0.0f32; input.len()];
        fresh.process_block(&input, &mut first);

        let mut used = r.filter.clone();
        let mut scratch = vec![0.0f32; input.len()];
        used.process_block(&input, &mut scratch);
        // A NaN poisons the state until reset.
        assert!(used.process_sample(f64::NAN).is_nan());
        assert!(used.process_sample(0.0).is_nan(), "{structure:?}");
        used.reset();
        let mut again = vec![0.0f32; input.len()];
        used.process_block(&input, &mut again);
        assert_eq!(again, first, "{structure:?}");
    }
}

// Source: common practice — mismatched buffer lengths process the shorter, touch nothing else.
#[test]
fn mismatched_block_lengths_process_the_shorter() {
    let mut f = realize(
        &east_rack_inverse(),
        Structure::Sections,
        CoefficientPrecision::F32,
    )
    .unwrap()
    .filter;
    let mut out = [9.0f32; 5];
    f.process_block(&[1.0, 0.0, 0.0], &mut out);
    assert_eq!(out[3..], [9.0, 9.0]);
    assert_eq!(out[0], 1.6);
    let mut short = [0.0f32; 2];
    f.process_block(&[0.0; 4], &mut short);
}

// Source: common practice — orders of the structures for a 3-pole, 1-zero design.
#[test]
fn order_and_coefficients_match_the_structure() {
    let h = east_rack_inverse();
    for structure in STRUCTURES {
        let r = realize(&h, structure, CoefficientPrecision::F64).unwrap();
        assert_eq!(r.filter.order(), 3, "{structure:?}");
        match (&r.coefficients, &r.filter) {
            (StructureCoefficients::DirectForm2T { b, a }, Filter::DirectForm2T(f)) => {
                assert_eq!((b.as_slice(), a.as_slice()), (f.b(), f.a()));
                assert_eq!(b.len(), 4);
            }
            (StructureCoefficients::Sections { gain, sections }, Filter::Sections(f)) => {
                assert_eq!((*gain, sections.as_slice()), (f.gain(), f.sections()));
                assert_eq!(sections.len(), 2);
            }
            (StructureCoefficients::LatticeLadder { k, v }, Filter::LatticeLadder(f)) => {
                assert_eq!((k.as_slice(), v.as_slice()), (f.reflection(), f.ladder()));
                assert_eq!(k.len() + 1, v.len());
            }
            _ => panic!("{structure:?}: coefficients and filter disagree"),
        }
        assert!((r.max_pole_radius - 0.8).abs() < 1e-12);
        // Serialisable for reports.
        let json = serde_json::to_string(&r.coefficients).unwrap();
        assert!(json.len() > 10);
    }
}

// Source: common practice — FIR (no poles) and a pure gain run in every structure.
#[test]
fn fir_and_gain_run_in_every_structure() {
    let fir = TransferFunction::new(vec![0.0, 0.5, -0.25, 0.125], vec![2.0]);
    let gain = TransferFunction::new(vec![-3.0], vec![1.0, 0.0]);
    for structure in STRUCTURES {
        let mut f = realize(&fir, structure, CoefficientPrecision::F64)
            .unwrap()
            .filter;
        let h: Vec<f64> = (0..6)
            .map(|n| f.process_sample(if n == 0 { 1.0 } else { 0.0 }))
            .collect();
        let want = [0.0, 0.25, -0.125, 0.0625, 0.0, 0.0];
        for (x, y) in h.iter().zip(want) {
            assert!((x - y).abs() < 1e-15, "{structure:?}: {h:?}");
        }
        let mut g = realize(&gain, structure, CoefficientPrecision::F32).unwrap();
        assert_eq!(g.filter.process_sample(2.0), -6.0, "{structure:?}");
        assert_eq!(g.max_pole_radius, 0.0);
    }
}

// Source: common practice — a pole outside the circle cannot run in any structure.
#[test]
fn unstable_design_is_refused_with_a_reason() {
    let h = TransferFunction::new(vec![1.0], vec![1.0, -1.75, 0.625]); // poles 1.25 and 0.5
    let direct = realize(&h, Structure::DirectForm2T, CoefficientPrecision::F64).unwrap_err();
    assert!(
        matches!(direct, RealizeError::UnstableDesign { max_pole_radius, .. } if (max_pole_radius - 1.25).abs() < 1e-12)
    );
    let sections = realize(&h, Structure::Sections, CoefficientPrecision::F64).unwrap_err();
    assert!(matches!(sections, RealizeError::UnstableDesign { .. }));
    let lattice = realize(&h, Structure::LatticeLadder, CoefficientPrecision::F64).unwrap_err();
    assert!(matches!(
        lattice,
        RealizeError::LatticeStageUnstable { stage: 1, .. }
    ));
    for e in [direct, sections, lattice] {
        let text = e.to_string();
        assert!(text.contains("help:"), "{text}");
    }
}

// Source: common practice — the refusal after rounding names the structure, the radius and
// the structures to use instead.
#[test]
fn refusal_after_rounding_explains_itself() {
    let e = RealizeError::UnstableAfterRounding {
        structure: Structure::DirectForm2T,
        max_pole_radius: 1.0123,
        detail: String::new(),
    };
    let text = e.to_string();
    assert!(text.contains("direct form II transposed"), "{text}");
    assert!(text.contains("1.0123"), "{text}");
    assert!(
        text.contains("`sections`") && text.contains("`lattice_ladder`"),
        "{text}"
    );
}

// Source: IEEE 754 — the largest finite f32 is about 3.4e38 (common practice).
#[test]
fn coefficients_too_large_for_f32_are_refused() {
    let h = TransferFunction::new(vec![1e39, 0.5e39], vec![1.0, -0.5]);
    for structure in STRUCTURES {
        match realize(&h, structure, CoefficientPrecision::F32) {
            Err(RealizeError::CoefficientOverflow { value, .. }) => assert!(value >= 0.5e39),
            other => panic!("{structure:?}: expected an overflow refusal, got {other:?}"),
        }
        assert!(realize(&h, structure, CoefficientPrecision::F64).is_ok());
    }
}

// Source: common practice — a filter handed to the audio thread must be movable there.
#[test]
fn filter_is_clone_and_send() {
    fn needs_clone_send<T: Clone + Send + 'static>(_: &T) {}
    let r = realize(
        &east_rack_inverse(),
        Structure::Sections,
        CoefficientPrecision::F32,
    )
    .unwrap();
    needs_clone_send(&r.filter);
    needs_clone_send(&r);
}
