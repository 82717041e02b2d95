//! The short form of a report, a few lines per path: what `redress demo` prints before its
//! figures. The whole report is `redress check`.

use std::fmt::Write;

use super::numbers::{fixed, significant};
use super::schema::{LinkReport, PathReport};
use super::text::{path_heading, summary_line};

pub fn render_summary(report: &LinkReport) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "link {}: {} Hz, {} audio channel{}, {} path{}",
        report.source.as_deref().unwrap_or("(no file)"),
        significant(report.sample_rate_hz),
        report.channel_count,
        if report.channel_count == 1 { "" } else { "s" },
        report.paths.len(),
        if report.paths.len() == 1 { "" } else { "s" },
    );
    for (i, path) in report.paths.iter().enumerate() {
        path_lines(&mut out, path, i + 1, report.paths.len());
    }
    out.push_str(&summary_line(report));
    out
}

fn path_lines(out: &mut String, path: &PathReport, number: usize, total: usize) {
    path_heading(out, path, number, total);
    let _ = writeln!(out, "  verdict: {}", path.verdict.summary);
    let Some(inverse) = &path.inverse else {
        return;
    };
    let runs_in = path
        .realization
        .as_ref()
        .map(|r| format!(" in {}", r.structure_name))
        .unwrap_or_default();
    let _ = writeln!(
        out,
        "  inverse: {}{runs_in}, peak boost {} dB at {} Hz, total delay {} sample{}",
        inverse.method_name,
        fixed(inverse.peak_boost_db, 1),
        fixed(inverse.peak_boost_hz, 0),
        inverse.total_delay_samples,
        if inverse.total_delay_samples == 1 {
            ""
        } else {
            "s"
        }
    );
}
