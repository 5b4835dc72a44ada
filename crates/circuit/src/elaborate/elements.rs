//! Element statements (`resistor`, `capacitor`, `inductor`, `coupling`,
//! `voltage`, `current`, `diode`, `bjt`), node numbering, element references,
//! and the `output` and `input` statements. Options are read through
//! [`crate::options::element`].

use super::{fmt_num, Cx, ELEMENT_KEYWORDS};
use crate::ir::*;
use crate::options::{element as o, OptionSpec};
use tankwave_netlist::ast::*;
use tankwave_netlist::suggest::did_you_mean;
use tankwave_netlist::Slot;

/// Largest fit error (a fraction, 1000 %) a `fit` error shows as a figure;
/// beyond it the model does not follow the data at all and the message
/// says "more than" this.
const FIT_OFF_SHOWN: f64 = 10.0;

/// What the element pass knows about the parts.
pub(super) struct PartsSeen<'m> {
    models: &'m [Model],
    kinds: &'m [ModelKind],
    ok: bool,
}

impl<'a> Cx<'a> {
    /// Every element, in declaration order (ids stay those of pass 1: a
    /// failed element keeps its place). True if every element elaborated.
    pub(super) fn elements(
        &mut self,
        c: &mut Circuit,
        model_kinds: &[ModelKind],
        model_ok: bool,
    ) -> bool {
        let steady_freq = c.analyses.iter().find_map(|a| match a {
            Analysis::Steady { freq, .. } => Some(*freq),
            _ => None,
        });
        let models = std::mem::take(&mut c.models);
        let parts = PartsSeen {
            models: &models,
            kinds: model_kinds,
            ok: model_ok,
        };
        let elems: Vec<&'a ElementStmt> = self.elems.iter().map(|e| e.stmt).collect();
        let mut all_ok = true;
        for e in elems {
            self.elem_spans.push(e.name.span);
            let kind = if e.kind == ElemKeyword::Measured {
                self.measured(e, &c.analyses)
            } else {
                self.element(e, &parts, steady_freq)
            };
            let kind = kind.unwrap_or_else(|| {
                all_ok = false;
                // A placeholder keeps the ids aligned with pass 1.
                ElementKind::Resistor {
                    a: NodeId::GROUND,
                    b: NodeId::GROUND,
                    r: 1.0,
                    rating_w: None,
                    ntc_b: None,
                }
            });
            c.elements.push(Element {
                name: e.name.name.clone(),
                kind,
                origin: self.origin(e.name.span),
            });
        }
        c.models = models;
        all_ok
    }

    pub(super) fn node(&mut self, name: &str) -> NodeId {
        if name == "gnd" {
            return NodeId::GROUND;
        }
        if let Some(i) = self.nodes.get(name) {
            return NodeId::node(*i);
        }
        let i = self.node_names.len();
        self.node_names.push(name.to_string());
        self.nodes.insert(name.to_string(), i);
        NodeId::node(i)
    }

    pub(super) fn element_ref(&mut self, id: &Ident, ctx: &str) -> Option<ElementId> {
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

    pub(super) fn elem_kind(&self, id: ElementId) -> Option<ElemKeyword> {
        self.elems.get(id.index()).map(|e| e.kind)
    }

    /// The keyword of an element's kind, for messages.
    pub(super) fn kind_word(&self, id: ElementId) -> &'static str {
        self.elem_kind(id).map(|k| k.keyword()).unwrap_or("?")
    }

    /// An element's main value after the variant's overrides.
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
        parts: &PartsSeen<'_>,
        steady_freq: Option<f64>,
    ) -> Option<ElementKind> {
        match e.kind {
            ElemKeyword::Resistor | ElemKeyword::Capacitor | ElemKeyword::Inductor => {
                self.passive(e, steady_freq)
            }
            ElemKeyword::Coupling => self.coupling(e),
            ElemKeyword::Voltage | ElemKeyword::Current => self.source(e),
            ElemKeyword::Diode | ElemKeyword::Bjt => self.semiconductor(e, parts),
            ElemKeyword::Measured => None,
        }
    }

    /// A measured network: its Touchstone file read (problems in it reported
    /// at their line and column in that file), its ports, its out-of-band
    /// rule, and every frequency the analyses need checked against the
    /// file's band (docs/analyses.md, "Measured networks").
    fn measured(&mut self, e: &'a ElementStmt, analyses: &[Analysis]) -> Option<ElementKind> {
        use crate::touchstone::{read, MeasuredNetwork, Outside};
        let name = e.name.name.as_str();
        let ctx = format!("measured {name}");
        for n in &e.nodes {
            self.node(&n.name);
        }
        let m = self.opts(&e.options, o::of("measured"), &ctx);
        let word = self.opt_word(&m, &o::OUTSIDE, &crate::options::OUTSIDE_WORDS);
        let r = self.opt_value(&m, &o::OUTSIDE_R, "outside_r")?;
        let outside = match (m.contains_key(o::OUTSIDE.name), r) {
            (true, Some(_)) => {
                let sp = m
                    .get(o::OUTSIDE_R.name)
                    .map(|o| o.key.span)
                    .unwrap_or(e.name.span);
                self.error(
                    "syntax",
                    sp,
                    format!("{ctx}: give outside= or outside_r=, not both"),
                );
                return None;
            }
            (_, Some(r)) => Outside::Resistance(r),
            (_, None) => word?,
        };
        let file = e.file.as_ref()?;
        let id = file.source?;
        let src = self.map.file(id)?;
        let (fname, text) = (src.name.clone(), src.text.clone());
        let net = match read(&fname, &text) {
            Ok(n) => n,
            Err(err) => {
                let sp = tankwave_netlist::Span::new(id, err.start, err.end);
                self.error("touchstone", sp, format!("{ctx}: {}", err.message));
                return None;
            }
        };
        if e.nodes.len() != 2 * net.ports {
            self.error(
                "syntax",
                e.name.span,
                format!(
                    "{ctx}: the file holds a {}-port, which takes {} nodes (a positive and a negative one per port), got {}",
                    net.ports,
                    2 * net.ports,
                    e.nodes.len()
                ),
            );
            return None;
        }
        let network = match MeasuredNetwork::from_network(&net, outside) {
            Ok(n) => n,
            Err(k) => {
                self.error(
                    "touchstone",
                    file.span,
                    match MeasuredNetwork::form_of(outside) {
                        crate::touchstone::Form::Admittance => format!(
                            "{ctx}: the point at {} has no admittance (a short circuit)",
                            crate::si::si_prefixed(net.freqs[k], "Hz", 6)
                        ),
                        crate::touchstone::Form::Impedance => format!(
                            "{ctx}: the point at {} has no impedance (an open circuit), which outside=short needs (the network is then held as its impedance matrix)",
                            crate::si::si_prefixed(net.freqs[k], "Hz", 6)
                        ),
                    },
                );
                return None;
            }
        };
        if outside == Outside::Refuse {
            let (lo, hi) = network.band();
            let mut needs: Vec<(f64, String)> = vec![(0.0, "the bias point (0 Hz)".into())];
            for a in analyses {
                match a {
                    Analysis::Ac { from, to, .. } => {
                        needs.push((*from, "the AC sweep".into()));
                        needs.push((*to, "the AC sweep".into()));
                    }
                    Analysis::Steady {
                        freq, harmonics, ..
                    } => {
                        needs.push((
                            *freq * *harmonics as f64,
                            format!("harmonic {harmonics} of the steady state"),
                        ));
                    }
                    _ => {}
                }
            }
            if let Some((f, what)) = needs.iter().find(|(f, _)| !network.covers(*f)) {
                self.error(
                    "out-of-band",
                    file.span,
                    format!(
                        "{ctx}: {what} needs {}, outside the file's band {} to {}",
                        crate::si::si_prefixed(*f, "Hz", 6),
                        crate::si::si_prefixed(lo, "Hz", 6),
                        crate::si::si_prefixed(hi, "Hz", 6)
                    ),
                )
                .help = Some(
                    "say what the network is there: outside=open, outside=short, outside=hold (the nearest point) or outside_r=RES"
                        .into(),
                );
                return None;
            }
        }
        let time_domain = analyses.iter().any(|a| {
            matches!(
                a,
                Analysis::Transient { .. }
                    | Analysis::Steady {
                        method: SteadyMethod::Shooting | SteadyMethod::Settle,
                        ..
                    }
            )
        });
        let mut network = network;
        if time_domain {
            let bound = self.opt_value(&m, &o::FIT_ERROR, "fit_error")?;
            let poles = self.opt_count(&m, &o::FIT_POLES)?;
            let bound = bound.unwrap_or(0.01);
            let poles = poles.unwrap_or(20) as usize;
            let max = crate::rational::MAX_ORDER;
            if poles > max {
                let sp = m
                    .get(o::FIT_POLES.name)
                    .map(|o| o.key.span)
                    .unwrap_or(e.name.span);
                self.error(
                    "bad-value",
                    sp,
                    format!("{ctx}: fit_poles={poles} is more than {max}"),
                );
                return None;
            }
            let params = crate::rational::FitParams {
                min_order: 2.min(poles),
                max_order: poles,
                target: bound,
                // the impedance form's short at 0 Hz holds exactly
                hold_dc: network.form() == crate::touchstone::Form::Impedance,
                ..Default::default()
            };
            let dc = network
                .value(0.0)
                .map(|v| v.iter().map(|y| y.re).collect::<Vec<_>>());
            let fitted = dc
                .ok_or_else(|| crate::rational::FitError::BadData("no value at 0 Hz".into()))
                .and_then(|dc| {
                    crate::rational::fit_network(
                        network.ports,
                        &network.freqs,
                        &network.values,
                        &dc,
                        &params,
                    )
                });
            match fitted {
                Ok(f) => {
                    let worst = f.info.worst_error.max(f.dc_error);
                    if worst > bound {
                        let at = if f.dc_error > f.info.worst_error {
                            "at 0 Hz (against its out-of-band rule)".to_string()
                        } else {
                            format!("at {}", crate::si::si_prefixed(f.info.worst_at, "Hz", 6))
                        };
                        self.error(
                            "fit",
                            file.span,
                            format!(
                                "{ctx}: its time-domain model ({} poles) is off by {} {at}, more than fit_error={}",
                                f.info.order,
                                // a fit that does not follow the data at all
                                // is not worth a figure of its own
                                if worst > FIT_OFF_SHOWN {
                                    format!("more than {}", crate::si::percent(FIT_OFF_SHOWN))
                                } else {
                                    crate::si::percent(worst)
                                },
                                crate::si::percent(bound)
                            ),
                        )
                        .help = Some(
                            "allow more poles (fit_poles=, at most 40), a larger fit_error=, or use harmonic balance, which uses the file exactly".into(),
                        );
                        return None;
                    }
                    network.fit = Some(std::sync::Arc::new(f));
                }
                Err(err) => {
                    self.error(
                        "fit",
                        file.span,
                        format!("{ctx}: no time-domain model could be fitted: {err}"),
                    )
                    .help = Some("use harmonic balance, which uses the file exactly".into());
                    return None;
                }
            }
        }
        let mut t = e.nodes.iter().map(|n| self.node(&n.name));
        let mut ports = Vec::new();
        while let (Some(p), Some(n)) = (t.next(), t.next()) {
            ports.push((p, n));
        }
        Some(ElementKind::Measured {
            ports,
            network: std::sync::Arc::new(network),
        })
    }

    /// The node of the `i`-th positional terminal (ground if absent).
    fn terminal(&mut self, e: &ElementStmt, i: usize) -> NodeId {
        e.nodes
            .get(i)
            .map(|n| self.node(&n.name))
            .unwrap_or(NodeId::GROUND)
    }

    /// Number the positional nodes of an element in order of appearance.
    fn terminals(&mut self, e: &ElementStmt) -> (NodeId, NodeId) {
        for n in &e.nodes {
            self.node(&n.name);
        }
        (self.terminal(e, 0), self.terminal(e, 1))
    }

    fn passive(&mut self, e: &'a ElementStmt, steady_freq: Option<f64>) -> Option<ElementKind> {
        let name = e.name.name.as_str();
        let kw = e.kind.keyword();
        let ctx = format!("{kw} {name}");
        let (a, b) = self.terminals(e);
        let (slot, unitname, rating) = match e.kind {
            ElemKeyword::Resistor => (Slot::Resistance, "resistance", o::RESISTOR_RATING),
            ElemKeyword::Capacitor => (Slot::Capacitance, "capacitance", o::CAPACITOR_RATING),
            _ => (Slot::Inductance, "inductance", o::INDUCTOR_RATING),
        };
        let m = self.opts(&e.options, o::of(kw), &ctx);
        let ve = e.value.as_ref()?;
        let v = self.value(ve, slot, &format!("{kw} value"));
        let rating = self.opt_value(&m, &rating, &format!("{kw} rating"));
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
        match e.kind {
            ElemKeyword::Resistor => Some(ElementKind::Resistor {
                a,
                b,
                r: v,
                rating_w: rating,
                ntc_b: self.thermistor_b(&m, e)?,
            }),
            ElemKeyword::Capacitor => Some(ElementKind::Capacitor {
                a,
                b,
                c: v,
                rating_v: rating,
                rating_a: self.opt_value(
                    &m,
                    &o::CAPACITOR_CURRENT_RATING,
                    "capacitor current_rating",
                )?,
            }),
            _ => Some(ElementKind::Inductor {
                a,
                b,
                l: v,
                series_r: self.inductor_loss(e, &m, &ctx, v, steady_freq)?,
                rating_a: rating,
            }),
        }
    }

    /// A thermistor's B constant from `ntc_b=` (K), within what real
    /// thermistors have, so that its law cannot overflow or vanish at the
    /// temperatures a stage reaches. `None` inside: a plain resistor.
    fn thermistor_b(&mut self, m: &super::opts::Given<'a>, e: &ElementStmt) -> Option<Option<f64>> {
        let b = self.opt_value(m, &o::RESISTOR_NTC_B, "resistor ntc_b")?;
        if let Some(v) = b {
            if v > MAX_THERMISTOR_B_K {
                let sp = m
                    .get(o::RESISTOR_NTC_B.name)
                    .map(|o| o.key.span)
                    .unwrap_or(e.name.span);
                self.error(
                    "bad-value",
                    sp,
                    format!(
                        "resistor {}: ntc_b={} is beyond the B constants of real thermistors \
                         (a few thousand kelvin; at most {})",
                        e.name.name,
                        fmt_num(v),
                        fmt_num(MAX_THERMISTOR_B_K)
                    ),
                );
                return None;
            }
        }
        Some(b)
    }

    /// An inductor's series loss resistance from `r=`, or from `q=` at
    /// `q_at=` (or at the steady frequency).
    fn inductor_loss(
        &mut self,
        e: &ElementStmt,
        m: &super::opts::Given<'a>,
        ctx: &str,
        l: f64,
        steady_freq: Option<f64>,
    ) -> Option<f64> {
        let r = self.opt_value(m, &o::INDUCTOR_R, "inductor r")?;
        let q = self.opt_value(m, &o::INDUCTOR_Q, "inductor q")?;
        let qf = self.opt_value(m, &o::INDUCTOR_Q_AT, "inductor q_at")?;
        let key_span = |spec: &OptionSpec| m.get(spec.name).map(|o| o.key.span);
        match (r, q) {
            (Some(_), Some(_)) => {
                let sp = key_span(&o::INDUCTOR_Q).unwrap_or(e.name.span);
                self.error(
                    "syntax",
                    sp,
                    format!("{ctx}: give the loss as r= or as q=, not both"),
                );
                None
            }
            (Some(r), None) => {
                if let Some(sp) = key_span(&o::INDUCTOR_Q_AT) {
                    self.warning(
                        "unknown-option",
                        sp,
                        format!("{ctx}: q_at= is ignored without q="),
                    );
                }
                Some(r)
            }
            (None, Some(q)) => {
                match qf.or(steady_freq) {
                    Some(f) => Some(2.0 * std::f64::consts::PI * f * l / q),
                    None => {
                        let sp = key_span(&o::INDUCTOR_Q).unwrap_or(e.name.span);
                        self.error("inductor-loss", sp, format!("{ctx}: q= needs a frequency")).help =
                        Some("add q_at=FREQ, or an 'analyze steady freq=...' whose frequency is used".into());
                        None
                    }
                }
            }
            (None, None) => Some(0.0),
        }
    }

    fn coupling(&mut self, e: &'a ElementStmt) -> Option<ElementKind> {
        let name = e.name.name.as_str();
        let ctx = format!("{} {name}", e.kind.keyword());
        let m = self.opts(&e.options, o::of(e.kind.keyword()), &ctx);
        if e.nodes.len() < 2 {
            self.error(
                "syntax",
                e.name.span,
                format!("{ctx} needs at least two inductor names"),
            );
            return None;
        }
        let inductors = self.coupled_inductors(e, &ctx);
        let k = match self.given_expr(&m, &o::COUPLING_K)? {
            Some(ex) => {
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
        Some(ElementKind::Coupling {
            inductors: inductors?,
            k: k?,
        })
    }

    /// The inductors a coupling names: each an inductor, none twice.
    fn coupled_inductors(&mut self, e: &ElementStmt, ctx: &str) -> Option<Vec<ElementId>> {
        let mut ids = Vec::new();
        let mut ok = true;
        for n in &e.nodes {
            match self.element_ref(n, ctx) {
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
                    let k = self.kind_word(id);
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
        ok.then_some(ids)
    }

    fn source(&mut self, e: &'a ElementStmt) -> Option<ElementKind> {
        let name = e.name.name.as_str();
        let kw = e.kind.keyword();
        let ctx = format!("{kw} {name}");
        let (p, n) = self.terminals(e);
        let is_v = e.kind == ElemKeyword::Voltage;
        let (slot, dc_spec) = if is_v {
            (Slot::Voltage, o::VOLTAGE_DC)
        } else {
            (Slot::Current, o::CURRENT_DC)
        };
        let m = self.opts(&e.options, o::of(kw), &ctx);
        let dc = self.opt_value(&m, &dc_spec, &format!("{kw} dc"));
        let rs = if is_v {
            self.opt_value(&m, &o::INTERNAL, "internal resistance")
        } else {
            Some(None)
        };
        let shape = match m.get(o::WAVE.name) {
            None => Some(None),
            Some(opt) => match &opt.value {
                OptValue::Wave(w) => self.wave(w, slot).map(Some),
                OptValue::List(_, span) | OptValue::Text(_, span) => {
                    self.error(
                        "syntax",
                        *span,
                        "wave= takes sine(...), square(...) or table(...)",
                    );
                    None
                }
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

    fn semiconductor(&mut self, e: &'a ElementStmt, parts: &PartsSeen<'_>) -> Option<ElementKind> {
        let name = e.name.name.as_str();
        let kw = e.kind.keyword();
        let ctx = format!("{kw} {name}");
        let is_d = e.kind == ElemKeyword::Diode;
        let (a, k) = self.terminals(e);
        let m = self.opts(&e.options, o::of(kw), &ctx);
        let term = if is_d {
            Vec::new()
        } else {
            self.bjt_terminals(e, &m, &ctx)?
        };
        let area = self.opt_value(&m, &o::AREA, "area")?.unwrap_or(1.0);
        let area = self.main_value(name, area);
        if area <= 0.0 {
            self.error(
                "bad-value",
                e.name.span,
                format!("{ctx}: area must be > 0, got {}", fmt_num(area)),
            );
            return None;
        }
        let model = self.bind_part(e, &m, &ctx, parts)?;
        if is_d {
            Some(ElementKind::Diode { a, k, model, area })
        } else {
            Some(ElementKind::Bjt {
                c: term[0],
                b: term[1],
                e: term[2],
                model,
                area,
            })
        }
    }

    /// The collector, base and emitter nodes of a bjt (`c=`, `b=`, `e=`, all required).
    fn bjt_terminals(
        &mut self,
        e: &ElementStmt,
        m: &super::opts::Given<'a>,
        ctx: &str,
    ) -> Option<Vec<NodeId>> {
        let mut term = Vec::new();
        for (spec, what) in [
            (o::COLLECTOR, "collector"),
            (o::BASE, "base"),
            (o::EMITTER, "emitter"),
        ] {
            let t = spec.name;
            match self.given_expr(m, &spec)? {
                Some(ex) => {
                    let id = self.name_of(ex, &format!("{t}= (a node)"))?;
                    term.push(self.node(&id.name));
                }
                None => {
                    self.error(
                        "missing-option",
                        e.name.span,
                        format!("{ctx} needs {t}= (the {what} node)"),
                    );
                    return None;
                }
            }
        }
        Some(term)
    }

    /// The part named by `part=`, which must exist and be of a kind that fits the element.
    fn bind_part(
        &mut self,
        e: &ElementStmt,
        m: &super::opts::Given<'a>,
        ctx: &str,
        parts: &PartsSeen<'_>,
    ) -> Option<ModelId> {
        let is_d = e.kind == ElemKeyword::Diode;
        let Some(mex) = self.given_expr(m, &o::PART)? else {
            self.error(
                "missing-option",
                e.name.span,
                format!("{ctx} needs part=NAME"),
            );
            return None;
        };
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
        if !parts.ok {
            return None;
        }
        let mk = *parts.kinds.get(mid.index())?;
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
            let mname_s = parts
                .models
                .get(mid.index())
                .map(|m| m.name.as_str())
                .unwrap_or("?");
            self.error(
                "part-kind",
                mname.span,
                format!(
                    "{ctx} needs {want}, '{mname_s}' is {}",
                    super::parts::kind_word(mk)
                ),
            );
            return None;
        }
        Some(mid)
    }

    /// `output` and `input`: which element's power is the output, which source is the drive.
    pub(super) fn ports(&mut self, stmts: &'a [Statement], c: &mut Circuit) {
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
                                    self.kind_word(e)
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
                                    self.kind_word(e)
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
    }
}
