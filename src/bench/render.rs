//! The bench report as text (the JSON is the report serialised as it is).

use std::fmt::Write;

use super::BenchReport;

pub fn render_text(r: &BenchReport) -> String {
    let mut s = String::new();
    let c = &r.callback;
    let _ = writeln!(
        s,
        "bench               {}",
        r.source.as_deref().unwrap_or("(built-in)")
    );
    let _ = writeln!(
        s,
        "  block             {} frames ({}), {} channel(s) at {} Hz: a callback's deadline is {:.1} µs",
        c.block_frames, r.block_frames_from, c.channels, c.sample_rate_hz, c.block_period_us
    );
    let _ = writeln!(
        s,
        "  kernels           {} vector unit; {} of {} channel(s) in vector lanes",
        c.vector_unit_name, c.channels_in_lanes, c.channels
    );
    let _ = writeln!(
        s,
        "\ncallback processing time over {} callbacks (the engine's whole work per callback, guards included)",
        c.blocks
    );
    let _ = writeln!(s, "  p50               {:>10.1} µs", c.p50_us);
    let _ = writeln!(s, "  p99               {:>10.1} µs", c.p99_us);
    let _ = writeln!(s, "  p99.9             {:>10.1} µs", c.p999_us);
    let _ = writeln!(s, "  max               {:>10.1} µs", c.max_us);
    let _ = writeln!(
        s,
        "  headroom          {:>10.1} % of the deadline at p99, {:.1} % at the slowest",
        c.headroom_p99_pct, c.headroom_max_pct
    );
    let _ = writeln!(
        s,
        "  real-time factor  {:>10.4}   (processing time / audio time; {:.0}× faster than real time)",
        c.real_time_factor,
        if c.real_time_factor > 0.0 { 1.0 / c.real_time_factor } else { f64::INFINITY }
    );
    let _ = writeln!(s, "  deadline misses   {:>10}", c.deadline_misses);
    let load = match r.conditions.cpu_load_threads {
        0 => "no load made by the bench".to_string(),
        n => format!("{n} CPU-bound thread(s) at ordinary priority beside it"),
    };
    let _ = writeln!(
        s,
        "  conditions        {load}; {}",
        r.conditions.scheduling.summary()
    );
    if let Some(help) = &r.conditions.scheduling.help {
        let _ = writeln!(s, "                    help: {help}");
    }
    if let Some(share) = c.cpu_share_pct {
        let _ = writeln!(
            s,
            "  processor time    {share:>10.2} % of one core (time actually run, without waits for other programs)"
        );
    }
    if let Some(b) = &r.baseline {
        let t = &b.callback;
        let _ = writeln!(
            s,
            "\nagainst             {} ({} channel(s)), same run, same block: p50 {:.1} µs, mean {:.1} µs",
            b.source.as_deref().unwrap_or("(built-in)"),
            t.channels,
            t.p50_us,
            t.mean_us
        );
        let _ = writeln!(
            s,
            "  per channel       {:.2} µs against {:.2} µs at p50: {:.2}× ({:.2}× on the means)",
            c.p50_us / c.channels.max(1) as f64,
            t.p50_us / t.channels.max(1) as f64,
            b.per_channel_ratio_p50,
            b.per_channel_ratio_mean
        );
    }
    let _ = writeln!(
        s,
        "\nalgorithmic latency (delay the inverse adds on purpose)"
    );
    for ch in &r.channels {
        // Names in the text, as `check` prints them; the keys are in the JSON.
        let what = match (&ch.method_name, &ch.structure_name, ch.order) {
            (Some(m), Some(st), Some(o)) => format!("{m} in {st}, order {o}"),
            _ => "not runnable".to_string(),
        };
        let latency = match (ch.algorithmic_latency_samples, ch.algorithmic_latency_ms) {
            (Some(n), Some(ms)) => format!("{n} samples ({ms:.3} ms)"),
            _ => "—".to_string(),
        };
        let _ = writeln!(
            s,
            "  channel {:<3} {:<26} {latency}   [{what}]",
            ch.channel, ch.path
        );
    }
    let lp = &r.live_path;
    let how = match lp.runs_as {
        "one_callback" => "capture, engine and playback in one callback, no ring",
        _ => "a capture and a playback callback with a ring between them",
    };
    let _ = writeln!(s, "\nhost                {}: {how}", lp.host);
    let _ = writeln!(
        s,
        "live path           ring prefill {} frames ({:.2} ms) + largest algorithmic latency {} samples = {:.2} ms added by redress, before device buffering",
        lp.ring_prefill_frames, lp.ring_prefill_ms, lp.max_algorithmic_latency_samples, lp.added_by_redress_ms
    );
    if let Some(rt) = &r.round_trip {
        let _ = writeln!(
            s,
            "\nround trip          {} → {} ({} Hz; periods {} out, {} in)",
            rt.output_device,
            rt.input_device,
            rt.sample_rate_hz,
            rt.output_period_frames,
            rt.input_period_frames
        );
        let _ = writeln!(s, "  test signal       {}", rt.signal);
        match (rt.found, rt.round_trip_ms, rt.round_trip_frames) {
            (true, Some(ms), Some(frames)) => {
                let _ = writeln!(s, "  measured          {ms:.2} ms ({frames:.0} frames), correlation peak {:.1} dB above its RMS", rt.clarity_db.unwrap_or(0.0));
            }
            _ => {
                let _ = writeln!(s, "  measured          not found");
            }
        }
        let share = |v: Option<f64>| v.map_or("not reported".to_string(), |v| format!("{v:.2} ms"));
        let _ = writeln!(
            s,
            "  output share      {}  (callback → playback, as the backend reports it)",
            share(rt.output_share_ms)
        );
        let _ = writeln!(
            s,
            "  input share       {}  (capture → callback, as the backend reports it)",
            share(rt.input_share_ms)
        );
        let _ = writeln!(
            s,
            "  unreported        {}  (the loop itself and buffering the backend does not report)",
            share(rt.unreported_ms)
        );
        let _ = writeln!(
            s,
            "  processing share  {:.3} ms at p99 (from the timing above)",
            c.p99_us / 1000.0
        );
        let _ = writeln!(s, "  note              {}", rt.note);
    }
    if let Some(e) = &r.round_trip_error {
        let _ = writeln!(s, "\nround trip          could not be measured: {e}");
    }
    s
}
