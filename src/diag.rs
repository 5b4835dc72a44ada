//! Rendering of stage-file diagnostics for people.
//!
//! Each diagnostic is drawn with miette's graphical handler: file:line:column,
//! the source line with a caret under the problem, the message, the help, and
//! the include chain ("included from FILE:LINE:COL"). Colour is used only
//! when stderr is a terminal; otherwise the drawing is plain Unicode.
//!
//! Nothing from the file reaches the terminal raw: messages, help, names and
//! the source line are escaped (`tankwave_netlist::escape`), the line is cut
//! to a window around the place it points at, and at most
//! `LIMITS.max_diagnostics_shown` diagnostics are drawn ("and N more").

use miette::{
    GraphicalReportHandler, GraphicalTheme, LabeledSpan, MietteError, MietteSpanContents,
    SourceCode, SourceSpan, SpanContents,
};
use std::fmt;
use std::io::IsTerminal;
use tankwave_netlist::escape::{escape, same_width};
use tankwave_netlist::{Diagnostic, Severity, SourceMap, LIMITS};

/// One escaped, bounded source line: the only source text miette sees.
struct Snippet {
    /// File name (escaped).
    name: String,
    /// The window of the line, control characters replaced in place.
    text: String,
    /// 0-based line.
    line: usize,
    /// 0-based character column of the place pointed at.
    column: usize,
}

impl SourceCode for Snippet {
    fn read_span<'a>(
        &'a self,
        _span: &SourceSpan,
        _before: usize,
        _after: usize,
    ) -> Result<Box<dyn SpanContents<'a> + 'a>, MietteError> {
        Ok(Box::new(MietteSpanContents::new_named(
            self.name.clone(),
            self.text.as_bytes(),
            SourceSpan::new(0.into(), self.text.len()),
            self.line,
            self.column,
            1,
        )))
    }
}

/// One diagnostic in miette's terms.
struct Shown<'a> {
    d: &'a Diagnostic,
    src: Option<Snippet>,
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
            write!(
                f,
                "{}:{}:{}: ",
                escape(&self.d.file),
                self.d.line,
                self.d.column
            )?;
        }
        f.write_str(&escape(&self.d.message))
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
            .map(|h| Box::new(escape(h).into_owned()) as Box<dyn fmt::Display>)
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
    for d in diags.iter().take(LIMITS.max_diagnostics_shown) {
        let (src, span) = match d.span.and_then(|s| snippet(sources, d, s)) {
            Some((snip, start, len)) => (Some(snip), Some(SourceSpan::new(start.into(), len))),
            None => (None, None),
        };
        let shown = Shown { d, src, span };
        if handler.render_report(&mut out, &shown).is_err() {
            out.push_str(&escape(&d.to_string()));
            out.push('\n');
        }
        for (f, l, c) in &d.included_from {
            out.push_str(&format!("  included from {}:{l}:{c}\n", escape(f)));
        }
        out.push('\n');
    }
    if diags.len() > LIMITS.max_diagnostics_shown {
        let more = diags.len() - LIMITS.max_diagnostics_shown;
        let at_least = if diags.len() >= LIMITS.max_diagnostics_collected {
            "at least "
        } else {
            ""
        };
        out.push_str(&format!(
            "... and {at_least}{more} more (only the first {} are shown)\n\n",
            LIMITS.max_diagnostics_shown
        ));
    }
    out
}

/// The source line a diagnostic points at, escaped and cut to a window of
/// `LIMITS.snippet_chars` bytes around the place (a byte-order mark left
/// out), with the start and length of the place within it.
fn snippet(
    sources: &SourceMap,
    d: &Diagnostic,
    span: tankwave_netlist::Span,
) -> Option<(Snippet, usize, usize)> {
    let f = sources.file(span.file)?;
    let line = sources.line_text(span.file, d.line)?;
    let line_start = (line.as_ptr() as usize).checked_sub(f.text.as_ptr() as usize)?;
    let rel = (span.start as usize)
        .saturating_sub(line_start)
        .min(line.len());
    let rel_end = (span.end as usize)
        .saturating_sub(line_start)
        .clamp(rel, line.len());
    let width = LIMITS.snippet_chars;
    let mut ws = rel.saturating_sub(width / 2);
    if line_start == 0 && ws < 3 && line.starts_with('\u{feff}') {
        ws = 3;
    }
    while ws > 0 && !line.is_char_boundary(ws) {
        ws -= 1;
    }
    let mut we = (ws + width).max(rel).min(line.len());
    while we < line.len() && !line.is_char_boundary(we) {
        we += 1;
    }
    let ws = ws.min(rel);
    let cut_front = ws > 0 && !(line_start == 0 && ws == 3 && line.starts_with('\u{feff}'));
    let mut text = String::new();
    if cut_front {
        text.push_str("...");
    }
    let start = text.len() + (rel - ws);
    text.push_str(&same_width(line.get(ws..we)?));
    if we < line.len() {
        text.push_str("...");
    }
    let len = rel_end.min(we).saturating_sub(rel);
    Some((
        Snippet {
            name: escape(&f.name).into_owned(),
            text,
            line: d.line.saturating_sub(1) as usize,
            column: d.column.saturating_sub(1) as usize,
        },
        start,
        len,
    ))
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

    /// An escape sequence in the text is shown escaped, never raw, and a
    /// byte-order mark does not shift the column.
    #[test]
    fn no_raw_control_characters_and_bom_columns() {
        let parsed = tankwave_netlist::parse_str(
            "s.tank",
            "\u{feff}resistor r1 a gnd 5F \u{1b}]0;owned\u{7}\n",
        );
        let diags =
            tankwave_circuit::elaborate(&parsed, &Default::default()).expect_err("bad file");
        let s = render_with(&diags, &parsed.sources, false);
        assert!(!s.contains('\u{1b}') && !s.contains('\u{7}'), "{s:?}");
        // "resistor r1 a gnd 5F " is 21 characters after the mark: ESC is column 22
        assert!(s.contains("s.tank:1:22"), "{s}");
    }

    /// Past the display cap, the rest are counted, not drawn.
    #[test]
    fn many_diagnostics_are_capped() {
        let text: String = (0..250)
            .map(|i| format!("resistor r{i} a gnd 5F\n"))
            .collect();
        let parsed = tankwave_netlist::parse_str("s.tank", &text);
        let diags =
            tankwave_circuit::elaborate(&parsed, &Default::default()).expect_err("bad file");
        assert!(diags.len() >= 250);
        let s = render_with(&diags, &parsed.sources, false);
        assert!(
            s.contains(&format!("and {} more", diags.len() - 100)),
            "{s}"
        );
        assert!(!s.contains("s.tank:150:"), "drawn past the cap");
    }
}
