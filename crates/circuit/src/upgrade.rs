//! Rewrite a stage file from the retired spellings to the current ones.
//!
//! The rewrite is textual: the file is cut into tokens by the language's
//! own lexer, and only the retired words and calls are replaced, so
//! comments, alignment and everything else stay as written. What changes:
//!
//! * statement keywords `vsource`, `isource`, `temperature` → `voltage`,
//!   `current`, `ambient`;
//! * options `rs=` (sources) → `internal=`, `model=` (diode, bjt) → `part=`,
//!   `qfreq=` (inductor) → `q_at=`; `analyze op` → `analyze bias`,
//!   `start=op` → `start=bias`;
//! * waveforms `pulse(…)` → `square(base=…, top=…, …)`, `pwl(t v …)` →
//!   `table(t: v, …)`, positional `sine(…)` → named, sine `delay=` → `start=`;
//! * `model NAME KIND { flat list }` → `part NAME KIND { block { … } … }`
//!   through the declaration tables of [`crate::models`], writing out the
//!   value the old language assumed wherever the new one has no default or a
//!   different one, so the file describes the same circuit as before.
//!
//! Each file is upgraded on its own (an `include`d file is upgraded by
//! upgrading that file). A file that does not lex, or whose retired forms
//! cannot be read, is refused with its diagnostics; so is a result that does
//! not parse.

use crate::models::{self, Need, Param, BJT_PARAMS, DIODE_PARAMS};
use std::sync::Arc;
use tankwave_netlist::lexer::{self, TokKind, Token};
use tankwave_netlist::parser::value_at;
use tankwave_netlist::vocab::{self, Place};
use tankwave_netlist::{Diagnostic, SourceMap, Span};

/// A file the upgrade could not read: its diagnostics and the sources to draw them with.
#[derive(Debug, Clone, thiserror::Error)]
#[error("the file could not be upgraded ({} problem(s))", diagnostics.len())]
pub struct UpgradeError {
    /// What is wrong, with file, line and column.
    pub diagnostics: Vec<Diagnostic>,
    /// The text the diagnostics point into.
    pub sources: Arc<SourceMap>,
}

struct Walk<'a> {
    text: &'a str,
    toks: &'a [Token],
    map: &'a SourceMap,
    edits: Vec<(usize, usize, String)>,
    diags: Vec<Diagnostic>,
}

/// Upgrade the text of one stage file (`name` is used in messages). Returns
/// the rewritten text; a file already in the current spelling comes back unchanged.
pub fn upgrade(name: &str, text: &str) -> Result<String, UpgradeError> {
    let mut map = SourceMap::new();
    let file = map.add(name, text.to_string(), None);
    let mut diags = Vec::new();
    let toks = lexer::lex(text, file, &map, &mut diags);
    if diags.iter().any(|d| d.is_error()) {
        return Err(UpgradeError {
            diagnostics: diags,
            sources: Arc::new(map),
        });
    }
    let mut w = Walk {
        text,
        toks: &toks,
        map: &map,
        edits: Vec::new(),
        diags: Vec::new(),
    };
    let mut i = 0;
    while i < toks.len() {
        let end = (i..toks.len())
            .find(|&j| matches!(toks[j].kind, TokKind::Newline | TokKind::Eof))
            .unwrap_or(toks.len());
        if end > i {
            w.statement(i, end);
        }
        i = end + 1;
    }
    if !w.diags.is_empty() {
        return Err(UpgradeError {
            diagnostics: w.diags,
            sources: Arc::new(map),
        });
    }
    let mut edits = w.edits;
    edits.sort_by_key(|e| e.0);
    let mut out = String::with_capacity(text.len() + 256);
    let mut at = 0;
    // Where the rewritten text sits in the output.
    let mut rewritten: Vec<(usize, usize)> = Vec::new();
    for (a, b, s) in edits {
        if a < at {
            continue; // nested in an earlier edit (cannot happen for well-formed input)
        }
        out.push_str(&text[at..a]);
        rewritten.push((out.len(), out.len() + s.len()));
        out.push_str(&s);
        at = b;
    }
    out.push_str(&text[at..]);
    // What the upgrade wrote must read cleanly in the current language, and
    // no retired spelling may be left. (Other mistakes are the file's own and
    // are kept as they are; problems in included files are theirs.)
    let parsed = tankwave_netlist::parse_str(name, &out);
    let mine: Vec<Diagnostic> = parsed
        .diagnostics
        .iter()
        .filter(|d| d.is_error())
        .filter(|d| d.span.map(|s| s.file == 0).unwrap_or(false))
        .filter(|d| {
            d.code == "old-spelling"
                || d.span.is_some_and(|s| {
                    rewritten.iter().any(|&(a, b)| {
                        (s.start as usize) < b && (s.end as usize).max(s.start as usize + 1) > a
                    })
                })
        })
        .map(|d| {
            let mut d = d.clone();
            d.message = format!("after the upgrade: {}", d.message);
            d
        })
        .collect();
    if !mine.is_empty() {
        return Err(UpgradeError {
            diagnostics: mine,
            sources: parsed.sources.clone(),
        });
    }
    Ok(out)
}

/// Old pulse argument order and the new name of each.
const PULSE_ARGS: &[(&str, &str)] = &[
    ("low", "base"),
    ("high", "top"),
    ("delay", "start"),
    ("rise", "rise"),
    ("fall", "fall"),
    ("width", "hold"),
    ("period", "every"),
];
/// Old sine argument order and the new name of each.
const SINE_ARGS: &[(&str, &str)] = &[
    ("amp", "amp"),
    ("freq", "freq"),
    ("phase", "phase"),
    ("offset", "offset"),
    ("delay", "start"),
    ("rise", "rise"),
];

impl Walk<'_> {
    fn word(&self, i: usize) -> Option<&str> {
        match self.toks.get(i).map(|t| &t.kind) {
            Some(TokKind::Ident(s)) => Some(s.as_str()),
            _ => None,
        }
    }
    fn is(&self, i: usize, k: &TokKind) -> bool {
        self.toks.get(i).map(|t| &t.kind) == Some(k)
    }
    fn slice(&self, s: Span) -> &str {
        &self.text[s.start as usize..s.end as usize]
    }
    fn error(&mut self, at: Span, msg: impl Into<String>) {
        let d = self.map.error("old-spelling", at, msg);
        self.diags.push(d);
    }
    fn replace(&mut self, s: Span, with: impl Into<String>) {
        self.edits
            .push((s.start as usize, s.end as usize, with.into()));
    }

    fn statement(&mut self, i: usize, end: usize) {
        let Some(kw) = self.word(i).map(str::to_string) else {
            return;
        };
        let kind = match vocab::retired(&kw, Place::Statement) {
            Some(r) if r.old == "model" => {
                self.part(i, end);
                return;
            }
            Some(r) => {
                self.replace(self.toks[i].span, r.new);
                r.new.to_string()
            }
            None => kw,
        };
        if kind == "analyze" && self.word(i + 1) == Some("op") {
            self.replace(self.toks[i + 1].span, "bias");
        }
        // Options at bracket depth 0, and waveform calls anywhere at depth 0.
        let mut depth = 0usize;
        let mut j = i + 1;
        while j < end {
            match &self.toks[j].kind {
                TokKind::LParen | TokKind::LBrack | TokKind::LBrace => depth += 1,
                TokKind::RParen | TokKind::RBrack | TokKind::RBrace => {
                    depth = depth.saturating_sub(1)
                }
                TokKind::Ident(key) if depth == 0 && self.is(j + 1, &TokKind::Eq) => {
                    if let Some(r) = vocab::retired_option(key, &kind) {
                        self.replace(self.toks[j].span, r.new);
                    }
                    if key == "start" && kind == "analyze" && self.word(j + 2) == Some("op") {
                        self.replace(self.toks[j + 2].span, "bias");
                    }
                }
                TokKind::Ident(shape)
                    if depth == 0
                        && self.is(j + 1, &TokKind::LParen)
                        && matches!(shape.as_str(), "pulse" | "pwl" | "sine") =>
                {
                    let shape = shape.clone();
                    if let Some(next) = self.wave(j, &shape) {
                        j = next;
                        continue;
                    }
                    return;
                }
                _ => {}
            }
            j += 1;
        }
    }

    /// Rewrite the waveform call at `j`; the index after its `)`.
    fn wave(&mut self, j: usize, shape: &str) -> Option<usize> {
        let mut k = j + 2;
        let mut args: Vec<(Option<String>, Span)> = Vec::new();
        loop {
            if self.is(k, &TokKind::RParen) {
                break;
            }
            let name = match (self.word(k), self.is(k + 1, &TokKind::Eq)) {
                (Some(n), true) => {
                    k += 2;
                    Some(n.to_string())
                }
                _ => None,
            };
            let Some((span, next)) = value_at(self.toks, k, self.map) else {
                let at = self.toks.get(k).map(|t| t.span).unwrap_or_default();
                self.error(at, format!("cannot read this argument of {shape}(…)"));
                return None;
            };
            args.push((name, span));
            k = next;
            if self.is(k, &TokKind::Comma) {
                k += 1;
            }
        }
        let call = self.toks[j].span.to(self.toks[k].span);
        let text = match shape {
            "pwl" => {
                if args.iter().any(|(n, _)| n.is_some()) || !args.len().is_multiple_of(2) {
                    self.error(call, "pwl(…) needs plain time value pairs to be upgraded");
                    return None;
                }
                let pairs: Vec<String> = args
                    .chunks(2)
                    .map(|c| format!("{}: {}", self.slice(c[0].1), self.slice(c[1].1)))
                    .collect();
                format!("table({})", pairs.join(", "))
            }
            _ => {
                let order = if shape == "pulse" {
                    PULSE_ARGS
                } else {
                    SINE_ARGS
                };
                let needs = shape == "pulse"
                    || args
                        .iter()
                        .any(|(n, _)| n.is_none() || n.as_deref() == Some("delay"));
                if !needs {
                    return Some(k + 1);
                }
                let mut parts = Vec::new();
                for (pos, (n, sp)) in args.iter().enumerate() {
                    let new = match n {
                        Some(n) => order.iter().find(|(o, _)| o == n).map(|(_, x)| *x),
                        None => order.get(pos).map(|(_, x)| *x),
                    };
                    let Some(new) = new else {
                        let what = n.clone().unwrap_or_else(|| format!("argument {}", pos + 1));
                        self.error(*sp, format!("{shape}(…) has no {what}"));
                        return None;
                    };
                    parts.push(format!("{new}={}", self.slice(*sp)));
                }
                let new_shape = if shape == "pulse" { "square" } else { "sine" };
                format!("{new_shape}({})", parts.join(", "))
            }
        };
        self.replace(call, text);
        Some(k + 1)
    }

    /// Rewrite `model NAME KIND { name=value … }` (tokens `i..end`) as a part.
    fn part(&mut self, i: usize, end: usize) {
        let (Some(name), Some(kind)) = (self.word(i + 1), self.word(i + 2)) else {
            self.error(self.toks[i].span, "cannot read this model statement");
            return;
        };
        let (name, kind) = (name.to_string(), kind.to_string());
        if !self.is(i + 3, &TokKind::LBrace) {
            self.error(self.toks[i].span, "cannot read this model statement");
            return;
        }
        let mut k = i + 4;
        let mut given: Vec<(String, Span, String)> = Vec::new();
        loop {
            if k >= end {
                self.error(self.toks[i].span, "the model's '}' is missing");
                return;
            }
            if self.is(k, &TokKind::RBrace) {
                break;
            }
            if self.is(k, &TokKind::Comma) {
                k += 1;
                continue;
            }
            let (Some(key), true) = (self.word(k), self.is(k + 1, &TokKind::Eq)) else {
                self.error(self.toks[k].span, "expected name=value in the model");
                return;
            };
            let key_span = self.toks[k].span;
            let key = key.to_string();
            let Some((span, next)) = value_at(self.toks, k + 2, self.map) else {
                self.error(key_span, format!("cannot read the value of '{key}'"));
                return;
            };
            given.push((key, key_span, self.slice(span).to_string()));
            k = next;
        }
        let whole = self.toks[i].span.to(self.toks[k].span);
        let body_text =
            &self.text[self.toks[i + 3].span.end as usize..self.toks[k].span.start as usize];
        let comments: Vec<String> = body_text
            .lines()
            .filter_map(|l| l.find('#').map(|p| l[p..].trim_end().to_string()))
            .collect();
        let text = match kind.as_str() {
            "npn" | "pnp" => self.blocks(&name, &kind, BJT_PARAMS, &given, &comments),
            "diode" => self.blocks(&name, &kind, DIODE_PARAMS, &given, &comments),
            _ => {
                self.error(
                    self.toks[i + 2].span,
                    format!("unknown model kind '{kind}'"),
                );
                return;
            }
        };
        if let Some(t) = text {
            self.replace(whole, t);
        }
    }

    fn blocks<P>(
        &mut self,
        name: &str,
        kind: &str,
        table: &[Param<P>],
        given: &[(String, Span, String)],
        comments: &[String],
    ) -> Option<String> {
        let mut vals: Vec<Option<String>> = vec![None; table.len()];
        let mut ok = true;
        for (key, sp, v) in given {
            match table.iter().position(|p| p.old == key) {
                Some(ix) => vals[ix] = Some(v.clone()),
                None => {
                    self.error(*sp, format!("a {kind} model has no parameter '{key}'"));
                    ok = false;
                }
            }
        }
        if !ok {
            return None;
        }
        let present = |n: &str, vals: &[Option<String>]| {
            table
                .iter()
                .position(|p| p.name == n)
                .map(|ix| vals[ix].is_some())
                .unwrap_or(false)
        };
        let mut written = Vec::new();
        for (ix, p) in table.iter().enumerate() {
            if vals[ix].is_some() {
                continue;
            }
            let matters = p.with.is_empty() || p.with.iter().any(|w| present(w, &vals));
            let differs = match p.need {
                Need::Required | Need::WithOthers => true,
                Need::Cited(v, _) | Need::Off(v) => v != p.old_default,
            };
            if matters && differs {
                let v = literal(p.old_default, p.slot);
                written.push(format!("{}={v}", p.name));
                vals[ix] = Some(v);
            }
        }
        let blocks = models::blocks(table);
        let width = blocks.iter().map(|b| b.len()).max().unwrap_or(0);
        let mut s = format!("part {name} {kind} {{\n");
        for c in comments {
            s.push_str(&format!("  {c}\n"));
        }
        for b in &blocks {
            let items: Vec<String> = table
                .iter()
                .enumerate()
                .filter(|(ix, p)| p.block == *b && vals[*ix].is_some())
                .map(|(ix, p)| format!("{}={}", p.name, vals[ix].as_deref().unwrap_or("")))
                .collect();
            if items.is_empty() {
                continue;
            }
            let line = format!("  {b:<width$} {{ {} }}", items.join(" "));
            if line.chars().count() <= 88 {
                s.push_str(&line);
                s.push('\n');
            } else {
                s.push_str(&format!("  {b} {{\n"));
                let mut cur = String::from("   ");
                for it in items {
                    if cur.len() > 3 && cur.len() + 1 + it.len() > 80 {
                        s.push_str(&cur);
                        s.push('\n');
                        cur = String::from("   ");
                    }
                    cur.push(' ');
                    cur.push_str(&it);
                }
                s.push_str(&cur);
                s.push_str("\n  }\n");
            }
        }
        if !written.is_empty() {
            s.push_str(&format!(
                "  # written out by the upgrade (the old defaults): {}\n",
                written.join(" ")
            ));
        }
        s.push('}');
        Some(s)
    }
}

/// A value as a stage-file literal in its slot's unit.
fn literal(v: f64, slot: tankwave_netlist::Slot) -> String {
    use tankwave_netlist::Slot;
    let num = |x: f64| {
        let a = x.abs();
        if x == 0.0 || (1e-3..1e6).contains(&a) {
            let s = format!("{:.6}", x);
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            format!("{x:e}")
        }
    };
    match slot {
        Slot::Temperature => format!("{}degC", num(v - 273.15)),
        Slot::Current => format!("{}A", num(v)),
        Slot::Voltage => format!("{}V", num(v)),
        Slot::Capacitance => format!("{}F", num(v)),
        Slot::Resistance => format!("{}Ohm", num(v)),
        Slot::Time => format!("{}s", num(v)),
        Slot::Power => format!("{}W", num(v)),
        _ => num(v),
    }
}
