//! Rendering of stage-file diagnostics for people.
//!
//! Each diagnostic is drawn with miette's graphical handler: file:line:column,
//! the source line with a caret under the problem, the message, the help, and
//! the include chain ("included from FILE:LINE:COL"). Colour is used only
//! when stderr is a terminal; otherwise the drawing is plain Unicode.

use miette::{GraphicalReportHandler, GraphicalTheme, LabeledSpan, NamedSource, SourceSpan};
use std::fmt;
use std::io::IsTerminal;
use tankwave_netlist::{Diagnostic, Severity, SourceMap};

/// One diagnostic in miette's terms.
struct Shown<'a> {
    d: &'a Diagnostic,
    src: Option<NamedSource<String>>,
    span: Option<SourceSpan>,
}

impl fmt::Debug for Shown<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.d)
    }
}

impl fmt::Display for Shown<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.src.is_none() && self.d.line > 0 {
            write!(f, "{}:{}:{}: ", self.d.file, self.d.line, self.d.column)?;
        }
        f.write_str(&self.d.message)
    }
}

impl std::error::Error for Shown<'_> {}

impl miette::Diagnostic for Shown<'_> {
    fn code<'b>(&'b self) -> Option<Box<dyn fmt::Display + 'b>> {
        Some(Box::new(self.d.code))
    }
    fn severity(&self) -> Option<miette::Severity> {
        Some(match self.d.severity {
            Severity::Error => miette::Severity::Error,
            Severity::Warning => miette::Severity::Warning,
        })
    }
    fn help<'b>(&'b self) -> Option<Box<dyn fmt::Display + 'b>> {
        self.d
            .help
            .as_ref()
            .map(|h| Box::new(h.clone()) as Box<dyn fmt::Display>)
    }
    fn source_code(&self) -> Option<&dyn miette::SourceCode> {
        self.src.as_ref().map(|s| s as &dyn miette::SourceCode)
    }
    fn labels(&self) -> Option<Box<dyn Iterator<Item = LabeledSpan> + '_>> {
        let span = self.span?;
        Some(Box::new(std::iter::once(LabeledSpan::new_with_span(
            Some("here".to_string()),
            span,
        ))))
    }
}

/// Render diagnostics for stderr (colour if stderr is a terminal).
pub fn render(diags: &[Diagnostic], sources: &SourceMap) -> String {
    render_with(diags, sources, std::io::stderr().is_terminal())
}

/// Render diagnostics, with or without colour.
pub fn render_with(diags: &[Diagnostic], sources: &SourceMap, color: bool) -> String {
    let theme = if color {
        GraphicalTheme::unicode()
    } else {
        GraphicalTheme::unicode_nocolor()
    };
    let handler = GraphicalReportHandler::new_themed(theme)
        .with_links(false)
        .with_width(100);
    let mut out = String::new();
    for d in diags {
        let file = d.span.and_then(|s| sources.file(s.file).map(|f| (s, f)));
        let (src, span) = match file {
            Some((s, f)) => {
                let start = (s.start as usize).min(f.text.len());
                let len = (s.end as usize).min(f.text.len()).saturating_sub(start);
                (
                    Some(NamedSource::new(&f.name, f.text.clone())),
                    Some(SourceSpan::new(start.into(), len)),
                )
            }
            None => (None, None),
        };
        let shown = Shown { d, src, span };
        if handler.render_report(&mut out, &shown).is_err() {
            out.push_str(&d.to_string());
            out.push('\n');
        }
        for (f, l, c) in &d.included_from {
            out.push_str(&format!("  included from {f}:{l}:{c}\n"));
        }
        out.push('\n');
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shows_place_caret_message_and_help() {
        let parsed = tankwave_netlist::parse_str(
            "stage.tank",
            "resistor r1 a gnd 5Ohm\ncapacitor c1 a gnd 10uH\n",
        );
        let diags =
            tankwave_circuit::elaborate(&parsed, &Default::default()).expect_err("unit mismatch");
        let s = render_with(&diags, &parsed.sources, false);
        assert!(s.contains("stage.tank:2:20"), "{s}");
        assert!(s.contains("capacitor c1 a gnd 10uH"), "{s}");
        assert!(s.contains("capacitor value needs F, got H"), "{s}");
        assert!(s.contains("unit-mismatch"), "{s}");
        assert!(s.contains('^') || s.contains('┬') || s.contains('─'), "{s}");
    }
}
