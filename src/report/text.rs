//! The report as plain text for a person: short headed blocks, aligned numbers, plain words.

use std::fmt::Write;

use super::numbers::{fixed, list, significant};
use super::schema::{
    CorrectionBandEntry, CountEntry, InverseEntry, LinkReport, PathReport, RealizationEntry,
    RootEntry,
};
use super::trade_off_text::{knee_lines, trade_off_block};

/// Column at which values start, whatever the label's indent.
const VALUE_COLUMN: usize = 20;

/// Zeros or poles listed one per line before the rest are summarised (the JSON has them all).
const ROOT_ROWS: usize = 12;

/// Coefficient lists longer than this are written sparsely or wrapped.
const SHORT_LIST: usize = 12;

/// Long items are cut after this many entries in the text (the JSON carries them all): terms of
/// a difference equation, sections, reflected zeros, rows of eight coefficients.
const TERMS_SHOWN: usize = 12;
const SECTIONS_SHOWN: usize = 12;
const REFLECTED_SHOWN: usize = 6;
const ROWS_SHOWN: usize = 8;

pub fn render_text(report: &LinkReport) -> String {
    let mut out = String::new();
    match &report.source {
        Some(source) => line(&mut out, 0, "link", source),
        None => out.push_str("link\n"),
    }
    line(
        &mut out,
        2,
        "sample rate",
        &format!("{} Hz", significant(report.sample_rate_hz)),
    );
    line(
        &mut out,
        2,
        "audio channels",
        &report.channel_count.to_string(),
    );
    line(&mut out, 2, "paths", &report.paths.len().to_string());
    for (i, path) in report.paths.iter().enumerate() {
        out.push('\n');
        render_path(&mut out, path, i + 1, report.paths.len());
    }
    out.push('\n');
    out.push_str(&summary_line(report));
    out
}

/// The closing verdict on the whole link: whether it runs, and which paths run a substitute
/// rather than the exact inverse (so "ready to run" never reads as "undone exactly").
pub(super) fn summary_line(report: &LinkReport) -> String {
    let mut out = String::new();
    if !report.runnable {
        let _ = writeln!(out, "summary: the link cannot run as configured");
        for problem in &report.problems {
            let _ = writeln!(out, "  - {problem}");
        }
        return out;
    }
    let substitutes: Vec<String> = report
        .paths
        .iter()
        .enumerate()
        .filter(|(_, p)| p.inverse.as_ref().is_some_and(|i| i.method != "exact"))
        .map(|(i, _)| (i + 1).to_string())
        .collect();
    let _ = match substitutes.as_slice() {
        [] => writeln!(out, "summary: every path has a stable inverse ready to run"),
        [one] if report.paths.len() == 1 => writeln!(
            out,
            "summary: the path has a stable inverse ready to run (a substitute: path {one} has \
             no stable causal inverse)"
        ),
        [one] => writeln!(
            out,
            "summary: every path has a stable inverse ready to run (path {one} a substitute: it \
             has no stable causal inverse)"
        ),
        many => writeln!(
            out,
            "summary: every path has a stable inverse ready to run (paths {} substitutes: they \
             have no stable causal inverse)",
            many.join(", ")
        ),
    };
    out
}

/// "audio channel 0" or "audio channels 0, 1" (audio channels are numbered from 0).
pub(super) fn channels_phrase(channels: &[usize]) -> String {
    let numbers: Vec<String> = channels.iter().map(|c| c.to_string()).collect();
    format!(
        "audio channel{} {}",
        if channels.len() == 1 { "" } else { "s" },
        numbers.join(", ")
    )
}

/// "path 1 of 2: label  (audio channel 0)", the line every path's block starts with.
pub(super) fn path_heading(out: &mut String, path: &PathReport, number: usize, total: usize) {
    let _ = writeln!(
        out,
        "path {number} of {total}: {}  ({})",
        path.label,
        channels_phrase(&path.channels)
    );
}

fn render_path(out: &mut String, path: &PathReport, number: usize, total: usize) {
    path_heading(out, path, number, total);
    line(out, 2, "described as", &path.form_name);
    coefficient_list(out, 2, "channel", "b", &path.channel.b);
    coefficient_list(out, 2, "", "a", &path.channel.a);
    line(
        out,
        2,
        "bulk delay",
        &format!(
            "{} sample{} ({} ms)",
            path.bulk_delay_samples,
            if path.bulk_delay_samples == 1 {
                ""
            } else {
                "s"
            },
            significant(path.bulk_delay_ms)
        ),
    );
    if let Some(error) = &path.analysis_error {
        line(out, 2, "analysis", &format!("failed: {error}"));
    } else {
        counted_block(out, "zeros", &path.zeros, path.zero_count.as_ref());
        counted_block(out, "poles", &path.poles, path.pole_count.as_ref());
        if let Some(stable) = path.channel_stable {
            line(
                out,
                2,
                "channel is",
                if stable {
                    "stable (every pole strictly inside the unit circle)"
                } else {
                    "UNSTABLE (a pole on or outside the unit circle)"
                },
            );
        }
        if let Some(steps) = &path.step_down {
            let listed = path.zero_count.as_ref().is_none_or(|c| c.listed)
                && path.pole_count.as_ref().is_none_or(|c| c.listed);
            if steps.agrees_with_roots {
                let with = if listed {
                    "agrees with the roots"
                } else {
                    "agrees with the counts"
                };
                line(out, 2, "step-down test", with);
            } else {
                line(
                    out,
                    2,
                    "step-down test",
                    "disagrees with the roots near the circle:",
                );
                for note in &steps.disagreements {
                    line(out, 2, "", note);
                }
            }
        }
    }
    let _ = writeln!(out, "  verdict: {}", path.verdict.summary);
    if let Some(inverse) = &path.inverse {
        inverse_block(out, inverse);
        if let Some(knee) = &inverse.knee {
            knee_lines(out, knee);
        }
    }
    if let Some(error) = &path.design_error {
        if path.verdict.invertible {
            line(out, 2, "inverse", &format!("not designed: {error}"));
        }
    }
    if let Some(realization) = &path.realization {
        realization_block(out, realization);
    }
    if let Some(error) = &path.realize_error {
        line(out, 2, "realization", &format!("refused: {error}"));
    }
    if let Some(table) = &path.trade_off {
        trade_off_block(out, table);
    }
    if let Some(error) = &path.trade_off_error {
        line(out, 2, "trade-off", &format!("not computed: {error}"));
    }
}

/// The roots as listed, or, above the order where they are computed, their counts.
fn counted_block(out: &mut String, name: &str, roots: &[RootEntry], count: Option<&CountEntry>) {
    match count {
        Some(c) if !c.listed => {
            line(
                out,
                2,
                name,
                &format!(
                    "{} inside, {} on the circle, {} outside",
                    c.inside, c.on_circle, c.outside
                ),
            );
            line(out, 2, "", &c.how);
        }
        _ => roots_block(out, name, roots),
    }
}

fn roots_block(out: &mut String, name: &str, roots: &[RootEntry]) {
    if roots.is_empty() {
        line(out, 2, name, "none");
        return;
    }
    let count: usize = roots.iter().map(|r| r.multiplicity).sum();
    let mut by_radius: Vec<&RootEntry> = roots.iter().collect();
    // Largest radius first: the roots nearest (or beyond) the circle are the ones that matter.
    by_radius.sort_by(|a, b| b.radius.total_cmp(&a.radius));
    let heading = if roots.len() > ROOT_ROWS {
        format!("{count}, the {ROOT_ROWS} largest first")
    } else {
        count.to_string()
    };
    line(out, 2, name, &heading);
    let _ = writeln!(
        out,
        "    {:>11} {:>11} {:>10} {:>10} {:>11} {:>4}  {:<9} {:>11}",
        "re", "im", "|z|", "angle rad", "tone Hz", "mult", "where", "1 - |z|"
    );
    for r in by_radius.iter().take(ROOT_ROWS) {
        let _ = writeln!(
            out,
            "    {:>11} {:>11} {:>10} {:>10} {:>11} {:>4}  {:<9} {:>11}",
            fixed(r.re, 6),
            fixed(r.im, 6),
            fixed(r.radius, 6),
            fixed(r.angle_rad, 4),
            // A pair's two members are one tone to a listener: the frequency, not its sign.
            fixed(r.angle_hz.abs(), 1),
            r.multiplicity,
            r.placement.replace('_', " "),
            short_margin(r.margin)
        );
    }
    if roots.len() > ROOT_ROWS {
        let rest = &by_radius[ROOT_ROWS..];
        let largest = rest.first().map_or(0.0, |r| r.radius);
        let smallest = rest.last().map_or(0.0, |r| r.radius);
        let _ = writeln!(
            out,
            "    … {} more with |z| from {} to {} (all of them: --json)",
            rest.len(),
            fixed(smallest, 6),
            fixed(largest, 6)
        );
    }
}

/// "b = [..]" on one line when short; only the non-zero taps when mostly zeros (echo paths);
/// otherwise wrapped eight to a line.
fn coefficient_list(out: &mut String, indent: usize, label: &str, name: &str, values: &[f64]) {
    if values.len() <= SHORT_LIST {
        line(out, indent, label, &format!("{name} = {}", list(values)));
        return;
    }
    let non_zero: Vec<(usize, f64)> = values
        .iter()
        .copied()
        .enumerate()
        .filter(|(_, v)| *v != 0.0)
        .collect();
    if non_zero.len() <= SHORT_LIST {
        let taps: Vec<String> = non_zero
            .iter()
            .map(|(i, v)| format!("{name}[{i}] = {}", significant(*v)))
            .collect();
        line(
            out,
            indent,
            label,
            &format!(
                "{} of {} {name} coefficients non-zero: {}",
                non_zero.len(),
                values.len(),
                taps.join(", ")
            ),
        );
        return;
    }
    line(
        out,
        indent,
        label,
        &format!("{name} = {} coefficients:", values.len()),
    );
    let rows = values.len().div_ceil(8);
    if rows > ROWS_SHOWN {
        line(
            out,
            indent,
            "",
            &format!("  (the first {}; all of them: --json)", ROWS_SHOWN * 8),
        );
    }
    for (row, chunk) in values.chunks(8).enumerate().take(ROWS_SHOWN) {
        let items: Vec<String> = chunk.iter().map(|v| significant(*v)).collect();
        line(
            out,
            indent,
            "",
            &format!("  [{:>3}] {}", row * 8, items.join(", ")),
        );
    }
}

/// Margins near the circle need more digits than six decimals give.
fn short_margin(margin: f64) -> String {
    if margin != 0.0 && margin.abs() < 1e-4 {
        format!("{margin:.2e}")
    } else {
        fixed(margin, 6)
    }
}

fn inverse_block(out: &mut String, inverse: &InverseEntry) {
    line(out, 2, "inverse", &inverse.method_name);
    line(
        out,
        4,
        "runs as",
        &first_terms(&inverse.difference_equation),
    );
    line(out, 4, "gain", &significant(inverse.gain));
    delay_lines(out, inverse);
    line(
        out,
        4,
        "peak boost",
        &format!(
            "{} dB at {} Hz",
            fixed(inverse.peak_boost_db, 2),
            fixed(inverse.peak_boost_hz, 1)
        ),
    );
    line(
        out,
        4,
        "60 dB decay",
        &format!("{} ms", significant(inverse.decay_60db_ms)),
    );
    if inverse.unity_scale_db != 0.0 {
        line(
            out,
            4,
            "unity scale",
            &format!("{} dB", fixed(inverse.unity_scale_db, 2)),
        );
    }
    for zero in inverse.reflected_zeros.iter().take(REFLECTED_SHOWN) {
        line(
            out,
            4,
            "reflected zero",
            &format!(
                "{} (|z| = {}) moved to 1/conj(z)",
                complex(zero.re, zero.im),
                significant(zero.radius)
            ),
        );
    }
    if inverse.reflected_zeros.len() > REFLECTED_SHOWN {
        line(
            out,
            4,
            "",
            &format!(
                "… and {} more reflected zeros (all of them: --json)",
                inverse.reflected_zeros.len() - REFLECTED_SHOWN
            ),
        );
    }
    if let Some(all_pass) = &inverse.all_pass {
        line(
            out,
            4,
            "phase left",
            &format!(
                "an all-pass with {}–{} ms group delay",
                fixed(all_pass.group_delay_min_ms, 3),
                fixed(all_pass.group_delay_max_ms, 3)
            ),
        );
    }
    if let Some(cap) = &inverse.boost_cap {
        let mut what = format!("{} dB", fixed(cap.cap_db, 1));
        if cap.radius_limit.is_some() && !cap.moved_zeros.is_empty() {
            let radii = cap.moved_zeros.iter().map(|m| m.to_re.hypot(m.to_im));
            let low = radii.clone().fold(f64::INFINITY, f64::min);
            let high = radii.fold(0.0, f64::max);
            let to = if high - low <= 1e-12 {
                format!("|z| = {}", significant(low))
            } else {
                format!("|z| from {} to {}", significant(low), significant(high))
            };
            what.push_str(&format!(
                ": {} zero{} pulled in to {to}",
                cap.moved_zeros.len(),
                if cap.moved_zeros.len() == 1 { "" } else { "s" },
            ));
        }
        if cap.level_reduction_db > 0.0 {
            what.push_str(&format!(
                "; level lowered {} dB",
                fixed(cap.level_reduction_db, 2)
            ));
        }
        let before = if cap.peak_before_db.is_finite() {
            format!("{} dB", fixed(cap.peak_before_db, 1))
        } else {
            "unbounded".to_string()
        };
        what.push_str(&format!(" (uncapped peak {before})"));
        line(out, 4, "boost cap", &what);
    }
    if let Some(c) = &inverse.cepstral {
        line(
            out,
            4,
            "built by",
            &format!(
                "the cepstrum on a {}-point FFT (no roots); magnitude kept within {} dB before \
                 the cap{}",
                c.fft_size,
                significant(c.deviation_db),
                if c.contraction < 1.0 {
                    format!(
                        "; zeros pulled in by a factor {}",
                        significant(c.contraction)
                    )
                } else {
                    String::new()
                }
            ),
        );
        if c.reflected_count > 0 {
            line(
                out,
                4,
                "reflected",
                &format!(
                    "{} zero{} outside the circle (counted, not listed)",
                    c.reflected_count,
                    if c.reflected_count == 1 { "" } else { "s" }
                ),
            );
        }
    }
    if let Some(fir) = &inverse.fir {
        line(
            out,
            4,
            "FIR",
            &format!(
                "{}, delay {} ({} ms, {}), residual error {} dB",
                fir_taps(fir.taps, &inverse.coefficients.b),
                samples(fir.delay_samples),
                significant(fir.delay_ms),
                if fir.delay_searched {
                    "searched"
                } else {
                    "given"
                },
                fixed(fir.residual_error_db, 1)
            ),
        );
    }
    if let Some(band) = &inverse.correction_band {
        band_lines(out, band);
    }
    line(out, 4, "gives up", &inverse.gives_up);
}

/// The correction band, the largest boost inside and outside it, and the noise gain.
fn band_lines(out: &mut String, band: &CorrectionBandEntry) {
    let source = if band.source == "default" {
        "the default: no boost below 20 Hz nor in the top tenth below half the sample rate"
    } else {
        "from the config"
    };
    let roll = if band.largest_boost_outside_db.is_none() {
        "; the whole axis, nothing rolled"
    } else if band.limited {
        "; the inverse rolls to unity gain at its edges over a sixth of an octave (redesigned to \
         keep to it)"
    } else {
        "; the inverse keeps to it as designed"
    };
    line(
        out,
        4,
        "correction band",
        &format!(
            "{}-{} Hz ({source}){roll}",
            fixed(band.low_hz, 1),
            fixed(band.high_hz, 1),
        ),
    );
    line(
        out,
        4,
        "boost in band",
        &format!(
            "{} dB at {} Hz",
            fixed(band.largest_boost_inside_db, 2),
            fixed(band.largest_boost_inside_hz, 1)
        ),
    );
    if let (Some(db), Some(hz)) = (band.largest_boost_outside_db, band.largest_boost_outside_hz) {
        let before = match (band.outside_before_db, band.outside_before_hz) {
            (Some(b), Some(h)) if band.limited => format!(
                " (before keeping to the band: {} dB at {} Hz)",
                fixed(b, 2),
                fixed(h, 1)
            ),
            _ => String::new(),
        };
        line(
            out,
            4,
            "boost outside",
            &format!("{} dB at {} Hz{before}", fixed(db, 2), fixed(hz, 1)),
        );
    }
    line(
        out,
        4,
        "noise gain",
        &format!(
            "{} dB for white noise; {} % of it from the {} Hz octave, {} % inside the band",
            fixed(band.noise_gain_db, 1),
            fixed(100.0 * band.noise_share, 0),
            significant(band.noise_mostly_from_hz),
            fixed(100.0 * band.noise_share_in_band, 0)
        ),
    );
    if band.noise_aware {
        line(
            out,
            4,
            "noise-aware",
            &format!(
                "gain limited band by band by the measured SNR (lowest in band {})",
                band.lowest_snr_db
                    .map_or("not given".to_string(), |s| format!("{} dB", fixed(s, 1)))
            ),
        );
    }
}

/// The residual delay (the link's own, when there is any), the latency the inverse adds (when
/// it adds any) and their sum: the one figure to compare the equalized output with.
fn delay_lines(out: &mut String, inverse: &InverseEntry) {
    let ms =
        |samples: usize, ms: f64| format!("{} ({} ms)", self::samples(samples), significant(ms));
    if inverse.residual_delay_samples > 0 {
        line(
            out,
            4,
            "residual delay",
            &format!(
                "{}, the link's own bulk delay",
                ms(inverse.residual_delay_samples, inverse.residual_delay_ms)
            ),
        );
    } else {
        line(out, 4, "residual delay", "none");
    }
    if inverse.added_latency_samples > 0 {
        line(
            out,
            4,
            "added latency",
            &ms(inverse.added_latency_samples, inverse.added_latency_ms),
        );
    }
    let parts = if inverse.added_latency_samples > 0 {
        format!(
            " = bulk delay {} + added latency {}",
            inverse.residual_delay_samples, inverse.added_latency_samples
        )
    } else {
        String::new()
    };
    line(
        out,
        4,
        "total delay",
        &format!(
            "{}{parts}; compare the equalized output with --delay {}",
            ms(inverse.total_delay_samples, inverse.total_delay_ms),
            inverse.total_delay_samples
        ),
    );
}

/// "192 taps" and, when some are zero, how many carry a coefficient and how many trailing ones
/// are zero, so the tap count, the terms of the difference equation and what the realization
/// runs (its own lines say how many coefficients it touches) add up.
fn fir_taps(taps: usize, b: &[f64]) -> String {
    let non_zero = b.iter().filter(|v| **v != 0.0).count();
    let last = b.iter().rposition(|v| *v != 0.0).map_or(0, |i| i + 1);
    let mut text = format!("{taps} taps");
    if non_zero < taps {
        text.push_str(&format!(" ({non_zero} non-zero"));
        if last < taps {
            text.push_str(&format!(
                "; the last {} are zero, so the filter is {last} taps long",
                taps - last
            ));
        }
        text.push(')');
    }
    text
}

/// "0.5 - 0.25j".
fn complex(re: f64, im: f64) -> String {
    let sign = if im < 0.0 { "-" } else { "+" };
    format!("{} {sign} {}j", significant(re), significant(im.abs()))
}

fn samples(n: usize) -> String {
    format!("{n} sample{}", if n == 1 { "" } else { "s" })
}

fn realization_block(out: &mut String, realization: &RealizationEntry) {
    line(
        out,
        2,
        "realization",
        &format!(
            "{} (`{}`), {} coefficients",
            realization.structure_name, realization.structure, realization.precision
        ),
    );
    for refusal in &realization.refused_first {
        line(
            out,
            4,
            "tried first",
            &format!(
                "{}: refused: {}",
                refusal.structure.replace('_', " "),
                refusal.reason
            ),
        );
    }
    if let Some(switch) = &realization.switched_from {
        // Overruling the config is said as such; where the config named no structure, the
        // pipeline's choice is simply explained.
        if switch.requested_by == "config" {
            line(
                out,
                4,
                "switched from",
                &format!(
                    "{} (asked for in the config): {}",
                    switch.requested_name, switch.reason
                ),
            );
        } else if !switch.reason.is_empty()
            && !realization
                .refused_first
                .iter()
                .any(|r| r.reason == switch.reason)
        {
            // (A fallback's reason is the refusal the "tried first" lines already show.)
            line(out, 4, "chosen because", &switch.reason);
        }
    }
    let radius = significant(realization.max_pole_radius);
    let poles = match (realization.pole_check.as_str(), &realization.sparse) {
        ("no_poles", _) => "none (an FIR)".to_string(),
        ("dominant_leading_tap", Some(sparse)) => format!(
            "below {radius} after rounding: a₀ = 1 outweighs the other recursive taps (Σ|aₖ| = \
             {}), which puts every pole inside that radius without finding roots",
            significant(sparse.recursive_tap_sum.unwrap_or(f64::NAN))
        ),
        _ => format!("{radius} after rounding"),
    };
    line(out, 4, "max pole radius", &poles);
    if let Some(sparse) = &realization.sparse {
        line(out, 4, "runs as", &first_terms(&sparse.runs_as));
        line(
            out,
            4,
            "touches",
            &format!(
                "{} of the {} coefficients a dense direct form of order {} touches a sample",
                sparse.taps_touched, sparse.dense_taps, sparse.order
            ),
        );
        return;
    }
    if let Some(p) = &realization.partitioned {
        line(
            out,
            4,
            "layout",
            &format!(
                "{} taps: the first {} as a direct-form head, then {} partitions of {} by FFTs \
                 of {} points; no latency added",
                p.taps, p.head_taps, p.fft_partitions, p.partition_size, p.fft_size
            ),
        );
    }
    coefficient_lines(out, 4, &realization.coefficients);
}

/// Lays out whatever the realization stage serialised: named lists on one line each, nested
/// tables indented beneath their name.
fn coefficient_lines(out: &mut String, indent: usize, value: &serde_json::Value) {
    use serde_json::Value;
    match value {
        // The realization stage tags its coefficients with the structure's name, which the
        // line above already gives.
        Value::Object(fields) if fields.len() == 1 && fields.values().all(|v| v.is_object()) => {
            if let Some(inner) = fields.values().next() {
                coefficient_lines(out, indent, inner);
            }
        }
        Value::Object(fields) => {
            for (name, field) in fields {
                match field {
                    Value::Array(items)
                        if !items.is_empty() && items.iter().all(|v| v.is_number()) =>
                    {
                        let numbers: Vec<f64> = items.iter().filter_map(|v| v.as_f64()).collect();
                        coefficient_list(out, indent, "", name, &numbers);
                    }
                    // Second-order sections: rows of b0 b1 b2 a0 a1 a2.
                    Value::Array(rows) if !rows.is_empty() && rows.iter().all(is_six_numbers) => {
                        for (i, row) in rows.iter().enumerate().take(SECTIONS_SHOWN) {
                            let numbers: Vec<f64> = row
                                .as_array()
                                .map(|r| r.iter().filter_map(|v| v.as_f64()).collect())
                                .unwrap_or_default();
                            line(
                                out,
                                indent,
                                &format!("section {}", i + 1),
                                &format!(
                                    "b = {}  a = {}",
                                    list(&numbers[..3]),
                                    list(&numbers[3..])
                                ),
                            );
                        }
                        if rows.len() > SECTIONS_SHOWN {
                            let more = rows.len() - SECTIONS_SHOWN;
                            line(
                                out,
                                indent,
                                "",
                                &format!("… and {more} more sections (all of them: --json)"),
                            );
                        }
                    }
                    Value::Object(_) => {
                        line(out, indent, name, "");
                        coefficient_lines(out, indent + 2, field);
                    }
                    Value::Array(items) if items.iter().all(|v| v.is_object()) => {
                        for (i, item) in items.iter().enumerate() {
                            line(out, indent, &format!("{name} {}", i + 1), "");
                            coefficient_lines(out, indent + 2, item);
                        }
                    }
                    other => line(out, indent, name, &scalar_or_list(other)),
                }
            }
        }
        Value::Array(items) if items.iter().all(|v| v.is_object()) => {
            for (i, item) in items.iter().enumerate() {
                line(out, indent, &format!("{}", i + 1), "");
                coefficient_lines(out, indent + 2, item);
            }
        }
        other => line(out, indent, "", &scalar_or_list(other)),
    }
}

fn is_six_numbers(value: &serde_json::Value) -> bool {
    value
        .as_array()
        .is_some_and(|r| r.len() == 6 && r.iter().all(|v| v.is_number()))
}

fn scalar_or_list(value: &serde_json::Value) -> String {
    use serde_json::Value;
    match value {
        Value::Number(n) => n.as_f64().map_or_else(|| n.to_string(), significant),
        Value::Array(items) if items.iter().all(|v| v.is_number()) => {
            let numbers: Vec<f64> = items.iter().filter_map(|v| v.as_f64()).collect();
            list(&numbers)
        }
        Value::Array(items) => {
            let parts: Vec<String> = items.iter().map(scalar_or_list).collect();
            format!("[{}]", parts.join(", "))
        }
        Value::String(s) => s.clone(),
        Value::Null => "none".to_string(),
        other => other.to_string(),
    }
}

/// The difference equation up to its [`TERMS_SHOWN`]th term.
fn first_terms(equation: &str) -> String {
    let mut terms = 0;
    for (at, _) in equation.match_indices(['+', '-']) {
        // A sign between terms stands between spaces; a leading sign does not.
        let spaced = equation[..at].ends_with(' ') && equation[at..].chars().nth(1) == Some(' ');
        if spaced {
            terms += 1;
            if terms == TERMS_SHOWN {
                let total = equation.matches("x[").count() + equation.matches("y[").count() - 1;
                return format!(
                    "{}… ({} terms in all; every coefficient: --json)",
                    &equation[..at],
                    total
                );
            }
        }
    }
    equation.to_string()
}

/// One "label   value" line; continuation lines of a multi-line value are aligned under it.
fn line(out: &mut String, indent: usize, label: &str, value: &str) {
    let width = VALUE_COLUMN
        .saturating_sub(indent)
        .max(label.chars().count() + 1);
    let aligned = value.replace('\n', &format!("\n{:w$}", "", w = indent + width));
    let text = format!("{:indent$}{label:<width$}{aligned}", "");
    let _ = writeln!(out, "{}", text.trim_end());
}
