//! Resident memory does not grow over many reloads: 8 channels at order 32, 1000 filter sets
//! sent, crossfaded in, handed back and freed on the control side. Counts pages, times nothing.

use num_complex::Complex64;
use redress::engine::{engine_pair, EngineSettings, Equalizer};
use redress::model::{CoefficientPrecision, EngineOptions, Structure, TransferFunction};
use redress::numeric::poly::from_roots;
use redress::realize::{realize, Filter};

const CHANNELS: usize = 8;
const SWAPS: usize = 1000;
const BLOCK_FRAMES: usize = 256;
/// Allowed growth of resident memory over the 1000 swaps. One filter set here holds about
/// 60 KiB (coefficients, state and block scratch), so a set leaked per swap would add ~60 MB;
/// 2 MiB leaves room for the allocator's own bookkeeping and nothing like a leak.
const MARGIN_BYTES: u64 = 2 << 20;

/// Resident set size of this process, from /proc/self/statm (second field, in pages).
fn resident_bytes() -> u64 {
    let statm = std::fs::read_to_string("/proc/self/statm").expect("Linux /proc");
    let pages: u64 = statm
        .split_whitespace()
        .nth(1)
        .and_then(|v| v.parse().ok())
        .expect("statm resident field");
    // The page size of every Linux platform this runs on in CI (x86-64: 4 KiB).
    pages * 4096
}

/// An invented order-32 inverse (16 pole pairs, 16 zero pairs, all inside the circle), in one
/// of seven slightly different versions.
fn filter(version: u64) -> Filter {
    let tweak = version as f64 * 1e-3;
    let mut zeros = Vec::new();
    let mut poles = Vec::new();
    for i in 0..16 {
        let f = (i as f64 + 0.5) / 16.0;
        let z = Complex64::from_polar(0.35 + 0.3 * f, 0.2 + 2.6 * f + tweak);
        let p = Complex64::from_polar(0.92 - 0.5 * f, 2.9 - 2.6 * f);
        zeros.extend([z, z.conj()]);
        poles.extend([p, p.conj()]);
    }
    let inverse = TransferFunction::new(
        from_roots(1.25, &zeros).unwrap(),
        from_roots(1.0, &poles).unwrap(),
    );
    let r = realize(&inverse, Structure::Sections, CoefficientPrecision::F32).expect("realizes");
    assert_eq!(r.filter.order(), 32);
    r.filter
}

// Source: common practice for long-running services — memory in use must not grow with the
// number of reloads (every set sent is freed once the engine is done with it).
#[test]
fn thousand_swaps_leave_resident_memory_flat() {
    let options = EngineOptions {
        crossfade_ms: 1.0, // 48 samples: every swap completes within one block
        ..EngineOptions::default()
    };
    let settings = EngineSettings::from_options(&options, CHANNELS, 48_000.0);
    let versions: Vec<Filter> = (0..7).map(filter).collect();
    // Every set is built anew (its own allocations), as the service builds one per reload.
    let set = |generation: u64| {
        let f = &versions[(generation % 7) as usize];
        Equalizer::from_filters(vec![f.clone(); CHANNELS], 100.0, generation)
    };
    let (mut engine, mut control) = engine_pair(settings, Some(set(1)));
    let input: Vec<f32> = (0..BLOCK_FRAMES * CHANNELS)
        .map(|i| 0.1 * ((i as f32) * 0.013).sin())
        .collect();
    let mut output = vec![0.0f32; input.len()];
    let mut freed = 0;
    let mut swap = |generation: u64, engine: &mut redress::engine::Engine| {
        control.send(set(generation)).expect("inbox has room");
        engine.process(&input, &mut output);
        engine.process(&input, &mut output);
        control.collect_returned()
    };
    // Warm-up: the allocator reaches its working set.
    for g in 2..52 {
        freed += swap(g, &mut engine);
    }
    let before = resident_bytes();
    for g in 52..52 + SWAPS as u64 {
        freed += swap(g, &mut engine);
    }
    let after = resident_bytes();
    eprintln!("resident memory before {before} B, after {SWAPS} swaps {after} B");
    assert!(
        after <= before + MARGIN_BYTES,
        "resident memory grew from {before} to {after} bytes over {SWAPS} swaps"
    );
    // Every set but the running one and its predecessor (kept as the fallback) came back.
    assert!(
        freed >= SWAPS + 50 - 2,
        "only {freed} sets were handed back"
    );
    assert_eq!(control.snapshot().swaps_completed, (SWAPS + 50) as u64);
}
