//! Elaboration: from a parsed stage file to a checked [`Circuit`].
//!
//! Parameters are evaluated lazily in dependency order (a cycle is reported
//! with its path), overrides are applied, nodes are numbered in order of first
//! appearance (`gnd` is ground), models are bound by kind, every value is
//! checked against its unit slot and its allowed range, and the topology is
//! checked (see the `topology` module). Every problem is collected; nothing is
//! returned as a circuit if any error was found.
//!
//! Parse once with [`tankwave_netlist::parse_file`], then call [`elaborate`]
//! once per variant with different [`Overrides`].

use crate::builtin::builtin_names;
use crate::ir::*;
use crate::models::{self, Need, Param, Range, BJT_PARAMS, DIODE_PARAMS};
use crate::topology;
use std::collections::HashMap;
use std::path::Path;
use std::sync::Arc;
use tankwave_netlist::ast::*;
use tankwave_netlist::expr::{self, EvalError};
use tankwave_netlist::suggest::did_you_mean;
use tankwave_netlist::vocab::{self, Place};
use tankwave_netlist::{Diagnostic, Parsed, Severity, Slot, SourceMap, Span};

/// A successfully elaborated stage.
#[derive(Debug, Clone)]
pub struct Elaborated {
    /// The checked circuit.
    pub circuit: Circuit,
    /// Warnings (e.g. a node touched by only one element).
    pub warnings: Vec<Diagnostic>,
}

/// A stage file that could not be loaded: every diagnostic, and the sources to render them with.
#[derive(Debug, Clone, thiserror::Error)]
#[error("{} error(s) in the stage file", diagnostics.iter().filter(|d| d.is_error()).count())]
pub struct LoadError {
    /// Every diagnostic (errors and warnings), in file order.
    pub diagnostics: Vec<Diagnostic>,
    /// The files read.
    pub sources: Arc<SourceMap>,
}

/// Parse and elaborate a stage file from disk.
pub fn load_file(path: impl AsRef<Path>, overrides: &Overrides) -> Result<Elaborated, LoadError> {
    let parsed = tankwave_netlist::parse_file(path);
    elaborate(&parsed, overrides).map_err(|diagnostics| LoadError {
        diagnostics,
        sources: parsed.sources.clone(),
    })
}

/// Parse and elaborate stage text given in memory (`name` is used in messages and for includes).
pub fn load_str(name: &str, text: &str, overrides: &Overrides) -> Result<Elaborated, LoadError> {
    let parsed = tankwave_netlist::parse_str(name, text);
    elaborate(&parsed, overrides).map_err(|diagnostics| LoadError {
        diagnostics,
        sources: parsed.sources.clone(),
    })
}

/// Elaborate a parsed file with `overrides` applied. On failure, returns every
/// diagnostic (parse and elaboration, errors and warnings) in file order.
pub fn elaborate(parsed: &Parsed, overrides: &Overrides) -> Result<Elaborated, Vec<Diagnostic>> {
    let mut cx = Cx::new(parsed, overrides);
    cx.diags.extend(parsed.diagnostics.iter().cloned());
    let mut circuit = cx.run();
    circuit.param_units = crate::param_units::collect(parsed);
    cx.diags
        .extend(crate::bounds::unused_tolerances(parsed, &circuit));
    cx.diags.extend(crate::bounds::override_units(
        &circuit.param_units,
        overrides,
    ));
    let mut diags = cx.diags;
    diags.sort_by_key(|d| d.span.map(|s| (s.file, s.start)).unwrap_or((0, 0)));
    if diags.iter().any(|d| d.is_error()) {
        Err(diags)
    } else {
        Ok(Elaborated {
            circuit,
            warnings: diags,
        })
    }
}

#[derive(Clone, Copy)]
enum PState {
    InProgress,
    Done(f64),
    Failed,
}

/// Per-element facts gathered in the first pass.
struct ElemInfo<'a> {
    kind: ElemKeyword,
    stmt: &'a ElementStmt,
}

pub(crate) struct Cx<'a> {
    pub(crate) map: &'a SourceMap,
    parsed: &'a Parsed,
    ov: &'a Overrides,
    pub(crate) diags: Vec<Diagnostic>,
    lets: HashMap<&'a str, (&'a Ident, &'a Expr)>,
    pstate: HashMap<&'a str, PState>,
    pstack: Vec<&'a str>,
    pcarrier: Option<f64>,
    elems: Vec<ElemInfo<'a>>,
    elem_ids: HashMap<&'a str, ElementId>,
    models: HashMap<&'a str, ModelId>,
    nodes: HashMap<String, usize>,
    node_names: Vec<String>,
    pub(crate) elem_spans: Vec<Span>,
}

impl<'a> Cx<'a> {
    fn new(parsed: &'a Parsed, ov: &'a Overrides) -> Cx<'a> {
        Cx {
            map: &parsed.sources,
            parsed,
            ov,
            diags: Vec::new(),
            lets: HashMap::new(),
            pstate: HashMap::new(),
            pstack: Vec::new(),
            pcarrier: None,
            elems: Vec::new(),
            elem_ids: HashMap::new(),
            models: HashMap::new(),
            nodes: HashMap::new(),
            node_names: Vec::new(),
            elem_spans: Vec::new(),
        }
    }

    pub(crate) fn error(
        &mut self,
        code: &'static str,
        span: Span,
        msg: impl Into<String>,
    ) -> &mut Diagnostic {
        let d = self.map.error(code, span, msg);
        self.diags.push(d);
        let n = self.diags.len() - 1;
        &mut self.diags[n]
    }

    pub(crate) fn warning(&mut self, code: &'static str, span: Span, msg: impl Into<String>) {
        let d = self.map.warning(code, span, msg);
        self.diags.push(d);
    }

    fn origin(&self, span: Span) -> Origin {
        let (line, column) = self.map.line_col(span.file, span.start);
        Origin {
            file: self
                .map
                .file(span.file)
                .map(|f| f.name.clone())
                .unwrap_or_default(),
            line,
            column,
        }
    }

    /// True if a statement declaring `name` with one of `keywords` failed to
    /// parse (it was reported; uses of the name are not reported again).
    fn is_broken(&self, keywords: &[&str], name: &str) -> bool {
        self.parsed
            .broken
            .iter()
            .any(|(k, n)| n == name && keywords.contains(&k.as_str()))
    }

    fn has_errors(&self) -> bool {
        self.diags.iter().any(|d| d.is_error())
    }

    // ---------------------------------------------------------------- values

    /// Resolve a parameter name (lazily evaluating its `let`).
    fn param(&mut self, name: &str) -> Result<Option<f64>, EvalError> {
        let Some(&(ident, e)) = self.lets.get(name) else {
            if name == "pcarrier" {
                return Ok(self.pcarrier);
            }
            return Ok(None);
        };
        let key: &'a str = ident.name.as_str();
        if let Some(v) = self.ov.params.get(name) {
            return Ok(Some(*v));
        }
        match self.pstate.get(key).copied() {
            Some(PState::Done(v)) => return Ok(Some(v)),
            Some(PState::Failed) => return Err(EvalError::Reported),
            Some(PState::InProgress) => {
                let pos = self.pstack.iter().position(|n| *n == key).unwrap_or(0);
                let cycle: Vec<&str> = self.pstack[pos..]
                    .iter()
                    .copied()
                    .chain(std::iter::once(key))
                    .collect();
                let members: Vec<&'a str> = self.pstack[pos..].to_vec();
                for m in &members {
                    self.pstate.insert(m, PState::Failed);
                }
                let span = ident.span;
                self.error(
                    "param-cycle",
                    span,
                    format!("parameter cycle: {}", cycle.join(" -> ")),
                )
                .help =
                    Some("define one of these parameters without referring to the others".into());
                return Err(EvalError::Reported);
            }
            None => {}
        }
        self.pstate.insert(key, PState::InProgress);
        self.pstack.push(key);
        let saved = self.pcarrier.take();
        let r = self.eval(e);
        self.pcarrier = saved;
        self.pstack.pop();
        match r {
            Ok(v) => {
                if !matches!(self.pstate.get(key), Some(PState::Failed)) {
                    self.pstate.insert(key, PState::Done(v));
                }
                Ok(Some(v))
            }
            Err(err) => {
                self.pstate.insert(key, PState::Failed);
                self.report_eval(err);
                Err(EvalError::Reported)
            }
        }
    }

    fn eval(&mut self, e: &Expr) -> Result<f64, EvalError> {
        expr::eval(e, &mut |n, _| self.param(n))
    }

    fn report_eval(&mut self, err: EvalError) {
        match err {
            EvalError::Reported => {}
            EvalError::Unknown { name, .. } if self.is_broken(&["let"], &name) => {}
            EvalError::Unknown { name, span } => {
                let mut cands: Vec<&str> = self.lets.keys().copied().collect();
                cands.push("pi");
                let help = if name == "pcarrier" {
                    Some(
                        "pcarrier (the carrier power) is only defined inside mask rules"
                            .to_string(),
                    )
                } else {
                    did_you_mean(&name, cands.iter())
                };
                let d = self
                    .map
                    .error(
                        "unknown-name",
                        span,
                        format!("'{name}' is not a defined parameter"),
                    )
                    .with_help_opt(help);
                self.diags.push(d);
            }
            EvalError::DivZero { .. } | EvalError::NotFinite { .. } => {
                let span = err.span().unwrap_or_default();
                self.error("eval-error", span, err.to_string());
            }
        }
    }

    /// Evaluate a value in a slot: check a bare literal's unit, convert to SI.
    fn value(&mut self, e: &Expr, slot: Slot, what: &str) -> Option<f64> {
        // A bare parameter name whose `let` is a literal with a unit: check that unit too.
        if let Some(n) = e.as_name() {
            let written = self
                .lets
                .get(n)
                .and_then(|(id, le)| match le.literal_unit() {
                    Some(Some(u)) => Some((u, id.span)),
                    _ => None,
                });
            if let Some((u, at)) = written {
                if slot != Slot::Any && !slot.accepts(u) && !self.ov.params.contains_key(n) {
                    let line = self.map.line_col(at.file, at.start).0;
                    self.error(
                        "unit-mismatch",
                        e.span,
                        format!(
                            "{what} needs {}, but parameter '{n}' is in {u}",
                            slot.describe()
                        ),
                    )
                    .help = Some(format!("'{n}' is defined at line {line}"));
                    return None;
                }
            }
        }
        if let Some(unit) = e.literal_unit() {
            match unit {
                Some(u) if !slot.accepts(u) => {
                    self.error(
                        "unit-mismatch",
                        e.span,
                        format!("{what} needs {}, got {u}", slot.describe()),
                    );
                    return None;
                }
                None if slot.needs_unit() => {
                    self.error(
                        "unit-mismatch",
                        e.span,
                        format!("{what} needs {}, got a plain number", slot.describe()),
                    )
                    .help = Some("write e.g. 25degC or 298.15K".into());
                    return None;
                }
                _ => {}
            }
        }
        match self.eval(e) {
            Ok(v) => Some(v),
            Err(err) => {
                self.report_eval(err);
                None
            }
        }
    }

    fn value_in(&mut self, e: &Expr, slot: Slot, what: &str, range: Range) -> Option<f64> {
        let v = self.value(e, slot, what)?;
        self.check_range(v, e.span, what, range)
    }

    fn check_range(&mut self, v: f64, span: Span, what: &str, range: Range) -> Option<f64> {
        let bad = match range {
            Range::Any => None,
            Range::Positive if v <= 0.0 => Some("must be > 0"),
            Range::NonNegative if v < 0.0 => Some("must be >= 0"),
            Range::UnitInterval if !(0.0..1.0).contains(&v) => Some("must be >= 0 and < 1"),
            _ => None,
        };
        match bad {
            Some(b) => {
                self.error("bad-value", span, format!("{what} {b}, got {}", fmt_num(v)));
                None
            }
            None => Some(v),
        }
    }

    fn integer(&mut self, e: &Expr, what: &str, min: u64) -> Option<u64> {
        let v = self.value(e, Slot::Number, what)?;
        if v.fract() != 0.0 || v < min as f64 || v > 1e12 {
            self.error(
                "bad-value",
                e.span,
                format!("{what} must be a whole number >= {min}, got {}", fmt_num(v)),
            );
            return None;
        }
        Some(v as u64)
    }

    fn word(&mut self, e: &Expr, allowed: &[&str], what: &str) -> Option<&'static str> {
        let Some(n) = e.as_name() else {
            self.error(
                "syntax",
                e.span,
                format!("{what} must be one of: {}", allowed.join(", ")),
            );
            return None;
        };
        match allowed.iter().find(|a| **a == n) {
            Some(_) => {
                // Map to a 'static spelling by searching known words.
                Some(intern(n))
            }
            None => {
                if let Some(r) = vocab::retired(n, Place::Word) {
                    if allowed.contains(&r.new) {
                        self.error("old-spelling", e.span, vocab::retired_message(r));
                        return None;
                    }
                }
                let help = did_you_mean(n, allowed.iter());
                self.error(
                    "unknown-keyword",
                    e.span,
                    format!("{what} must be one of: {}, got '{n}'", allowed.join(", ")),
                )
                .help = help;
                None
            }
        }
    }

    /// Options by key, checking unknown and duplicate keys.
    fn opts(
        &mut self,
        options: &'a [Opt],
        allowed: &[&str],
        ctx: &str,
    ) -> HashMap<&'a str, &'a Opt> {
        let mut m: HashMap<&'a str, &'a Opt> = HashMap::new();
        let stmt_kind = ctx.split_whitespace().next().unwrap_or("");
        for o in options {
            let k = o.key.name.as_str();
            if !allowed.contains(&k) {
                if let Some(r) = vocab::retired_option(k, stmt_kind) {
                    self.error("old-spelling", o.key.span, vocab::retired_message(r));
                    continue;
                }
                let help = if allowed.is_empty() {
                    Some(format!("{ctx} takes no options"))
                } else {
                    did_you_mean(k, allowed.iter())
                        .or_else(|| Some(format!("{ctx} takes: {}", allowed.join(", "))))
                };
                self.error(
                    "unknown-option",
                    o.key.span,
                    format!("{ctx} has no option '{k}'"),
                )
                .help = help;
                continue;
            }
            if m.insert(k, o).is_some() {
                self.error(
                    "duplicate-option",
                    o.key.span,
                    format!("option '{k}' given twice"),
                );
            }
        }
        m
    }

    fn opt_expr(&mut self, o: &'a Opt) -> Option<&'a Expr> {
        match &o.value {
            OptValue::Expr(e) => Some(e),
            OptValue::Wave(w) => {
                self.error(
                    "syntax",
                    w.span,
                    format!("option '{}' takes a value, not a wave shape", o.key.name),
                );
                None
            }
        }
    }

    fn opt_value(
        &mut self,
        m: &HashMap<&'a str, &'a Opt>,
        key: &str,
        slot: Slot,
        what: &str,
        range: Range,
    ) -> Option<Option<f64>> {
        match m.get(key) {
            None => Some(None),
            Some(o) => {
                let e = self.opt_expr(o)?;
                self.value_in(e, slot, what, range).map(Some)
            }
        }
    }

    fn node(&mut self, name: &str) -> NodeId {
        if name == "gnd" {
            return None;
        }
        if let Some(i) = self.nodes.get(name) {
            return Some(*i);
        }
        let i = self.node_names.len();
        self.node_names.push(name.to_string());
        self.nodes.insert(name.to_string(), i);
        Some(i)
    }

    fn element_ref(&mut self, id: &Ident, ctx: &str) -> Option<ElementId> {
        match self.elem_ids.get(id.name.as_str()) {
            Some(i) => Some(*i),
            None if self.is_broken(ELEMENT_KEYWORDS, &id.name) => None,
            None => {
                let help = did_you_mean(&id.name, self.elem_ids.keys());
                self.error(
                    "unknown-element",
                    id.span,
                    format!("{ctx}: '{}' is not an element", id.name),
                )
                .help = help;
                None
            }
        }
    }

    fn elem_kind(&self, id: ElementId) -> Option<ElemKeyword> {
        self.elems.get(id).map(|e| e.kind)
    }

    // ---------------------------------------------------------------- driver

    fn run(&mut self) -> Circuit {
        let stmts: &'a [Statement] = &self.parsed.statements;
        let mut c = Circuit {
            temperature_k: 298.15,
            ..Default::default()
        };

        // Pass 1: names of parameters, elements, models.
        for s in stmts {
            match &s.stmt {
                Stmt::Let { name, value } => {
                    if let Some((prev, _)) = self.lets.get(name.name.as_str()) {
                        let line = self.map.line_col(prev.span.file, prev.span.start).0;
                        self.error(
                            "duplicate-name",
                            name.span,
                            format!("parameter '{}' is already defined (line {line})", name.name),
                        );
                    } else if name.name == "pi" || name.name == "pcarrier" {
                        self.error(
                            "duplicate-name",
                            name.span,
                            format!("'{}' is built in and cannot be redefined", name.name),
                        );
                    } else {
                        self.lets.insert(name.name.as_str(), (name, value));
                    }
                }
                Stmt::Element(e) => {
                    let id = self.elems.len();
                    if let Some(prev) = self.elem_ids.get(e.name.name.as_str()) {
                        let sp = self.elems[*prev].stmt.name.span;
                        let line = self.map.line_col(sp.file, sp.start).0;
                        self.error(
                            "duplicate-name",
                            e.name.span,
                            format!("element '{}' is already defined (line {line})", e.name.name),
                        );
                    } else {
                        self.elem_ids.insert(e.name.name.as_str(), id);
                    }
                    self.elems.push(ElemInfo {
                        kind: e.kind,
                        stmt: e,
                    });
                }
                Stmt::Part(m) => {
                    if self.models.contains_key(m.name.name.as_str()) {
                        self.error(
                            "duplicate-name",
                            m.name.span,
                            format!("part '{}' is already defined", m.name.name),
                        );
                    } else {
                        let id = self.models.len();
                        self.models.insert(m.name.name.as_str(), id);
                    }
                }
                _ => {}
            }
        }
        // Overrides must name things that exist.
        for k in self.ov.params.keys() {
            if !self.lets.contains_key(k.as_str()) {
                let help = did_you_mean(k, self.lets.keys());
                self.diags.push(
                    Diagnostic::global(
                        "bad-override",
                        Severity::Error,
                        format!("override of '{k}': no such parameter"),
                    )
                    .with_help_opt(help),
                );
            }
        }
        for (k, v) in self.ov.params.iter() {
            if !v.is_finite() {
                self.diags.push(Diagnostic::global(
                    "bad-override",
                    Severity::Error,
                    format!("override of '{k}' is not a finite number"),
                ));
            }
        }
        for k in self
            .ov
            .element_values
            .keys()
            .chain(self.ov.element_factors.keys())
        {
            if !self.elem_ids.contains_key(k.as_str()) {
                let help = did_you_mean(k, self.elem_ids.keys());
                self.diags.push(
                    Diagnostic::global(
                        "bad-override",
                        Severity::Error,
                        format!("override of element '{k}': no such element"),
                    )
                    .with_help_opt(help),
                );
            }
        }

        // Evaluate every parameter (reports cycles and bad expressions even if unused).
        // In dependency order, so that no evaluation recurses through a chain.
        let plan =
            crate::bounds::param_order(&self.lets, |n| self.ov.params.contains_key(n), self.map);
        self.diags.extend(plan.diags);
        for n in &plan.failed {
            self.pstate.insert(n, PState::Failed);
        }
        for n in &plan.order {
            if let Ok(Some(v)) = self.param(n) {
                c.params.insert(n.to_string(), v);
            }
        }

        // Parts.
        for s in stmts {
            if let Stmt::Part(m) = &s.stmt {
                if let Some(model) = self.part(m) {
                    c.models.push(model);
                }
            }
        }
        let model_kinds: Vec<ModelKind> = c.models.iter().map(|m| m.kind()).collect();
        let model_ok = c.models.len() == self.models.len();

        // Singletons, analyses (needed for inductor q= defaults).
        let mut analysis_spans: Vec<Span> = Vec::new();
        let mut seen: HashMap<&str, Span> = HashMap::new();
        for s in stmts {
            let single = matches!(
                s.stmt,
                Stmt::Title(_)
                    | Stmt::Ambient(_)
                    | Stmt::Output(_)
                    | Stmt::Input(_)
                    | Stmt::MonteCarlo(_)
            );
            if single {
                if let Some(prev) = seen.get(s.keyword.name.as_str()) {
                    let line = self.map.line_col(prev.file, prev.start).0;
                    self.error(
                        "duplicate-statement",
                        s.keyword.span,
                        format!(
                            "'{}' may appear only once (first at line {line})",
                            s.keyword.name
                        ),
                    );
                    continue;
                }
                seen.insert(s.keyword.name.as_str(), s.keyword.span);
            }
            match &s.stmt {
                Stmt::Title(t) => c.title = Some(t.clone()),
                Stmt::Ambient(e) => {
                    if let Some(v) = self.value(e, Slot::Temperature, "ambient temperature") {
                        if let Some(v) = self.check_range(
                            v,
                            e.span,
                            "ambient temperature (in kelvin)",
                            Range::Positive,
                        ) {
                            c.temperature_k = v;
                        }
                    }
                }
                Stmt::Analyze { kind, options } => {
                    if let Some(a) = self.analysis(kind, options) {
                        let too_large = crate::bounds::analysis(self.map, kind, options, &a);
                        if too_large.is_empty() {
                            c.analyses.push(a);
                            analysis_spans.push(kind.span);
                        }
                        self.diags.extend(too_large);
                    }
                }
                _ => {}
            }
        }
        let steady_freq = c.analyses.iter().find_map(|a| match a {
            Analysis::Steady { freq, .. } => Some(*freq),
            _ => None,
        });

        // Elements.
        let elems: Vec<&'a ElementStmt> = self.elems.iter().map(|e| e.stmt).collect();
        let mut all_elems_ok = true;
        for (id, e) in elems.iter().enumerate() {
            self.elem_spans.push(e.name.span);
            match self.element(e, &c.models, &model_kinds, model_ok, steady_freq) {
                Some(kind) => c.elements.push(Element {
                    name: e.name.name.clone(),
                    kind,
                    origin: self.origin(e.name.span),
                }),
                None => {
                    all_elems_ok = false;
                    // Keep ids aligned with pass 1.
                    c.elements.push(Element {
                        name: e.name.name.clone(),
                        kind: ElementKind::Resistor {
                            a: None,
                            b: None,
                            r: 1.0,
                            rating_w: None,
                        },
                        origin: self.origin(e.name.span),
                    });
                }
            }
            debug_assert_eq!(c.elements.len(), id + 1);
        }
        c.nodes = std::mem::take(&mut self.node_names);
        let too_large = crate::bounds::size(self.map, &c, &self.elem_spans, &analysis_spans);
        self.diags.extend(too_large);

        // Output, input.
        for s in stmts {
            match &s.stmt {
                Stmt::Output(id) => {
                    if let Some(e) = self.element_ref(id, "output") {
                        if matches!(
                            self.elem_kind(e),
                            Some(ElemKeyword::Coupling | ElemKeyword::Bjt)
                        ) {
                            self.error(
                                "element-kind",
                                id.span,
                                format!(
                                    "output must be a two-terminal element, '{}' is a {}",
                                    id.name,
                                    self.elem_kind(e).map(|k| k.keyword()).unwrap_or("?")
                                ),
                            );
                        } else {
                            c.output = Some(e);
                        }
                    }
                }
                Stmt::Input(id) => {
                    if let Some(e) = self.element_ref(id, "input") {
                        if !matches!(
                            self.elem_kind(e),
                            Some(ElemKeyword::Voltage | ElemKeyword::Current)
                        ) {
                            self.error(
                                "element-kind",
                                id.span,
                                format!(
                                    "input must be a voltage or current source, '{}' is a {}",
                                    id.name,
                                    self.elem_kind(e).map(|k| k.keyword()).unwrap_or("?")
                                ),
                            );
                        } else {
                            c.input = Some(e);
                        }
                    }
                }
                _ => {}
            }
        }

        // Masks first (requirements may name a mask defined later).
        let mut mask_ids: HashMap<&'a str, usize> = HashMap::new();
        for s in stmts {
            if let Stmt::Mask(m) = &s.stmt {
                if mask_ids.contains_key(m.name.name.as_str()) {
                    self.error(
                        "duplicate-name",
                        m.name.span,
                        format!("mask '{}' is already defined", m.name.name),
                    );
                    continue;
                }
                mask_ids.insert(m.name.name.as_str(), c.masks.len());
                let rules = m.rules.iter().filter_map(|r| self.rule(r)).collect();
                c.masks.push(Mask {
                    name: m.name.name.clone(),
                    rules,
                    origin: self.origin(m.name.span),
                });
            }
        }

        // Requirements and studies.
        for s in stmts {
            match &s.stmt {
                Stmt::Require(r) => {
                    if let Some(req) = self.requirement(r, s.span, &mask_ids) {
                        c.requirements.push(req);
                    }
                }
                Stmt::Vary { target, sweep } => {
                    if let Some(v) = self.vary(target, sweep, s.span) {
                        c.study.vary.push(v);
                    }
                }
                Stmt::Tolerance {
                    element,
                    value,
                    distribution,
                } => {
                    let id = self.element_ref(element, "tolerance");
                    let f = self.value(value, Slot::Fraction, "tolerance");
                    let f = f.and_then(|f| {
                        if f > 0.0 && f < 1.0 {
                            Some(f)
                        } else {
                            self.error(
                                "bad-value",
                                value.span,
                                format!(
                                    "a tolerance must be between 0 and 100%, got {}%",
                                    fmt_num(f * 100.0)
                                ),
                            );
                            None
                        }
                    });
                    let dist = match distribution {
                        None => Some(Distribution::Uniform),
                        Some(d) => {
                            match d.name.as_str() {
                                "uniform" => Some(Distribution::Uniform),
                                "gaussian" => Some(Distribution::Gaussian),
                                other => {
                                    let help = did_you_mean(
                                        other,
                                        vocab::option_words("tolerance", "distribution").iter(),
                                    );
                                    self.error("unknown-keyword", d.span, format!("distribution must be uniform or gaussian, got '{other}'")).help = help;
                                    None
                                }
                            }
                        }
                    };
                    if let (Some(element), Some(fraction), Some(distribution)) = (id, f, dist) {
                        c.study.tolerances.push(Tolerance {
                            element,
                            fraction,
                            distribution,
                        });
                    }
                }
                Stmt::MonteCarlo(opts) => {
                    let m = self.opts(opts, vocab::MONTECARLO_OPTIONS, "montecarlo");
                    let runs = match m.get("runs") {
                        Some(o) => self.opt_expr(o).and_then(|e| self.integer(e, "runs", 1)),
                        None => {
                            self.error("missing-option", s.keyword.span, "montecarlo needs runs=N");
                            None
                        }
                    };
                    let seed = match m.get("seed") {
                        Some(o) => self.opt_expr(o).and_then(|e| self.integer(e, "seed", 0)),
                        None => Some(1),
                    };
                    if let (Some(runs), Some(seed)) = (runs, seed) {
                        c.study.montecarlo = Some(MonteCarlo {
                            runs: runs as usize,
                            seed,
                        });
                    }
                }
                Stmt::Tune { param, from, to } => {
                    if !self.lets.contains_key(param.name.as_str()) {
                        let help = did_you_mean(&param.name, self.lets.keys());
                        self.error(
                            "unknown-name",
                            param.span,
                            format!(
                                "tune: '{}' is not a parameter (define it with let)",
                                param.name
                            ),
                        )
                        .help = help;
                        continue;
                    }
                    let a = self.value(from, Slot::Any, "tune range");
                    let b = self.value(to, Slot::Any, "tune range");
                    if let (Some(a), Some(b)) = (a, b) {
                        if a >= b {
                            self.error(
                                "bad-value",
                                from.span,
                                format!(
                                    "tune range must go upward, got {} to {}",
                                    fmt_num(a),
                                    fmt_num(b)
                                ),
                            );
                        } else {
                            c.study.tune.push(Tune {
                                param: param.name.clone(),
                                from: a,
                                to: b,
                            });
                        }
                    }
                }
                _ => {}
            }
        }

        if all_elems_ok && !self.has_errors() {
            topology::check(self, &c);
        }
        c
    }

    // ---------------------------------------------------------------- parts

    fn part(&mut self, m: &'a PartStmt) -> Option<Model> {
        let kind = match m.kind.name.as_str() {
            "npn" => ModelKind::Npn,
            "pnp" => ModelKind::Pnp,
            "diode" => ModelKind::Diode,
            other => {
                let help = did_you_mean(other, vocab::PART_KINDS.iter());
                self.error(
                    "unknown-keyword",
                    m.kind.span,
                    format!(
                        "part kind must be {}, got '{other}'",
                        vocab::PART_KINDS.join(", ")
                    ),
                )
                .help = help;
                return None;
            }
        };
        let params = if kind == ModelKind::Diode {
            let mut dp = DiodeParams::default();
            self.part_values(m, DIODE_PARAMS, &mut dp)?;
            ModelParams::Diode(dp)
        } else {
            let mut bp = BjtParams {
                pnp: kind == ModelKind::Pnp,
                ..Default::default()
            };
            self.part_values(m, BJT_PARAMS, &mut bp)?;
            ModelParams::Bjt(bp)
        };
        Some(Model {
            name: m.name.name.clone(),
            params,
            origin: self.origin(m.name.span),
        })
    }

    /// Read a part's blocks into `out` through the declaration `table`:
    /// unknown, misplaced, retired and duplicate names, ranges, required
    /// parameters and defaults.
    fn part_values<P>(&mut self, m: &'a PartStmt, table: &[Param<P>], out: &mut P) -> Option<()> {
        let kind = m.kind.name.as_str();
        let block_names = models::blocks(table);
        let mut ok = true;
        let mut given: Vec<&'static str> = Vec::new();
        let mut values: Vec<(usize, f64)> = Vec::new();
        for (k, _) in &m.loose {
            let (msg, help) = match table
                .iter()
                .find(|p| p.name == k.name || p.old == k.name)
            {
                Some(p) if p.name == k.name => (
                    format!("'{}' goes in the {} block", k.name, p.block),
                    format!("write {} {{ {}=… }}", p.block, p.name),
                ),
                Some(p) => (
                    format!(
                        "'{}' is now '{}' in the {} block; run `tankwave upgrade FILE` to rewrite a file",
                        k.name, p.name, p.block
                    ),
                    format!("write {} {{ {}=… }}", p.block, p.name),
                ),
                None => (
                    format!("{kind} part has no parameter '{}'", k.name),
                    format!("blocks: {}", block_names.join(", ")),
                ),
            };
            self.error("unknown-part-param", k.span, msg).help = Some(help);
            ok = false;
        }
        for b in &m.blocks {
            if !block_names.contains(&b.name.name.as_str()) {
                let help = did_you_mean(&b.name.name, block_names.iter())
                    .or_else(|| Some(format!("blocks: {}", block_names.join(", "))));
                self.error(
                    "unknown-part-param",
                    b.name.span,
                    format!("{kind} part has no block '{}'", b.name.name),
                )
                .help = help;
                ok = false;
                continue;
            }
            for (k, e) in &b.params {
                let Some(i) = table
                    .iter()
                    .position(|p| p.block == b.name.name && p.name == k.name)
                else {
                    let elsewhere = table.iter().find(|p| p.name == k.name);
                    let retired = table.iter().find(|p| p.old == k.name);
                    let (msg, help) = match (elsewhere, retired) {
                        (Some(p), _) => (
                            format!("'{}' belongs in the {} block, not {}", k.name, p.block, b.name.name),
                            Some(format!("write {} {{ {}=… }}", p.block, p.name)),
                        ),
                        (None, Some(p)) => (
                            format!(
                                "'{}' is now '{}' in the {} block; run `tankwave upgrade FILE` to rewrite a file",
                                k.name, p.name, p.block
                            ),
                            None,
                        ),
                        (None, None) => {
                            let here: Vec<&str> = table
                                .iter()
                                .filter(|p| p.block == b.name.name)
                                .map(|p| p.name)
                                .collect();
                            (
                                format!("the {} block has no parameter '{}'", b.name.name, k.name),
                                did_you_mean(&k.name, here.iter())
                                    .or_else(|| Some(format!("{}: {}", b.name.name, here.join(", ")))),
                            )
                        }
                    };
                    self.error("unknown-part-param", k.span, msg).help = help;
                    ok = false;
                    continue;
                };
                let p = &table[i];
                if given.contains(&p.name) {
                    self.error(
                        "duplicate-option",
                        k.span,
                        format!("part parameter '{}' given twice", p.name),
                    );
                    ok = false;
                    continue;
                }
                given.push(p.name);
                match self.value_in(e, p.slot, &format!("part parameter {}", p.name), p.range) {
                    Some(v) => values.push((i, v)),
                    None => ok = false,
                }
            }
        }
        for p in table {
            if given.contains(&p.name) {
                continue;
            }
            match p.need {
                Need::Required => {
                    self.error(
                        "missing-part-param",
                        m.name.span,
                        format!(
                            "part '{}' needs {} {{ {}=… }} ({} {}, which has no default)",
                            m.name.name, p.block, p.name, p.symbol, p.meaning
                        ),
                    );
                    ok = false;
                }
                Need::WithOthers => {
                    if let Some(w) = p.with.iter().find(|w| given.contains(w)) {
                        self.error(
                            "missing-part-param",
                            m.name.span,
                            format!(
                                "part '{}' gives {w}, so it needs {} {{ {}=… }} ({} {})",
                                m.name.name, p.block, p.name, p.symbol, p.meaning
                            ),
                        );
                        ok = false;
                    }
                }
                Need::Cited(v, _) | Need::Off(v) => *(p.field)(out) = v,
            }
        }
        if !ok {
            return None;
        }
        for (i, v) in values {
            *(table[i].field)(out) = v;
        }
        Some(())
    }

    // ---------------------------------------------------------------- analyses

    fn analysis(&mut self, kind: &'a Ident, options: &'a [Opt]) -> Option<Analysis> {
        let allowed = vocab::analysis_options(&kind.name).unwrap_or(&[]);
        match kind.name.as_str() {
            "bias" => {
                self.opts(options, allowed, "analyze bias");
                Some(Analysis::Bias)
            }
            "transient" => {
                let m = self.opts(options, allowed, "analyze transient");
                let stop = self.required(
                    &m,
                    "stop",
                    kind.span,
                    "analyze transient",
                    Slot::Time,
                    Range::Positive,
                )?;
                let step = self
                    .opt_value(&m, "step", Slot::Time, "step", Range::Positive)?
                    .unwrap_or(stop / 1000.0);
                let max_step =
                    self.opt_value(&m, "max_step", Slot::Time, "max_step", Range::Positive)?;
                let rel_tolerance =
                    self.opt_value(&m, "tolerance", Slot::Number, "tolerance", Range::Positive)?;
                let start = match m.get("start") {
                    None => StartFrom::OperatingPoint,
                    Some(o) => match self.opt_expr(o).and_then(|e| {
                        self.word(e, vocab::option_words("transient", "start"), "start")
                    })? {
                        "zero" => StartFrom::Zero,
                        _ => StartFrom::OperatingPoint,
                    },
                };
                let method = match m.get("method") {
                    None => Integration::Trapezoidal,
                    Some(o) => match self.opt_expr(o).and_then(|e| {
                        self.word(e, vocab::option_words("transient", "method"), "method")
                    })? {
                        "bdf2" => Integration::Bdf2,
                        _ => Integration::Trapezoidal,
                    },
                };
                if step > stop {
                    self.error(
                        "bad-value",
                        kind.span,
                        format!(
                            "transient step {} s is longer than stop {} s",
                            fmt_num(step),
                            fmt_num(stop)
                        ),
                    );
                    return None;
                }
                Some(Analysis::Transient {
                    stop,
                    step,
                    max_step,
                    start,
                    method,
                    rel_tolerance,
                })
            }
            "ac" => {
                let m = self.opts(options, allowed, "analyze ac");
                let from = self.required(
                    &m,
                    "from",
                    kind.span,
                    "analyze ac",
                    Slot::Frequency,
                    Range::Positive,
                )?;
                let to = self.required(
                    &m,
                    "to",
                    kind.span,
                    "analyze ac",
                    Slot::Frequency,
                    Range::Positive,
                )?;
                let points = match m.get("points") {
                    None => 101,
                    Some(o) => self
                        .opt_expr(o)
                        .and_then(|e| self.integer(e, "points", 1))?
                        as usize,
                };
                let scale = match m.get("scale") {
                    None => Scale::Linear,
                    Some(o) => match self
                        .opt_expr(o)
                        .and_then(|e| self.word(e, vocab::option_words("ac", "scale"), "scale"))?
                    {
                        "log" => Scale::Log,
                        _ => Scale::Linear,
                    },
                };
                if to < from {
                    self.error(
                        "bad-value",
                        kind.span,
                        format!(
                            "ac sweep must go upward, got from={} to={}",
                            crate::si::si_prefixed(from, "Hz", 4),
                            crate::si::si_prefixed(to, "Hz", 4)
                        ),
                    );
                    return None;
                }
                let source = match m.get("source") {
                    None => None,
                    Some(o) => {
                        let e = self.opt_expr(o)?;
                        let id = self.name_of(e, "source")?;
                        let id = self.element_ref(&id, "analyze ac source")?;
                        if !matches!(
                            self.elem_kind(id),
                            Some(ElemKeyword::Voltage | ElemKeyword::Current)
                        ) {
                            self.error(
                                "element-kind",
                                e.span,
                                "analyze ac source must be a voltage or current source",
                            );
                            return None;
                        }
                        Some(id)
                    }
                };
                let impedance_at = match m.get("impedance") {
                    None => None,
                    Some(o) => {
                        let e = self.opt_expr(o)?;
                        let id = self.name_of(e, "impedance")?;
                        Some(self.element_ref(&id, "analyze ac impedance")?)
                    }
                };
                Some(Analysis::Ac {
                    from,
                    to,
                    points,
                    scale,
                    source,
                    impedance_at,
                })
            }
            "steady" => {
                let m = self.opts(options, allowed, "analyze steady");
                let freq = self.required(
                    &m,
                    "freq",
                    kind.span,
                    "analyze steady",
                    Slot::Frequency,
                    Range::Positive,
                )?;
                let harmonics = match m.get("harmonics") {
                    None => 32,
                    Some(o) => self
                        .opt_expr(o)
                        .and_then(|e| self.integer(e, "harmonics", 1))?
                        as usize,
                };
                let steps = match m.get("steps") {
                    None => 256,
                    Some(o) => {
                        let e = self.opt_expr(o)?;
                        let n = self.integer(e, "steps", 8)?;
                        if !n.is_power_of_two() {
                            self.error(
                                "bad-value",
                                e.span,
                                format!("steps per period must be a power of two, got {n}"),
                            );
                            return None;
                        }
                        n as usize
                    }
                };
                let method = match m.get("method") {
                    None => SteadyMethod::Auto,
                    Some(o) => match self.opt_expr(o).and_then(|e| {
                        self.word(e, vocab::option_words("steady", "method"), "method")
                    })? {
                        "balance" => SteadyMethod::Balance,
                        "shooting" => SteadyMethod::Shooting,
                        "settle" => SteadyMethod::Settle,
                        _ => SteadyMethod::Auto,
                    },
                };
                Some(Analysis::Steady {
                    freq,
                    harmonics,
                    method,
                    steps_per_period: steps,
                })
            }
            other => {
                if let Some(r) = vocab::retired(other, Place::Analysis) {
                    self.error("old-spelling", kind.span, vocab::retired_message(r));
                    return None;
                }
                let names: Vec<&str> = vocab::ANALYSES.iter().map(|(n, _)| *n).collect();
                let help = did_you_mean(other, names.iter());
                self.error(
                    "unknown-keyword",
                    kind.span,
                    format!("unknown analysis '{other}' ({})", names.join(", ")),
                )
                .help = help;
                None
            }
        }
    }

    fn name_of(&mut self, e: &Expr, what: &str) -> Option<Ident> {
        match e.as_name() {
            Some(n) => Some(Ident {
                name: n.to_string(),
                span: e.span,
            }),
            None => {
                self.error("syntax", e.span, format!("{what} must be a name"));
                None
            }
        }
    }

    fn required(
        &mut self,
        m: &HashMap<&'a str, &'a Opt>,
        key: &str,
        at: Span,
        ctx: &str,
        slot: Slot,
        range: Range,
    ) -> Option<f64> {
        match self.opt_value(m, key, slot, key, range)? {
            Some(v) => Some(v),
            None => {
                self.error("missing-option", at, format!("{ctx} needs {key}="));
                None
            }
        }
    }

    // ---------------------------------------------------------------- elements

    fn main_value(&mut self, name: &str, v: f64) -> f64 {
        let mut v = v;
        if let Some(r) = self.ov.element_values.get(name) {
            v = *r;
        }
        if let Some(f) = self.ov.element_factors.get(name) {
            v *= f;
        }
        v
    }

    fn element(
        &mut self,
        e: &'a ElementStmt,
        models: &[Model],
        model_kinds: &[ModelKind],
        model_ok: bool,
        steady_freq: Option<f64>,
    ) -> Option<ElementKind> {
        let name = e.name.name.as_str();
        let kw = e.kind.keyword();
        let ctx = format!("{kw} {name}");
        let nodes: Vec<NodeId> = if e.kind == ElemKeyword::Coupling {
            Vec::new()
        } else {
            e.nodes.iter().map(|n| self.node(&n.name)).collect()
        };
        let n2 = |i: usize| nodes.get(i).copied().flatten();
        match e.kind {
            ElemKeyword::Resistor | ElemKeyword::Capacitor | ElemKeyword::Inductor => {
                let allowed = vocab::element_options(kw);
                let (slot, unitname, rating_slot) = match e.kind {
                    ElemKeyword::Resistor => (Slot::Resistance, "resistance", Slot::Power),
                    ElemKeyword::Capacitor => (Slot::Capacitance, "capacitance", Slot::Voltage),
                    _ => (Slot::Inductance, "inductance", Slot::Current),
                };
                let m = self.opts(&e.options, allowed, &ctx);
                let ve = e.value.as_ref()?;
                let v = self.value(ve, slot, &format!("{kw} value"));
                let rating = self.opt_value(
                    &m,
                    "rating",
                    rating_slot,
                    &format!("{kw} rating"),
                    Range::Positive,
                );
                let v = self.main_value(name, v?);
                if v <= 0.0 {
                    self.error(
                        "bad-value",
                        ve.span,
                        format!(
                            "{ctx}: {unitname} must be > 0 {}, got {}",
                            slot.describe(),
                            fmt_num(v)
                        ),
                    );
                    return None;
                }
                let rating = rating?;
                let (a, b) = (n2(0), n2(1));
                match e.kind {
                    ElemKeyword::Resistor => Some(ElementKind::Resistor {
                        a,
                        b,
                        r: v,
                        rating_w: rating,
                    }),
                    ElemKeyword::Capacitor => Some(ElementKind::Capacitor {
                        a,
                        b,
                        c: v,
                        rating_v: rating,
                    }),
                    _ => {
                        let r = self.opt_value(
                            &m,
                            "r",
                            Slot::Resistance,
                            "inductor r",
                            Range::NonNegative,
                        )?;
                        let q =
                            self.opt_value(&m, "q", Slot::Number, "inductor q", Range::Positive)?;
                        let qf = self.opt_value(
                            &m,
                            "q_at",
                            Slot::Frequency,
                            "inductor q_at",
                            Range::Positive,
                        )?;
                        let series_r = match (r, q) {
                            (Some(_), Some(_)) => {
                                let sp = m.get("q").map(|o| o.key.span).unwrap_or(e.name.span);
                                self.error(
                                    "syntax",
                                    sp,
                                    format!("{ctx}: give the loss as r= or as q=, not both"),
                                );
                                return None;
                            }
                            (Some(r), None) => {
                                if let Some(o) = m.get("q_at") {
                                    self.warning(
                                        "unknown-option",
                                        o.key.span,
                                        format!("{ctx}: q_at= is ignored without q="),
                                    );
                                }
                                r
                            }
                            (None, Some(q)) => match qf.or(steady_freq) {
                                Some(f) => 2.0 * std::f64::consts::PI * f * v / q,
                                None => {
                                    let sp = m.get("q").map(|o| o.key.span).unwrap_or(e.name.span);
                                    self.error("inductor-loss", sp, format!("{ctx}: q= needs a frequency")).help =
                                        Some("add q_at=FREQ, or an 'analyze steady freq=...' whose frequency is used".into());
                                    return None;
                                }
                            },
                            (None, None) => 0.0,
                        };
                        Some(ElementKind::Inductor {
                            a,
                            b,
                            l: v,
                            series_r,
                            rating_a: rating,
                        })
                    }
                }
            }
            ElemKeyword::Coupling => {
                let m = self.opts(&e.options, vocab::element_options(kw), &ctx);
                if e.nodes.len() < 2 {
                    self.error(
                        "syntax",
                        e.name.span,
                        format!("{ctx} needs at least two inductor names"),
                    );
                    return None;
                }
                let mut ids = Vec::new();
                let mut ok = true;
                for n in &e.nodes {
                    match self.element_ref(n, &ctx) {
                        Some(id) if self.elem_kind(id) == Some(ElemKeyword::Inductor) => {
                            if ids.contains(&id) {
                                self.error(
                                    "duplicate-name",
                                    n.span,
                                    format!("{ctx}: inductor '{}' named twice", n.name),
                                );
                                ok = false;
                            }
                            ids.push(id);
                        }
                        Some(id) => {
                            let k = self.elem_kind(id).map(|k| k.keyword()).unwrap_or("?");
                            self.error(
                                "element-kind",
                                n.span,
                                format!("{ctx} couples inductors, '{}' is a {k}", n.name),
                            );
                            ok = false;
                        }
                        None => ok = false,
                    }
                }
                let k = match m.get("k") {
                    Some(o) => {
                        let ex = self.opt_expr(o)?;
                        let k = self.value(ex, Slot::Number, "coupling k")?;
                        let k = self.main_value(name, k);
                        if k.abs() > 1.0 {
                            self.error(
                                "coupling-range",
                                ex.span,
                                format!(
                                    "{ctx}: coupling coefficient must satisfy |k| <= 1, got {}",
                                    fmt_num(k)
                                ),
                            );
                            return None;
                        }
                        Some(k)
                    }
                    None => {
                        self.error("missing-option", e.name.span, format!("{ctx} needs k="));
                        None
                    }
                };
                if !ok {
                    return None;
                }
                Some(ElementKind::Coupling {
                    inductors: ids,
                    k: k?,
                })
            }
            ElemKeyword::Voltage | ElemKeyword::Current => {
                let is_v = e.kind == ElemKeyword::Voltage;
                let slot = if is_v { Slot::Voltage } else { Slot::Current };
                let m = self.opts(&e.options, vocab::element_options(kw), &ctx);
                let dc = self.opt_value(&m, "dc", slot, &format!("{kw} dc"), Range::Any);
                let rs = self.opt_value(
                    &m,
                    "internal",
                    Slot::Resistance,
                    "internal resistance",
                    Range::NonNegative,
                );
                let shape = match m.get("wave") {
                    None => Some(None),
                    Some(o) => match &o.value {
                        OptValue::Wave(w) => self.wave(w, slot).map(Some),
                        OptValue::Expr(ex) => {
                            self.error(
                                "syntax",
                                ex.span,
                                "wave= takes sine(...), square(...) or table(...)",
                            );
                            None
                        }
                    },
                };
                let dc = self.main_value(name, dc?.unwrap_or(0.0));
                let wave = Waveform { dc, shape: shape? };
                let (p, n) = (n2(0), n2(1));
                if is_v {
                    Some(ElementKind::VoltageSource {
                        p,
                        n,
                        wave,
                        rs: rs?.unwrap_or(0.0),
                    })
                } else {
                    Some(ElementKind::CurrentSource { p, n, wave })
                }
            }
            ElemKeyword::Diode | ElemKeyword::Bjt => {
                let is_d = e.kind == ElemKeyword::Diode;
                let m = self.opts(&e.options, vocab::element_options(kw), &ctx);
                let mut term = Vec::new();
                if !is_d {
                    for t in ["c", "b", "e"] {
                        match m.get(t) {
                            Some(o) => {
                                let ex = self.opt_expr(o)?;
                                let id = self.name_of(ex, &format!("{t}= (a node)"))?;
                                term.push(self.node(&id.name));
                            }
                            None => {
                                self.error(
                                    "missing-option",
                                    e.name.span,
                                    format!(
                                        "{ctx} needs {t}= (the {} node)",
                                        match t {
                                            "c" => "collector",
                                            "b" => "base",
                                            _ => "emitter",
                                        }
                                    ),
                                );
                                return None;
                            }
                        }
                    }
                }
                let area = self
                    .opt_value(&m, "area", Slot::Number, "area", Range::Positive)?
                    .unwrap_or(1.0);
                let area = self.main_value(name, area);
                if area <= 0.0 {
                    self.error(
                        "bad-value",
                        e.name.span,
                        format!("{ctx}: area must be > 0, got {}", fmt_num(area)),
                    );
                    return None;
                }
                let Some(mo) = m.get("part") else {
                    self.error(
                        "missing-option",
                        e.name.span,
                        format!("{ctx} needs part=NAME"),
                    );
                    return None;
                };
                let mex = self.opt_expr(mo)?;
                let mname = self.name_of(mex, "part")?;
                let Some(&mid) = self.models.get(mname.name.as_str()) else {
                    if self.is_broken(&["part"], &mname.name) {
                        return None;
                    }
                    let help = did_you_mean(&mname.name, self.models.keys());
                    self.error(
                        "unknown-part",
                        mname.span,
                        format!("{ctx}: no part named '{}'", mname.name),
                    )
                    .help = help;
                    return None;
                };
                if !model_ok {
                    return None;
                }
                let mk = *model_kinds.get(mid)?;
                let mk_name = |k: ModelKind| match k {
                    ModelKind::Npn => "npn",
                    ModelKind::Pnp => "pnp",
                    ModelKind::Diode => "diode",
                };
                let fits = if is_d {
                    mk == ModelKind::Diode
                } else {
                    mk != ModelKind::Diode
                };
                if !fits {
                    let want = if is_d {
                        "a diode part"
                    } else {
                        "an npn or pnp part"
                    };
                    let mname_s = models.get(mid).map(|m| m.name.as_str()).unwrap_or("?");
                    self.error(
                        "part-kind",
                        mname.span,
                        format!("{ctx} needs {want}, '{mname_s}' is {}", mk_name(mk)),
                    );
                    return None;
                }
                if is_d {
                    Some(ElementKind::Diode {
                        a: n2(0),
                        k: n2(1),
                        model: mid,
                        area,
                    })
                } else {
                    Some(ElementKind::Bjt {
                        c: term[0],
                        b: term[1],
                        e: term[2],
                        model: mid,
                        area,
                    })
                }
            }
        }
    }

    fn wave(&mut self, w: &'a WaveAst, slot: Slot) -> Option<Shape> {
        let name = w.shape.name.as_str();
        if name == "table" {
            let mut pts = Vec::new();
            let mut spans = Vec::new();
            let mut ok = true;
            for (t, v) in &w.points {
                let tv = self.value(t, Slot::Time, "table time");
                let vv = self.value(v, slot, "table value");
                match (tv, vv) {
                    (Some(a), Some(b)) => {
                        pts.push((a, b));
                        spans.push(t.span);
                    }
                    _ => ok = false,
                }
            }
            if !ok {
                return None;
            }
            if pts.len() < 2 {
                self.error(
                    "bad-value",
                    w.span,
                    format!(
                        "table needs at least two time: value points, got {}",
                        pts.len()
                    ),
                );
                return None;
            }
            for (i, win) in pts.windows(2).enumerate() {
                if win[1].0 <= win[0].0 {
                    self.error(
                        "bad-value",
                        spans[i + 1],
                        format!(
                            "table times must increase, got {} after {}",
                            fmt_num(win[1].0),
                            fmt_num(win[0].0)
                        ),
                    );
                    return None;
                }
            }
            return Some(Shape::Table(pts));
        }
        let names = vocab::waveform_args(name).unwrap_or(&[]);
        let mut got: Vec<Option<(f64, Span)>> = vec![None; names.len()];
        let mut ok = true;
        for a in &w.args {
            let n = &a.name;
            let Some(idx) = names.iter().position(|x| *x == n.name) else {
                if let Some(r) = vocab::retired(&n.name, Place::WaveArgument) {
                    if names.contains(&r.new) {
                        self.error("old-spelling", n.span, vocab::retired_message(r));
                        ok = false;
                        continue;
                    }
                }
                let help = did_you_mean(&n.name, names.iter())
                    .or_else(|| Some(format!("{name} takes: {}", names.join(", "))));
                self.error(
                    "unknown-option",
                    n.span,
                    format!("{name} has no argument '{}'", n.name),
                )
                .help = help;
                ok = false;
                continue;
            };
            let arg = names[idx];
            let s = match (name, arg) {
                ("sine", "freq") => Slot::Frequency,
                ("sine", "phase") => Slot::Angle,
                (_, "start" | "rise" | "fall" | "hold" | "every") => Slot::Time,
                _ => slot,
            };
            if got[idx].is_some() {
                self.error(
                    "duplicate-option",
                    n.span,
                    format!("{name} argument '{arg}' given twice"),
                );
                ok = false;
                continue;
            }
            let range = if s == Slot::Time {
                Range::NonNegative
            } else {
                Range::Any
            };
            match self.value_in(&a.value, s, &format!("{name} {arg}"), range) {
                Some(v) => got[idx] = Some((v, a.value.span)),
                None => ok = false,
            }
        }
        if !ok {
            return None;
        }
        let g = |i: usize| got.get(i).copied().flatten().map(|x| x.0);
        let need = |cx: &mut Self, i: usize| -> Option<f64> {
            match g(i) {
                Some(v) => Some(v),
                None => {
                    cx.error(
                        "missing-option",
                        w.span,
                        format!("{name} needs {}=", names[i]),
                    );
                    None
                }
            }
        };
        if name == "sine" {
            let amp = need(self, 0);
            let freq = need(self, 1);
            let (amp, freq) = (amp?, freq?);
            if freq <= 0.0 {
                let sp = got[1].map(|x| x.1).unwrap_or(w.span);
                self.error(
                    "bad-value",
                    sp,
                    format!("sine freq must be > 0 Hz, got {}", fmt_num(freq)),
                );
                return None;
            }
            Some(Shape::Sine {
                amp,
                freq,
                phase: g(2).unwrap_or(0.0).to_radians(),
                offset: g(3).unwrap_or(0.0),
                delay: g(4).unwrap_or(0.0),
                rise: g(5).unwrap_or(0.0),
            })
        } else {
            let base = need(self, 0);
            let top = need(self, 1);
            Some(Shape::Square {
                base: base?,
                top: top?,
                start: g(2).unwrap_or(0.0),
                rise: g(3).unwrap_or(0.0),
                fall: g(4).unwrap_or(0.0),
                hold: g(5).unwrap_or(0.0),
                every: g(6).unwrap_or(0.0),
            })
        }
    }

    // ---------------------------------------------------------------- masks

    /// Compile a limit expression that may use `pcarrier` into a LimitExpr.
    fn limit_expr(&mut self, e: &Expr, slot: Slot, what: &str) -> Option<LimitExpr> {
        let mut refs = Vec::new();
        expr::names(e, &mut refs);
        let uses_pc =
            refs.iter().any(|(n, _)| n == "pcarrier") && !self.lets.contains_key("pcarrier");
        if !uses_pc {
            return self.value(e, slot, what).map(LimitExpr::Const);
        }
        let at = |cx: &mut Self, p: f64| -> Option<f64> {
            cx.pcarrier = Some(p);
            let r = cx.value(e, slot, what);
            cx.pcarrier = None;
            r
        };
        let a = at(self, 1.0)?;
        let a10 = at(self, 10.0)?;
        let b = a10 - a;
        for p in [1e-3, 0.5, 1e4] {
            let want = a + b * f64::log10(p);
            let got = at(self, p)?;
            if (got - want).abs() > 1e-9 * (1.0 + want.abs()) {
                self.error(
                    "bad-value",
                    e.span,
                    format!("{what} may depend on pcarrier only as a + b*log10(pcarrier)"),
                );
                return None;
            }
        }
        Some(LimitExpr::LogCarrier { a, b })
    }

    fn limit(&mut self, l: &LimitAst) -> Option<Limit> {
        match l {
            LimitAst::Below(e) => {
                let v = self.limit_expr(e, Slot::Db, "below")?;
                match v {
                    LimitExpr::Const(x) => {
                        if x < 0.0 {
                            self.error("bad-value", e.span, format!("below takes the number of dB under the carrier (positive), got {}", fmt_num(x))).help =
                                Some(format!("write below {}dB", fmt_num(-x)));
                            return None;
                        }
                        Some(Limit::Dbc(LimitExpr::Const(-x)))
                    }
                    LimitExpr::LogCarrier { a, b } => {
                        Some(Limit::Dbc(LimitExpr::LogCarrier { a: -a, b: -b }))
                    }
                }
            }
            LimitAst::AtMost(e) => {
                let v = self.limit_expr(e, Slot::Power, "at_most")?;
                if let LimitExpr::Const(x) = v {
                    if x <= 0.0 {
                        self.error(
                            "bad-value",
                            e.span,
                            format!("at_most power must be > 0 W, got {}", fmt_num(x)),
                        );
                        return None;
                    }
                }
                Some(Limit::Watts(v))
            }
            LimitAst::IfCarrierBelow {
                power,
                then,
                otherwise,
            } => {
                let w = self.value_in(
                    power,
                    Slot::Power,
                    "if_carrier_below power",
                    Range::Positive,
                );
                let a = self.limit(then);
                let b = self.limit(otherwise);
                Some(Limit::IfCarrierBelow {
                    watts: w?,
                    then: Box::new(a?),
                    otherwise: Box::new(b?),
                })
            }
            LimitAst::Stricter(v, _) | LimitAst::Looser(v, _) => {
                let subs: Vec<Option<Limit>> = v.iter().map(|x| self.limit(x)).collect();
                let subs: Option<Vec<Limit>> = subs.into_iter().collect();
                let subs = subs?;
                Some(if matches!(l, LimitAst::Stricter(..)) {
                    Limit::All(subs)
                } else {
                    Limit::Lenient(subs)
                })
            }
        }
    }

    fn rule(&mut self, r: &RuleAst) -> Option<MaskRule> {
        let range = match &r.range {
            RangeAst::All => Some(MaskRange::Any),
            RangeAst::Harmonics { from, to } => {
                let a = self.integer(from, "harmonic number", 2);
                let b = match to {
                    Some(t) => self.integer(t, "harmonic number", 2).map(Some),
                    None => Some(None),
                };
                match (a, b) {
                    (Some(a), Some(b)) => {
                        if let Some(b) = b {
                            if b < a {
                                self.error(
                                    "bad-value",
                                    r.span,
                                    format!("harmonic range must go upward, got {a} to {b}"),
                                );
                                None
                            } else {
                                Some(MaskRange::Harmonics {
                                    from: a as u32,
                                    to: Some(b as u32),
                                })
                            }
                        } else {
                            Some(MaskRange::Harmonics {
                                from: a as u32,
                                to: None,
                            })
                        }
                    }
                    _ => None,
                }
            }
            RangeAst::Frequency { from, to } => self
                .freq_range(from, to, r.span)
                .map(|(a, b)| MaskRange::Frequency { from: a, to: b }),
        };
        let limit = self.limit(&r.limit);
        let carrier = match &r.carrier {
            None => Some(None),
            Some((a, b)) => self.freq_range(a, b, r.span).map(Some),
        };
        Some(MaskRule {
            range: range?,
            carrier: carrier?,
            limit: limit?,
        })
    }

    fn freq_range(&mut self, a: &Expr, b: &Expr, span: Span) -> Option<(f64, f64)> {
        let x = self.value_in(a, Slot::Frequency, "frequency", Range::NonNegative);
        let y = self.value_in(b, Slot::Frequency, "frequency", Range::NonNegative);
        let (x, y) = (x?, y?);
        if y < x {
            self.error(
                "bad-value",
                span,
                format!(
                    "frequency range must go upward, got {} to {}",
                    crate::si::si_prefixed(x, "Hz", 4),
                    crate::si::si_prefixed(y, "Hz", 4)
                ),
            );
            return None;
        }
        Some((x, y))
    }

    // ---------------------------------------------------------------- requirements

    fn requirement(
        &mut self,
        r: &'a RequireStmt,
        span: Span,
        masks: &HashMap<&'a str, usize>,
    ) -> Option<Requirement> {
        const METRICS: &[&str] = &[
            "pout",
            "efficiency",
            "pae",
            "gain",
            "harmonic",
            "harmonics",
            "thd",
            "input_vswr",
            "vce_peak",
            "ic_peak",
            "dissipation",
            "tj",
            "stress",
            "pdc",
            "conduction",
        ];
        let m = r.metric.name.as_str();
        if !METRICS.contains(&m) {
            let help = did_you_mean(m, METRICS.iter())
                .or_else(|| Some(format!("figures: {}", METRICS.join(", "))));
            self.error(
                "unknown-metric",
                r.metric.span,
                format!("unknown figure '{m}'"),
            )
            .help = help;
            return None;
        }
        let takes_element = matches!(
            m,
            "vce_peak" | "ic_peak" | "dissipation" | "tj" | "stress" | "conduction"
        );
        if let Some(n) = &r.number {
            if m != "harmonic" {
                self.error("syntax", n.span, format!("'{m}' takes no number"));
                return None;
            }
        }
        let element = match &r.element {
            Some(id) if !takes_element => {
                self.error(
                    "syntax",
                    id.span,
                    format!("'{m}' is not about one element; remove '{}'", id.name),
                );
                return None;
            }
            Some(id) => {
                let eid = self.element_ref(id, &format!("require {m}"))?;
                let k = self.elem_kind(eid);
                if m == "stress" {
                    if !matches!(
                        k,
                        Some(
                            ElemKeyword::Resistor | ElemKeyword::Capacitor | ElemKeyword::Inductor
                        )
                    ) {
                        self.error("element-kind", id.span, format!("stress is for rated resistors, capacitors and inductors, '{}' is a {}", id.name, k.map(|k| k.keyword()).unwrap_or("?")));
                        return None;
                    }
                } else if k != Some(ElemKeyword::Bjt) {
                    self.error(
                        "element-kind",
                        id.span,
                        format!(
                            "{m} is about a bjt, '{}' is a {}",
                            id.name,
                            k.map(|k| k.keyword()).unwrap_or("?")
                        ),
                    );
                    return None;
                }
                Some(eid)
            }
            None => None,
        };
        let cmp = match r.cmp {
            CmpAst::Le => Cmp::Le,
            CmpAst::Ge => Cmp::Ge,
            CmpAst::Lt => Cmp::Lt,
            CmpAst::Gt => Cmp::Gt,
        };
        let text = self
            .map
            .slice(span)
            .split_whitespace()
            .collect::<Vec<_>>()
            .join(" ");
        let origin = self.origin(span);
        if m == "harmonics" {
            if cmp != Cmp::Le {
                self.error("syntax", r.cmp_span, "harmonics are required <= a mask");
                return None;
            }
            let Some(name) = r.bound.as_name() else {
                self.error(
                    "syntax",
                    r.bound.span,
                    "require harmonics <= MASK needs a mask name",
                );
                return None;
            };
            let bound = if let Some(i) = masks.get(name) {
                Bound::Mask(*i)
            } else if builtin_names().iter().any(|b| b == name) {
                Bound::BuiltinMask(name.to_string())
            } else if self.is_broken(&["mask"], name) {
                return None;
            } else {
                let mut cands: Vec<String> = masks.keys().map(|s| s.to_string()).collect();
                cands.extend(builtin_names());
                let help = did_you_mean(name, cands.iter());
                self.error(
                    "unknown-mask",
                    r.bound.span,
                    format!("no mask named '{name}'"),
                )
                .help = help;
                return None;
            };
            return Some(Requirement {
                metric: Metric::Harmonics,
                cmp,
                bound,
                text,
                origin,
            });
        }
        let (metric, slot) = match m {
            "pout" => (Metric::Pout, Slot::Power),
            "efficiency" => (Metric::Efficiency, Slot::Fraction),
            "pae" => (Metric::Pae, Slot::Fraction),
            "gain" => (Metric::Gain, Slot::Db),
            "harmonic" => {
                let Some(n) = &r.number else {
                    self.error("syntax", r.metric.span, "require harmonic N needs the harmonic number N (e.g. harmonic 3 <= -50dBc)");
                    return None;
                };
                (
                    Metric::Harmonic(self.integer(n, "harmonic number", 2)? as u32),
                    Slot::Db,
                )
            }
            "thd" => (Metric::Thd, Slot::Fraction),
            "input_vswr" => (Metric::InputVswr, Slot::Number),
            "vce_peak" => (Metric::VcePeak(element), Slot::Voltage),
            "ic_peak" => (Metric::IcPeak(element), Slot::Current),
            "dissipation" => (Metric::Dissipation(element), Slot::Power),
            "tj" => (Metric::JunctionTemp(element), Slot::Temperature),
            "stress" => (Metric::Stress(element), Slot::Fraction),
            "pdc" => (Metric::Pdc, Slot::Power),
            _ => (Metric::Conduction(element), Slot::Angle),
        };
        let v = self.value(&r.bound, slot, &format!("require {m}"))?;
        if matches!(metric, Metric::InputVswr) && v < 1.0 {
            self.error(
                "bad-value",
                r.bound.span,
                format!("a VSWR is >= 1, got {}", fmt_num(v)),
            );
            return None;
        }
        Some(Requirement {
            metric,
            cmp,
            bound: Bound::Value(v),
            text,
            origin,
        })
    }

    // ---------------------------------------------------------------- studies

    fn vary(&mut self, target: &'a Ident, sweep: &'a SweepAst, span: Span) -> Option<Vary> {
        let (t, slot) = if self.lets.contains_key(target.name.as_str()) {
            (VaryTarget::Param(target.name.clone()), Slot::Any)
        } else if let Some(&id) = self.elem_ids.get(target.name.as_str()) {
            let slot = match self.elem_kind(id) {
                Some(ElemKeyword::Resistor) => Slot::Resistance,
                Some(ElemKeyword::Capacitor) => Slot::Capacitance,
                Some(ElemKeyword::Inductor) => Slot::Inductance,
                Some(ElemKeyword::Voltage) => Slot::Voltage,
                Some(ElemKeyword::Current) => Slot::Current,
                _ => Slot::Number,
            };
            (VaryTarget::Element(target.name.clone()), slot)
        } else if self.is_broken(&["let"], &target.name)
            || self.is_broken(ELEMENT_KEYWORDS, &target.name)
        {
            return None;
        } else {
            let mut cands: Vec<&str> = self.lets.keys().copied().collect();
            cands.extend(self.elem_ids.keys().copied());
            let help = did_you_mean(&target.name, cands.iter());
            self.error(
                "unknown-name",
                target.span,
                format!(
                    "vary: '{}' is neither a parameter nor an element",
                    target.name
                ),
            )
            .help = help;
            return None;
        };
        const MAX_POINTS: f64 = 1e6;
        let s = match sweep {
            SweepAst::List(v) => {
                let vals: Vec<Option<f64>> = v
                    .iter()
                    .map(|e| self.value(e, slot, "vary value"))
                    .collect();
                let vals: Option<Vec<f64>> = vals.into_iter().collect();
                let vals = vals?;
                if vals.is_empty() {
                    self.error("bad-value", span, "vary needs at least one value");
                    return None;
                }
                Sweep::List(vals)
            }
            SweepAst::Step { from, to, step } => {
                let a = self.value(from, slot, "vary from");
                let b = self.value(to, slot, "vary to");
                let st = self.value(step, slot, "vary step");
                let (a, b, st) = (a?, b?, st?);
                let n = (b - a) / st;
                if st == 0.0 || n < -1e-9 || n + 1.0 > MAX_POINTS {
                    self.error(
                        "bad-value",
                        step.span,
                        format!(
                            "step {} does not go from {} to {} in at most {MAX_POINTS} points",
                            fmt_num(st),
                            fmt_num(a),
                            fmt_num(b)
                        ),
                    );
                    return None;
                }
                let points = (n + 1e-9).floor() as usize + 1;
                let to = a + st * (points - 1) as f64;
                Sweep::Linear {
                    from: a,
                    to,
                    points,
                }
            }
            SweepAst::Points {
                from,
                to,
                points,
                log,
            } => {
                let a = self.value(from, slot, "vary from");
                let b = self.value(to, slot, "vary to");
                let n = self.integer(points, "points", 1);
                let (a, b, n) = (a?, b?, n?);
                if n as f64 > MAX_POINTS {
                    self.error(
                        "bad-value",
                        points.span,
                        format!("at most {MAX_POINTS} points"),
                    );
                    return None;
                }
                if *log {
                    if a <= 0.0 || b <= 0.0 {
                        self.error("bad-value", from.span, "a log sweep needs values > 0");
                        return None;
                    }
                    Sweep::Log {
                        from: a,
                        to: b,
                        points: n as usize,
                    }
                } else {
                    Sweep::Linear {
                        from: a,
                        to: b,
                        points: n as usize,
                    }
                }
            }
        };
        Some(Vary {
            target: t,
            sweep: s,
            origin: self.origin(span),
        })
    }
}

/// Element statement keywords.
const ELEMENT_KEYWORDS: &[&str] = vocab::ELEMENT_KINDS;

/// The `'static` spelling of an option word (words are from fixed lists above).
fn intern(w: &str) -> &'static str {
    vocab::OPTION_WORDS
        .iter()
        .flat_map(|(_, _, words)| words.iter())
        .find(|x| **x == w)
        .copied()
        .unwrap_or("")
}

/// A number for messages: short, no trailing noise.
pub(crate) fn fmt_num(v: f64) -> String {
    if v == 0.0 {
        return "0".into();
    }
    let a = v.abs();
    if (1e-3..1e6).contains(&a) {
        let s = format!("{v:.6}");
        let s = s.trim_end_matches('0').trim_end_matches('.');
        s.to_string()
    } else {
        format!("{v:e}")
    }
}
