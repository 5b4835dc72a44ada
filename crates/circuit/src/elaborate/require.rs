//! `require FIGURE [N] [ELEMENT] CMP BOUND`: the figure, the element it is
//! about, and a bound in the figure's unit (or a mask for `harmonics`).

use super::{fmt_num, Cx};
use crate::builtin::builtin_names;
use crate::figure::{About, Figure};
use crate::ir::*;
use crate::unit::Unit;
use std::collections::HashMap;
use tankwave_netlist::ast::*;
use tankwave_netlist::suggest::did_you_mean;
use tankwave_netlist::{Slot, Span};

/// The unit slot of a `require` bound on a figure of `unit` (the catalogue
/// declares the unit, the slot follows).
fn bound_slot(unit: Unit) -> Slot {
    match unit {
        Unit::Watt | Unit::Dbm => Slot::Power,
        Unit::Fraction => Slot::Fraction,
        Unit::Db | Unit::Dbc => Slot::Db,
        Unit::Volt => Slot::Voltage,
        Unit::Ampere => Slot::Current,
        Unit::Ohm => Slot::Resistance,
        Unit::Kelvin | Unit::DegC => Slot::Temperature,
        Unit::Degree => Slot::Angle,
        Unit::Ratio => Slot::Number,
        Unit::Second => Slot::Time,
        Unit::Hertz => Slot::Frequency,
    }
}

impl<'a> Cx<'a> {
    pub(super) fn requirement(
        &mut self,
        r: &'a RequireStmt,
        span: Span,
        masks: &HashMap<&'a str, usize>,
    ) -> Option<Requirement> {
        let m = r.metric.name.as_str();
        let Some(figure) = Figure::from_word(m) else {
            let words: Vec<&str> = Figure::words().collect();
            let help = did_you_mean(m, words.iter())
                .or_else(|| Some(format!("figures: {}", words.join(", "))));
            self.error(
                "unknown-metric",
                r.metric.span,
                format!("unknown figure '{m}'"),
            )
            .help = help;
            return None;
        };
        if let Some(n) = &r.number {
            if figure.about() != About::Harmonic {
                self.error("syntax", n.span, format!("'{m}' takes no number"));
                return None;
            }
        }
        let element = self.required_element(r, figure)?;
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
        if matches!(figure.about(), About::Mask | About::SidebandMask) {
            if cmp != Cmp::Le {
                let what = if figure.about() == About::Mask {
                    "harmonics"
                } else {
                    "sidebands"
                };
                self.error(
                    "syntax",
                    r.cmp_span,
                    format!("{what} are required <= a mask"),
                );
                return None;
            }
            let bound = self.mask_bound(r, masks)?;
            return Some(Requirement {
                metric: Metric::of(figure),
                cmp,
                bound,
                text,
                origin,
            });
        }
        let harmonic = match (figure.about(), &r.number) {
            (About::Harmonic, Some(n)) => Some(self.integer(n, "harmonic number", 2)? as u32),
            (About::Harmonic, None) => {
                self.error(
                    "syntax",
                    r.metric.span,
                    format!("require {m} N needs the harmonic number N (e.g. {m} 3 <= -50dBc)"),
                );
                return None;
            }
            _ => None,
        };
        let metric = Metric {
            figure,
            harmonic,
            element,
        };
        let v = self.value(&r.bound, bound_slot(figure.unit()), &format!("require {m}"))?;
        if figure == Figure::InputVswr && v < 1.0 {
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

    /// The element a figure is about: only for per-element figures, of the
    /// right kind. `Some(None)`: the figure is about the whole stage.
    fn required_element(&mut self, r: &RequireStmt, figure: Figure) -> Option<Option<ElementId>> {
        let Some(id) = &r.element else {
            return Some(None);
        };
        let m = figure.word().unwrap_or("?");
        if !figure.about().takes_element() {
            self.error(
                "syntax",
                id.span,
                format!("'{m}' is not about one element; remove '{}'", id.name),
            );
            return None;
        }
        let eid = self.element_ref(id, &format!("require {m}"))?;
        let k = self.elem_kind(eid);
        if figure.about() == About::RatedPart {
            if !matches!(
                k,
                Some(ElemKeyword::Resistor | ElemKeyword::Capacitor | ElemKeyword::Inductor)
            ) {
                self.error(
                    "element-kind",
                    id.span,
                    format!(
                        "stress is for rated resistors, capacitors and inductors, '{}' is a {}",
                        id.name,
                        self.kind_word(eid)
                    ),
                );
                return None;
            }
        } else if k != Some(ElemKeyword::Bjt) {
            self.error(
                "element-kind",
                id.span,
                format!(
                    "{m} is about a bjt, '{}' is a {}",
                    id.name,
                    self.kind_word(eid)
                ),
            );
            return None;
        }
        Some(Some(eid))
    }

    /// The mask `require harmonics <= MASK` names: one of the file's or a built-in one.
    fn mask_bound(&mut self, r: &RequireStmt, masks: &HashMap<&'a str, usize>) -> Option<Bound> {
        let Some(name) = r.bound.as_name() else {
            self.error(
                "syntax",
                r.bound.span,
                "require harmonics <= MASK needs a mask name",
            );
            return None;
        };
        if let Some(i) = masks.get(name) {
            return Some(Bound::Mask(*i));
        }
        if builtin_names().iter().any(|b| b == name) {
            return Some(Bound::BuiltinMask(name.to_string()));
        }
        if self.is_broken(&["mask"], name) {
            return None;
        }
        let mut cands: Vec<String> = masks.keys().map(|s| s.to_string()).collect();
        cands.extend(builtin_names());
        let help = did_you_mean(name, cands.iter()).or_else(|| {
            Some(format!(
                "the built-in masks are {}; a `mask NAME {{ … }}` block in the file defines another",
                builtin_names().join(", ")
            ))
        });
        self.error(
            "unknown-mask",
            r.bound.span,
            format!("no mask named '{name}'"),
        )
        .help = help;
        None
    }
}
