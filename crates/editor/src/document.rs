//! One open stage file as the server knows it: its text, parsed and
//! elaborated exactly as `lint` does (through tankwave-stage), with the
//! diagnostics, the outline of what each statement defines and uses, and
//! the figures of the last solve of this very text, if any.

use std::path::{Path, PathBuf};
use std::sync::Arc;

use lsp_types::{DiagnosticSeverity, NumberOrString, Range, Url};
use tankwave_circuit::outline::Outline;
use tankwave_circuit::{Diagnostic, Severity, SourceMap, Span, StageSource};
use tankwave_stage::{Stage, StageError};

use crate::figures::Solved;
use crate::position::LineIndex;

/// One open document.
#[derive(Debug, Clone)]
pub struct Document {
    /// The document's identifier, as the client names it.
    pub uri: Url,
    /// The name the stage is read under: the file's path for a `file:` URI
    /// (relative includes resolve from its directory), else the URI.
    pub name: String,
    /// The client's text.
    pub text: String,
    /// Its lines.
    pub lines: LineIndex,
    /// The text parsed, with its includes.
    pub source: StageSource,
    /// What each statement defines and uses.
    pub outline: Outline,
    /// The stage, when the text elaborates.
    pub stage: Option<Stage>,
    /// Every diagnostic of parsing and elaboration (errors and warnings).
    pub diagnostics: Vec<Diagnostic>,
    /// The last solve of exactly this text (`None` until a save is solved;
    /// an edit drops it).
    pub solved: Option<Arc<Solved>>,
}

/// The name a document is read under (see [`Document::name`]).
pub fn name_of(uri: &Url) -> String {
    if uri.scheme() == "file" {
        if let Ok(p) = uri.to_file_path() {
            return p.display().to_string();
        }
    }
    uri.to_string()
}

impl Document {
    /// Parse and elaborate `text` as `lint` does (includes confined to the
    /// file's default roots).
    pub fn new(uri: Url, text: String) -> Document {
        Document::with_roots(uri, text, &[])
    }

    /// [`Document::new`], with includes also allowed from under
    /// `include_roots` (the command line's `--include-root`).
    pub fn with_roots(uri: Url, text: String, include_roots: &[PathBuf]) -> Document {
        let name = name_of(&uri);
        let source = StageSource::from_text_with_roots(&name, &text, include_roots);
        let outline = source.outline();
        let (stage, diagnostics) =
            match tankwave_stage::load_source(source.clone(), &Default::default()) {
                Ok(s) => {
                    let w = s.warnings.clone();
                    (Some(s), w)
                }
                Err(StageError::Input { diagnostics, .. }) => (None, diagnostics),
                Err(_) => (None, Vec::new()),
            };
        Document {
            uri,
            name,
            lines: LineIndex::new(&text),
            text,
            source,
            outline,
            stage,
            diagnostics,
            solved: None,
        }
    }

    /// The texts of the files read (this document first).
    pub fn sources(&self) -> &Arc<SourceMap> {
        self.source.sources()
    }

    /// The protocol range of a byte range of this document.
    pub fn range(&self, start: usize, end: usize) -> Range {
        Range::new(
            self.lines.position(&self.text, start),
            self.lines.position(&self.text, end),
        )
    }

    /// The protocol range of a span, if it lies in this document (file 0).
    pub fn range_of(&self, span: Span) -> Option<Range> {
        (span.file == 0).then(|| self.range(span.start as usize, span.end as usize))
    }

    /// The place of a span in the file it lies in: its URI and range (the
    /// range computed on that file's text).
    pub fn location_of(&self, span: Span) -> Option<lsp_types::Location> {
        if span.file == 0 {
            return Some(lsp_types::Location::new(
                self.uri.clone(),
                self.range_of(span)?,
            ));
        }
        let f = self.sources().file(span.file)?;
        let uri = Url::from_file_path(Path::new(&f.name)).ok()?;
        let ix = LineIndex::new(&f.text);
        let range = Range::new(
            ix.position(&f.text, span.start as usize),
            ix.position(&f.text, span.end as usize),
        );
        Some(lsp_types::Location::new(uri, range))
    }

    /// The byte offset in this document where the include chain of `file`
    /// enters it (the `include` statement), if it does.
    pub fn include_site(&self, file: u32) -> Option<usize> {
        let map = self.sources();
        let mut cur = map.file(file)?.included_from;
        // the chain is finite (the parser refuses cycles and limits depth);
        // the bound only keeps this loop finite on any map
        for _ in 0..map.files().len() {
            let (f, off) = cur?;
            if f == 0 {
                return Some(off as usize);
            }
            cur = map.file(f)?.included_from;
        }
        None
    }

    /// The diagnostics in the protocol's terms, as `lint` shows them: the
    /// same place (span), message, code and help. A problem inside an
    /// included file is shown on the `include` line that brings it in, its
    /// own file, line and column leading the message.
    pub fn lsp_diagnostics(&self) -> Vec<lsp_types::Diagnostic> {
        let mut out = Vec::new();
        for d in self
            .diagnostics
            .iter()
            .take(tankwave_circuit::LIMITS.max_diagnostics_shown)
        {
            let mut message = d.message.clone();
            let range = match d.span {
                Some(s) if s.file == 0 => self.range(s.start as usize, s.end as usize),
                Some(s) => {
                    message = format!("{}:{}:{}: {message}", d.file, d.line, d.column);
                    match self.include_site(s.file) {
                        Some(off) => {
                            let (a, b) = self.lines.line_of(&self.text, off);
                            self.range(a, b)
                        }
                        None => self.range(0, 0),
                    }
                }
                None => self.range(0, 0),
            };
            if let Some(h) = &d.help {
                message.push_str("\nhelp: ");
                message.push_str(h);
            }
            out.push(lsp_types::Diagnostic {
                range,
                severity: Some(match d.severity {
                    Severity::Error => DiagnosticSeverity::ERROR,
                    Severity::Warning => DiagnosticSeverity::WARNING,
                }),
                code: Some(NumberOrString::String(d.code.to_string())),
                source: Some("tankwave".into()),
                message,
                ..Default::default()
            });
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn doc(text: &str) -> Document {
        Document::new(Url::parse("file:///tmp/t.tank").unwrap(), text.into())
    }

    /// The same place and words as `lint` (the diagnostic of the circuit
    /// crate's own unit-mismatch test: line 2, column 20).
    #[test]
    fn diagnostics_carry_the_lint_place_code_and_help() {
        let d = doc("resistor r1 a gnd 5Ohm\ncapacitor c1 a gnd 10uH\n");
        let ds = d.lsp_diagnostics();
        let e = ds
            .iter()
            .find(|x| x.message.contains("capacitor value needs F, got H"))
            .expect("unit mismatch");
        assert_eq!(e.range.start, lsp_types::Position::new(1, 19));
        assert_eq!(e.range.end, lsp_types::Position::new(1, 23));
        assert_eq!(e.code, Some(NumberOrString::String("unit-mismatch".into())));
        assert_eq!(e.severity, Some(DiagnosticSeverity::ERROR));
    }

    /// With a byte-order mark and µ before the problem, the column is in
    /// UTF-16 units of the client's text: the mark counts 1, µ counts 1.
    #[test]
    fn diagnostic_columns_after_a_mark_and_a_micro_sign() {
        let d = doc("\u{feff}inductor l1 a gnd 1µH\ncapacitor c1 a gnd 10µH\n");
        let ds = d.lsp_diagnostics();
        let e = ds
            .iter()
            .find(|x| x.message.contains("needs F"))
            .expect("F");
        assert_eq!(e.range.start, lsp_types::Position::new(1, 19));
        assert_eq!(e.range.end, lsp_types::Position::new(1, 23));
        let clean = doc("\u{feff}inductor l1 a gnd 1µH\nresistor r1 a gnd 50Ω\n");
        assert!(
            clean
                .lsp_diagnostics()
                .iter()
                .all(|x| x.severity != Some(DiagnosticSeverity::ERROR)),
            "{:?}",
            clean.lsp_diagnostics()
        );
    }
}
