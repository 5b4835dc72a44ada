//! Study statements: `vary`, `tolerance`, `montecarlo` (options from
//! [`crate::options::montecarlo`]) and `tune`.

use super::{fmt_num, Cx, ELEMENT_KEYWORDS};
use crate::ir::*;
use crate::options::{self, montecarlo as o};
use tankwave_netlist::ast::*;
use tankwave_netlist::suggest::did_you_mean;
use tankwave_netlist::{Slot, Span};

/// The most points one `vary` may sweep.
const MAX_POINTS: f64 = 1e6;

impl<'a> Cx<'a> {
    pub(super) fn vary(
        &mut self,
        target: &'a Ident,
        sweep: &'a SweepAst,
        span: Span,
    ) -> Option<Vary> {
        let (t, slot) = self.vary_target(target)?;
        let s = match sweep {
            SweepAst::List(v) => self.sweep_list(v, span, slot)?,
            SweepAst::Step { from, to, step } => self.sweep_step(from, to, step, slot)?,
            SweepAst::Points {
                from,
                to,
                points,
                log,
            } => self.sweep_points(from, to, points, *log, slot)?,
        };
        Some(Vary {
            target: t,
            sweep: s,
            origin: self.origin(span),
        })
    }

    /// What `vary` changes, and the unit slot of its values.
    fn vary_target(&mut self, target: &Ident) -> Option<(VaryTarget, Slot)> {
        if self.lets.contains_key(target.name.as_str()) {
            return Some((VaryTarget::Param(target.name.clone()), Slot::Any));
        }
        if let Some(&id) = self.elem_ids.get(target.name.as_str()) {
            let slot = match self.elem_kind(id) {
                Some(ElemKeyword::Resistor) => Slot::Resistance,
                Some(ElemKeyword::Capacitor) => Slot::Capacitance,
                Some(ElemKeyword::Inductor) => Slot::Inductance,
                Some(ElemKeyword::Voltage) => Slot::Voltage,
                Some(ElemKeyword::Current) => Slot::Current,
                _ => Slot::Number,
            };
            return Some((VaryTarget::Element(target.name.clone()), slot));
        }
        if self.is_broken(&["let"], &target.name) || self.is_broken(ELEMENT_KEYWORDS, &target.name)
        {
            return None;
        }
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
        None
    }

    fn sweep_list(&mut self, v: &[Expr], span: Span, slot: Slot) -> Option<Sweep> {
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
        Some(Sweep::List(vals))
    }

    fn sweep_step(&mut self, from: &Expr, to: &Expr, step: &Expr, slot: Slot) -> Option<Sweep> {
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
        Some(Sweep::Linear {
            from: a,
            to,
            points,
        })
    }

    fn sweep_points(
        &mut self,
        from: &Expr,
        to: &Expr,
        points: &Expr,
        log: bool,
        slot: Slot,
    ) -> Option<Sweep> {
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
        if !log {
            return Some(Sweep::Linear {
                from: a,
                to: b,
                points: n as usize,
            });
        }
        if a <= 0.0 || b <= 0.0 {
            self.error("bad-value", from.span, "a log sweep needs values > 0");
            return None;
        }
        Some(Sweep::Log {
            from: a,
            to: b,
            points: n as usize,
        })
    }

    /// `tolerance ELEMENT FRACTION [uniform|gaussian]`.
    pub(super) fn tolerance(
        &mut self,
        element: &Ident,
        value: &Expr,
        distribution: Option<&Ident>,
    ) -> Option<Tolerance> {
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
        let words = &options::DISTRIBUTION_WORDS;
        let dist = match distribution {
            None => words.get(options::DISTRIBUTION_DEFAULT),
            Some(d) => {
                let got = words.get(&d.name);
                if got.is_none() {
                    let all = options::WordSet::words(words);
                    let help = did_you_mean(&d.name, all.iter());
                    self.error(
                        "unknown-keyword",
                        d.span,
                        format!(
                            "distribution must be {}, got '{}'",
                            all.join(" or "),
                            d.name
                        ),
                    )
                    .help = help;
                }
                got
            }
        };
        Some(Tolerance {
            element: id?,
            fraction: f?,
            distribution: dist?,
        })
    }

    /// `montecarlo runs=N [seed=S]`.
    pub(super) fn montecarlo(&mut self, opts: &'a [Opt], keyword: Span) -> Option<MonteCarlo> {
        let m = self.opts(opts, o::ALL, "montecarlo");
        let runs = match self.opt_count(&m, &o::RUNS) {
            Some(Some(n)) => Some(n),
            Some(None) => {
                self.error("missing-option", keyword, "montecarlo needs runs=N");
                None
            }
            None => None,
        };
        let seed = self.opt_count(&m, &o::SEED).flatten();
        Some(MonteCarlo {
            runs: runs? as usize,
            seed: seed?,
        })
    }

    /// `tune PARAM from TO`: a parameter and an upward range.
    pub(super) fn tune(&mut self, param: &Ident, from: &Expr, to: &Expr) -> Option<Tune> {
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
            return None;
        }
        let a = self.value(from, Slot::Any, "tune range");
        let b = self.value(to, Slot::Any, "tune range");
        let (a, b) = (a?, b?);
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
            return None;
        }
        Some(Tune {
            param: param.name.clone(),
            from: a,
            to: b,
        })
    }
}
