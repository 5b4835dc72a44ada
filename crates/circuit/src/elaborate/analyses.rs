//! `analyze bias|transient|ac|steady|ruggedness|heat|twotone|loadpull|keying`: options read through
//! [`crate::options::analysis`], checked against each other.

use super::{fmt_num, Cx};
use crate::ir::*;
use crate::options::{self, analysis as o};
use tankwave_netlist::ast::{ElemKeyword, Ident, Opt};
use tankwave_netlist::suggest::did_you_mean;
use tankwave_netlist::vocab::{self, Place};

impl<'a> Cx<'a> {
    pub(super) fn analysis(&mut self, kind: &'a Ident, options: &'a [Opt]) -> Option<Analysis> {
        let Some(table) = o::of(&kind.name) else {
            self.unknown_analysis(kind);
            return None;
        };
        let ctx = format!("analyze {}", kind.name);
        let m = self.opts(options, table, &ctx);
        match kind.name.as_str() {
            "bias" => Some(Analysis::Bias),
            "transient" => self.transient(kind, &m),
            "ac" => self.ac(kind, &m),
            "ruggedness" => self.ruggedness(kind, &m),
            "heat" => self.heat(kind, &m),
            "twotone" => self.two_tone(kind, &m),
            "loadpull" => self.load_pull(kind, &m),
            "keying" => self.keying(kind, &m),
            _ => self.steady(kind, &m),
        }
    }

    /// A `source=` option (of `analyze KIND`): `None` inside when not
    /// given; it must name a voltage or current source. `None`: an error
    /// was reported.
    fn source_option(
        &mut self,
        m: &super::opts::Given<'a>,
        spec: &crate::options::OptionSpec,
        kind: &str,
    ) -> Option<Option<ElementId>> {
        let Some(e) = self.given_expr(m, spec)? else {
            return Some(None);
        };
        let id = self.name_of(e, "source")?;
        let id = self.element_ref(&id, &format!("analyze {kind} source"))?;
        if !matches!(
            self.elem_kind(id),
            Some(ElemKeyword::Voltage | ElemKeyword::Current)
        ) {
            self.error(
                "element-kind",
                e.span,
                format!("analyze {kind} source must be a voltage or current source"),
            );
            return None;
        }
        Some(Some(id))
    }

    fn unknown_analysis(&mut self, kind: &Ident) {
        let other = kind.name.as_str();
        if let Some(r) = vocab::retired(other, Place::Analysis) {
            self.error("old-spelling", kind.span, vocab::retired_message(r));
            return;
        }
        let names = o::kinds();
        let help = did_you_mean(other, names.iter());
        self.error(
            "unknown-keyword",
            kind.span,
            format!("unknown analysis '{other}' ({})", names.join(", ")),
        )
        .help = help;
    }

    fn transient(&mut self, kind: &Ident, m: &super::opts::Given<'a>) -> Option<Analysis> {
        let stop = self.required(m, &o::STOP, kind.span, "analyze transient")?;
        let step = self
            .opt_value(m, &o::STEP, "step")?
            .unwrap_or(stop / o::STEPS_PER_STOP);
        let max_step = self.opt_value(m, &o::MAX_STEP, "max_step")?;
        let rel_tolerance = self.opt_value(m, &o::TOLERANCE, "tolerance")?;
        let start = self.opt_word(m, &o::START, &options::START_WORDS)?;
        let method = self.opt_word(m, &o::INTEGRATION, &options::INTEGRATION_WORDS)?;
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

    fn ac(&mut self, kind: &Ident, m: &super::opts::Given<'a>) -> Option<Analysis> {
        let from = self.required(m, &o::FROM, kind.span, "analyze ac")?;
        let to = self.required(m, &o::TO, kind.span, "analyze ac")?;
        let points = self.opt_count(m, &o::POINTS)?.unwrap_or(1) as usize;
        let scale = self.opt_word(m, &o::SCALE, &options::SCALE_WORDS)?;
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
        let source = self.source_option(m, &o::SOURCE, "ac")?;
        let impedance_at = match self.given_expr(m, &o::IMPEDANCE)? {
            None => None,
            Some(e) => {
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

    fn steady(&mut self, kind: &Ident, m: &super::opts::Given<'a>) -> Option<Analysis> {
        let freq = self.required(m, &o::FREQ, kind.span, "analyze steady")?;
        let harmonics = self.opt_count(m, &o::HARMONICS)?.unwrap_or(1) as usize;
        let steps = self.opt_count(m, &o::STEPS)?.unwrap_or(8);
        if !steps.is_power_of_two() {
            let at = self.value_place(m, &o::STEPS, kind.span);
            self.error(
                "bad-value",
                at,
                format!("steps per period must be a power of two, got {steps}"),
            );
            return None;
        }
        let method = self.opt_word(m, &o::STEADY_METHOD, &options::STEADY_WORDS)?;
        let target = crate::ir::SteadyAccuracy::default();
        let power_error = self
            .opt_value(m, &o::POWER_ERROR, "analyze steady power_error")?
            .unwrap_or(target.power_error);
        let level_error_db = self
            .opt_value(m, &o::LEVEL_ERROR, "analyze steady level_error")?
            .unwrap_or(target.level_error_db);
        Some(Analysis::Steady {
            freq,
            harmonics,
            method,
            steps_per_period: steps as usize,
            accuracy: crate::ir::SteadyAccuracy {
                power_error,
                level_error_db,
            },
        })
    }

    fn ruggedness(&mut self, kind: &Ident, m: &super::opts::Given<'a>) -> Option<Analysis> {
        let Some(vswr) = self.opt_list(m, &o::VSWR)? else {
            self.error(
                "missing-option",
                kind.span,
                "analyze ruggedness needs vswr= (one VSWR, or several in brackets)",
            );
            return None;
        };
        if let Some((bad, at)) = vswr.iter().find(|(s, _)| !(1.0..=o::VSWR_MAX).contains(s)) {
            self.error(
                "bad-value",
                *at,
                format!(
                    "a VSWR is from 1 to {}, got {}",
                    fmt_num(o::VSWR_MAX),
                    fmt_num(*bad)
                ),
            );
            return None;
        }
        let vswr: Vec<f64> = vswr.into_iter().map(|(v, _)| v).collect();
        let phases = self.opt_count(m, &o::PHASES)?.unwrap_or(1) as usize;
        let reference = self.opt_value(m, &o::REFERENCE, "reference impedance")?;
        Some(Analysis::Ruggedness {
            vswr,
            phases,
            reference,
        })
    }

    fn two_tone(&mut self, kind: &Ident, m: &super::opts::Given<'a>) -> Option<Analysis> {
        let Some(spacings) = self.opt_list(m, &o::SPACING)? else {
            self.error(
                "missing-option",
                kind.span,
                "analyze twotone needs spacing= (one tone spacing, or several in brackets)",
            );
            return None;
        };
        let spacings: Vec<f64> = spacings.into_iter().map(|(v, _)| v).collect();
        let spacing = spacings[0];
        let order = self.opt_count(m, &o::ORDER)?.unwrap_or(7);
        if order > o::ORDER_MAX {
            let at = self.value_place(m, &o::ORDER, kind.span);
            self.error(
                "bad-value",
                at,
                format!(
                    "order= of a two-tone test is at most {}, got {order}",
                    o::ORDER_MAX
                ),
            );
            return None;
        }
        let levels = self.opt_list(m, &o::LEVELS)?.unwrap_or_default();
        if let Some((bad, at)) = levels.iter().find(|(v, _)| !(-60.0..=20.0).contains(v)) {
            self.error(
                "bad-value",
                *at,
                format!(
                    "a drive level is from -60 dB to +20 dB of the input's amplitude, got {} dB",
                    fmt_num(*bad)
                ),
            );
            return None;
        }
        Some(Analysis::TwoTone {
            spacing,
            spacings,
            order: order as usize,
            levels: levels.into_iter().map(|(v, _)| v).collect(),
        })
    }

    fn load_pull(&mut self, kind: &Ident, m: &super::opts::Given<'a>) -> Option<Analysis> {
        let reference = self.required(m, &o::PULL_REFERENCE, kind.span, "analyze loadpull")?;
        let center = match self.opt_list(m, &o::CENTER)? {
            None => (0.0, 0.0),
            Some(v) if v.len() == 2 => (v[0].0, v[1].0),
            Some(v) => {
                let at = v.first().map_or(kind.span, |(_, s)| *s);
                self.error(
                    "bad-value",
                    at,
                    format!(
                        "center= is a reflection coefficient [real, imaginary]: two numbers, got {}",
                        v.len()
                    ),
                );
                return None;
            }
        };
        let radius = self.opt_value(m, &o::RADIUS, "radius")?.unwrap_or(0.5);
        let points = self.opt_count(m, &o::ACROSS)?.unwrap_or(11) as usize;
        let reach = center.0.hypot(center.1) + radius;
        if reach.is_nan() || reach > o::GAMMA_MAX {
            let at = match (self.given_expr(m, &o::RADIUS), m.get(o::CENTER.name)) {
                (Some(Some(e)), _) => e.span,
                (_, Some(c)) => c.key.span,
                _ => kind.span,
            };
            self.error(
                "bad-value",
                at,
                format!(
                    "the region of loads reaches |Γ| = {} (|center| + radius); a passive load \
                     lies inside the unit circle, and the grid stops at |Γ| = {}",
                    fmt_num(reach),
                    fmt_num(o::GAMMA_MAX)
                ),
            );
            return None;
        }
        let transistor = match self.given_expr(m, &o::TRANSISTOR)? {
            Some(e) => {
                let id = self.name_of(e, "transistor")?;
                let id = self.element_ref(&id, "analyze loadpull transistor")?;
                if !matches!(self.elem_kind(id), Some(ElemKeyword::Bjt)) {
                    self.error(
                        "element-kind",
                        e.span,
                        "analyze loadpull transistor= names a bjt",
                    );
                    return None;
                }
                id
            }
            None => {
                let bjts: Vec<ElementId> = (0..self.elems.len())
                    .map(ElementId::new)
                    .filter(|id| matches!(self.elem_kind(*id), Some(ElemKeyword::Bjt)))
                    .collect();
                if bjts.len() != 1 {
                    self.error(
                        "missing-option",
                        kind.span,
                        format!(
                            "analyze loadpull needs transistor= when the stage has {} transistors",
                            bjts.len()
                        ),
                    );
                    return None;
                }
                bjts[0]
            }
        };
        Some(Analysis::LoadPull(LoadPullSpec {
            reference,
            center,
            radius,
            points,
            transistor,
        }))
    }

    fn keying(&mut self, kind: &Ident, m: &super::opts::Given<'a>) -> Option<Analysis> {
        use crate::keying::KeyingSpec;
        let wpm = self.opt_value(m, &o::WPM, "wpm")?;
        let baud = self.opt_value(m, &o::BAUD, "baud")?;
        let baud = match (wpm, baud) {
            (Some(w), None) => crate::keying::baud_from_wpm(w),
            (None, Some(b)) => b,
            _ => {
                self.error(
                    "missing-option",
                    kind.span,
                    "analyze keying needs the speed: wpm= or baud=, one of them",
                );
                return None;
            }
        };
        let (lo, hi) = o::BAUD_RANGE;
        if !(lo..=hi).contains(&baud) {
            self.error(
                "bad-value",
                kind.span,
                format!(
                    "a keying speed is from {} to {} baud ({} to {} wpm), got {} baud",
                    fmt_num(lo),
                    fmt_num(hi),
                    fmt_num(lo * 1.2),
                    fmt_num(hi * 1.2),
                    fmt_num(baud)
                ),
            );
            return None;
        }
        let unit = 1.0 / baud;
        let pattern = self.opt_word(m, &o::PATTERN, &options::PATTERN_WORDS)?;
        let message = match self.opt_text(m, &o::MESSAGE)? {
            None => None,
            Some((text, span)) => {
                if m.contains_key(o::PATTERN.name) {
                    self.error(
                        "syntax",
                        span,
                        "analyze keying: give pattern= or message=, not both",
                    );
                    return None;
                }
                if text.chars().count() > o::MESSAGE_MAX {
                    self.error(
                        "too-large",
                        span,
                        format!(
                            "a keying message is at most {} characters, got {}",
                            o::MESSAGE_MAX,
                            text.chars().count()
                        ),
                    );
                    return None;
                }
                if let Err(c) = crate::keying::message_units(text) {
                    let what = if c == ' ' {
                        "the message has no character to key".to_string()
                    } else {
                        format!(
                            "'{}' has no Morse code (letters, digits, spaces and . , ? ' / ( ) : = + - \" @)",
                            c.escape_debug()
                        )
                    };
                    self.error("bad-value", span, what);
                    return None;
                }
                Some(text.to_string())
            }
        };
        let shape = self.opt_word(m, &o::SHAPE, &options::SHAPE_WORDS)?;
        let rise = self
            .opt_value(m, &o::RISE, "rise")?
            .unwrap_or(unit * o::RISE_PER_UNIT);
        let fall = self.opt_value(m, &o::FALL, "fall")?.unwrap_or(rise);
        for (what, v, spec) in [("rise", rise, &o::RISE), ("fall", fall, &o::FALL)] {
            if v > unit / 2.0 {
                let at = self.value_place(m, spec, kind.span);
                self.error(
                    "bad-value",
                    at,
                    format!(
                        "the {what} time {} is longer than half a unit ({}): a dot would not reach full carrier",
                        crate::si::si_prefixed(v, "s", 4),
                        crate::si::si_prefixed(unit / 2.0, "s", 4)
                    ),
                );
                return None;
            }
        }
        let source = self.source_option(m, &o::KEYED, "keying")?;
        let cycles = self.opt_count(m, &o::CYCLES)?;
        if let Some(cycles) = cycles.filter(|c| *c > o::CYCLES_MAX) {
            let at = self.value_place(m, &o::CYCLES, kind.span);
            self.error(
                "bad-value",
                at,
                format!("cycles= is at most {}, got {cycles}", o::CYCLES_MAX),
            );
            return None;
        }
        let step = self.opt_value(m, &o::SLOW_STEP, "step")?;
        if let Some(h) = step {
            if h > unit / 4.0 {
                let at = self.value_place(m, &o::SLOW_STEP, kind.span);
                self.error(
                    "bad-value",
                    at,
                    format!(
                        "the slow step {} is longer than a quarter unit ({}): the edges would not be followed",
                        crate::si::si_prefixed(h, "s", 4),
                        crate::si::si_prefixed(unit / 4.0, "s", 4)
                    ),
                );
                return None;
            }
        }
        let rbw = self.opt_value(m, &o::RBW, "rbw")?;
        let span = self.opt_value(m, &o::SPAN, "span")?;
        let k_factor = self.opt_value(m, &o::K_FACTOR, "k_factor")?;
        let mut spec = KeyingSpec::new(unit, pattern, shape, rise, fall);
        spec.source = source;
        if let Some(c) = cycles {
            spec.cycles = c as usize;
        }
        spec.step = step;
        spec.rbw = rbw;
        spec.span = span;
        if let Some(k) = k_factor {
            spec.k_factor = k;
        }
        spec.message = message;
        Some(Analysis::Keying(spec))
    }

    /// A keying keys a source's sine (`source=`, else the `input`) and reads
    /// the `output` resistor: both must be there; checked once the ports
    /// are known.
    pub(super) fn check_keying(&mut self, c: &Circuit) {
        let keyings: Vec<_> = c
            .analyses
            .iter()
            .zip(self.analysis_spans.clone())
            .filter_map(|(a, s)| match a {
                Analysis::Keying(k) => Some((k.clone(), s)),
                _ => None,
            })
            .collect();
        let output_is_resistor = c.output_resistor().is_ok();
        for (k, span) in keyings {
            if !output_is_resistor {
                self.error(
                    "element-kind",
                    span,
                    "analyze keying reads the output load: the file needs `output` naming a resistor",
                );
            }
            let keyed = k.source.or(c.input);
            let sine = keyed
                .and_then(|id| c.elements.get(id.index()))
                .and_then(|e| match &e.kind {
                    ElementKind::VoltageSource { wave, .. }
                    | ElementKind::CurrentSource { wave, .. } => match wave.shape {
                        Some(Shape::Sine { freq, .. }) => Some(freq),
                        _ => None,
                    },
                    _ => None,
                });
            match sine {
                None => {
                    self.error(
                        "element-kind",
                        span,
                        "analyze keying keys a sine: source= (or the file's `input`) must name a \
                         source with a sine wave",
                    );
                }
                Some(f) if f * k.rise.min(k.fall) < crate::keying::MIN_EDGE_PERIODS => {
                    self.error(
                        "bad-value",
                        span,
                        format!(
                            "the keying edges ({}) are shorter than {} periods of the carrier ({}): \
                             an envelope that fast is not slow against the carrier",
                            crate::si::si_prefixed(k.rise.min(k.fall), "s", 4),
                            fmt_num(crate::keying::MIN_EDGE_PERIODS),
                            crate::si::si_prefixed(f, "Hz", 4)
                        ),
                    );
                }
                Some(_) => {}
            }
        }
    }

    /// A two-tone test splits the `input` source's sine and reads the
    /// `output` resistor: both must be there; checked once the ports are known.
    pub(super) fn check_two_tone(&mut self, c: &Circuit) {
        let spans: Vec<_> = c
            .analyses
            .iter()
            .zip(self.analysis_spans.clone())
            .filter(|(a, _)| matches!(a, Analysis::TwoTone { .. }))
            .map(|(a, s)| (a.clone(), s))
            .collect();
        if spans.is_empty() {
            return;
        }
        let output_is_resistor = c.output_resistor().is_ok();
        let input_sine = c
            .input
            .and_then(|id| c.elements.get(id.index()))
            .and_then(|e| match &e.kind {
                ElementKind::VoltageSource { wave, .. }
                | ElementKind::CurrentSource { wave, .. } => match wave.shape {
                    Some(Shape::Sine { freq, .. }) => Some(freq),
                    _ => None,
                },
                _ => None,
            });
        for (a, span) in spans {
            if !output_is_resistor {
                self.error(
                    "element-kind",
                    span,
                    "analyze twotone reads the output load: the file needs `output` naming a resistor",
                );
            }
            match input_sine {
                None => {
                    self.error(
                        "element-kind",
                        span,
                        "analyze twotone splits the input's sine into two tones: the file needs \
                         `input` naming a source with a sine wave",
                    );
                }
                Some(f) => {
                    if let Analysis::TwoTone { spacings, .. } = a {
                        let spacing = spacings.iter().copied().fold(0.0, f64::max);
                        if spacing >= f {
                            self.error(
                                "bad-value",
                                span,
                                format!(
                                    "the tone spacing {} is not below the input's frequency {}",
                                    crate::si::si_prefixed(spacing, "Hz", 4),
                                    crate::si::si_prefixed(f, "Hz", 4)
                                ),
                            );
                        }
                    }
                }
            }
        }
    }

    fn heat(&mut self, kind: &Ident, m: &super::opts::Given<'a>) -> Option<Analysis> {
        let mut sink = Vec::new();
        for e in self.opt_names(m, &o::SINK)? {
            let id = self.name_of(e, "sink")?;
            let id = self.element_ref(&id, "analyze heat sink")?;
            if !matches!(
                self.elem_kind(id),
                Some(ElemKeyword::Bjt | ElemKeyword::Diode | ElemKeyword::Resistor)
            ) {
                self.error(
                    "element-kind",
                    e.span,
                    "a heatsink carries transistors, diodes and thermistors (resistors with ntc_b=) only",
                );
                return None;
            }
            if sink.contains(&id) {
                self.error("bad-value", e.span, "an element is on the heatsink twice");
                return None;
            }
            sink.push(id);
        }
        let sink_ambient = self.opt_value(m, &o::SINK_AMBIENT, "sink_ambient")?;
        if sink.is_empty() != sink_ambient.is_none() {
            self.error(
                "missing-option",
                kind.span,
                "analyze heat: sink= and sink_ambient= go together (the devices on the heatsink \
                 and its thermal resistance to the ambient)",
            );
            return None;
        }
        let sink_heat = self
            .opt_value(m, &o::SINK_HEAT, "sink_heat")?
            .unwrap_or(0.0);
        let transmit = self.opt_value(m, &o::TRANSMIT, "transmit")?;
        let mark = self.opt_value(m, &o::MARK, "mark")?;
        let space = self.opt_value(m, &o::SPACE, "space")?.unwrap_or(0.0);
        let Some(length) = transmit else {
            if mark.is_some() || space > 0.0 {
                self.error(
                    "missing-option",
                    kind.span,
                    "analyze heat: mark= and space= describe the keying of a transmission; give its length with transmit=",
                );
                return None;
            }
            let rounds = self.opt_count(m, &o::ROUNDS)?.unwrap_or(2) as usize;
            return Some(Analysis::Heat(HeatSpec {
                sink,
                sink_ambient,
                sink_heat,
                transmit: None,
                mark: 0.0,
                space: 0.0,
                rounds,
            }));
        };
        let mark = mark.unwrap_or(length);
        let rounds = self.opt_count(m, &o::ROUNDS)?.unwrap_or(2) as usize;
        Some(Analysis::Heat(HeatSpec {
            sink,
            sink_ambient,
            sink_heat,
            transmit: Some(length),
            mark,
            space,
            rounds,
        }))
    }

    /// Every transistor on the shared heatsink needs its junction–case
    /// resistance, and some transistor needs a heat path at all (the
    /// network itself is built by the stage, docs/thermal.md).
    fn check_heat_paths(&mut self, c: &Circuit, h: &HeatSpec, span: tankwave_netlist::Span) {
        let bjt = |id: ElementId| match c.elements.get(id.index()).map(|e| &e.kind) {
            Some(ElementKind::Bjt { model, .. }) => match c.models.get(model.index()) {
                Some(Model {
                    params: ModelParams::Bjt(p),
                    ..
                }) => Some(p),
                _ => None,
            },
            _ => None,
        };
        for &id in &h.sink {
            if let Some(Element {
                name,
                kind: ElementKind::Resistor { ntc_b: None, .. },
                ..
            }) = c.elements.get(id.index())
            {
                self.error(
                    "element-kind",
                    span,
                    format!(
                        "{name} is on the heatsink but is a plain resistor: a resistor there must be \
                         a thermistor (give it ntc_b=)"
                    ),
                );
                return;
            }
        }
        let mut any = false;
        // the case heat of transistors whose case is not a node of its own
        // goes onto the sink
        let mut sink_heat = h.sink_heat;
        for (id, el) in c.element_ids() {
            let Some(p) = bjt(id) else { continue };
            let path = p.heat_path(h.sink.contains(&id));
            match path {
                HeatPath::SinkWithoutJunctionCase => {
                    self.error(
                        "missing-part-param",
                        span,
                        format!(
                            "{} is on the heatsink: its part needs thermal {{ junction_case= }}",
                            el.name
                        ),
                    );
                    return;
                }
                HeatPath::Absent => continue,
                HeatPath::Sink { case: false } => sink_heat += p.heat_case,
                _ => {}
            }
            any = true;
            if h.transmit.is_some() {
                if let Some(word) = p.missing_heat(path) {
                    self.error(
                        "missing-part-param",
                        span,
                        format!(
                            "analyze heat transmit= follows the heating over time, so every part of \
                             the heat path needs its heat capacity: the part of {} needs thermal {{ {word}= }}",
                            el.name
                        ),
                    );
                    return;
                }
            }
        }
        if any && h.transmit.is_some() && !h.sink.is_empty() && sink_heat <= 0.0 {
            self.error(
                "missing-option",
                span,
                "analyze heat transmit= follows the heating over time, so the heatsink needs its \
                 heat capacity: give sink_heat=",
            );
            return;
        }
        if !any {
            self.error(
                "missing-part-param",
                span,
                "analyze heat: no transistor has a heat path; give its part thermal { junction_case= } \
                 and put it on the heatsink, or thermal { junction_ambient= }",
            );
        }
    }

    /// A sweep of the output load needs an `output` that is a resistor
    /// (the load it replaces) and an `analyze steady` (what each load is
    /// solved by); checked once the ports are known.
    pub(super) fn check_load_sweeps(&mut self, c: &Circuit) {
        let has_steady = c
            .analyses
            .iter()
            .any(|a| matches!(a, Analysis::Steady { .. }));
        let output_is_resistor = c.output_resistor().is_ok();
        let spans: Vec<_> = c
            .analyses
            .iter()
            .zip(self.analysis_spans.clone())
            .filter(|(a, _)| matches!(a, Analysis::Ruggedness { .. }))
            .map(|(_, s)| s)
            .collect();
        let heat_spans: Vec<_> = c
            .analyses
            .iter()
            .zip(self.analysis_spans.clone())
            .filter_map(|(a, s)| match a {
                Analysis::Heat(h) => Some((h, s)),
                _ => None,
            })
            .collect();
        for (k, (h, span)) in heat_spans.into_iter().enumerate() {
            self.check_heat_paths(c, h, span);
            if !has_steady {
                self.error(
                    "missing-option",
                    span,
                    "analyze heat solves the steady state at the junction temperatures: the file needs an analyze steady",
                );
            }
            if k > 0 {
                self.error("duplicate-statement", span, "a file has one analyze heat");
            }
        }
        let pull_spans: Vec<_> = c
            .analyses
            .iter()
            .zip(self.analysis_spans.clone())
            .filter(|(a, _)| matches!(a, Analysis::LoadPull(_)))
            .map(|(_, s)| s)
            .collect();
        for span in pull_spans {
            if !has_steady {
                self.error(
                    "missing-option",
                    span,
                    "analyze loadpull solves each load in steady state: the file needs an analyze steady",
                );
            }
        }
        for span in spans {
            if !has_steady {
                self.error(
                    "missing-option",
                    span,
                    "analyze ruggedness solves each load in steady state: the file needs an analyze steady",
                );
            }
            if !output_is_resistor {
                self.error(
                    "element-kind",
                    span,
                    "analyze ruggedness replaces the output load: the file needs `output` naming a resistor",
                );
            }
        }
    }
}
