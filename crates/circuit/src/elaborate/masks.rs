//! `mask NAME { … }`: rules over harmonics or frequency ranges with limits
//! in dBc or watts, which may depend on the carrier power only as
//! `a + b*log10(pcarrier)`.

use super::{fmt_num, Cx};
use crate::ir::*;
use crate::models::Range;
use std::collections::HashMap;
use tankwave_netlist::ast::*;
use tankwave_netlist::expr;
use tankwave_netlist::{Slot, Span};

impl<'a> Cx<'a> {
    /// Every mask (before the requirements, which may name a mask defined
    /// later); returns the mask ids by name.
    pub(super) fn masks(
        &mut self,
        stmts: &'a [Statement],
        c: &mut Circuit,
    ) -> HashMap<&'a str, usize> {
        let mut mask_ids: HashMap<&'a str, usize> = HashMap::new();
        for s in stmts {
            let Stmt::Mask(m) = &s.stmt else {
                continue;
            };
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
        mask_ids
    }

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
            LimitAst::Below(e) => self.below(e),
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

    /// `below X dB`: a positive number of dB under the carrier.
    fn below(&mut self, e: &Expr) -> Option<Limit> {
        match self.limit_expr(e, Slot::Db, "below")? {
            LimitExpr::Const(x) => {
                if x < 0.0 {
                    self.error(
                        "bad-value",
                        e.span,
                        format!(
                            "below takes the number of dB under the carrier (positive), got {}",
                            fmt_num(x)
                        ),
                    )
                    .help = Some(format!("write below {}dB", fmt_num(-x)));
                    return None;
                }
                Some(Limit::Dbc(LimitExpr::Const(-x)))
            }
            LimitExpr::LogCarrier { a, b } => {
                Some(Limit::Dbc(LimitExpr::LogCarrier { a: -a, b: -b }))
            }
        }
    }

    fn rule(&mut self, r: &RuleAst) -> Option<MaskRule> {
        let range = match &r.range {
            RangeAst::All => Some(MaskRange::Any),
            RangeAst::Harmonics { from, to } => self.harmonic_range(from, to.as_ref(), r.span),
            RangeAst::Frequency { from, to } => self
                .freq_range(from, to, r.span)
                .map(|(a, b)| MaskRange::Frequency { from: a, to: b }),
            RangeAst::Offset { from, to } => self
                .freq_range(from, to, r.span)
                .map(|(a, b)| MaskRange::Offset { from: a, to: b }),
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

    /// Harmonics `from` (≥ 2) up to `to` (or all above), going upward.
    fn harmonic_range(&mut self, from: &Expr, to: Option<&Expr>, span: Span) -> Option<MaskRange> {
        let a = self.integer(from, "harmonic number", 2);
        let b = match to {
            Some(t) => self.integer(t, "harmonic number", 2).map(Some),
            None => Some(None),
        };
        let (a, b) = (a?, b?);
        if let Some(b) = b {
            if b < a {
                self.error(
                    "bad-value",
                    span,
                    format!("harmonic range must go upward, got {a} to {b}"),
                );
                return None;
            }
        }
        Some(MaskRange::Harmonics {
            from: a as u32,
            to: b.map(|b| b as u32),
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
}
