//! Requirement verdicts: every `require` statement checked against the metrics.
//!
//! Margins are in the metric's natural unit (the unit of `Verdict::unit`)
//! with the sign positive = passing. A figure that could not be measured
//! gives a failing verdict whose `not_measured` says why. Which value a
//! figure has comes from the catalogue ([`crate::figure`]); verdicts carry
//! typed values (number and [`Unit`]) and the report writes them for people.

use tankwave_circuit::{builtin, Bound, Circuit, Cmp, ElementId, Mask, Metric, Requirement};

use crate::figure::{value, About, Value};
use crate::mask::{evaluate_mask, HarmonicRow};
use crate::metrics::{Metrics, StressRow};
pub use tankwave_circuit::unit::Unit;

/// The outcome of one requirement.
#[derive(Debug, Clone, PartialEq)]
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
    /// The mask the requirement names as its bound, by name (`#i` for a
    /// mask index that does not exist); `None` for a numeric bound.
    pub mask: Option<String>,
    /// The measured value (for a mask: the level of the worst harmonic).
    pub value: Option<f64>,
    /// Margin in `unit`, positive = passing.
    pub margin: Option<f64>,
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

/// The unit of a requirement's value, limit and margin for `m` (the
/// figure's unit in the catalogue).
pub fn metric_unit(m: &Metric) -> Unit {
    m.figure.unit()
}

/// A value candidate: (element it belongs to, value).
type Candidate = (Option<String>, f64);

struct Draft {
    limit: Option<f64>,
    mask: Option<String>,
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

/// The mask a bound names, by name (`None` for a numeric bound).
fn mask_name(c: &Circuit, b: &Bound) -> Option<String> {
    match b {
        Bound::Value(_) => None,
        Bound::Mask(i) => Some(match c.masks.get(*i) {
            Some(m) => m.name.clone(),
            None => format!("#{i}"),
        }),
        Bound::BuiltinMask(name) => Some(name.clone()),
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
    sel: &Option<ElementId>,
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
                c.elements
                    .get(i.index())
                    .map(|e| e.name.as_str())
                    .unwrap_or("?")
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
    sel: &Option<ElementId>,
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
                c.elements
                    .get(i.index())
                    .map(|e| e.name.as_str())
                    .unwrap_or("?")
            ),
            None => "no element in the circuit carries a rating".to_string(),
        });
    }
    Ok(cands)
}

/// The value candidates of a non-harmonic metric.
fn scalar(c: &Circuit, metrics: &Metrics, r: &Requirement) -> Result<Vec<Candidate>, String> {
    let m = &r.metric;
    match value(m.figure) {
        Value::Stage(get) => get(metrics)
            .map(|x| vec![(None, x)])
            .map_err(|note| why(metrics, note, "not measured")),
        Value::Transistor(get) => {
            transistor_candidates(c, metrics, &m.element, m.figure.word().unwrap_or("?"), get)
        }
        Value::RatedPart => stress_candidates(c, metrics, &m.element),
        Value::Harmonic => {
            let n = m.harmonic.unwrap_or(0);
            let o = metrics
                .output
                .as_ref()
                .ok_or_else(|| why(metrics, "pout", "no output element"))?;
            let h = o
                .harmonics
                .iter()
                .find(|h| h.n == n as usize)
                .ok_or_else(|| {
                    format!(
                        "harmonic {n} is beyond the {} harmonics computed",
                        metrics.harmonics
                    )
                })?;
            if !h.resolved {
                // below the floor: only an upper limit the floor itself
                // meets passes, judged by the floor (never a false pass)
                let floor = o.floor_dbc.unwrap_or(f64::INFINITY);
                let upper = matches!(r.cmp, Cmp::Le | Cmp::Lt);
                return match r.bound {
                    Bound::Value(lim) if upper && compare(r.cmp, floor, lim).1 => {
                        Ok(vec![(None, floor)])
                    }
                    _ => Err(format!(
                        "harmonic {n} is below the numerical floor ({floor:.1} dBc) of the \
                         method, which cannot resolve it against this limit"
                    )),
                };
            }
            h.dbc
                .map(|x| vec![(None, x)])
                .ok_or_else(|| why(metrics, "harmonics", "not measured"))
        }
        Value::Mask | Value::SidebandMask => {
            Err("internal: masks are handled elsewhere".to_string())
        }
    }
}

fn harmonics_draft(c: &Circuit, metrics: &Metrics, r: &Requirement, only: Option<usize>) -> Draft {
    let mut d = Draft {
        limit: match r.bound {
            Bound::Value(v) if v.is_finite() => Some(v),
            _ => None,
        },
        mask: mask_name(c, &r.bound),
        outcome: Err(String::new()),
        harmonics: Vec::new(),
    };
    let mask = match resolve_mask(c, &r.bound) {
        Ok(m) => m,
        Err(e) => {
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
            d.mask = Some(m.name.clone());
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
                    let meas = output.judged_dbc(h)?;
                    let (m, pass) = compare(r.cmp, meas, *lim);
                    // an unresolved harmonic passes only an upper limit
                    let pass = pass && (h.resolved || matches!(r.cmp, Cmp::Le | Cmp::Lt));
                    Some(HarmonicRow {
                        n: h.n,
                        freq_hz: h.freq_hz,
                        power_w: h.power_w,
                        measured_dbc: h.dbc.filter(|_| h.resolved),
                        floor_dbc: output.floor_dbc,
                        judged_dbc: meas,
                        resolved: h.resolved,
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
            Ok(((Some(format!("harmonic {}", h.n)), h.judged_dbc), m, pass))
        }
        None => Err("no rule of the mask covers the computed harmonics".to_string()),
    };
    d.harmonics = rows;
    d
}

/// `require sidebands <= MASK`: the keying sidebands against the mask's
/// `offset` rules, the worst margin judged.
fn sidebands_draft(c: &Circuit, metrics: &Metrics, r: &Requirement) -> Draft {
    let mut d = Draft {
        limit: None,
        mask: mask_name(c, &r.bound),
        outcome: Err(String::new()),
        harmonics: Vec::new(),
    };
    let mask = match resolve_mask(c, &r.bound) {
        Ok(Some(m)) => m,
        Ok(None) => {
            d.outcome = Err("sidebands are required <= a mask with offset rules".to_string());
            return d;
        }
        Err(e) => {
            d.outcome = Err(e);
            return d;
        }
    };
    let Some(k) = metrics.keying.as_ref() else {
        d.outcome = Err(why(metrics, "sidebands", "no analyze keying ran"));
        return d;
    };
    d.outcome = match crate::mask::evaluate_sidebands(
        &mask,
        &k.sideband_offsets_hz,
        &k.sideband_dbc,
        k.key_down_w,
    ) {
        Ok(rows) => {
            let pass = rows.iter().all(|r| r.margin_db >= 0.0);
            match rows
                .iter()
                .min_by(|a, b| a.margin_db.total_cmp(&b.margin_db))
            {
                Some(w) => {
                    d.limit = Some(w.allowed_dbc);
                    Ok((
                        (
                            Some(format!(
                                "offset {}",
                                crate::units::si_prefixed(w.offset_hz, "Hz", 4)
                            )),
                            w.dbc,
                        ),
                        w.margin_db,
                        pass,
                    ))
                }
                None => Err("no sideband to judge".to_string()),
            }
        }
        Err(e) => Err(e.to_string()),
    };
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
    let about = r.metric.figure.about();
    let draft = match (about, &r.bound) {
        (About::Mask, _) => harmonics_draft(circuit, metrics, r, None),
        (About::SidebandMask, _) => sidebands_draft(circuit, metrics, r),
        (About::Harmonic, Bound::Mask(_) | Bound::BuiltinMask(_)) => harmonics_draft(
            circuit,
            metrics,
            r,
            Some(r.metric.harmonic.unwrap_or(0) as usize),
        ),
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
                mask: None,
                outcome,
                harmonics: Vec::new(),
            }
        }
        (_, b) => Draft {
            limit: None,
            mask: mask_name(circuit, b),
            outcome: Err("a mask bound applies only to harmonics".to_string()),
            harmonics: Vec::new(),
        },
    };
    let (value, margin, pass, not_measured, element) = match draft.outcome {
        Ok(((element, value), margin, pass)) => (Some(value), Some(margin), pass, None, element),
        Err(reason) => (None, None, false, Some(reason), None),
    };
    Verdict {
        requirement: r.text.clone(),
        line: r.origin.line,
        metric: r.metric.spelled(circuit),
        unit,
        cmp: cmp_text(r.cmp).to_string(),
        limit: draft.limit,
        mask: draft.mask,
        value,
        margin,
        pass,
        not_measured,
        element,
        harmonics: draft.harmonics,
    }
}
