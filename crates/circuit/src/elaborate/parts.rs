//! `part NAME npn|pnp|diode { BLOCK { name=value … } … }`: part kinds and
//! their blocks, read through the parameter tables of [`crate::models`].

use super::Cx;
use crate::ir::*;
use crate::models::{self, Need, Param, BJT_PARAMS, DIODE_PARAMS};
use tankwave_netlist::ast::{Expr, Ident, PartStmt, Statement, Stmt};
use tankwave_netlist::suggest::did_you_mean;
use tankwave_netlist::vocab;

/// The part-kind word of a model kind.
pub(super) fn kind_word(k: ModelKind) -> &'static str {
    match k {
        ModelKind::Npn => "npn",
        ModelKind::Pnp => "pnp",
        ModelKind::Diode => "diode",
    }
}

/// The values read from a part's blocks so far.
struct Reading {
    ok: bool,
    given: Vec<&'static str>,
    values: Vec<(usize, f64)>,
}

impl<'a> Cx<'a> {
    /// Pass 1: record a part name (defined twice is an error).
    pub(super) fn declare_part(&mut self, m: &'a PartStmt) {
        if self.models.contains_key(m.name.name.as_str()) {
            self.error(
                "duplicate-name",
                m.name.span,
                format!("part '{}' is already defined", m.name.name),
            );
        } else {
            let id = ModelId::new(self.models.len());
            self.models.insert(m.name.name.as_str(), id);
        }
    }

    /// Every part, in declaration order.
    pub(super) fn parts(&mut self, stmts: &'a [Statement], c: &mut Circuit) {
        for s in stmts {
            if let Stmt::Part(m) = &s.stmt {
                if let Some(model) = self.part(m) {
                    c.models.push(model);
                }
            }
        }
    }

    fn part(&mut self, m: &'a PartStmt) -> Option<Model> {
        let kind = [ModelKind::Npn, ModelKind::Pnp, ModelKind::Diode]
            .into_iter()
            .find(|k| kind_word(*k) == m.kind.name);
        let Some(kind) = kind else {
            let other = m.kind.name.as_str();
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
        let mut r = Reading {
            ok: true,
            given: Vec::new(),
            values: Vec::new(),
        };
        self.loose_part_values(m, table);
        r.ok &= m.loose.is_empty();
        let block_names = models::blocks(table);
        for b in &m.blocks {
            if !block_names.contains(&b.name.name.as_str()) {
                let help = did_you_mean(&b.name.name, block_names.iter())
                    .or_else(|| Some(format!("blocks: {}", block_names.join(", "))));
                self.error(
                    "unknown-part-param",
                    b.name.span,
                    format!("{} part has no block '{}'", m.kind.name, b.name.name),
                )
                .help = help;
                r.ok = false;
                continue;
            }
            for (k, e) in &b.params {
                self.part_value(&b.name, k, e, table, &mut r);
            }
        }
        self.part_defaults(m, table, out, &mut r);
        if !r.ok {
            return None;
        }
        for (i, v) in r.values {
            *(table[i].field)(out) = v;
        }
        Some(())
    }

    /// A parameter written outside any block is an error naming its block.
    fn loose_part_values<P>(&mut self, m: &PartStmt, table: &[Param<P>]) {
        let block_names = models::blocks(table);
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
                    format!("{} part has no parameter '{}'", m.kind.name, k.name),
                    format!("blocks: {}", block_names.join(", ")),
                ),
            };
            self.error("unknown-part-param", k.span, msg).help = Some(help);
        }
    }

    /// One `name=value` inside a known block.
    fn part_value<P>(
        &mut self,
        block: &Ident,
        k: &Ident,
        e: &Expr,
        table: &[Param<P>],
        r: &mut Reading,
    ) {
        let Some(i) = table
            .iter()
            .position(|p| p.block == block.name && p.name == k.name)
        else {
            self.misplaced_part_value(block, k, table);
            r.ok = false;
            return;
        };
        let p = &table[i];
        if r.given.contains(&p.name) {
            self.error(
                "duplicate-option",
                k.span,
                format!("part parameter '{}' given twice", p.name),
            );
            r.ok = false;
            return;
        }
        r.given.push(p.name);
        match self.value_in(e, p.slot, &format!("part parameter {}", p.name), p.range) {
            Some(v) => r.values.push((i, v)),
            None => r.ok = false,
        }
    }

    /// A name not in this block: in another block, retired, or unknown.
    fn misplaced_part_value<P>(&mut self, block: &Ident, k: &Ident, table: &[Param<P>]) {
        let elsewhere = table.iter().find(|p| p.name == k.name);
        let retired = table.iter().find(|p| p.old == k.name);
        let (msg, help) = match (elsewhere, retired) {
            (Some(p), _) => (
                format!("'{}' belongs in the {} block, not {}", k.name, p.block, block.name),
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
                    .filter(|p| p.block == block.name)
                    .map(|p| p.name)
                    .collect();
                (
                    format!("the {} block has no parameter '{}'", block.name, k.name),
                    did_you_mean(&k.name, here.iter())
                        .or_else(|| Some(format!("{}: {}", block.name, here.join(", ")))),
                )
            }
        };
        self.error("unknown-part-param", k.span, msg).help = help;
    }

    /// Parameters not written: required ones are errors, the rest take their default.
    fn part_defaults<P>(&mut self, m: &PartStmt, table: &[Param<P>], out: &mut P, r: &mut Reading) {
        for p in table {
            if r.given.contains(&p.name) {
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
                    r.ok = false;
                }
                Need::WithOthers => {
                    if let Some(w) = p.with.iter().find(|w| r.given.contains(w)) {
                        self.error(
                            "missing-part-param",
                            m.name.span,
                            format!(
                                "part '{}' gives {w}, so it needs {} {{ {}=… }} ({} {})",
                                m.name.name, p.block, p.name, p.symbol, p.meaning
                            ),
                        );
                        r.ok = false;
                    }
                }
                Need::Cited(v, _) | Need::Off(v) => *(p.field)(out) = v,
            }
        }
    }
}
