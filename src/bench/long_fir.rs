//! Long FIR inverses in the real engine: partitioned convolution against the direct form's
//! tapped delay line, at the same taps, channels and block size, timed in the same run. This is
//! where the switch-over length ([`PARTITIONED_MIN_TAPS`]) comes from.
//!
//! The FIR is invented: a decaying, sign-changing response of the requested length (the shape of
//! a least-squares inverse of a reverberant link), the same on every channel and every machine.

use serde::Serialize;

use super::callback_timing::{time_callbacks, CallbackTiming};
use crate::engine::Equalizer;
use crate::model::{CoefficientPrecision, EngineOptions, Structure, TransferFunction};
use crate::realize::{realize, Filter, PARTITIONED_MIN_TAPS};

/// One FIR length, both ways.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LongFirTiming {
    pub taps: usize,
    /// The structure the pipeline picks at this length.
    pub pipeline_picks: String,
    pub partition_size: usize,
    pub fft_partitions: usize,
    pub partitioned: CallbackTiming,
    /// The direct form at the same length (absent when it was skipped).
    pub direct_form: Option<CallbackTiming>,
    /// Direct form's mean callback time over the partitioned convolution's.
    pub speedup_mean: Option<f64>,
}

/// A decaying, sign-changing FIR of `n` taps with Σ|h| about 1, deterministic.
pub fn invented_long_fir(n: usize) -> Vec<f64> {
    let mut state = 0x5851_f42d_4c95_7f2du64;
    let raw: Vec<f64> = (0..n)
        .map(|i| {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            let noise = (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5;
            let decay = (-4.0 * i as f64 / n.max(1) as f64).exp();
            if i == 0 {
                1.0
            } else {
                noise * decay
            }
        })
        .collect();
    let l1: f64 = raw.iter().map(|v| v.abs()).sum();
    raw.iter().map(|v| v / l1).collect()
}

fn equalizer(filter: &Filter, channels: usize, bound: f64) -> Equalizer {
    Equalizer::from_filters(vec![filter.clone(); channels], bound, 1)
}

/// Times `channels` channels of an invented FIR at each length in `taps`: partitioned
/// convolution, and the direct form for lengths up to `direct_up_to`.
pub fn bench_long_firs(
    taps: &[usize],
    channels: usize,
    sample_rate: f64,
    block_frames: usize,
    blocks: usize,
    direct_up_to: usize,
) -> Vec<LongFirTiming> {
    let options = EngineOptions::default();
    taps.iter()
        .filter_map(|&n| {
            let h = invented_long_fir(n.max(1));
            let bound: f64 = h.iter().map(|v| v.abs()).sum();
            let tf = TransferFunction::new(h, vec![1.0]);
            let partitioned = realize(
                &tf,
                Structure::PartitionedConvolution,
                CoefficientPrecision::F32,
            )
            .ok()?;
            let (partition_size, fft_partitions) = match &partitioned.filter {
                Filter::PartitionedConvolution(p) => (p.partition_size(), p.fft_partitions()),
                _ => (0, 0),
            };
            let timed = |filter: &Filter| {
                time_callbacks(
                    equalizer(filter, channels, bound),
                    &options,
                    sample_rate,
                    block_frames,
                    blocks,
                )
            };
            let direct_form = (n <= direct_up_to)
                .then(|| realize(&tf, Structure::DirectForm2T, CoefficientPrecision::F32).ok())
                .flatten()
                .map(|r| timed(&r.filter));
            let partitioned_timing = timed(&partitioned.filter);
            let speedup_mean = direct_form
                .as_ref()
                .map(|d| d.mean_us / partitioned_timing.mean_us.max(1e-9));
            Some(LongFirTiming {
                taps: n,
                pipeline_picks: if n >= PARTITIONED_MIN_TAPS {
                    Structure::PartitionedConvolution.name()
                } else {
                    Structure::DirectForm2T.name()
                }
                .to_string(),
                partition_size,
                fft_partitions,
                partitioned: partitioned_timing,
                direct_form,
                speedup_mean,
            })
        })
        .collect()
}

/// The rows as text: callback times both ways and the share of one core.
pub fn render_long_firs(rows: &[LongFirTiming]) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let Some(first) = rows.first() else {
        return s;
    };
    let c = &first.partitioned;
    let _ = writeln!(
        s,
        "long FIR            {} channel(s), {} frames a callback at {} Hz (deadline {:.1} µs), {} \
         callbacks each; times in µs per callback",
        c.channels, c.block_frames, c.sample_rate_hz, c.block_period_us, c.blocks
    );
    let _ = writeln!(
        s,
        "\n{:>6} {:>5} {:>5}  {:>8} {:>8} {:>8} {:>8} {:>7} {:>7}  {:>8} {:>8} {:>7} {:>7}  pipeline picks",
        "taps", "B", "K", "p50", "p99", "p99.9", "max", "core %", "cpu %", "DF p50", "DF max",
        "DF cpu%", "DF/PC"
    );
    for r in rows {
        let p = &r.partitioned;
        let share = |t: &CallbackTiming| {
            t.cpu_share_pct
                .map_or("—".to_string(), |v| format!("{v:.2}"))
        };
        let (dp50, dmax, dcore) = r.direct_form.as_ref().map_or(
            ("—".to_string(), "—".to_string(), "—".to_string()),
            |d| {
                (
                    format!("{:.1}", d.p50_us),
                    format!("{:.1}", d.max_us),
                    share(d),
                )
            },
        );
        let _ = writeln!(
            s,
            "{:>6} {:>5} {:>5}  {:>8.1} {:>8.1} {:>8.1} {:>8.1} {:>7.2} {:>7}  {:>8} {:>8} {:>7} {:>7}  {}",
            r.taps,
            r.partition_size,
            r.fft_partitions,
            p.p50_us,
            p.p99_us,
            p.p999_us,
            p.max_us,
            100.0 * p.real_time_factor,
            share(p),
            dp50,
            dmax,
            dcore,
            r.speedup_mean.map_or("—".to_string(), |v| format!("{v:.2}")),
            r.pipeline_picks
        );
    }
    let _ = writeln!(
        s,
        "\nB: partition (and head) size, K: FFT partitions after the head; core %: mean callback \
         time (wall clock) over the callback's audio duration; cpu %: processor time the thread \
         actually ran over the audio duration (without waits for other programs on a shared \
         machine); DF: the direct form's tapped delay line on the same taps; DF/PC: its mean \
         time over the partitioned convolution's"
    );
    s
}
