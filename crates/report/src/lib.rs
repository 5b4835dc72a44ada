//! tankwave-report: everything that turns results into text or files —
//! terminal tables ([`stage`], [`batch`], [`check`], [`overview`]), numbers in engineering notation
//! ([`mod@format`]), CSV and JSON with a versioned schema, SVG plots drawn with
//! plotters ([`plot`]: waveforms with the conduction interval shaded,
//! spectrum against a mask, start-up envelope, AC sweeps, sweep curves,
//! histograms, tuning surfaces), the self-contained HTML report ([`html`]),
//! and whole-file writes (temporary file, then rename; [`files`]).
//!
//! [`assemble`] decides what a solved stage, a study or a tuning run is
//! shown as: which plots each gets, with which units and requirement
//! limits, the named figures a variant contributes to a study record, and
//! the inputs of the HTML reports; [`provenance`] computes a report's file
//! fingerprint and date from bytes and seconds.
//!
//! This crate never solves and never prints: it returns strings or writes the
//! files it is asked to write; the binary decides where text goes, reads the
//! files the user named and the clock.
//!
//! ```
//! use tankwave_report::{si, Table, Align};
//! assert_eq!(si(4.7e-6, "H"), "4.70 µH");
//! let mut t = Table::new(vec![("figure", Align::Left), ("value", Align::Right)]);
//! t.row(vec!["output power".into(), si(20.1, "W")]);
//! assert!(t.render().contains("20.1 W"));
//! ```
#![deny(missing_docs)]

pub mod assemble;
pub mod batch;
pub mod check;
pub mod files;
pub mod fitted;
pub mod format;
pub mod heat;
pub mod html;
pub mod keying;
pub mod loadpull;
pub mod loads;
pub mod outputs;
pub mod overview;
pub mod plot;
pub mod provenance;
pub mod ruggedness;
pub mod stage;
pub mod table;
pub mod twotone;

pub use files::{write_atomic, ReportError};
pub use format::{db, fixed, si};
pub use table::{Align, Table};

/// A path as text safe to show on a terminal (control characters escaped).
pub fn escape_path(p: &std::path::Path) -> String {
    tankwave_circuit::escape::escape(&p.display().to_string()).into_owned()
}

/// Version of the JSON documents tankwave writes (`"schema"` field).
/// Bump the major number on any incompatible change; docs/output.md describes the fields.
pub const SCHEMA_VERSION: &str = "tankwave/4";
