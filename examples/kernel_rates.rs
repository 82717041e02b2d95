//! Samples per second of each processing path, for the side-by-side comparison script
//! (`scripts/bench/compare_scipy.py`). Not a test: it measures, it asserts nothing.
//!
//! Usage: kernel_rates CASES.json > RATES.json
//! CASES.json: {"signal": [...f64], "repeats": R, "cases": [{"name", "b", "a", "channels",
//! "block"}]}. Each case's filter is realized from b/a in every structure (f64 coefficients; an
//! FIR, a = [1], as a partitioned convolution and, up to 4096 taps, as a direct form);
//! every channel runs the same filter on the same signal. Prints one JSON object with, per case
//! and structure, the best time over R repeats in ns per sample per channel for: the plain
//! per-sample path, channels one at a time; the block kernel, channels one at a time; and (for
//! several channels) the channel bank (vector lanes).

use std::time::Instant;

use redress::model::{CoefficientPrecision, Structure, TransferFunction};
use redress::realize::kernels::{detected_vector_unit, ChannelBank};
use redress::realize::{realize, Filter};
use serde_json::{json, Value};

fn best_ns_per_sample(repeats: usize, samples: usize, mut run: impl FnMut()) -> f64 {
    run(); // warm up caches and the branch predictor
    let mut best = f64::INFINITY;
    for _ in 0..repeats {
        let t = Instant::now();
        run();
        best = best.min(t.elapsed().as_nanos() as f64 / samples as f64);
    }
    best
}

fn main() {
    let path = std::env::args()
        .nth(1)
        .expect("usage: kernel_rates CASES.json");
    let text = std::fs::read_to_string(&path).expect("readable cases file");
    let doc: Value = serde_json::from_str(&text).expect("cases JSON");
    let signal: Vec<f64> = serde_json::from_value(doc["signal"].clone()).expect("signal");
    let repeats = doc["repeats"].as_u64().unwrap_or(7) as usize;
    let mut results = Vec::new();
    for case in doc["cases"].as_array().expect("cases") {
        let b: Vec<f64> = serde_json::from_value(case["b"].clone()).expect("b");
        let a: Vec<f64> = serde_json::from_value(case["a"].clone()).expect("a");
        let channels = case["channels"].as_u64().unwrap_or(1) as usize;
        let block = case["block"].as_u64().unwrap_or(64) as usize;
        let fir = a.len() == 1;
        let taps = b.len();
        let design = TransferFunction::new(b, a);
        // An FIR runs as the pipeline would run it: partitioned convolution, and the direct
        // form's tapped delay line beside it up to 4096 taps (past that it takes minutes);
        // factoring thousands of roots into sections is not something anyone would run.
        let structures: &[Structure] = match (fir, taps <= 4096) {
            (true, true) => &[Structure::PartitionedConvolution, Structure::DirectForm2T],
            (true, false) => &[Structure::PartitionedConvolution],
            (false, _) => &[
                Structure::DirectForm2T,
                Structure::Sections,
                Structure::LatticeLadder,
            ],
        };
        for &structure in structures {
            let Ok(r) = realize(&design, structure, CoefficientPrecision::F64) else {
                continue;
            };
            results.push(measure(
                case, structure, &r.filter, channels, block, &signal, repeats,
            ));
        }
    }
    let out = json!({ "vector_unit": format!("{:?}", detected_vector_unit()), "results": results });
    println!("{out}");
}

fn measure(
    case: &Value,
    structure: Structure,
    filter: &Filter,
    channels: usize,
    block: usize,
    signal: &[f64],
    repeats: usize,
) -> Value {
    let n = signal.len();
    let total = n * channels;
    let mut out = vec![0.0f64; n];
    let mut plain: Vec<Filter> = vec![filter.clone(); channels];
    let plain_ns = best_ns_per_sample(repeats, total, || {
        for f in plain.iter_mut() {
            for (x, y) in signal.iter().zip(out.iter_mut()) {
                *y = f.process_sample(*x);
            }
            std::hint::black_box(&out);
        }
    });
    let mut blocks: Vec<Filter> = vec![filter.clone(); channels];
    let block_ns = best_ns_per_sample(repeats, total, || {
        for f in blocks.iter_mut() {
            for (x, y) in signal.chunks(block).zip(out.chunks_mut(block)) {
                f.process_block_f64(x, y);
            }
            std::hint::black_box(&out);
        }
    });
    let bank_ns = (channels > 1).then(|| {
        let interleaved: Vec<f32> = signal
            .iter()
            .flat_map(|&x| std::iter::repeat_n(x as f32, channels))
            .collect();
        let mut bank = ChannelBank::new(vec![filter.clone(); channels]);
        let mut y = vec![0.0f64; interleaved.len()];
        let step = block * channels;
        best_ns_per_sample(repeats, total, || {
            for (xi, yi) in interleaved.chunks(step).zip(y.chunks_mut(step)) {
                bank.process(xi, yi);
            }
            std::hint::black_box(&y);
        })
    });
    json!({
        "name": case["name"],
        "structure": structure.name(),
        "order": filter.order(),
        "channels": channels,
        "block": block,
        "plain_ns": plain_ns,
        "block_ns": block_ns,
        "bank_ns": bank_ns,
    })
}
