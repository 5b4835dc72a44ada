//! Plots and the HTML report for `run`, `check`, `study` and `tune`: which
//! SVGs a stage, a study and a tuning run get, the units on their axes, and
//! the inputs of the self-contained report (file hash, mask evaluations,
//! study sections, provenance).

use crate::pipeline::Results;
use sha2::{Digest, Sha256};
use std::path::{Path, PathBuf};
use tankwave_circuit::{builtin, Analysis, Bound, Circuit, Metric, Scale};
use tankwave_measure::{evaluate_mask, MaskEvaluation, Metrics};
use tankwave_report::html::{AcView, Figure, Provenance, ReportInput};
use tankwave_report::plot::{self, PlotParams};

/// SHA-256 of the file's bytes, in hex (empty if unreadable).
pub fn file_sha256(path: &Path) -> String {
    match std::fs::read(path) {
        Ok(b) => Sha256::digest(&b)
            .iter()
            .map(|x| format!("{x:02x}"))
            .collect(),
        Err(_) => String::new(),
    }
}

/// Today's date (UTC) as YYYY-MM-DD, from the system clock.
pub fn today_utc() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs())
        .unwrap_or(0);
    let days = (secs / 86_400) as i64;
    // days since 1970-01-01 to a civil date (the proleptic Gregorian
    // algorithm published by H. Hinnant, "chrono-Compatible Low-Level Date Algorithms")
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + if m <= 2 { 1 } else { 0 };
    format!("{y:04}-{m:02}-{d:02}")
}

/// Every mask a requirement names, evaluated on the steady state.
pub fn mask_evaluations(c: &Circuit, m: &Metrics, f0: f64) -> Vec<MaskEvaluation> {
    let Some(out) = &m.output else {
        return Vec::new();
    };
    let mut evals = Vec::new();
    for r in &c.requirements {
        if !matches!(r.metric, Metric::Harmonics | Metric::Harmonic(_)) {
            continue;
        }
        let mask = match &r.bound {
            Bound::Mask(i) => c.masks.get(*i).cloned(),
            Bound::BuiltinMask(name) => builtin::builtin_mask(name),
            Bound::Value(_) => None,
        };
        if let Some(mask) = mask {
            if evals.iter().any(|e: &MaskEvaluation| e.mask == mask.name) {
                continue;
            }
            if let Ok(e) = evaluate_mask(&mask, out, f0) {
                evals.push(e);
            }
        }
    }
    evals
}

/// The SVG files of one stage: a period plot per transistor, the spectrum
/// against the first mask, the start-up envelope of the first transient,
/// and the first AC sweep. A plot that cannot be drawn is reported in the
/// returned notes instead of failing the run.
pub fn stage_plots(
    dir: &Path,
    file: &str,
    c: &Circuit,
    r: &Results,
) -> (Vec<(PathBuf, Vec<u8>)>, Vec<String>) {
    let p = PlotParams::for_source(file);
    let mut files = Vec::new();
    let mut notes = Vec::new();
    let mut add = |name: String, svg: Result<String, plot::PlotError>| match svg {
        Ok(s) => files.push((dir.join(name), s.into_bytes())),
        Err(e) => notes.push(format!("{name}: not drawn: {e}")),
    };
    if let Some(s) = &r.steady {
        match plot::period_plots(c, &s.solution, &p) {
            Ok(v) => {
                for (q, svg) in v {
                    add(format!("period-{q}.svg"), Ok(svg));
                }
            }
            Err(e) => add("period.svg".into(), Err(e)),
        }
        if let Some(o) = &s.metrics.output {
            let masks = mask_evaluations(c, &s.metrics, s.solution.freq);
            add(
                "spectrum.svg".into(),
                plot::spectrum_plot(&o.harmonics, masks.first(), &p),
            );
        }
    }
    let f0 = steady_freq(c);
    if let (Some(t), Some(f0)) = (r.transients.first(), f0) {
        add("startup.svg".into(), plot::startup_plot(c, t, f0, &p));
    }
    if let Some(ac) = r.acs.first() {
        let (unknowns, scale) = ac_view(c);
        add("ac.svg".into(), plot::ac_plot(ac, &unknowns, scale, &p));
    }
    (files, notes)
}

fn steady_freq(c: &Circuit) -> Option<f64> {
    c.analyses.iter().find_map(|a| match a {
        Analysis::Steady { freq, .. } => Some(*freq),
        _ => None,
    })
}

/// Which node voltages an AC plot shows (the output element's terminals) and on what scale.
fn ac_view(c: &Circuit) -> (Vec<usize>, Scale) {
    let scale = c
        .analyses
        .iter()
        .find_map(|a| match a {
            Analysis::Ac { scale, .. } => Some(*scale),
            _ => None,
        })
        .unwrap_or(Scale::Log);
    let mut unknowns: Vec<usize> = c
        .output
        .and_then(|o| c.elements.get(o))
        .map(|e| e.kind.terminals().into_iter().flatten().collect())
        .unwrap_or_default();
    unknowns.truncate(1);
    (unknowns, scale)
}

/// The self-contained HTML report of one stage.
pub fn html_report(
    path: &Path,
    file: &str,
    c: &Circuit,
    r: &Results,
    options: Vec<(String, String)>,
) -> String {
    let masks = r
        .steady
        .as_ref()
        .map(|s| mask_evaluations(c, &s.metrics, s.solution.freq))
        .unwrap_or_default();
    let (unknowns, scale) = ac_view(c);
    let input = ReportInput {
        title: c.title.clone().unwrap_or_else(|| file.to_string()),
        file: file.to_string(),
        file_sha256: file_sha256(path),
        circuit: Some(c),
        solution: r.steady.as_ref().map(|s| &s.solution),
        metrics: r.steady.as_ref().map(|s| &s.metrics),
        verdicts: &r.verdicts,
        masks: &masks,
        transient: r.transients.first(),
        ac: r.acs.first().map(|result| AcView {
            result,
            unknowns: &unknowns,
            scale,
        }),
        studies: &[],
        intro: Vec::new(),
        stage_label: None,
        omit_stage: false,
        provenance: Provenance {
            tool: format!("tankwave {}", env!("CARGO_PKG_VERSION")),
            date: today_utc(),
            options,
        },
        plot: PlotParams::for_source(file),
    };
    tankwave_report::html::stage_report(&input)
}

/// Unit of a flattened study figure, from its name's suffix.
fn figure_unit(name: &str) -> &'static str {
    if name.ends_with("_w") {
        "W"
    } else if name.ends_with("_v") {
        "V"
    } else if name.ends_with("_a") {
        "A"
    } else if name.ends_with("_dbc") {
        "dBc"
    } else if name.ends_with("_dbm") {
        "dBm"
    } else if name.ends_with("_db") {
        "dB"
    } else if name.ends_with("_deg") {
        "deg"
    } else if name.ends_with("_degc") {
        "degC"
    } else {
        ""
    }
}

/// The limit a `require` puts on a flattened study figure, if it is one of
/// the plain figures (pout, efficiency, PAE, gain, VSWR, THD).
fn figure_limit(c: &Circuit, name: &str) -> Option<plot::Limit> {
    use tankwave_circuit::Cmp;
    c.requirements.iter().find_map(|r| {
        let key = match r.metric {
            Metric::Pout => "pout_w",
            Metric::Efficiency => "efficiency",
            Metric::Pae => "pae",
            Metric::Gain => "gain_db",
            Metric::InputVswr => "input_vswr",
            Metric::Thd => "thd",
            _ => return None,
        };
        match (&r.bound, key == name) {
            (Bound::Value(v), true) => Some(plot::Limit {
                value: *v,
                label: r.text.clone(),
                pass_above: matches!(r.cmp, Cmp::Ge | Cmp::Gt),
            }),
            _ => None,
        }
    })
}

/// One figure of a study or tuning run: the file name it is written under,
/// a caption for the HTML report, and the SVG.
pub struct NamedFigure {
    /// File name (no directory).
    pub name: String,
    /// Caption.
    pub caption: String,
    /// The SVG document.
    pub svg: String,
}

/// Write figures into `dir`: the (path, bytes) list for `write_all_atomic`.
pub fn into_files(dir: &Path, figures: &[NamedFigure]) -> Vec<(PathBuf, Vec<u8>)> {
    figures
        .iter()
        .map(|f| (dir.join(&f.name), f.svg.clone().into_bytes()))
        .collect()
}

/// A name made safe for a file name: ASCII letters and digits kept, all else `-`.
fn safe_name(name: &str) -> String {
    name.chars()
        .map(|ch| if ch.is_ascii_alphanumeric() { ch } else { '-' })
        .collect()
}

/// The unit (as shown on an axis, after conversion to SI) of a literal.
pub fn unit_symbol(u: tankwave_netlist::units::Unit) -> &'static str {
    use tankwave_netlist::units::Unit;
    match u {
        Unit::Percent => "",
        Unit::Dbm => "W",
        Unit::DegC | Unit::Kelvin => "K",
        other => other.symbol(),
    }
}

/// The unit of a `let` parameter, from the literals written for it: its
/// `tune` range, its `vary` values or its `let` value (first found); empty
/// when none carries a unit.
pub fn param_unit(parsed: &tankwave_netlist::Parsed, name: &str) -> String {
    use tankwave_netlist::ast::{Stmt, SweepAst};
    let unit = |e: &tankwave_netlist::ast::Expr| e.literal_unit().flatten().map(unit_symbol);
    let mut found = None;
    for st in &parsed.statements {
        let u = match &st.stmt {
            Stmt::Tune { param, from, to } if param.name == name => unit(from).or(unit(to)),
            Stmt::Vary { target, sweep } if target.name == name => match sweep {
                SweepAst::List(v) => v.iter().find_map(unit),
                SweepAst::Step { from, to, .. } | SweepAst::Points { from, to, .. } => {
                    unit(from).or(unit(to))
                }
            },
            Stmt::Let { name: n, value } if n.name == name => unit(value),
            _ => None,
        };
        if let Some(u) = u {
            // tune and vary state the range a user thinks in; prefer them over `let`
            let from_let = matches!(&st.stmt, Stmt::Let { .. });
            if !from_let {
                return u.to_string();
            }
            found.get_or_insert(u);
        }
    }
    found.unwrap_or("").to_string()
}

/// The unit of the main value of an element (resistance, capacitance, inductance).
fn element_unit(c: &Circuit, name: &str) -> &'static str {
    use tankwave_circuit::ElementKind;
    match c.elements.iter().find(|e| e.name == name).map(|e| &e.kind) {
        Some(ElementKind::Resistor { .. }) => "Ohm",
        Some(ElementKind::Capacitor { .. }) => "F",
        Some(ElementKind::Inductor { .. }) => "H",
        _ => "",
    }
}

/// Figures of a study: a histogram of every figure (with the requirement
/// limit where one applies) and, for a sweep without Monte Carlo, each
/// figure against the first swept parameter, one curve per value of the
/// second. A plot that cannot be drawn is reported in the notes.
pub fn study_figures(
    file: &str,
    parsed: &tankwave_netlist::Parsed,
    c: &Circuit,
    records: &[tankwave_study::Record],
) -> (Vec<NamedFigure>, Vec<String>) {
    let p = PlotParams::for_source(file);
    let mut figures = Vec::new();
    let mut notes = Vec::new();
    let mut names: Vec<String> = records
        .iter()
        .flat_map(|r| r.metrics.keys().cloned())
        .collect();
    names.sort();
    names.dedup();
    let axes: Vec<(String, String)> = c
        .study
        .vary
        .iter()
        .map(|v| match &v.target {
            tankwave_circuit::VaryTarget::Param(n) => (n.clone(), param_unit(parsed, n)),
            tankwave_circuit::VaryTarget::Element(n) => (n.clone(), element_unit(c, n).to_string()),
        })
        .collect();
    let mut add = |name: String, caption: String, svg: Result<String, plot::PlotError>| match svg {
        Ok(svg) => figures.push(NamedFigure { name, caption, svg }),
        Err(e) => notes.push(format!("{name}: not drawn: {e}")),
    };
    for name in &names {
        let values: Vec<f64> = records
            .iter()
            .filter_map(|r| r.metrics.get(name).copied())
            .collect();
        let safe = safe_name(name);
        let limit = figure_limit(c, name);
        let spec = plot::HistogramSpec {
            title: format!("{name} over {} variants", values.len()),
            name: name.clone(),
            unit: figure_unit(name).to_string(),
            limit: limit.clone(),
            bins: None,
        };
        add(
            format!("hist-{safe}.svg"),
            format!(
                "Histogram of {name} over the {} variants that solved{}.",
                values.len(),
                if limit.is_some() {
                    "; dashed: the requirement limit"
                } else {
                    ""
                }
            ),
            plot::histogram_plot(&values, &spec, &p),
        );
        if c.study.montecarlo.is_none() && !axes.is_empty() {
            let (x_key, x_unit) = &axes[0];
            let g_key = axes.get(1).map(|(k, _)| k);
            let pts: Vec<(f64, f64, f64)> = records
                .iter()
                .filter_map(|r| {
                    let x = *r.values.get(x_key)?;
                    let g = g_key.and_then(|k| r.values.get(k).copied()).unwrap_or(0.0);
                    Some((x, g, *r.metrics.get(name)?))
                })
                .collect();
            let limit_note = if limit.is_some() {
                "; dashed: the requirement limit"
            } else {
                ""
            };
            let curves = plot::SweepCurves {
                title: format!("{name} against {x_key}"),
                x_name: x_key.clone(),
                x_unit: x_unit.clone(),
                y_name: name.clone(),
                y_unit: figure_unit(name).to_string(),
                curves: plot::SweepCurves::group(&pts, g_key.map(|s| s.as_str()).unwrap_or(""), ""),
                limit: limit.map(|l| (l.value, l.label)),
            };
            add(
                format!("sweep-{safe}.svg"),
                format!(
                    "{name} against {x_key}{}{limit_note}.",
                    g_key
                        .map(|g| format!(", one curve per value of {g}"))
                        .unwrap_or_default()
                ),
                plot::sweep_plot(&curves, &p),
            );
        }
    }
    (figures, notes)
}

/// A one-line description of what a study varies.
fn study_description(c: &Circuit, total: u64) -> String {
    let mut parts: Vec<String> = c
        .study
        .vary
        .iter()
        .map(|v| {
            let n = match &v.target {
                tankwave_circuit::VaryTarget::Param(n)
                | tankwave_circuit::VaryTarget::Element(n) => n,
            };
            format!("{n} swept over {} values", v.sweep.values().len())
        })
        .collect();
    if let Some(mc) = &c.study.montecarlo {
        let names: Vec<&str> = c
            .study
            .tolerances
            .iter()
            .filter_map(|t| c.elements.get(t.element).map(|e| e.name.as_str()))
            .collect();
        parts.push(format!(
            "{} Monte Carlo runs per grid point (seed {}) with tolerances on {}",
            mc.runs,
            mc.seed,
            if names.is_empty() {
                "no element".to_string()
            } else {
                names.join(", ")
            }
        ));
    }
    if parts.is_empty() {
        parts.push("nothing varied".to_string());
    }
    format!("{total} variants: {}", parts.join("; "))
}

/// What the study report needs besides the circuit and the figures.
pub struct StudyReport<'a> {
    /// The stage file as given.
    pub path: &'a Path,
    /// Its name for display.
    pub file: &'a str,
    /// The study summary.
    pub summary: &'a tankwave_study::Summary,
    /// Variants in the whole plan.
    pub total: u64,
    /// The run's counts.
    pub info: &'a tankwave_study::RunInfo,
    /// The shard run, if any.
    pub shard: Option<tankwave_study::Shard>,
    /// Figures (histograms, sweep curves).
    pub figures: Vec<NamedFigure>,
    /// The nominal stage solved (or why it did not solve).
    pub nominal: Result<Results, String>,
    /// Options in effect.
    pub options: Vec<(String, String)>,
}

/// The self-contained HTML report of a study: the study summary with its
/// figures first, then the nominal stage (the file's values, steady state only).
pub fn study_report(c: &Circuit, r: StudyReport<'_>) -> String {
    let figures = r
        .figures
        .into_iter()
        .map(|f| Figure {
            caption: f.caption,
            svg: f.svg,
        })
        .collect();
    let sections =
        tankwave_report::batch::study_sections(r.summary, &format!("Study of {}", r.file), figures);
    let mut intro = vec![format!(
        "{}. This run recorded {} of them on {} threads.",
        study_description(c, r.total),
        r.info.recorded,
        r.info.threads
    )];
    if let Some(s) = r.shard {
        intro.push(format!(
            "This is shard {}/{} of the study: it covers only its share of the variants.",
            s.index, s.count
        ));
    }
    if r.info.skipped > 0 {
        intro.push(format!(
            "{} variants recorded by an earlier run (--resume) are not in this summary.",
            r.info.skipped
        ));
    }
    let (res, nominal_ok) = match &r.nominal {
        Ok(res) => {
            intro.push(
                "The sections after the study show the nominal stage: the file's own values \
                 (with any --set overrides), no sweep or tolerance applied, solved for its \
                 periodic steady state only."
                    .to_string(),
            );
            (Some(res), true)
        }
        Err(m) => {
            intro.push(format!(
                "The nominal stage (the file's own values) did not solve: {m}. Only the study is shown."
            ));
            (None, false)
        }
    };
    let steady = res.and_then(|x| x.steady.as_ref());
    let masks = steady
        .map(|s| mask_evaluations(c, &s.metrics, s.solution.freq))
        .unwrap_or_default();
    let no_verdicts = Vec::new();
    let input = ReportInput {
        title: c.title.clone().unwrap_or_else(|| r.file.to_string()),
        file: r.file.to_string(),
        file_sha256: file_sha256(r.path),
        circuit: Some(c),
        solution: steady.map(|s| &s.solution),
        metrics: steady.map(|s| &s.metrics),
        verdicts: res.map(|x| &x.verdicts).unwrap_or(&no_verdicts),
        masks: &masks,
        transient: None,
        ac: None,
        studies: &sections,
        intro,
        stage_label: Some("nominal stage".to_string()),
        omit_stage: !nominal_ok,
        provenance: Provenance {
            tool: format!("tankwave {}", env!("CARGO_PKG_VERSION")),
            date: today_utc(),
            options: r.options,
        },
        plot: PlotParams::for_source(r.file),
    };
    tankwave_report::html::stage_report(&input)
}

/// Name and unit of a tuning goal's figure as plotted, and the factor from
/// the tuner's value (efficiency is plotted in percent).
pub fn goal_axis(goal: tankwave_study::TuneGoal) -> (&'static str, &'static str, f64) {
    match goal {
        tankwave_study::TuneGoal::MaximisePout => ("output power", "W", 1.0),
        tankwave_study::TuneGoal::MaximiseEfficiencyAt { .. } => ("efficiency", "%", 100.0),
        tankwave_study::TuneGoal::MinimiseInputVswr => ("input VSWR", ":1", 1.0),
    }
}

/// What a tuning goal asks for, in words.
fn goal_phrase(goal: tankwave_study::TuneGoal) -> String {
    match goal {
        tankwave_study::TuneGoal::MaximisePout => "largest output power".to_string(),
        tankwave_study::TuneGoal::MaximiseEfficiencyAt { pout_min } => format!(
            "largest efficiency with at least {} out",
            tankwave_report::si(pout_min, "W")
        ),
        tankwave_study::TuneGoal::MinimiseInputVswr => "smallest input VSWR".to_string(),
    }
}

/// The plots of a tuning run: for two parameters the goal over both around
/// the optimum (`tune-X-Y.svg`), otherwise the goal against each parameter
/// with the others at the optimum (`tune-X.svg`). `units` gives each
/// parameter's unit. Points without a value are left out (curves) or blank
/// (surface) and said so in the title.
pub fn tune_figures(
    file: &str,
    goal: tankwave_study::TuneGoal,
    map: &tankwave_study::TuneMap,
    optimum: &std::collections::BTreeMap<String, f64>,
    units: &std::collections::BTreeMap<String, String>,
) -> (Vec<NamedFigure>, Vec<String>) {
    let p = PlotParams::for_source(file);
    let (z_name, z_unit, k) = goal_axis(goal);
    let value = |f: &Option<tankwave_study::TuneFigures>| {
        f.as_ref().and_then(|f| goal.figure(f)).map(|v| v * k)
    };
    // the efficiency goal also asks for a minimum output power: count the points short of it
    let short = |fs: &mut dyn Iterator<Item = &Option<tankwave_study::TuneFigures>>| -> usize {
        match goal {
            tankwave_study::TuneGoal::MaximiseEfficiencyAt { pout_min } => fs
                .filter(|f| {
                    f.as_ref()
                        .and_then(|f| f.pout)
                        .is_some_and(|p| p < pout_min)
                })
                .count(),
            _ => 0,
        }
    };
    let short_text = |n: usize| match goal {
        tankwave_study::TuneGoal::MaximiseEfficiencyAt { pout_min } if n > 0 => {
            format!(
                "; {n} points give less than {}",
                tankwave_report::si(pout_min, "W")
            )
        }
        _ => String::new(),
    };
    let unit_of = |n: &str| units.get(n).cloned().unwrap_or_default();
    let mut figures = Vec::new();
    let mut notes = Vec::new();
    if let Some(s) = &map.surface {
        let values: Vec<Vec<f64>> = s
            .figures
            .iter()
            .map(|row| row.iter().map(|f| value(f).unwrap_or(f64::NAN)).collect())
            .collect();
        let n_short = short(&mut s.figures.iter().flatten());
        let name = format!(
            "tune-{}-{}.svg",
            safe_name(&s.x_param),
            safe_name(&s.y_param)
        );
        let surface = plot::Surface {
            title: format!(
                "Tuning {} and {} for {}{}",
                s.x_param,
                s.y_param,
                goal_phrase(goal),
                short_text(n_short)
            ),
            x_name: s.x_param.clone(),
            x_unit: unit_of(&s.x_param),
            y_name: s.y_param.clone(),
            y_unit: unit_of(&s.y_param),
            z_name: z_name.to_string(),
            z_unit: z_unit.to_string(),
            xs: s.xs.clone(),
            ys: s.ys.clone(),
            values,
            optimum: match (optimum.get(&s.x_param), optimum.get(&s.y_param)) {
                (Some(&x), Some(&y)) => Some((x, y)),
                _ => None,
            },
        };
        match plot::surface_plot(&surface, &p) {
            Ok(svg) => figures.push(NamedFigure {
                caption: format!(
                    "{z_name} over {} and {} around the optimum (ringed).",
                    s.x_param, s.y_param
                ),
                name,
                svg,
            }),
            Err(e) => notes.push(format!("{name}: not drawn: {e}")),
        }
    }
    for c in &map.curves {
        let name = format!("tune-{}.svg", safe_name(&c.param));
        let pts: Vec<(f64, f64)> =
            c.xs.iter()
                .zip(&c.figures)
                .filter_map(|(x, f)| Some((*x, value(f)?)))
                .collect();
        let left_out = c.xs.len() - pts.len();
        let n_short = short(&mut c.figures.iter());
        let title = format!(
            "Tuning {} for {}{}{}",
            c.param,
            goal_phrase(goal),
            if left_out > 0 {
                format!(
                    "; {left_out} of {} points gave no value and are left out",
                    c.xs.len()
                )
            } else {
                String::new()
            },
            short_text(n_short)
        );
        let xs: Vec<f64> = pts.iter().map(|p| p.0).collect();
        let ys: Vec<f64> = pts.iter().map(|p| p.1).collect();
        match plot::tuning_curve_plot(
            &title,
            &c.param,
            &unit_of(&c.param),
            z_name,
            z_unit,
            &xs,
            &ys,
            optimum.get(&c.param).copied(),
            &p,
        ) {
            Ok(svg) => figures.push(NamedFigure {
                caption: format!("{z_name} against {} around the optimum.", c.param),
                name,
                svg,
            }),
            Err(e) => notes.push(format!("{name}: not drawn: {e}")),
        }
    }
    (figures, notes)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn date_is_well_formed() {
        let d = today_utc();
        assert_eq!(d.len(), 10);
        assert!(d.starts_with("20"));
    }
}
