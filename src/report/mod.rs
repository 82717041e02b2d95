//! Reports on a link's analysis, design and realization: plain text for a person, JSON for a
//! program. Both are rendered from one data structure ([`LinkReport`]), whose field names are the
//! JSON schema (documented in `schema.rs` and in the README).

mod build;
mod difference_equation;
mod json;
mod numbers;
pub mod pictures;
pub mod schema;
mod summary;
mod text;
mod trade_off;
mod trade_off_text;

pub use build::{form_key, link_report, path_report};
pub use difference_equation::difference_equation;
pub use json::render_json;
pub use schema::{LinkReport, PathReport, SCHEMA_VERSION};
pub use summary::render_summary;
pub use text::render_text;
