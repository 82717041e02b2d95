//! The report as plain text for a person: short headed blocks, aligned numbers, plain words.

use std::fmt::Write;

use super::numbers::{fixed, list, significant};
use super::schema::{InverseEntry, LinkReport, PathReport, RealizationEntry, RootEntry};

/// Width of the label column in a block.
const LABEL: usize = 16;

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
    if report.runnable {
        let _ = writeln!(out, "summary: every path has a stable inverse ready to run");
    } else {
        let _ = writeln!(out, "summary: the link cannot run as configured");
        for problem in &report.problems {
            let _ = writeln!(out, "  - {problem}");
        }
    }
    out
}

fn render_path(out: &mut String, path: &PathReport, number: usize, total: usize) {
    let channels: Vec<String> = path.channels.iter().map(|c| c.to_string()).collect();
    let _ = writeln!(
        out,
        "path {number} of {total}: {}  (audio channel{} {})",
        path.label,
        if path.channels.len() == 1 { "" } else { "s" },
        channels.join(", ")
    );
    line(out, 2, "described as", &path.form.replace('_', " "));
    line(out, 2, "channel", &format!("b = {}", list(&path.channel.b)));
    line(out, 2, "", &format!("a = {}", list(&path.channel.a)));
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
        roots_block(out, "zeros", &path.zeros);
        roots_block(out, "poles", &path.poles);
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
            if steps.agrees_with_roots {
                line(out, 2, "step-down test", "agrees with the roots");
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
}

fn roots_block(out: &mut String, name: &str, roots: &[RootEntry]) {
    if roots.is_empty() {
        line(out, 2, name, "none");
        return;
    }
    let count: usize = roots.iter().map(|r| r.multiplicity).sum();
    line(out, 2, name, &count.to_string());
    let _ = writeln!(
        out,
        "    {:>11} {:>11} {:>10} {:>10} {:>11} {:>4}  {:<9} {:>11}",
        "re", "im", "|z|", "angle rad", "angle Hz", "mult", "where", "1 − |z|"
    );
    for r in roots {
        let _ = writeln!(
            out,
            "    {:>11} {:>11} {:>10} {:>10} {:>11} {:>4}  {:<9} {:>11}",
            fixed(r.re, 6),
            fixed(r.im, 6),
            fixed(r.radius, 6),
            fixed(r.angle_rad, 4),
            fixed(r.angle_hz, 1),
            r.multiplicity,
            r.placement.replace('_', " "),
            short_margin(r.margin)
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
    line(out, 4, "runs as", &inverse.difference_equation);
    line(out, 4, "gain", &significant(inverse.gain));
    line(
        out,
        4,
        "residual delay",
        &format!(
            "{} ({} ms), the link's own: no causal filter can advance time",
            samples(inverse.residual_delay_samples),
            significant(inverse.residual_delay_ms)
        ),
    );
    if inverse.added_latency_samples > 0 {
        line(
            out,
            4,
            "added latency",
            &format!(
                "{} ({} ms)",
                samples(inverse.added_latency_samples),
                significant(inverse.added_latency_ms)
            ),
        );
    }
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
    for zero in &inverse.reflected_zeros {
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
        if let Some(radius) = cap.radius_limit {
            what.push_str(&format!(
                ": {} zero{} pulled in to |z| = {}",
                cap.moved_zeros.len(),
                if cap.moved_zeros.len() == 1 { "" } else { "s" },
                significant(radius)
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
    if let Some(fir) = &inverse.fir {
        line(
            out,
            4,
            "FIR",
            &format!(
                "{} taps, delay {} ({} ms, {}), residual error {} dB",
                fir.taps,
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
    line(out, 4, "gives up", &inverse.gives_up);
}

/// "0.5 − 0.25j".
fn complex(re: f64, im: f64) -> String {
    let sign = if im < 0.0 { "−" } else { "+" };
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
            "{}, {} coefficients",
            realization.structure_name, realization.precision
        ),
    );
    if let Some(switch) = &realization.switched_from {
        line(
            out,
            4,
            "switched from",
            &format!(
                "{} (asked for): {}",
                switch.requested.replace('_', " "),
                switch.reason
            ),
        );
    }
    line(
        out,
        4,
        "max pole radius",
        &format!(
            "{} after rounding",
            significant(realization.max_pole_radius)
        ),
    );
    coefficient_lines(out, 4, &realization.coefficients);
}

/// Lays out whatever the realization stage serialised: named lists on one line each, nested
/// tables indented beneath their name.
fn coefficient_lines(out: &mut String, indent: usize, value: &serde_json::Value) {
    use serde_json::Value;
    match value {
        Value::Object(fields) => {
            for (name, field) in fields {
                match field {
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

fn line(out: &mut String, indent: usize, label: &str, value: &str) {
    let width = LABEL.saturating_sub(indent).max(label.chars().count() + 1);
    let text = format!("{:indent$}{label:<width$}{value}", "");
    let _ = writeln!(out, "{}", text.trim_end());
}
