//! The report as JSON: [`super::schema`] serialised, pretty-printed.

use super::schema::LinkReport;

pub fn render_json(report: &LinkReport) -> String {
    // The schema holds only strings, numbers, booleans, lists and maps with string keys, for
    // which serde_json's serialiser cannot fail.
    serde_json::to_string_pretty(report).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"))
}
