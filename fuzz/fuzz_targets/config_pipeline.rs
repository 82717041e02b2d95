//! Parsed configs through the whole pipeline (analysis → design → realization) and the report.
//!
//! Asserts, besides "no panic": every realization the pipeline offers to run keeps its rounded
//! poles strictly inside the unit circle, builds into a filter set the engine accepts, and its
//! impulse response stays finite and, where the largest pole radius says it must, decays.
//!
//! The root finder is O(n³) in the order, so the harness bounds the work per input (see
//! `fits`): the limits keep every input well under a second on one core of the CI machine.

#![no_main]

use libfuzzer_sys::fuzz_target;
use redress::engine::Equalizer;
use redress::model::config::parse_link;
use redress::model::{FirDelay, InverseMethod, Link};
use redress::pipeline::{plan_link, POLE_MARGIN_FLOOR};
use redress::report::{link_report, render_json, render_text};

/// Largest channel order (coefficients of b plus a) per path, and over the whole link.
const MAX_PATH_COEFFICIENTS: usize = 64;
const MAX_LINK_COEFFICIENTS: usize = 128;
/// Largest least-squares FIR and the longest delay search it may ask for (samples).
const MAX_FIR_TAPS: usize = 256;
const MAX_FIR_SEARCH: f64 = 256.0;
/// Samples of impulse response run per realization.
const IMPULSE_SAMPLES: usize = 4096;

fn fits(link: &Link) -> bool {
    let mut total = 0;
    for path in &link.paths {
        let n = path.channel.b.len() + path.channel.a.len();
        total += n;
        if n > MAX_PATH_COEFFICIENTS {
            return false;
        }
        if path.inverse.method == InverseMethod::LeastSquaresFir {
            if path.inverse.fir.taps > MAX_FIR_TAPS {
                return false;
            }
            let search = match path.inverse.fir.delay {
                FirDelay::Fixed { samples } => samples as f64,
                FirDelay::Search { budget_seconds } => budget_seconds * link.sample_rate,
            };
            if search > MAX_FIR_SEARCH {
                return false;
            }
        }
    }
    total <= MAX_LINK_COEFFICIENTS
}

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let Ok(link) = parse_link(text, None) else {
        return;
    };
    if !fits(&link) {
        return;
    }
    let plan = plan_link(&link);
    for path in &plan.paths {
        let Some(realization) = path.runnable() else {
            assert!(path.problem().is_some(), "a path that cannot run says why");
            continue;
        };
        let r = realization.max_pole_radius;
        assert!(
            r < 1.0 - POLE_MARGIN_FLOOR,
            "a runnable realization has a pole at radius {r} after rounding"
        );
        let mut filter = realization.filter.clone();
        let mut peak: f64 = 0.0;
        let mut tail: f64 = 0.0;
        for n in 0..IMPULSE_SAMPLES {
            let y = filter.process_sample(if n == 0 { 1.0 } else { 0.0 });
            assert!(y.is_finite(), "impulse response not finite at sample {n}");
            peak = peak.max(y.abs());
            if n >= IMPULSE_SAMPLES - 256 {
                tail = tail.max(y.abs());
            }
        }
        // Where the slowest pole has fallen by 120 dB over the run, the response must have
        // fallen clearly too (a repeated pole multiplies r^n by a polynomial in n, hence the
        // loose factor). A realization with no poles (r = 0) is an FIR, whose response ends
        // with its taps (a band-limited inverse runs to tens of thousands, longer than this
        // window): finite is all there is to check.
        if r > 0.0 && r.powi(IMPULSE_SAMPLES as i32 - 256) < 1e-6 {
            assert!(
                tail <= 1e-2 * peak.max(f64::MIN_POSITIVE),
                "impulse response does not decay: peak {peak}, tail {tail}, max pole radius {r}"
            );
        }
    }
    if plan.is_runnable() {
        let mut set = Equalizer::from_plan(&plan, 1).expect("a runnable plan builds");
        let channels = plan.channel_count;
        let mut input = vec![0.0f32; 64 * channels];
        input[..channels].fill(0.5);
        let mut output = vec![0.0f32; input.len()];
        set.process_interleaved(&input, &mut output);
        assert!(output.iter().all(|v| v.is_finite()));
    }
    let report = link_report(&plan, None);
    let _ = render_text(&report);
    let json = render_json(&report);
    assert!(json.starts_with('{'));
});
