//! Headless outputs: text, markdown, JSON reports and SVG plots.
//!
//! Every format renders the same [`Report`] model; the JSON form is versioned
//! ([`SCHEMA_VERSION`]) and documented in `docs/report-schema.md`.

pub mod build;
pub mod model;
pub mod number;
pub mod svg;
pub mod text;

pub use build::{build_report, SourceInfo};
pub use model::*;
pub use text::{render_markdown, render_text, value_with_error};
