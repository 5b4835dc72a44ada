//! Reading `name=value` options through the typed tables of
//! [`crate::options`]: unknown and duplicate names, values in their slot and
//! range, whole numbers, words of a fixed set, and the defaults the tables
//! declare.

use super::Cx;
use crate::options::{Default, OptionSpec, Takes, Words};
use std::collections::HashMap;
use tankwave_netlist::ast::{Expr, Opt, OptValue};
use tankwave_netlist::suggest::did_you_mean;
use tankwave_netlist::vocab::{self, Place};
use tankwave_netlist::Span;

/// The options given on one statement, by name (each checked against its table).
pub(super) type Given<'a> = HashMap<&'a str, &'a Opt>;

impl<'a> Cx<'a> {
    /// Options by name, checking unknown and duplicate names against `table`.
    pub(super) fn opts(
        &mut self,
        options: &'a [Opt],
        table: &[OptionSpec],
        ctx: &str,
    ) -> Given<'a> {
        let allowed: Vec<&str> = table.iter().map(|o| o.name).collect();
        let mut m: Given<'a> = HashMap::new();
        let stmt_kind = ctx.split_whitespace().next().unwrap_or("");
        for o in options {
            let k = o.key.name.as_str();
            if !allowed.contains(&k) {
                self.unknown_option(o, stmt_kind, &allowed, ctx);
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

    fn unknown_option(&mut self, o: &Opt, stmt_kind: &str, allowed: &[&str], ctx: &str) {
        let k = o.key.name.as_str();
        if let Some(r) = vocab::retired_option(k, stmt_kind) {
            self.error("old-spelling", o.key.span, vocab::retired_message(r));
            return;
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
    }

    /// The value of an option that takes an expression (not a wave shape).
    pub(super) fn opt_expr(&mut self, o: &'a Opt) -> Option<&'a Expr> {
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
            OptValue::Text(_, span) => {
                self.error(
                    "syntax",
                    *span,
                    format!("option '{}' takes a value, not a quoted text", o.key.name),
                );
                None
            }
            OptValue::List(_, span) => {
                self.error(
                    "syntax",
                    *span,
                    format!("option '{}' takes one value, not a list", o.key.name),
                );
                None
            }
        }
    }

    /// Where the value of option `spec` was written, or `fallback` (the
    /// statement) when it was left out or could not be read: the place a
    /// `bad-value` error on the option points at.
    pub(super) fn value_place(&self, m: &Given<'a>, spec: &OptionSpec, fallback: Span) -> Span {
        match m.get(spec.name).map(|o| &o.value) {
            Some(OptValue::Expr(e)) => e.span,
            Some(OptValue::List(_, span) | OptValue::Text(_, span)) => *span,
            _ => fallback,
        }
    }

    /// The expression given for `spec`, if it was given (`None` inside: an error was reported).
    pub(super) fn given_expr(
        &mut self,
        m: &Given<'a>,
        spec: &OptionSpec,
    ) -> Option<Option<&'a Expr>> {
        match m.get(spec.name) {
            None => Some(None),
            Some(o) => self.opt_expr(o).map(Some),
        }
    }

    /// A value option: the value given (in its slot and range), else the
    /// table's number default, else nothing. `None`: an error was reported.
    pub(super) fn opt_value(
        &mut self,
        m: &Given<'a>,
        spec: &OptionSpec,
        what: &str,
    ) -> Option<Option<f64>> {
        let Takes::Value(slot, range) = spec.takes else {
            debug_assert!(false, "option {} takes no value", spec.name);
            return None;
        };
        match self.given_expr(m, spec)? {
            Some(e) => self.value_in(e, slot, what, range).map(Some),
            None => Some(default_number(spec)),
        }
    }

    /// A whole-number option, else the table's default. `None`: an error was reported.
    pub(super) fn opt_count(&mut self, m: &Given<'a>, spec: &OptionSpec) -> Option<Option<u64>> {
        let Takes::Count(min) = spec.takes else {
            debug_assert!(false, "option {} takes no count", spec.name);
            return None;
        };
        match self.given_expr(m, spec)? {
            Some(e) => self.integer(e, spec.name, min).map(Some),
            None => Some(default_number(spec).map(|v| v as u64)),
        }
    }

    /// A list option (one value, or several in brackets), each value in the
    /// table's slot and range, with its place; `None` inside when it was not
    /// given. `None`: an error was reported.
    pub(super) fn opt_list(
        &mut self,
        m: &Given<'a>,
        spec: &OptionSpec,
    ) -> Option<Option<Vec<(f64, Span)>>> {
        let Takes::List(slot, range) = spec.takes else {
            debug_assert!(false, "option {} takes no list", spec.name);
            return None;
        };
        let Some(o) = m.get(spec.name) else {
            return Some(None);
        };
        let exprs: Vec<&Expr> = match &o.value {
            OptValue::Expr(e) => vec![e],
            OptValue::List(v, _) => v.iter().collect(),
            OptValue::Wave(w) => {
                self.error(
                    "syntax",
                    w.span,
                    format!("option '{}' takes values, not a wave shape", spec.name),
                );
                return None;
            }
            OptValue::Text(_, span) => {
                self.error(
                    "syntax",
                    *span,
                    format!("option '{}' takes values, not a quoted text", spec.name),
                );
                return None;
            }
        };
        let mut out = Vec::with_capacity(exprs.len());
        let mut ok = true;
        for e in exprs {
            match self.value_in(e, slot, spec.name, range) {
                Some(v) => out.push((v, e.span)),
                None => ok = false,
            }
        }
        ok.then_some(Some(out))
    }

    /// The expressions of an option that takes several names (one, or
    /// several in brackets); empty when it was not given. `None`: an error
    /// was reported.
    pub(super) fn opt_names(&mut self, m: &Given<'a>, spec: &OptionSpec) -> Option<Vec<&'a Expr>> {
        let Some(o) = m.get(spec.name) else {
            return Some(Vec::new());
        };
        match &o.value {
            OptValue::Expr(e) => Some(vec![e]),
            OptValue::List(v, _) => Some(v.iter().collect()),
            OptValue::Wave(w) => {
                self.error(
                    "syntax",
                    w.span,
                    format!("option '{}' takes names, not a wave shape", spec.name),
                );
                None
            }
            OptValue::Text(_, span) => {
                self.error(
                    "syntax",
                    *span,
                    format!("option '{}' takes names, not a quoted text", spec.name),
                );
                None
            }
        }
    }

    /// A text option (`message="…"`): the text and its place, `None` inside
    /// when it was not given. `None`: an error was reported.
    pub(super) fn opt_text(
        &mut self,
        m: &Given<'a>,
        spec: &OptionSpec,
    ) -> Option<Option<(&'a str, Span)>> {
        let Some(o) = m.get(spec.name) else {
            return Some(None);
        };
        match &o.value {
            OptValue::Text(t, span) => Some(Some((t.as_str(), *span))),
            _ => {
                self.error(
                    "syntax",
                    o.key.span,
                    format!(
                        "option '{}' takes a quoted text, e.g. {}=\"CQ TEST\"",
                        spec.name, spec.name
                    ),
                );
                None
            }
        }
    }

    /// A required option: missing is a `missing-option` error at `at`.
    pub(super) fn required(
        &mut self,
        m: &Given<'a>,
        spec: &OptionSpec,
        at: Span,
        ctx: &str,
    ) -> Option<f64> {
        match self.opt_value(m, spec, spec.name)? {
            Some(v) => Some(v),
            None => {
                self.error("missing-option", at, format!("{ctx} needs {}=", spec.name));
                None
            }
        }
    }

    /// A word option: the typed value of the word given, else of the table's
    /// default word. An unknown word is an error, never a default.
    pub(super) fn opt_word<T: Copy, const N: usize>(
        &mut self,
        m: &Given<'a>,
        spec: &OptionSpec,
        words: &Words<T, N>,
    ) -> Option<T> {
        match self.given_expr(m, spec)? {
            Some(e) => self.word(e, words, spec.name),
            None => match spec.default {
                Default::Word(w) => words.get(w),
                _ => None,
            },
        }
    }

    /// One word of a fixed set, as its typed value. Anything else is an
    /// error naming the words and the nearest one.
    pub(super) fn word<T: Copy, const N: usize>(
        &mut self,
        e: &Expr,
        words: &Words<T, N>,
        what: &str,
    ) -> Option<T> {
        let allowed: Vec<&str> = words.0.iter().map(|(w, _)| *w).collect();
        let Some(n) = e.as_name() else {
            self.error(
                "syntax",
                e.span,
                format!("{what} must be one of: {}", allowed.join(", ")),
            );
            return None;
        };
        if let Some(v) = words.get(n) {
            return Some(v);
        }
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

/// The number an option defaults to, if the table gives one.
fn default_number(spec: &OptionSpec) -> Option<f64> {
    match spec.default {
        Default::Number(v) => Some(v),
        _ => None,
    }
}
