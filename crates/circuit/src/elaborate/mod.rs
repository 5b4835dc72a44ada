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
//!
//! One file per statement kind: `lets` (parameters and values), `opts`
//! (reading options through the typed tables of [`crate::options`]),
//! `elements`, `waves`, `parts`, `analyses`, `masks`, `require` and `study`.
//! This file holds the elaboration context and the order of the passes.

mod analyses;
mod elements;
mod lets;
mod masks;
mod opts;
mod parts;
mod require;
mod study;
mod waves;

use crate::ir::*;
use std::collections::HashMap;
use std::path::Path;
use std::sync::Arc;
use tankwave_netlist::ast::*;
use tankwave_netlist::suggest::did_you_mean;
use tankwave_netlist::vocab;
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

/// The evaluation state of one parameter.
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

/// The elaboration context: the parsed file, the names declared in the first
/// pass, the parameter evaluation state and the diagnostics found so far.
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
    /// Spans of the analyses kept (for the size estimate of `bounds::size`).
    analysis_spans: Vec<Span>,
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
            analysis_spans: Vec::new(),
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

    /// The line a span starts on (for "already defined at line N").
    fn line_of(&self, span: Span) -> u32 {
        self.map.line_col(span.file, span.start).0
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

    // ---------------------------------------------------------------- driver

    /// The passes, in order: names, overrides, parameters, parts, singletons
    /// and analyses, elements, output and input, masks, requirements and
    /// studies, topology.
    fn run(&mut self) -> Circuit {
        let stmts: &'a [Statement] = &self.parsed.statements;
        let mut c = Circuit {
            temperature_k: 298.15,
            ..Default::default()
        };
        self.declare(stmts);
        self.check_overrides();
        self.evaluate_params(&mut c);
        self.parts(stmts, &mut c);
        let model_kinds: Vec<ModelKind> = c.models.iter().map(|m| m.kind()).collect();
        let model_ok = c.models.len() == self.models.len();
        self.singletons(stmts, &mut c);
        let all_elems_ok = self.elements(&mut c, &model_kinds, model_ok);
        c.nodes = std::mem::take(&mut self.node_names);
        let too_large = crate::bounds::size(self.map, &c, &self.elem_spans, &self.analysis_spans);
        self.diags.extend(too_large);
        self.ports(stmts, &mut c);
        if !self.has_errors() {
            self.check_load_sweeps(&c);
            self.check_two_tone(&c);
            self.check_keying(&c);
        }
        let mask_ids = self.masks(stmts, &mut c);
        self.requirements_and_studies(stmts, &mask_ids, &mut c);
        if all_elems_ok && !self.has_errors() {
            crate::topology::check(self, &c);
        }
        c
    }

    /// Pass 1: the names of parameters, elements and parts.
    fn declare(&mut self, stmts: &'a [Statement]) {
        for s in stmts {
            match &s.stmt {
                Stmt::Let { name, value } => self.declare_let(name, value),
                Stmt::Element(e) => self.declare_element(e),
                Stmt::Part(m) => self.declare_part(m),
                _ => {}
            }
        }
    }

    fn declare_element(&mut self, e: &'a ElementStmt) {
        let id = ElementId::new(self.elems.len());
        if let Some(prev) = self.elem_ids.get(e.name.name.as_str()) {
            let line = self.line_of(self.elems[prev.index()].stmt.name.span);
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

    /// Overrides must name things that exist and be finite.
    fn check_overrides(&mut self) {
        for k in self.ov.params.keys() {
            if !self.lets.contains_key(k.as_str()) {
                let help = if self.elem_ids.contains_key(k.as_str()) {
                    Some(format!(
                        "'{k}' is an element, and --set changes parameters: write its value as \
                         a parameter in the file (e.g. `let {k}_value = …` and `{k}_value` in \
                         the element's line), then --set {k}_value=…"
                    ))
                } else {
                    did_you_mean(k, self.lets.keys())
                };
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
    }

    /// `title`, `ambient` and the analyses (needed before the elements for
    /// the inductor `q=` default); `title`, `ambient`, `output`, `input` and
    /// `montecarlo` may appear once.
    fn singletons(&mut self, stmts: &'a [Statement], c: &mut Circuit) {
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
                    let line = self.line_of(*prev);
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
                    if let Some(v) = self.ambient(e) {
                        c.temperature_k = v;
                    }
                }
                Stmt::Analyze { kind, options } => {
                    if let Some(a) = self.analysis(kind, options) {
                        let too_large = crate::bounds::analysis(self.map, kind, options, &a);
                        if too_large.is_empty() {
                            c.analyses.push(a);
                            self.analysis_spans.push(kind.span);
                        }
                        self.diags.extend(too_large);
                    }
                }
                _ => {}
            }
        }
    }

    fn ambient(&mut self, e: &Expr) -> Option<f64> {
        let v = self.value(e, Slot::Temperature, "ambient temperature")?;
        self.check_range(
            v,
            e.span,
            "ambient temperature (in kelvin)",
            crate::models::Range::Positive,
        )
    }

    /// Requirements (a mask may be defined after the requirement naming it)
    /// and the study statements.
    fn requirements_and_studies(
        &mut self,
        stmts: &'a [Statement],
        mask_ids: &HashMap<&'a str, usize>,
        c: &mut Circuit,
    ) {
        for s in stmts {
            match &s.stmt {
                Stmt::Require(r) => {
                    if let Some(req) = self.requirement(r, s.span, mask_ids) {
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
                    if let Some(t) = self.tolerance(element, value, distribution.as_ref()) {
                        c.study.tolerances.push(t);
                    }
                }
                Stmt::MonteCarlo(opts) => {
                    if let Some(m) = self.montecarlo(opts, s.keyword.span) {
                        c.study.montecarlo = Some(m);
                    }
                }
                Stmt::Tune { param, from, to } => {
                    if let Some(t) = self.tune(param, from, to) {
                        c.study.tune.push(t);
                    }
                }
                _ => {}
            }
        }
    }
}

/// Element statement keywords.
const ELEMENT_KEYWORDS: &[&str] = vocab::ELEMENT_KINDS;

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
