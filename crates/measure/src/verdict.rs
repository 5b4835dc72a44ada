//! Requirement verdicts: every `require` statement checked against the metrics.
//!
//! Margins are in the metric's natural unit (the unit of `Verdict::unit`)
//! with the sign positive = passing. A figure that could not be measured
//! gives a failing verdict whose `not_measured` says why.

use serde::Serialize;
use tankwave_circuit::{builtin, Bound, Circuit, Cmp, Mask, Metric, Requirement};

use crate::mask::{evaluate_mask, HarmonicRow};
use crate::metrics::{Metrics, StressRow};

/// Unit of a requirement's value, limit and margin.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Unit {
    /// Watts.
    Watt,
    /// A plain fraction (shown as %).
    Fraction,
    /// Decibels (gain).
    Db,
    /// Decibels relative to the carrier.
    Dbc,
    /// Volts.
    Volt,
    /// Amperes.
    Ampere,
    /// Kelvin (shown also in °C).
    Kelvin,
    /// Degrees of angle.
    Degree,
    /// A plain ratio (VSWR).
    Ratio,
}

impl Unit {
    /// Short symbol of the unit ("W", "dB", …; "" for fractions and ratios).
    pub fn symbol(self) -> &'static str {
        match self {
            Unit::Watt => "W",
            Unit::Fraction | Unit::Ratio => "",
            Unit::Db => "dB",
            Unit::Dbc => "dBc",
            Unit::Volt => "V",
            Unit::Ampere => "A",
            Unit::Kelvin => "K",
            Unit::Degree => "deg",
        }
    }

    /// A value in this unit, for people.
    pub fn show(self, v: f64) -> String {
        match self {
            Unit::Watt => engineering(v, "W"),
            Unit::Volt => engineering(v, "V"),
            Unit::Ampere => engineering(v, "A"),
            Unit::Fraction => format!("{:.2} %", v * 100.0),
            Unit::Db => format!("{v:.2} dB"),
            Unit::Dbc => format!("{v:.2} dBc"),
            Unit::Kelvin => format!("{:.1} degC", v - 273.15),
            Unit::Degree => format!("{v:.1} deg"),
            Unit::Ratio => format!("{v:.3}"),
        }
    }

    /// A difference (margin) in this unit, for people.
    pub fn show_margin(self, m: f64) -> String {
        match self {
            Unit::Fraction => format!("{:+.2} % points", m * 100.0),
            Unit::Kelvin => format!("{m:+.1} K"),
            Unit::Dbc => format!("{m:+.2} dB"),
            Unit::Watt | Unit::Volt | Unit::Ampere => {
                let s = engineering(m.abs(), self.symbol());
                if m < 0.0 {
                    format!("-{s}")
                } else {
                    format!("+{s}")
                }
            }
            _ => {
                let s = self.show(m);
                if m >= 0.0 {
                    format!("+{s}")
                } else {
                    s
                }
            }
        }
    }
}

/// Format with an SI prefix (µ, m, k, M …) and 4 significant figures.
fn engineering(v: f64, unit: &str) -> String {
    crate::units::si_prefixed(v, unit, 4)
}

/// The outcome of one requirement.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Verdict {
    /// The requirement's text as written.
    pub requirement: String,
    /// Line of the requirement in its file (0 if unknown).
    pub line: u32,
    /// The figure, in the stage-file spelling (e.g. `vce_peak Q1`).
    pub metric: String,
    /// Unit of `value`, `limit` and `margin`.
    pub unit: Unit,
    /// The comparison, as written (`<=`, `>=`, `<`, `>`).
    pub cmp: String,
    /// The numeric limit (for a mask: the allowed level at the worst harmonic).
    pub limit: Option<f64>,
    /// The limit for people, with its unit (or the mask name).
    pub limit_text: String,
    /// The measured value (for a mask: the level of the worst harmonic).
    pub value: Option<f64>,
    /// The value for people, with its unit, or "not measured".
    pub value_text: String,
    /// Margin in `unit`, positive = passing.
    pub margin: Option<f64>,
    /// The margin for people.
    pub margin_text: String,
    /// Whether the requirement holds (false when not measured).
    pub pass: bool,
    /// Why the figure could not be measured, if so.
    pub not_measured: Option<String>,
    /// The element the value belongs to, where the metric is per element.
    pub element: Option<String>,
    /// Per-harmonic rows, for mask and `harmonics` requirements.
    pub harmonics: Vec<HarmonicRow>,
}

fn cmp_text(c: Cmp) -> &'static str {
    match c {
        Cmp::Le => "<=",
        Cmp::Ge => ">=",
        Cmp::Lt => "<",
        Cmp::Gt => ">",
    }
}

/// Margin (positive = passing) and pass flag of `value cmp limit`.
pub fn compare(cmp: Cmp, value: f64, limit: f64) -> (f64, bool) {
    match cmp {
        Cmp::Le => (limit - value, value <= limit),
        Cmp::Lt => (limit - value, value < limit),
        Cmp::Ge => (value - limit, value >= limit),
        Cmp::Gt => (value - limit, value > limit),
    }
}

fn metric_name(c: &Circuit, m: &Metric) -> String {
    let el = |id: &Option<usize>, base: &str| match id {
        Some(i) => format!(
            "{base} {}",
            c.elements.get(*i).map(|e| e.name.as_str()).unwrap_or("?")
        ),
        None => base.to_string(),
    };
    match m {
        Metric::Pout => "pout".into(),
        Metric::Efficiency => "efficiency".into(),
        Metric::Pae => "pae".into(),
        Metric::Gain => "gain".into(),
        Metric::Harmonic(n) => format!("harmonic {n}"),
        Metric::Harmonics => "harmonics".into(),
        Metric::Thd => "thd".into(),
        Metric::InputVswr => "input_vswr".into(),
        Metric::VcePeak(e) => el(e, "vce_peak"),
        Metric::IcPeak(e) => el(e, "ic_peak"),
        Metric::Dissipation(e) => el(e, "dissipation"),
        Metric::JunctionTemp(e) => el(e, "tj"),
        Metric::Stress(e) => el(e, "stress"),
        Metric::Pdc => "pdc".into(),
        Metric::Conduction(e) => el(e, "conduction"),
    }
}

/// The unit of a requirement's value, limit and margin for `m`.
pub fn metric_unit(m: &Metric) -> Unit {
    match m {
        Metric::Pout | Metric::Pdc | Metric::Dissipation(_) => Unit::Watt,
        Metric::Efficiency | Metric::Pae | Metric::Thd | Metric::Stress(_) => Unit::Fraction,
        Metric::Gain => Unit::Db,
        Metric::Harmonic(_) | Metric::Harmonics => Unit::Dbc,
        Metric::InputVswr => Unit::Ratio,
        Metric::VcePeak(_) => Unit::Volt,
        Metric::IcPeak(_) => Unit::Ampere,
        Metric::JunctionTemp(_) => Unit::Kelvin,
        Metric::Conduction(_) => Unit::Degree,
    }
}

/// A value candidate: (element it belongs to, value).
type Candidate = (Option<String>, f64);

struct Draft {
    limit: Option<f64>,
    limit_text: String,
    outcome: Result<(Candidate, f64, bool), String>,
    harmonics: Vec<HarmonicRow>,
}

fn why(metrics: &Metrics, figure: &str, fallback: &str) -> String {
    metrics
        .note(figure)
        .map(|s| s.to_string())
        .unwrap_or_else(|| fallback.to_string())
}

/// Pick the candidate with the smallest margin (the worst case).
fn worst(cmp: Cmp, limit: f64, cands: Vec<Candidate>) -> Option<(Candidate, f64, bool)> {
    cands
        .into_iter()
        .map(|c| {
            let (m, p) = compare(cmp, c.1, limit);
            (c, m, p)
        })
        .min_by(|a, b| a.1.total_cmp(&b.1))
}

/// A bound for people: "<= 36.00 V", "mask us_amateur_hf".
fn bound_text(c: &Circuit, b: &Bound, cmp: Cmp, unit: Unit) -> String {
    match b {
        Bound::Value(v) => format!("{} {}", cmp_text(cmp), unit.show(*v)),
        Bound::Mask(i) => match c.masks.get(*i) {
            Some(m) => format!("mask {}", m.name),
            None => format!("mask #{i}"),
        },
        Bound::BuiltinMask(name) => format!("mask {name}"),
    }
}

fn resolve_mask(c: &Circuit, b: &Bound) -> Result<Option<Mask>, String> {
    match b {
        Bound::Value(_) => Ok(None),
        Bound::Mask(i) => c
            .masks
            .get(*i)
            .cloned()
            .map(Some)
            .ok_or_else(|| format!("mask #{i} does not exist")),
        Bound::BuiltinMask(name) => builtin::builtin_mask(name)
            .map(Some)
            .ok_or_else(|| format!("no built-in mask is called {name}")),
    }
}

/// The per-element candidates of a transistor metric.
fn transistor_candidates(
    c: &Circuit,
    metrics: &Metrics,
    sel: &Option<usize>,
    figure: &str,
    get: impl Fn(&crate::metrics::TransistorMetrics) -> Option<f64>,
) -> Result<Vec<Candidate>, String> {
    let ts: Vec<_> = metrics
        .transistors
        .iter()
        .filter(|t| sel.is_none_or(|s| s == t.element_id))
        .collect();
    if ts.is_empty() {
        return Err(match sel {
            Some(i) => format!(
                "element {} is not a bipolar transistor",
                c.elements.get(*i).map(|e| e.name.as_str()).unwrap_or("?")
            ),
            None => "the circuit has no bipolar transistor".to_string(),
        });
    }
    let cands: Vec<Candidate> = ts
        .iter()
        .filter_map(|t| get(t).map(|v| (Some(t.element.clone()), v)))
        .collect();
    if cands.is_empty() {
        let reasons: Vec<String> = ts
            .iter()
            .map(|t| why(metrics, &format!("{figure} {}", t.element), "not measured"))
            .collect();
        return Err(reasons.join("; "));
    }
    Ok(cands)
}

fn stress_candidates(
    c: &Circuit,
    metrics: &Metrics,
    sel: &Option<usize>,
) -> Result<Vec<Candidate>, String> {
    let rows: Vec<&StressRow> = metrics
        .stress
        .iter()
        .filter(|r| sel.is_none_or(|s| s == r.element_id))
        .collect();
    let cands: Vec<Candidate> = rows
        .iter()
        .filter_map(|r| {
            r.fraction
                .map(|f| (Some(format!("{} {}", r.element, r.quantity.label())), f))
        })
        .collect();
    if cands.is_empty() {
        return Err(match sel {
            Some(i) => format!(
                "element {} has no rating to compare with",
                c.elements.get(*i).map(|e| e.name.as_str()).unwrap_or("?")
            ),
            None => "no element in the circuit carries a rating".to_string(),
        });
    }
    Ok(cands)
}

/// The value candidates of a non-harmonic metric.
fn scalar(c: &Circuit, metrics: &Metrics, r: &Requirement) -> Result<Vec<Candidate>, String> {
    let one = |v: Option<f64>, figure: &str| -> Result<Vec<Candidate>, String> {
        v.map(|x| vec![(None, x)])
            .ok_or_else(|| why(metrics, figure, "not measured"))
    };
    match &r.metric {
        Metric::Pout => one(metrics.output.as_ref().map(|o| o.p1_w), "pout"),
        Metric::Efficiency => one(metrics.efficiency, "efficiency"),
        Metric::Pae => one(metrics.pae, "pae"),
        Metric::Gain => one(metrics.gain_db, "gain"),
        Metric::Thd => one(
            metrics.output.as_ref().and_then(|o| o.thd),
            if metrics.output.is_some() {
                "thd"
            } else {
                "pout"
            },
        ),
        Metric::InputVswr => one(metrics.drive.as_ref().and_then(|d| d.vswr), "input_vswr"),
        Metric::Pdc => Ok(vec![(None, metrics.pdc_w)]),
        Metric::Harmonic(n) => {
            let o = metrics
                .output
                .as_ref()
                .ok_or_else(|| why(metrics, "pout", "no output element"))?;
            let h = o
                .harmonics
                .iter()
                .find(|h| h.n == *n as usize)
                .ok_or_else(|| {
                    format!(
                        "harmonic {n} is beyond the {} harmonics computed",
                        metrics.harmonics
                    )
                })?;
            one(h.dbc, "harmonics")
        }
        Metric::VcePeak(s) => {
            transistor_candidates(c, metrics, s, "vce_peak", |t| Some(t.vce_peak_v))
        }
        Metric::IcPeak(s) => transistor_candidates(c, metrics, s, "ic_peak", |t| Some(t.ic_peak_a)),
        Metric::Dissipation(s) => {
            transistor_candidates(c, metrics, s, "dissipation", |t| Some(t.dissipation_w))
        }
        Metric::JunctionTemp(s) => transistor_candidates(c, metrics, s, "tj", |t| t.tj_k),
        Metric::Conduction(s) => {
            transistor_candidates(c, metrics, s, "conduction", |t| Some(t.conduction_deg))
        }
        Metric::Stress(s) => stress_candidates(c, metrics, s),
        Metric::Harmonics => Err("internal: harmonics handled elsewhere".to_string()),
    }
}

fn harmonics_draft(
    c: &Circuit,
    metrics: &Metrics,
    r: &Requirement,
    unit: Unit,
    only: Option<usize>,
) -> Draft {
    let mut d = Draft {
        limit: None,
        limit_text: String::new(),
        outcome: Err(String::new()),
        harmonics: Vec::new(),
    };
    let mask = match resolve_mask(c, &r.bound) {
        Ok(m) => m,
        Err(e) => {
            d.limit_text = bound_text(c, &r.bound, r.cmp, unit);
            d.outcome = Err(e);
            return d;
        }
    };
    let output = match metrics.output.as_ref() {
        Some(o) => o,
        None => {
            d.outcome = Err(why(metrics, "pout", "no output element"));
            return d;
        }
    };
    let rows: Vec<HarmonicRow> = match (&mask, &r.bound) {
        (Some(m), _) => {
            d.limit_text = format!("mask {}", m.name);
            match evaluate_mask(m, output, metrics.freq_hz) {
                Ok(ev) => ev.rows,
                Err(e) => {
                    d.outcome = Err(e.to_string());
                    return d;
                }
            }
        }
        (None, Bound::Value(lim)) => {
            d.limit = Some(*lim);
            d.limit_text = format!("{} {}", cmp_text(r.cmp), unit.show(*lim));
            let p1 = output.p1_w;
            if !(p1.is_finite() && p1 > 0.0) {
                d.outcome = Err(why(metrics, "harmonics", "no carrier power"));
                return d;
            }
            output
                .harmonics
                .iter()
                .filter(|h| h.n >= 2)
                .filter_map(|h| {
                    let meas = h.dbc?;
                    let (m, pass) = compare(r.cmp, meas, *lim);
                    Some(HarmonicRow {
                        n: h.n,
                        freq_hz: h.freq_hz,
                        power_w: h.power_w,
                        measured_dbc: meas,
                        allowed_dbc: Some(*lim),
                        margin_db: Some(m),
                        pass,
                    })
                })
                .collect()
        }
        (None, _) => Vec::new(),
    };
    let rows: Vec<HarmonicRow> = match only {
        Some(n) => rows.into_iter().filter(|h| h.n == n).collect(),
        None => rows,
    };
    if rows.is_empty() {
        d.outcome = Err(match only {
            Some(n) => format!(
                "harmonic {n} is not among the {} harmonics computed",
                metrics.harmonics
            ),
            None => "no harmonic above the fundamental was computed".to_string(),
        });
        return d;
    }
    let pass = rows.iter().all(|h| h.pass);
    let worst = rows
        .iter()
        .filter_map(|h| h.margin_db.map(|m| (h, m)))
        .min_by(|a, b| a.1.total_cmp(&b.1));
    d.outcome = match worst {
        Some((h, m)) => {
            if mask.is_some() {
                d.limit = h.allowed_dbc;
            }
            Ok(((Some(format!("harmonic {}", h.n)), h.measured_dbc), m, pass))
        }
        None => Err("no rule of the mask covers the computed harmonics".to_string()),
    };
    d.harmonics = rows;
    d
}

/// Check every requirement of `circuit` against `metrics`, in file order.
pub fn evaluate(circuit: &Circuit, metrics: &Metrics) -> Vec<Verdict> {
    circuit
        .requirements
        .iter()
        .map(|r| evaluate_one(circuit, metrics, r))
        .collect()
}

/// Check one requirement against `metrics`.
pub fn evaluate_one(circuit: &Circuit, metrics: &Metrics, r: &Requirement) -> Verdict {
    let unit = metric_unit(&r.metric);
    let draft = match (&r.metric, &r.bound) {
        (Metric::Harmonics, _) => harmonics_draft(circuit, metrics, r, unit, None),
        (Metric::Harmonic(n), Bound::Mask(_) | Bound::BuiltinMask(_)) => {
            harmonics_draft(circuit, metrics, r, unit, Some(*n as usize))
        }
        (_, Bound::Value(lim)) => {
            let lim = *lim;
            let outcome = if lim.is_finite() {
                scalar(circuit, metrics, r).and_then(|c| {
                    worst(r.cmp, lim, c).ok_or_else(|| "nothing to measure".to_string())
                })
            } else {
                Err(format!("the limit {lim} is not a finite number"))
            };
            Draft {
                limit: lim.is_finite().then_some(lim),
                limit_text: format!("{} {}", cmp_text(r.cmp), unit.show(lim)),
                outcome,
                harmonics: Vec::new(),
            }
        }
        (_, b) => Draft {
            limit: None,
            limit_text: bound_text(circuit, b, r.cmp, unit),
            outcome: Err("a mask bound applies only to harmonics".to_string()),
            harmonics: Vec::new(),
        },
    };
    let metric = metric_name(circuit, &r.metric);
    match draft.outcome {
        Ok(((element, value), margin, pass)) => Verdict {
            requirement: r.text.clone(),
            line: r.origin.line,
            metric,
            unit,
            cmp: cmp_text(r.cmp).to_string(),
            limit: draft.limit,
            limit_text: draft.limit_text,
            value: Some(value),
            value_text: unit.show(value),
            margin: Some(margin),
            margin_text: if unit == Unit::Dbc || unit == Unit::Db {
                format!("{margin:+.2} dB")
            } else {
                unit.show_margin(margin)
            },
            pass,
            not_measured: None,
            element,
            harmonics: draft.harmonics,
        },
        Err(reason) => Verdict {
            requirement: r.text.clone(),
            line: r.origin.line,
            metric,
            unit,
            cmp: cmp_text(r.cmp).to_string(),
            limit: draft.limit,
            limit_text: draft.limit_text,
            value: None,
            value_text: format!("not measured: {reason}"),
            margin: None,
            margin_text: String::new(),
            pass: false,
            not_measured: Some(reason),
            element: None,
            harmonics: draft.harmonics,
        },
    }
}
