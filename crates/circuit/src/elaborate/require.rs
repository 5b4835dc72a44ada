//! `require FIGURE [N] [ELEMENT] CMP BOUND`: the figure, the element it is
//! about, and a bound in the figure's unit (or a mask for `harmonics`).

use super::{fmt_num, Cx};
use crate::builtin::builtin_names;
use crate::ir::*;
use std::collections::HashMap;
use tankwave_netlist::ast::*;
use tankwave_netlist::suggest::did_you_mean;
use tankwave_netlist::{Slot, Span};

/// The figures a requirement may name.
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

/// The figures that are about one element.
fn takes_element(m: &str) -> bool {
    matches!(
        m,
        "vce_peak" | "ic_peak" | "dissipation" | "tj" | "stress" | "conduction"
    )
}

impl<'a> Cx<'a> {
    pub(super) fn requirement(
        &mut self,
        r: &'a RequireStmt,
        span: Span,
        masks: &HashMap<&'a str, usize>,
    ) -> Option<Requirement> {
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
        if let Some(n) = &r.number {
            if m != "harmonic" {
                self.error("syntax", n.span, format!("'{m}' takes no number"));
                return None;
            }
        }
        let element = self.required_element(r, m)?;
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
            let bound = self.mask_bound(r, masks)?;
            return Some(Requirement {
                metric: Metric::Harmonics,
                cmp,
                bound,
                text,
                origin,
            });
        }
        let (metric, slot) = self.metric(r, m, element)?;
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

    /// The element a figure is about: only for per-element figures, of the
    /// right kind. `Some(None)`: the figure is about the whole stage.
    fn required_element(&mut self, r: &RequireStmt, m: &str) -> Option<Option<ElementId>> {
        let Some(id) = &r.element else {
            return Some(None);
        };
        if !takes_element(m) {
            self.error(
                "syntax",
                id.span,
                format!("'{m}' is not about one element; remove '{}'", id.name),
            );
            return None;
        }
        let eid = self.element_ref(id, &format!("require {m}"))?;
        let k = self.elem_kind(eid);
        if m == "stress" {
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

    /// The typed figure and the unit slot of its bound.
    fn metric(
        &mut self,
        r: &RequireStmt,
        m: &str,
        element: Option<ElementId>,
    ) -> Option<(Metric, Slot)> {
        Some(match m {
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
            "conduction" => (Metric::Conduction(element), Slot::Angle),
            other => {
                // Every word of METRICS is matched above; a word added there
                // and not here is refused rather than read as another figure.
                self.error(
                    "unknown-metric",
                    r.metric.span,
                    format!("unknown figure '{other}'"),
                );
                return None;
            }
        })
    }
}
