//! What the server answers about one document: hover, go to definition,
//! completion, document symbols and the figures as inlay hints. Plain
//! functions of a [`Document`] and a place in it.
//!
//! Every word offered for completion comes from the one place it is
//! declared: statement keywords and element kinds, waveforms and part
//! kinds from the language's vocabulary, option names and words from the
//! option tables, part parameters from the model parameter tables, figure
//! words from the figure catalogue, built-in mask names from the mask
//! data, unit suffixes from the parser's unit table.

use lsp_types::{
    CompletionItem, CompletionItemKind, DocumentSymbol, Hover, HoverContents, InlayHint,
    InlayHintLabel, Location, MarkupContent, MarkupKind, Position, SymbolKind as LspKind,
};
use tankwave_circuit::models::{self, Param};
use tankwave_circuit::options::{self, OptionSpec, Takes};
use tankwave_circuit::outline::{RefKind, Symbol, SymbolKind};
use tankwave_circuit::si::si_prefixed;
use tankwave_circuit::{vocab, Figure, ModelParams, Span};

use crate::document::Document;

fn contains(span: Span, offset: usize) -> bool {
    span.file == 0 && (span.start as usize) <= offset && offset <= span.end as usize
}

/// What the cursor is on.
enum Target<'a> {
    /// A defined name, or a use of one.
    Name(RefKind, &'a str),
    /// An analysis or requirement statement.
    Statement(&'a Symbol),
}

fn def_kind(k: SymbolKind) -> Option<RefKind> {
    match k {
        SymbolKind::Param => Some(RefKind::Param),
        SymbolKind::Element => Some(RefKind::Element),
        SymbolKind::Part => Some(RefKind::Part),
        SymbolKind::Mask => Some(RefKind::Mask),
        SymbolKind::Analysis | SymbolKind::Requirement => None,
    }
}

fn target_at(doc: &Document, offset: usize) -> Option<Target<'_>> {
    if let Some(r) = doc
        .outline
        .references
        .iter()
        .find(|r| contains(r.span, offset))
    {
        return Some(Target::Name(r.kind, &r.name));
    }
    for s in &doc.outline.symbols {
        if contains(s.name_span, offset) {
            return Some(match def_kind(s.kind) {
                Some(k) => Target::Name(k, &s.name),
                None => Target::Statement(s),
            });
        }
    }
    None
}

fn definition_of<'a>(doc: &'a Document, kind: RefKind, name: &str) -> Option<&'a Symbol> {
    doc.outline
        .symbols
        .iter()
        .find(|s| def_kind(s.kind) == Some(kind) && s.name == name)
}

fn markdown(text: String) -> Hover {
    Hover {
        contents: HoverContents::Markup(MarkupContent {
            kind: MarkupKind::Markdown,
            value: text,
        }),
        range: None,
    }
}

/// The hover at `pos`: a value in SI with its unit; a `let` name with its
/// evaluated value; a part with its parameters; an element with its
/// operating-point figures once a solve has run; an analysis or a
/// requirement with its figures.
pub fn hover(doc: &Document, pos: Position) -> Option<Hover> {
    let offset = doc.lines.offset(&doc.text, pos);
    if let Some(l) = doc
        .outline
        .literals
        .iter()
        .find(|l| contains(l.span, offset))
    {
        let shown = si_prefixed(l.value, l.unit, 4);
        let mut h = markdown(format!("`{}` = {shown}", l.text));
        h.range = doc.range_of(l.span);
        return Some(h);
    }
    let text = match target_at(doc, offset)? {
        Target::Name(RefKind::Param, name) => param_hover(doc, name),
        Target::Name(RefKind::Part, name) => part_hover(doc, name),
        Target::Name(RefKind::Element, name) => element_hover(doc, name),
        Target::Name(RefKind::Mask, name) => mask_hover(doc, name),
        Target::Statement(s) => statement_hover(doc, s),
    };
    Some(markdown(text))
}

const NOT_ELABORATED: &str = "(not evaluated: the file has errors)";

fn param_hover(doc: &Document, name: &str) -> String {
    let Some(stage) = &doc.stage else {
        return format!("**let** `{name}` {NOT_ELABORATED}");
    };
    let c = &stage.circuit;
    match c.params.get(name) {
        Some(v) => {
            let unit = c.param_units.get(name).map(String::as_str).unwrap_or("");
            format!("**let** `{name}` = {}", si_prefixed(*v, unit, 4))
        }
        None => format!("`{name}` is not a parameter of this file"),
    }
}

fn table_rows<P: Clone>(table: &[Param<P>], params: &P) -> String {
    let mut s = String::new();
    let mut p = params.clone();
    for row in table {
        let v = *(row.field)(&mut p);
        let unit = if row.unit == "—" { "" } else { row.unit };
        let shown = if v.is_infinite() {
            "off (∞)".to_string()
        } else {
            si_prefixed(v, unit, 4)
        };
        s.push_str(&format!(
            "- `{}.{}` ({}) = {shown}: {}\n",
            row.block, row.name, row.symbol, row.meaning
        ));
    }
    s
}

fn part_hover(doc: &Document, name: &str) -> String {
    let Some(stage) = &doc.stage else {
        return format!("**part** `{name}` {NOT_ELABORATED}");
    };
    let Some(m) = stage.circuit.models.iter().find(|m| m.name == name) else {
        return format!("`{name}` is not a part of this file");
    };
    let rows = match &m.params {
        ModelParams::Bjt(p) => table_rows(models::BJT_PARAMS, p),
        ModelParams::Diode(p) => table_rows(models::DIODE_PARAMS, p),
    };
    let kind = doc
        .outline
        .symbols
        .iter()
        .find(|s| s.kind == SymbolKind::Part && s.name == name)
        .map(|s| s.part_kind.as_str())
        .unwrap_or("");
    format!("**part** `{name}` {kind}\n\n{rows}")
}

fn element_hover(doc: &Document, name: &str) -> String {
    let Some(sym) = definition_of(doc, RefKind::Element, name) else {
        return format!("`{name}` is not an element of this file");
    };
    let mut s = format!("**{}** `{name}`", sym.keyword);
    if !sym.nodes.is_empty() {
        s.push_str(&format!(" between {}", sym.nodes.join(", ")));
    }
    let op = doc
        .solved
        .as_ref()
        .and_then(|x| x.results.as_ref().ok())
        .and_then(|r| r.op.as_ref());
    match op.and_then(|op| op.devices.iter().find(|d| d.name == name)) {
        Some(d) => {
            s.push_str("\n\nAt the bias point:\n");
            for (f, v) in &d.figures {
                s.push_str(&format!(
                    "- {}: {}\n",
                    tankwave_report::stage::figure_label(*f),
                    si_prefixed(*v, f.unit(), 4)
                ));
            }
            s.push_str(&format!("\n{}", tankwave_report::stage::SAFETY_NOTE));
        }
        None if op.is_some() => {}
        None => s.push_str("\n\n(save the file to solve it and see its bias-point figures)"),
    }
    s
}

fn mask_hover(doc: &Document, name: &str) -> String {
    if let Some(m) = doc
        .stage
        .as_ref()
        .and_then(|s| s.circuit.masks.iter().find(|m| m.name == name))
    {
        return format!("**mask** `{name}`: {} rule(s)", m.rules.len());
    }
    if let Some(m) = tankwave_circuit::builtin::builtin_mask(name) {
        return format!("**mask** `{name}` (built in): {} rule(s)", m.rules.len());
    }
    format!("`{name}` is not a mask of this file")
}

fn statement_hover(doc: &Document, s: &Symbol) -> String {
    let mut out = format!("**{} {}**", s.keyword, s.name);
    if s.kind == SymbolKind::Requirement {
        if let Some(f) = Figure::from_word(&s.name) {
            out.push_str(&format!(": {}", f.label()));
        }
    }
    let Some(solved) = &doc.solved else {
        out.push_str("\n\n(save the file to solve it and see its figures)");
        return out;
    };
    if s.kind == SymbolKind::Analysis && s.name == "steady" {
        if let Ok(r) = &solved.results {
            out.push('\n');
            for (k, v) in crate::figures::headline(r) {
                out.push_str(&format!("\n- {k}: {v}"));
            }
        }
    } else if let Some((_, t)) = solved.lines.iter().find(|(sp, _)| *sp == s.span) {
        out.push_str(&format!("\n\n{t}"));
    }
    out.push_str(&format!("\n\n{}", tankwave_report::stage::SAFETY_NOTE));
    out
}

/// Where the name at `pos` is defined: a parameter, element, part or mask
/// of this file or an included one; on an `include` line, the file.
pub fn definition(doc: &Document, pos: Position) -> Option<Location> {
    let offset = doc.lines.offset(&doc.text, pos);
    if let Some(Target::Name(kind, name)) = target_at(doc, offset) {
        if let Some(s) = definition_of(doc, kind, name) {
            return doc.location_of(s.name_span);
        }
    }
    // an include line: the file it brings in
    let (a, b) = doc.lines.line_of(&doc.text, offset);
    let map = doc.sources();
    map.files().iter().enumerate().skip(1).find_map(|(i, f)| {
        let (from, at) = f.included_from?;
        if from != 0 || (at as usize) < a || (at as usize) > b {
            return None;
        }
        let span = Span::new(u32::try_from(i).ok()?, 0, 0);
        doc.location_of(span)
    })
}

fn kind_of(k: SymbolKind) -> LspKind {
    match k {
        SymbolKind::Param => LspKind::CONSTANT,
        SymbolKind::Element => LspKind::OBJECT,
        SymbolKind::Part => LspKind::CLASS,
        SymbolKind::Mask => LspKind::ARRAY,
        SymbolKind::Analysis => LspKind::EVENT,
        SymbolKind::Requirement => LspKind::BOOLEAN,
    }
}

/// The document's symbols: its parameters, elements, parts, masks,
/// analyses and requirements (those written in this file).
#[allow(deprecated)] // `deprecated` is a field the protocol type still requires
pub fn symbols(doc: &Document) -> Vec<DocumentSymbol> {
    doc.outline
        .symbols
        .iter()
        .filter(|s| s.span.file == 0)
        .filter_map(|s| {
            let range = doc.range_of(s.span)?;
            let selection = doc.range_of(s.name_span)?;
            Some(DocumentSymbol {
                name: if s.name.is_empty() {
                    s.keyword.clone()
                } else {
                    s.name.clone()
                },
                detail: Some(s.keyword.clone()),
                kind: kind_of(s.kind),
                tags: None,
                deprecated: None,
                range,
                selection_range: selection.clamp_in(range),
                children: None,
            })
        })
        .collect()
}

/// A selection range that lies within its symbol's range, as the protocol
/// requires.
trait ClampIn {
    fn clamp_in(self, outer: lsp_types::Range) -> lsp_types::Range;
}

impl ClampIn for lsp_types::Range {
    fn clamp_in(self, outer: lsp_types::Range) -> lsp_types::Range {
        if self.start >= outer.start && self.end <= outer.end {
            self
        } else {
            outer
        }
    }
}

/// The figures of the last solve as hints at the end of each `analyze`
/// and `require` statement of this file (none before a solve of this
/// very text).
pub fn inlay_hints(doc: &Document) -> Vec<InlayHint> {
    let Some(solved) = &doc.solved else {
        return Vec::new();
    };
    solved
        .lines
        .iter()
        .filter(|(s, _)| s.file == 0)
        .map(|(s, t)| {
            let (_, end) = doc.lines.line_of(&doc.text, s.start as usize);
            InlayHint {
                position: doc.lines.position(&doc.text, end),
                label: InlayHintLabel::String(format!("⇒ {t}")),
                kind: None,
                text_edits: None,
                tooltip: None,
                padding_left: Some(true),
                padding_right: None,
                data: None,
            }
        })
        .collect()
}

/// The same figures as code lenses over each `analyze` and `require` line,
/// for clients that show lenses but not inlay hints; a lens's command does
/// nothing but show its title.
pub fn code_lenses(doc: &Document) -> Vec<lsp_types::CodeLens> {
    let Some(solved) = &doc.solved else {
        return Vec::new();
    };
    solved
        .lines
        .iter()
        .filter(|(s, _)| s.file == 0)
        .map(|(s, t)| {
            let (a, b) = doc.lines.line_of(&doc.text, s.start as usize);
            lsp_types::CodeLens {
                range: doc.range(a, b),
                command: Some(lsp_types::Command {
                    title: format!("⇒ {t}"),
                    command: String::new(),
                    arguments: None,
                }),
                data: None,
            }
        })
        .collect()
}

// ---------------------------------------------------------------- completion

fn item(label: impl Into<String>, kind: CompletionItemKind, detail: &str) -> CompletionItem {
    CompletionItem {
        label: label.into(),
        kind: Some(kind),
        detail: (!detail.is_empty()).then(|| detail.to_string()),
        ..Default::default()
    }
}

fn option_items(table: &[OptionSpec]) -> Vec<CompletionItem> {
    table
        .iter()
        .map(|o| {
            let mut i = item(format!("{}=", o.name), CompletionItemKind::PROPERTY, o.doc);
            i.insert_text = Some(format!("{}=", o.name));
            i
        })
        .collect()
}

fn names_of(doc: &Document, kind: SymbolKind) -> Vec<CompletionItem> {
    let ck = match kind {
        SymbolKind::Param => CompletionItemKind::CONSTANT,
        SymbolKind::Part => CompletionItemKind::CLASS,
        SymbolKind::Mask => CompletionItemKind::ENUM_MEMBER,
        _ => CompletionItemKind::VARIABLE,
    };
    let mut seen = Vec::new();
    doc.outline
        .symbols
        .iter()
        .filter(|s| s.kind == kind && !s.name.is_empty())
        .filter(|s| {
            let new = !seen.contains(&s.name);
            seen.push(s.name.clone());
            new
        })
        .map(|s| item(s.name.clone(), ck, &s.keyword))
        .collect()
}

fn node_names(doc: &Document) -> Vec<CompletionItem> {
    let mut nodes: Vec<&String> = doc.outline.symbols.iter().flat_map(|s| &s.nodes).collect();
    nodes.sort();
    nodes.dedup();
    nodes
        .into_iter()
        .map(|n| item(n.clone(), CompletionItemKind::VARIABLE, "node"))
        .collect()
}

fn mask_names(doc: &Document) -> Vec<CompletionItem> {
    let mut v = names_of(doc, SymbolKind::Mask);
    v.extend(
        tankwave_circuit::builtin::builtin_names()
            .into_iter()
            .map(|n| item(n, CompletionItemKind::ENUM_MEMBER, "built-in mask")),
    );
    v
}

fn unit_items() -> Vec<CompletionItem> {
    tankwave_circuit::suffix_spellings()
        .into_iter()
        .map(|s| item(s, CompletionItemKind::UNIT, ""))
        .collect()
}

/// The part kind and block the cursor is in, from the braces before it
/// (comments and quoted text left out): `(kind, Some(block))` inside a
/// block, `(kind, None)` between blocks, `None` outside any part.
fn part_context(before: &str) -> Option<(String, Option<String>)> {
    let mut depth = 0usize;
    let mut kind = String::new();
    let mut block = String::new();
    let mut stmt_start = 0;
    let mut comment = false;
    let mut quoted = false;
    for (i, c) in before.char_indices() {
        match c {
            '\n' | '\r' => {
                comment = false;
                quoted = false;
                if depth == 0 {
                    stmt_start = i + 1;
                }
            }
            _ if comment => {}
            '"' => quoted = !quoted,
            _ if quoted => {}
            '#' => comment = true,
            '{' => {
                let head = before.get(stmt_start..i).unwrap_or("");
                let words: Vec<&str> = head.split_whitespace().collect();
                if depth == 0 {
                    kind = match words.as_slice() {
                        ["part", _, k, ..] => k.to_string(),
                        _ => String::new(),
                    };
                } else if depth == 1 {
                    block = words.last().copied().unwrap_or("").to_string();
                }
                depth += 1;
                stmt_start = i + 1;
            }
            '}' => {
                depth = depth.saturating_sub(1);
                stmt_start = i + 1;
            }
            _ => {}
        }
    }
    match depth {
        0 => None,
        _ if kind.is_empty() => None,
        1 => Some((kind, None)),
        _ => Some((kind, Some(block))),
    }
}

fn part_items<P>(table: &[Param<P>], block: Option<&str>) -> Vec<CompletionItem> {
    match block {
        None => models::blocks(table)
            .into_iter()
            .map(|b| item(b, CompletionItemKind::MODULE, "parameter block"))
            .collect(),
        Some(b) => table
            .iter()
            .filter(|p| p.block == b)
            .map(|p| {
                let mut i = item(format!("{}=", p.name), CompletionItemKind::FIELD, p.meaning);
                i.insert_text = Some(format!("{}=", p.name));
                i
            })
            .collect(),
    }
}

/// Completion at `pos`: keywords, element kinds, option names and words,
/// part blocks and parameters, names of this file (parameters, elements,
/// nodes, parts, masks), built-in masks, figure words and unit suffixes,
/// as the place allows.
pub fn completion(doc: &Document, pos: Position) -> Vec<CompletionItem> {
    let offset = doc.lines.offset(&doc.text, pos);
    let before_all = doc.text.get(..offset).unwrap_or("");
    if let Some((kind, block)) = part_context(before_all) {
        let line_start = before_all.rfind(['\n', '{']).map(|i| i + 1).unwrap_or(0);
        let partial = before_all[line_start..]
            .rsplit(char::is_whitespace)
            .next()
            .unwrap_or("");
        if partial.contains('=') {
            return unit_items();
        }
        return match kind.as_str() {
            "diode" => part_items(models::DIODE_PARAMS, block.as_deref()),
            _ => part_items(models::BJT_PARAMS, block.as_deref()),
        };
    }
    let (line_start, _) = doc.lines.line_of(&doc.text, offset);
    let before = doc.text.get(line_start..offset).unwrap_or("");
    let before = before.strip_prefix('\u{feff}').unwrap_or(before);
    if before.contains('#') {
        return Vec::new();
    }
    let ends_in_space = before.is_empty() || before.ends_with(char::is_whitespace);
    let words: Vec<&str> = before.split_whitespace().collect();
    let (done, partial) = if ends_in_space {
        (&words[..], "")
    } else {
        (&words[..words.len() - 1], words[words.len() - 1])
    };
    if done.is_empty() {
        return vocab::statement_keywords()
            .map(|k| item(*k, CompletionItemKind::KEYWORD, "statement"))
            .collect();
    }
    let kw = done[0];
    // a value being written: after `key=`, or a number
    let (key, value) = match partial.split_once('=') {
        Some((k, v)) => (Some(k), v),
        None => (None, partial),
    };
    // the word being written: after the last operator, bracket or `=`
    let seps = ['=', '(', ',', '*', '/', '+', '-', '^'];
    let tail = partial.rsplit(seps).next().unwrap_or(partial);
    if tail.starts_with(|c: char| c.is_ascii_digit() || c == '.') {
        return unit_items();
    }
    let table: &[OptionSpec] = if kw == "analyze" {
        done.get(1)
            .and_then(|k| options::analysis::of(k))
            .unwrap_or(&[])
    } else if kw == "montecarlo" {
        options::montecarlo::ALL
    } else {
        options::element::of(kw)
    };
    if let Some(key) = key {
        let spec = table.iter().find(|o| o.name == key);
        // inside a waveform: its argument names where an argument starts
        if let (Some(Takes::Wave), Some((shape, _))) =
            (spec.map(|o| o.takes), value.split_once('('))
        {
            let before_tail = &partial[..partial.len() - tail.len()];
            if before_tail.ends_with(['(', ',']) {
                return vocab::waveform_args(shape)
                    .unwrap_or(&[])
                    .iter()
                    .map(|a| {
                        let mut i = item(format!("{a}="), CompletionItemKind::PROPERTY, shape);
                        i.insert_text = Some(format!("{a}="));
                        i
                    })
                    .collect();
            }
            return names_of(doc, SymbolKind::Param);
        }
        return match spec.map(|o| o.takes) {
            Some(Takes::Word(_)) => spec
                .map(|o| o.words())
                .unwrap_or_default()
                .into_iter()
                .map(|w| item(w, CompletionItemKind::ENUM_MEMBER, key))
                .collect(),
            Some(Takes::Part) => names_of(doc, SymbolKind::Part),
            Some(Takes::Element) => names_of(doc, SymbolKind::Element),
            Some(Takes::Node) => node_names(doc),
            Some(Takes::Wave) => vocab::WAVEFORMS
                .iter()
                .map(|(w, _)| item(*w, CompletionItemKind::FUNCTION, "waveform"))
                .collect(),
            _ => names_of(doc, SymbolKind::Param),
        };
    }
    match kw {
        "analyze" if done.len() == 1 => options::analysis::kinds()
            .into_iter()
            .map(|k| item(k, CompletionItemKind::ENUM_MEMBER, "analysis"))
            .collect(),
        "analyze" | "montecarlo" => option_items(table),
        "require" if done.len() == 1 => Figure::words()
            .map(|w| {
                let label = Figure::from_word(w).map(|f| f.label()).unwrap_or("");
                item(w, CompletionItemKind::VALUE, label)
            })
            .collect(),
        "require" => {
            let figure = Figure::from_word(done[1]);
            let compared = done[1..]
                .iter()
                .any(|w| matches!(*w, "<=" | ">=" | "<" | ">"));
            if compared {
                match figure.map(|f| f.about()) {
                    Some(
                        tankwave_circuit::About::Mask
                        | tankwave_circuit::About::SidebandMask
                        | tankwave_circuit::About::Harmonic,
                    ) => mask_names(doc),
                    _ => names_of(doc, SymbolKind::Param),
                }
            } else if figure.is_some_and(|f| f.about().takes_element()) {
                names_of(doc, SymbolKind::Element)
            } else {
                Vec::new()
            }
        }
        "output" | "input" | "tolerance" => names_of(doc, SymbolKind::Element),
        "vary" | "tune" => names_of(doc, SymbolKind::Param),
        "part" if done.len() == 2 => vocab::PART_KINDS
            .iter()
            .map(|k| item(*k, CompletionItemKind::ENUM_MEMBER, "part kind"))
            .collect(),
        "let" if done.len() >= 3 => names_of(doc, SymbolKind::Param),
        k if vocab::ELEMENT_KINDS.contains(&k) && done.len() >= 2 => {
            let mut v = option_items(table);
            v.extend(node_names(doc));
            v
        }
        _ => Vec::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use lsp_types::Url;

    const STAGE: &str = "let f0 = 13.56MHz\nlet vcc = 12V\n\
        voltage vsup vcc gnd dc=vcc\nresistor r1 vcc out 50Ω\nresistor rl out gnd 50Ohm\n\
        part dq diode { junction { sat_current=1fA } }\ndiode d1 out gnd part=dq\n\
        analyze bias\noutput rl\n";

    fn doc(text: &str) -> Document {
        Document::new(Url::parse("file:///tmp/t.tank").unwrap(), text.into())
    }

    fn at(d: &Document, needle: &str, nth: usize) -> Position {
        let off = d
            .text
            .match_indices(needle)
            .nth(nth)
            .map(|(i, _)| i)
            .expect("needle");
        d.lines.position(&d.text, off)
    }

    fn hover_text(d: &Document, p: Position) -> String {
        match hover(d, p).map(|h| h.contents) {
            Some(HoverContents::Markup(m)) => m.value,
            other => panic!("no markup hover: {other:?}"),
        }
    }

    #[test]
    fn hover_on_a_value_a_let_and_a_part() {
        let d = doc(STAGE);
        assert!(d.stage.is_some(), "{:?}", d.diagnostics);
        // 13.56MHz in SI with its prefix and unit (BIPM SI Brochure, table 7)
        assert!(hover_text(&d, at(&d, "13.56MHz", 0)).contains("13.56 MHz"));
        // 50Ω after a two-byte character: the hover still finds the literal
        let ohm = hover_text(&d, at(&d, "50Ω", 0));
        assert!(ohm.contains("50.00 Ohm"), "{ohm}");
        // the use of vcc in dc=vcc shows its evaluated value
        let v = hover_text(&d, at(&d, "vcc", 2));
        assert!(v.contains("12.00 V"), "{v}");
        let p = hover_text(&d, at(&d, "dq", 1));
        assert!(
            p.contains("junction.sat_current") && p.contains("1.000 fA"),
            "{p}"
        );
    }

    #[test]
    fn definition_of_a_parameter_part_and_element() {
        let d = doc(STAGE);
        let loc = definition(&d, at(&d, "vcc", 2)).expect("vcc");
        assert_eq!(loc.range.start, Position::new(1, 4));
        let loc = definition(&d, at(&d, "dq", 1)).expect("dq");
        assert_eq!(loc.range.start, Position::new(5, 5));
        let loc = definition(&d, at(&d, "rl", 1)).expect("rl");
        assert_eq!(loc.range.start, Position::new(4, 9));
    }

    fn labels(v: Vec<CompletionItem>) -> Vec<String> {
        v.into_iter().map(|i| i.label).collect()
    }

    #[test]
    fn completion_by_place() {
        let d = doc(&format!("{STAGE}analyze \nrequire \nvoltage v2 a gnd \n"));
        let line = |n| Position::new(n, 100);
        let n = d.text.lines().count() as u32;
        let kinds = labels(completion(&d, line(n - 3)));
        assert!(kinds.contains(&"steady".to_string()), "{kinds:?}");
        let figs = labels(completion(&d, line(n - 2)));
        assert!(figs.contains(&"pout".to_string()), "{figs:?}");
        let opts = labels(completion(&d, line(n - 1)));
        assert!(opts.contains(&"wave=".to_string()), "{opts:?}");
        let first = labels(completion(&d, Position::new(0, 0)));
        assert!(first.contains(&"resistor".to_string()) && first.contains(&"let".to_string()));
        // a part block's parameters
        let d = doc("part q npn { transport { \n");
        let p = labels(completion(&d, Position::new(0, 25)));
        assert!(p.contains(&"beta=".to_string()), "{p:?}");
        // a waveform's argument names, then units inside it
        let d = doc("voltage v1 a gnd wave=sine(\n");
        let w = labels(completion(&d, Position::new(0, 27)));
        assert!(
            w.contains(&"amp=".to_string()) && w.contains(&"freq=".to_string()),
            "{w:?}"
        );
        let d = doc("voltage v1 a gnd wave=sine(amp=5\n");
        let u = labels(completion(&d, Position::new(0, 32)));
        assert!(u.contains(&"V".to_string()), "{u:?}");
        // units after a number
        let d = doc("capacitor c1 a gnd 10\n");
        let u = labels(completion(&d, Position::new(0, 21)));
        assert!(u.contains(&"nF".to_string()) && u.contains(&"µH".to_string()));
    }

    #[test]
    fn symbols_of_the_file() {
        let d = doc(STAGE);
        let s = symbols(&d);
        let names: Vec<_> = s.iter().map(|x| x.name.as_str()).collect();
        assert_eq!(names, ["f0", "vcc", "vsup", "r1", "rl", "dq", "d1", "bias"]);
    }
}
