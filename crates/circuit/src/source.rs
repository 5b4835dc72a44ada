//! A stage file read and parsed, kept whole so that it can be elaborated
//! again and again (once per study variant) without reading the files a
//! second time. The syntax tree stays inside: later layers get only the
//! elaborated [`Circuit`](crate::Circuit), the sources for rendering
//! diagnostics, and the list of files read.

use std::path::{Path, PathBuf};
use std::sync::Arc;

use tankwave_netlist::{Diagnostic, Parsed, SourceMap};

use crate::{elaborate, Elaborated, Overrides};

/// A parsed stage file (with its includes), ready to be elaborated with any
/// set of overrides. Reading never fails: what could not be read or parsed
/// becomes a diagnostic that [`StageSource::elaborate`] returns.
#[derive(Debug, Clone)]
pub struct StageSource {
    parsed: Parsed,
}

impl StageSource {
    /// Read and parse the stage file at `path`; its `include`s are confined
    /// to the default roots (its directory and parents up to the enclosing
    /// repository root) and to `include_roots`.
    pub fn read(path: &Path, include_roots: &[PathBuf]) -> Self {
        Self {
            parsed: tankwave_netlist::parse_file_with_roots(path, include_roots),
        }
    }

    /// Parse stage-file bytes held in memory; `name` is used in messages and
    /// to resolve relative includes.
    pub fn from_bytes(name: &str, bytes: &[u8]) -> Self {
        Self {
            parsed: tankwave_netlist::parse_bytes(name, bytes),
        }
    }

    /// Parse stage-file text held in memory, as an editor holds a file:
    /// `name` is the file's path (messages, relative includes), and its
    /// includes are confined to its default roots and to `include_roots`,
    /// as [`StageSource::read`] confines them.
    pub fn from_text_with_roots(name: &str, text: &str, include_roots: &[PathBuf]) -> Self {
        Self {
            parsed: tankwave_netlist::parse_bytes_with_roots(name, text.as_bytes(), include_roots),
        }
    }

    /// Parse stage-file text held in memory (see [`StageSource::from_bytes`]).
    pub fn from_text(name: &str, text: &str) -> Self {
        Self::from_bytes(name, text.as_bytes())
    }

    /// Elaborate with `overrides` applied: the circuit and its warnings, or
    /// every diagnostic (parse and elaboration) in file order.
    pub fn elaborate(&self, overrides: &Overrides) -> Result<Elaborated, Vec<Diagnostic>> {
        elaborate(&self.parsed, overrides)
    }

    /// The texts of every file read, for rendering diagnostics (the stage
    /// file first, then its includes).
    pub fn sources(&self) -> &Arc<SourceMap> {
        &self.parsed.sources
    }

    /// Every file read from disk (the stage file and each include), as opened.
    pub fn files_read(&self) -> &[PathBuf] {
        &self.parsed.files_read
    }

    /// Whether the file read cleanly but holds no statement at all (empty,
    /// blank or only comments).
    pub fn is_blank(&self) -> bool {
        self.parsed.statements.is_empty() && self.parsed.diagnostics.is_empty()
    }

    /// What each statement defines and uses, with places, for tools that
    /// point into the text ([`crate::outline`]).
    pub fn outline(&self) -> crate::outline::Outline {
        crate::outline::outline(&self.parsed)
    }

    /// The diagnostics parsing alone found (errors and warnings).
    pub fn parse_diagnostics(&self) -> &[Diagnostic] {
        &self.parsed.diagnostics
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn blank_text_is_blank_and_a_stage_elaborates() {
        assert!(StageSource::from_text("t.tank", "# only a comment\n\n").is_blank());
        let s = StageSource::from_text(
            "t.tank",
            "voltage v1 a gnd dc=1V\nresistor r1 a gnd 50Ohm\n",
        );
        assert!(!s.is_blank());
        let e = s.elaborate(&Overrides::default()).expect("a valid stage");
        assert_eq!(e.circuit.elements.len(), 2);
        assert_eq!(s.sources().files().len(), 1);
        assert!(s.parse_diagnostics().is_empty());
    }

    #[test]
    fn a_bad_stage_keeps_its_diagnostics() {
        let s = StageSource::from_text("t.tank", "resistor r1 a gnd\n");
        let d = s.elaborate(&Overrides::default()).expect_err("no value");
        assert!(d.iter().any(|d| d.is_error()));
    }
}
