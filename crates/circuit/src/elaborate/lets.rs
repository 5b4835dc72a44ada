//! `let` parameters and values: declaring and evaluating parameters (lazily,
//! in dependency order, cycles reported with their path), and evaluating a
//! value in a unit slot and range.

use super::{fmt_num, Cx, PState};
use crate::ir::Circuit;
use crate::models::Range;
use tankwave_netlist::ast::{Expr, Ident};
use tankwave_netlist::expr::{self, EvalError};
use tankwave_netlist::suggest::did_you_mean;
use tankwave_netlist::{Slot, Span};

impl<'a> Cx<'a> {
    /// Pass 1: record a `let` (a name defined twice, or a built-in name, is an error).
    pub(super) fn declare_let(&mut self, name: &'a Ident, value: &'a Expr) {
        if let Some((prev, _)) = self.lets.get(name.name.as_str()) {
            let line = self.line_of(prev.span);
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

    /// Evaluate every parameter (reports cycles and bad expressions even if unused).
    pub(super) fn evaluate_params(&mut self, c: &mut Circuit) {
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
    }

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
                self.report_cycle(key, ident.span);
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

    /// `key` is being evaluated already: report the cycle through the stack
    /// and mark its members failed.
    fn report_cycle(&mut self, key: &'a str, span: Span) {
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
        self.error(
            "param-cycle",
            span,
            format!("parameter cycle: {}", cycle.join(" -> ")),
        )
        .help = Some("define one of these parameters without referring to the others".into());
    }

    pub(super) fn eval(&mut self, e: &Expr) -> Result<f64, EvalError> {
        expr::eval(e, &mut |n, _| self.param(n))
    }

    pub(super) fn report_eval(&mut self, err: EvalError) {
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
    pub(super) fn value(&mut self, e: &Expr, slot: Slot, what: &str) -> Option<f64> {
        if !self.param_unit_fits(e, slot, what) || !self.literal_unit_fits(e, slot, what) {
            return None;
        }
        match self.eval(e) {
            Ok(v) => Some(v),
            Err(err) => {
                self.report_eval(err);
                None
            }
        }
    }

    /// A bare parameter name whose `let` is a literal with a unit: check that unit too.
    fn param_unit_fits(&mut self, e: &Expr, slot: Slot, what: &str) -> bool {
        let Some(n) = e.as_name() else {
            return true;
        };
        let written = self
            .lets
            .get(n)
            .and_then(|(id, le)| match le.literal_unit() {
                Some(Some(u)) => Some((u, id.span)),
                _ => None,
            });
        if let Some((u, at)) = written {
            if slot != Slot::Any && !slot.accepts(u) && !self.ov.params.contains_key(n) {
                let line = self.line_of(at);
                self.error(
                    "unit-mismatch",
                    e.span,
                    format!(
                        "{what} needs {}, but parameter '{n}' is in {u}",
                        slot.describe()
                    ),
                )
                .help = Some(format!("'{n}' is defined at line {line}"));
                return false;
            }
        }
        true
    }

    /// A literal's written unit (or its absence) must fit the slot.
    fn literal_unit_fits(&mut self, e: &Expr, slot: Slot, what: &str) -> bool {
        match e.literal_unit() {
            Some(Some(u)) if !slot.accepts(u) => {
                self.error(
                    "unit-mismatch",
                    e.span,
                    format!("{what} needs {}, got {u}", slot.describe()),
                );
                false
            }
            Some(None) if slot.needs_unit() => {
                self.error(
                    "unit-mismatch",
                    e.span,
                    format!("{what} needs {}, got a plain number", slot.describe()),
                )
                .help = Some("write e.g. 25degC or 298.15K".into());
                false
            }
            _ => true,
        }
    }

    pub(super) fn value_in(
        &mut self,
        e: &Expr,
        slot: Slot,
        what: &str,
        range: Range,
    ) -> Option<f64> {
        let v = self.value(e, slot, what)?;
        self.check_range(v, e.span, what, range)
    }

    pub(super) fn check_range(
        &mut self,
        v: f64,
        span: Span,
        what: &str,
        range: Range,
    ) -> Option<f64> {
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

    pub(super) fn integer(&mut self, e: &Expr, what: &str, min: u64) -> Option<u64> {
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

    /// A value that must be a bare name (of an element, node or part).
    pub(super) fn name_of(&mut self, e: &Expr, what: &str) -> Option<Ident> {
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
}
