//! Every fast path gives the per-sample path's output.
//!
//! Source: common practice — reordering *which* independent updates run together (block
//! kernels, a wavefront over sections, channels in vector lanes) must not change any filter's
//! own sequence of operations, so its output must equal `process_sample`'s. Measure: max over
//! n of |y_fast(n) − y_plain(n)| ≤ 1e-12 × max over n of |y_plain(n)| (identical to the bit except
//! for sections on CPUs with FMA, where the kernels fuse multiply-adds, and for the partitioned
//! convolution, whose block path regroups the sum through FFTs and fuses as well). Designs: random
//! stable poles and zeros (radii 0.05…0.97, conjugate pairs and reals, orders 1…34), realized
//! in the three dense structures and as a sparse recursion at f32 and f64 coefficients, and
//! their first 300 impulse-response taps as a partitioned convolution; blocks cut at random
//! lengths, including 0 and 1.

use num_complex::Complex64;
use proptest::prelude::*;

use crate::model::{CoefficientPrecision, Structure, TransferFunction};
use crate::numeric::impulse::impulse_response;
use crate::numeric::poly::{from_roots, multiply};
use crate::realize::{realize, Filter};

use super::lane_direct_form::MAX_REGISTER_ORDER;
use super::{
    detected_vector_unit, process_block_f64, ChannelBank, VectorUnit, MAX_WAVEFRONT_SECTIONS,
};

const RELATIVE_TOLERANCE: f64 = 1e-12;

fn roots(pairs: &[(f64, f64)], reals: &[f64]) -> Vec<Complex64> {
    let mut out = Vec::new();
    for &(r, angle) in pairs {
        let z = Complex64::from_polar(r, angle);
        out.push(z);
        out.push(z.conj());
    }
    out.extend(reals.iter().map(|&r| Complex64::new(r, 0.0)));
    out
}

/// A stable design with up to `max_pairs` pole pairs and zero pairs plus a few reals.
fn design(max_pairs: usize) -> impl Strategy<Value = TransferFunction> {
    let pair = || (0.05..0.97f64, 0.05..3.09f64);
    let real = || (0.05..0.97f64, any::<bool>()).prop_map(|(r, n)| if n { -r } else { r });
    (
        prop::collection::vec(pair(), 0..=max_pairs),
        prop::collection::vec(real(), 0..=2),
        prop::collection::vec(pair(), 0..=max_pairs),
        prop::collection::vec(real(), 0..=2),
        0.2..5.0f64,
    )
        .prop_map(|(pp, pr, zp, zr, gain)| {
            let a = from_roots(1.0, &roots(&pp, &pr)).unwrap();
            let b = from_roots(gain, &roots(&zp, &zr)).unwrap();
            TransferFunction::new(b, a)
        })
}

/// The design in every structure that can run it, and its impulse response cut to a length
/// that reaches past the first FFT partitions, as a partitioned convolution.
fn filters_of(design: &TransferFunction) -> Vec<Filter> {
    let mut out = Vec::new();
    for structure in [
        Structure::DirectForm2T,
        Structure::Sections,
        Structure::LatticeLadder,
        Structure::SparseRecursion,
    ] {
        for precision in [CoefficientPrecision::F32, CoefficientPrecision::F64] {
            if let Ok(r) = realize(design, structure, precision) {
                out.push(r.filter);
            }
        }
    }
    let fir = TransferFunction::new(impulse_response(&design.b, &design.a, 300), vec![1.0]);
    if let Ok(r) = realize(
        &fir,
        Structure::PartitionedConvolution,
        CoefficientPrecision::F64,
    ) {
        out.push(r.filter);
    }
    out
}

/// Deterministic noise with a step and a stretch of silence (a decaying tail).
fn signal(n: usize, seed: u64) -> Vec<f64> {
    let mut state = seed
        .wrapping_mul(6364136223846793005)
        .wrapping_add(1442695040888963407);
    (0..n)
        .map(|i| {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            let noise = ((state >> 11) as f64 / (1u64 << 53) as f64) - 0.5;
            if i > n * 3 / 4 {
                0.0
            } else {
                noise + if i > n / 3 { 0.3 } else { 0.0 }
            }
        })
        .collect()
}

fn assert_close(fast: &[f64], plain: &[f64], what: &str) -> Result<(), TestCaseError> {
    let peak = plain.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let worst = fast
        .iter()
        .zip(plain)
        .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
    prop_assert!(
        worst <= RELATIVE_TOLERANCE * peak,
        "{what}: worst difference {worst:e} against peak {peak:e}"
    );
    prop_assert_eq!(fast.len(), plain.len());
    Ok(())
}

fn plain_run(filter: &Filter, input: &[f64]) -> Vec<f64> {
    let mut f = filter.clone();
    input.iter().map(|&x| f.process_sample(x)).collect()
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    #[test]
    fn block_kernels_equal_the_per_sample_path(
        design in design(17),
        cuts in prop::collection::vec(0usize..300, 1..12),
        seed in any::<u64>(),
    ) {
        let input = signal(1500, seed);
        for filter in filters_of(&design) {
            let expected = plain_run(&filter, &input);
            let mut fast = filter.clone();
            let mut out = vec![0.0; input.len()];
            let mut start = 0;
            for len in cuts.iter().cycle() {
                if start >= input.len() {
                    break;
                }
                let end = (start + len).min(input.len());
                process_block_f64(&mut fast, &input[start..end], &mut out[start..end]);
                start = end;
            }
            let what = format!("{} (order {})", kind(&filter), filter.order());
            assert_close(&out, &expected, &what)?;
            // The state left behind is the per-sample path's too: one more sample agrees.
            let mut plain = filter.clone();
            for &x in &input {
                plain.process_sample(x);
            }
            let peak = expected.iter().fold(0.25f64, |m, v| m.max(v.abs()));
            let (next_fast, next_plain) = (fast.process_sample(0.25), plain.process_sample(0.25));
            prop_assert!(
                (next_fast - next_plain).abs() <= RELATIVE_TOLERANCE * peak,
                "{what}: state left behind differs: {next_fast} vs {next_plain}"
            );
        }
    }

    #[test]
    fn channel_bank_equals_each_channel_alone(
        designs in prop::collection::vec(design(9), 1..4),
        picks in prop::collection::vec(0usize..64, 1..13),
        cuts in prop::collection::vec(1usize..400, 1..6),
        seed in any::<u64>(),
    ) {
        let pool: Vec<Filter> = designs.iter().flat_map(filters_of).collect();
        prop_assume!(!pool.is_empty());
        let filters: Vec<Filter> = picks.iter().map(|&p| pool[p % pool.len()].clone()).collect();
        let channels = filters.len();
        let frames = 900;
        let planar: Vec<Vec<f64>> = (0..channels)
            .map(|c| signal(frames, seed ^ (c as u64 * 7919)).iter().map(|&v| f64::from(v as f32)).collect())
            .collect();
        let interleaved: Vec<f32> = (0..frames)
            .flat_map(|n| planar.iter().map(move |p| p[n] as f32))
            .collect();
        let mut bank = ChannelBank::new(filters.clone());
        let mut out = vec![0.0f64; interleaved.len()];
        let mut start = 0;
        for (turn, len) in cuts.iter().cycle().enumerate() {
            if start >= frames {
                break;
            }
            // Every third cut goes one sample at a time through the per-channel entry.
            let end = (start + len).min(frames);
            if turn % 3 == 2 {
                for n in start..end {
                    for c in 0..channels {
                        out[n * channels + c] =
                            bank.process_channel_sample(c, f64::from(interleaved[n * channels + c]));
                    }
                }
            } else {
                bank.process(
                    &interleaved[start * channels..end * channels],
                    &mut out[start * channels..end * channels],
                );
            }
            start = end;
        }
        for (c, filter) in filters.iter().enumerate() {
            let expected = plain_run(filter, &planar[c]);
            let got: Vec<f64> = (0..frames).map(|n| out[n * channels + c]).collect();
            let what = format!("channel {c} of {channels}: {} (order {}), {} in lanes",
                kind(filter), filter.order(), bank.channels_in_lanes());
            assert_close(&got, &expected, &what)?;
        }
    }
}

fn kind(filter: &Filter) -> &'static str {
    match filter {
        Filter::DirectForm2T(_) => "direct form",
        Filter::Sections(_) => "sections",
        Filter::LatticeLadder(_) => "lattice",
        Filter::SparseRecursion(_) => "sparse recursion",
        Filter::PartitionedConvolution(_) => "partitioned convolution",
    }
}

// Source: common practice — the wavefront must cover every cascade length it is used for,
// including the longest, and blocks shorter than the cascade.
#[test]
fn wavefront_covers_every_section_count() {
    let mut tested = 0;
    for pairs in 1..=MAX_WAVEFRONT_SECTIONS + 1 {
        let poles: Vec<(f64, f64)> = (0..pairs)
            .map(|i| {
                (
                    0.5 + 0.4 * (i as f64 / pairs as f64),
                    0.1 + 2.9 * i as f64 / pairs as f64,
                )
            })
            .collect();
        let zeros: Vec<(f64, f64)> = poles.iter().map(|&(r, a)| (r * 0.9, a + 0.03)).collect();
        // Multiplied out as real quadratics 1 − 2r·cos(θ)z⁻¹ + r²z⁻².
        let product = |rs: &[(f64, f64)], gain: f64| {
            rs.iter().fold(vec![gain], |acc, &(r, a)| {
                multiply(&acc, &[1.0, -2.0 * r * a.cos(), r * r])
            })
        };
        let design = TransferFunction::new(product(&zeros, 1.5), product(&poles, 1.0));
        let Ok(r) = realize(&design, Structure::Sections, CoefficientPrecision::F64) else {
            continue;
        };
        let input = signal(700, pairs as u64);
        let expected = plain_run(&r.filter, &input);
        for block in [1, 3, pairs, 64, 700] {
            let mut f = r.filter.clone();
            let mut out = vec![0.0; input.len()];
            for (x, y) in input.chunks(block).zip(out.chunks_mut(block)) {
                process_block_f64(&mut f, x, y);
            }
            let peak = expected.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            let worst = out
                .iter()
                .zip(&expected)
                .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
            assert!(
                worst <= RELATIVE_TOLERANCE * peak,
                "{pairs} sections, blocks of {block}: {worst:e} against {peak:e}"
            );
        }
        tested += 1;
    }
    assert!(
        tested > MAX_WAVEFRONT_SECTIONS / 2,
        "only {tested} cascades realized"
    );
}

/// One design per channel, each of `order` (pole pairs turned a little per channel, plus a real
/// pole and zero for odd orders), realized as `structure`; `None` if any does not realize.
fn detuned_filters(channels: usize, order: usize, structure: Structure) -> Option<Vec<Filter>> {
    (0..channels)
        .map(|c| {
            let product = |radius: f64, turn: f64, gain: f64| {
                let pairs = order / 2;
                let start = if order % 2 == 1 {
                    multiply(&[gain], &[1.0, -radius])
                } else {
                    vec![gain]
                };
                (0..pairs).fold(start, |acc, i| {
                    let r = radius + 0.3 * (i as f64 / pairs as f64);
                    let a = turn + 0.1 * c as f64 + 2.8 * i as f64 / pairs as f64;
                    multiply(&acc, &[1.0, -2.0 * r * a.cos(), r * r])
                })
            };
            let design = TransferFunction::new(product(0.4, 0.3, 1.2), product(0.6, 0.1, 1.0));
            realize(&design, structure, CoefficientPrecision::F64)
                .ok()
                .map(|r| r.filter)
        })
        .collect()
}

/// Runs `filters` as a channel bank over `frames` of a seeded signal, in odd-sized blocks, and
/// asserts that every channel equals its own per-sample run; returns the bank.
fn bank_equals_plain(filters: &[Filter], frames: usize, seed: u64, what: &str) -> ChannelBank {
    let channels = filters.len();
    let planar: Vec<Vec<f64>> = (0..channels)
        .map(|c| {
            signal(frames, seed + c as u64)
                .iter()
                .map(|&v| f64::from(v as f32))
                .collect()
        })
        .collect();
    let interleaved: Vec<f32> = (0..frames)
        .flat_map(|n| planar.iter().map(move |p| p[n] as f32))
        .collect();
    let mut bank = ChannelBank::new(filters.to_vec());
    let mut out = vec![0.0f64; interleaved.len()];
    for (x, y) in interleaved
        .chunks(77 * channels)
        .zip(out.chunks_mut(77 * channels))
    {
        bank.process(x, y);
    }
    for (c, filter) in filters.iter().enumerate() {
        let expected = plain_run(filter, &planar[c]);
        let peak = expected.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let worst = (0..frames).fold(0.0f64, |m, n| {
            m.max((out[n * channels + c] - expected[n]).abs())
        });
        assert!(
            worst <= RELATIVE_TOLERANCE * peak,
            "{what}, channel {c} of {channels} ({} in lanes): {worst:e} against {peak:e}",
            bank.channels_in_lanes()
        );
    }
    bank
}

// Source: common practice — a channel bank splits a cascade into groups of sections compiled
// for their exact size; every split (1 … 4 sections per group, several groups) must give each
// channel's own per-sample output, in 8-lane and 4-lane groups alike.
#[test]
fn lane_groups_cover_every_section_count() {
    let mut tested = 0;
    for pairs in 1..=17usize {
        for channels in [3, 8] {
            let Some(filters) = detuned_filters(channels, 2 * pairs, Structure::Sections) else {
                continue;
            };
            let seed = (pairs * 31) as u64;
            bank_equals_plain(&filters, 600, seed, &format!("{pairs} sections"));
            tested += 1;
        }
    }
    assert!(tested > 20, "only {tested} banks realized");
}

// Source: common practice — direct forms in lanes are compiled once per order up to
// `MAX_REGISTER_ORDER` (state in registers) and run a general loop past it; every order,
// odd and even, in 8-lane and 4-lane groups, must give each channel's own per-sample output.
// Orders 16 and 32 are the ones the benchmarks time, so they must run in lanes where the CPU
// has a vector unit.
#[test]
fn direct_form_lanes_cover_every_order() {
    let vector_unit = detected_vector_unit() != VectorUnit::Baseline;
    let mut tested = 0;
    for order in 1..=MAX_REGISTER_ORDER + 2 {
        for channels in [3, 8] {
            let Some(filters) = detuned_filters(channels, order, Structure::DirectForm2T) else {
                continue;
            };
            let seed = (order * 37) as u64;
            let bank = bank_equals_plain(&filters, 600, seed, &format!("order {order}"));
            if order <= 8 || (vector_unit && order <= MAX_REGISTER_ORDER) {
                assert_eq!(bank.channels_in_lanes(), channels, "order {order}");
            }
            if order == 16 || order == 32 {
                tested += 1;
            }
        }
    }
    assert_eq!(tested, 4, "orders 16 and 32 must realize in direct form");
}
