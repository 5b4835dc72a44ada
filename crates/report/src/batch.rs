//! Text for studies: the heading of a study or tuning run, the summary of a
//! batch (yield, statistics of every figure, the worst variant of each
//! requirement, the inputs that drive each figure and margin) and the
//! tuning result, as terminal text, and the summary as
//! sections of the HTML report ([`study_sections`]).

use crate::assemble::variant::show_figure;
use crate::format::{fixed, si};
use crate::html::{Figure, PlainTable, StudySection};
use crate::table::{Align, Table};
use std::collections::BTreeMap;
use tankwave_measure::Unit;
use tankwave_study::{RunInfo, Summary, TuneResult};

fn num(v: f64) -> String {
    if !v.is_finite() {
        return "—".into();
    }
    let a = v.abs();
    if a != 0.0 && !(1e-3..1e5).contains(&a) {
        format!("{v:.4e}")
    } else {
        format!("{v:.4}")
    }
}

/// The heading of a run over one stage file: its title (or
/// "(untitled stage)"), the file name, and a blank line.
pub fn heading(title: Option<&str>, file: &str) -> String {
    format!("{}\n{file}\n\n", title.unwrap_or("(untitled stage)"))
}

/// The heading of a study run: the stage's title, then the file with how
/// many variants this run recorded on how many threads (and how many an
/// earlier run had recorded), and a blank line.
pub fn study_heading(title: Option<&str>, file: &str, info: &RunInfo) -> String {
    format!(
        "{}\n{}: {} variants run on {} threads{}\n\n",
        title.unwrap_or("(untitled stage)"),
        file,
        info.recorded,
        info.threads,
        if info.skipped > 0 {
            format!(", {} already recorded", info.skipped)
        } else {
            String::new()
        }
    )
}

/// A requirement's worst margin in the requirement's unit (`units` maps a
/// requirement text to it); a bare number only when the unit is unknown.
fn margin_text(units: &BTreeMap<String, Unit>, name: &str, m: f64) -> String {
    match units.get(name) {
        Some(u) if m.is_finite() => u.show_margin(m),
        _ => num(m),
    }
}

/// Inputs shown per target in the drivers table.
const DRIVERS_SHOWN: usize = 4;

/// The heading line of the drivers table: what ρ is and the noise level.
fn drivers_caption(s: &Summary) -> Option<String> {
    let n = s
        .figure_drivers
        .values()
        .chain(s.requirement_drivers.values())
        .map(|d| d.variants)
        .max()?;
    Some(format!(
        "What drives each figure and margin (Spearman rank correlation ρ of the swept \
         values and tolerance factors over {n} variants; |ρ| below {} is chance at the 5 % level)",
        fixed(tankwave_study::sensitivity::noise_level(n as usize), 2, "")
    ))
}

/// Rows of the drivers table: target, then its strongest inputs with ρ.
fn drivers_rows(s: &Summary) -> Vec<Vec<String>> {
    let show = |d: &tankwave_study::Drivers| {
        let mut parts: Vec<String> = d
            .inputs
            .iter()
            .take(DRIVERS_SHOWN)
            .map(|(name, rho)| format!("{name} {rho:+.2}"))
            .collect();
        if d.inputs.len() > DRIVERS_SHOWN {
            parts.push(format!("and {} more", d.inputs.len() - DRIVERS_SHOWN));
        }
        parts.join(", ")
    };
    s.figure_drivers
        .iter()
        .chain(s.requirement_drivers.iter())
        .map(|(k, d)| vec![k.clone(), show(d)])
        .collect()
}

/// A variant's values for people: each swept value with its unit
/// (`value_units`: value key → unit symbol, empty when none), each
/// tolerance factor (`….factor`) as a multiplier `c1 ×0.9700`.
pub fn variant_values(
    values: &BTreeMap<String, f64>,
    value_units: &BTreeMap<String, String>,
) -> String {
    values
        .iter()
        .map(|(k, v)| match k.strip_suffix(".factor") {
            Some(el) => format!("{el} ×{v:.4}"),
            None => {
                let unit = value_units.get(k).map(String::as_str).unwrap_or("");
                format!(
                    "{k} = {}",
                    tankwave_measure::units::si_prefixed(*v, unit, 4)
                )
            }
        })
        .collect::<Vec<_>>()
        .join(", ")
}

/// "#N" and, when the variant has values, what they are.
fn worst_variant(
    r: &tankwave_study::RequirementStats,
    value_units: &BTreeMap<String, String>,
) -> String {
    if r.worst_values.is_empty() {
        format!("#{}", r.worst_index)
    } else {
        format!(
            "#{} ({})",
            r.worst_index,
            variant_values(&r.worst_values, value_units)
        )
    }
}

/// The summary of a study as text; `units` gives each requirement's unit
/// (requirement text → unit) so that margins print with it; `value_units`
/// the unit of each swept value, to name the worst variants by their values.
pub fn summary_text(
    s: &Summary,
    units: &BTreeMap<String, Unit>,
    value_units: &BTreeMap<String, String>,
) -> String {
    let mut out = format!(
        "{} variants, {} failed to solve; {} pass every requirement (yield {})\n\n",
        s.variants,
        s.failed,
        s.passed_all,
        fixed(s.yield_fraction * 100.0, 1, "%")
    );
    let pct_names: Vec<String> = s
        .figures
        .values()
        .next()
        .map(|f| f.percentiles.iter().map(|(p, _)| format!("p{p}")).collect())
        .unwrap_or_default();
    let mut headers: Vec<(&str, Align)> = vec![
        ("figure", Align::Left),
        ("min", Align::Right),
        ("median", Align::Right),
        ("max", Align::Right),
    ];
    let names: Vec<&str> = pct_names.iter().map(|s| s.as_str()).collect();
    for n in &names {
        headers.push((n, Align::Right));
    }
    let mut t = Table::new(headers);
    for (name, f) in &s.figures {
        let show = |v: f64| show_figure(name, v);
        let mut row = vec![name.clone(), show(f.min), show(f.median), show(f.max)];
        row.extend(f.percentiles.iter().map(|(_, v)| show(*v)));
        t.row(row);
    }
    out.push_str(&t.render());
    if !s.requirements.is_empty() {
        out.push('\n');
        let mut t = Table::new(vec![
            ("requirement", Align::Left),
            ("passed", Align::Right),
            ("worst variant", Align::Right),
            ("worst margin", Align::Right),
        ]);
        for (name, r) in &s.requirements {
            t.row(vec![
                name.clone(),
                format!("{} of {}", r.passed, r.evaluated),
                worst_variant(r, value_units),
                margin_text(units, name, r.worst_margin),
            ]);
        }
        out.push_str(&t.render());
    }
    if let Some(caption) = drivers_caption(s) {
        out.push_str(&format!("\n{caption}\n"));
        let mut t = Table::new(vec![
            ("figure or requirement", Align::Left),
            ("driven by (ρ)", Align::Left),
        ]);
        for row in drivers_rows(s) {
            t.row(row);
        }
        out.push_str(&t.render());
    }
    out
}

/// Sweeps of at most this many points print one row per point after the
/// summary (a longer sweep reads better as its plot; common practice).
pub const SWEEP_TABLE_POINTS: usize = 60;

/// The figures a per-point sweep table shows, when measured: the headline
/// figures of a power stage.
const SWEEP_TABLE_FIGURES: [tankwave_circuit::figure::Figure; 3] = [
    tankwave_circuit::figure::Figure::Pout,
    tankwave_circuit::figure::Figure::Efficiency,
    tankwave_circuit::figure::Figure::Gain,
];

/// One row per point of a plain sweep (no tolerances): the swept values with
/// their units, the headline figures measured and the verdict of the point
/// (`pass`, the failed requirements, or why it did not solve). `None` for a
/// Monte Carlo study, an empty one or one of more than
/// [`SWEEP_TABLE_POINTS`] records.
pub fn sweep_points_text(
    records: &[tankwave_study::Record],
    value_units: &BTreeMap<String, String>,
) -> Option<String> {
    if records.is_empty()
        || records.len() > SWEEP_TABLE_POINTS
        || records
            .iter()
            .any(|r| r.values.is_empty() || r.values.keys().any(|k| k.ends_with(".factor")))
    {
        return None;
    }
    let mut sorted: Vec<&tankwave_study::Record> = records.iter().collect();
    sorted.sort_by_key(|r| r.index);
    let keys: Vec<String> = sorted[0].values.keys().cloned().collect();
    let figures: Vec<&str> = SWEEP_TABLE_FIGURES
        .iter()
        .filter_map(|f| f.record())
        .filter(|f| sorted.iter().any(|r| r.metrics.contains_key(*f)))
        .collect();
    let mut headers: Vec<(&str, Align)> = vec![("#", Align::Right)];
    headers.extend(keys.iter().map(|k| (k.as_str(), Align::Right)));
    headers.extend(figures.iter().map(|f| (*f, Align::Right)));
    headers.push(("verdict", Align::Left));
    let mut t = Table::new(headers);
    for r in sorted {
        let mut row = vec![format!("{}", r.index)];
        for k in &keys {
            let unit = value_units.get(k).map(String::as_str).unwrap_or("");
            row.push(match r.values.get(k) {
                Some(v) => tankwave_measure::units::si_prefixed(*v, unit, 4),
                None => "-".into(),
            });
        }
        for f in &figures {
            row.push(match r.metrics.get(*f) {
                Some(v) => show_figure(f, *v),
                None => "-".into(),
            });
        }
        let failed: Vec<&str> = r
            .verdicts
            .iter()
            .filter(|(_, v)| !v.pass)
            .map(|(k, _)| k.as_str())
            .collect();
        row.push(match (&r.error, failed.is_empty()) {
            (Some(e), _) => format!("not solved: {}", first_line(e)),
            (None, true) => "pass".into(),
            (None, false) => format!("FAIL {}", failed.join("; ")),
        });
        t.row(row);
    }
    Some(format!("\nEach point of the sweep\n{}", t.render()))
}

/// The first line of a message, for a table cell.
fn first_line(s: &str) -> &str {
    s.lines().next().unwrap_or("")
}

/// The drivers of each target as JSON: target → `[{"input", "rho"}, …]`,
/// strongest first (every input at or above the noise level).
fn drivers_json(d: &BTreeMap<String, tankwave_study::Drivers>) -> serde_json::Value {
    d.iter()
        .map(|(k, d)| {
            let inputs: Vec<serde_json::Value> = d
                .inputs
                .iter()
                .map(|(name, rho)| serde_json::json!({"input": name, "rho": rho}))
                .collect();
            (k.clone(), serde_json::Value::Array(inputs))
        })
        .collect::<serde_json::Map<_, _>>()
        .into()
}

/// The summary of a study as one JSON document (`study --format json`;
/// docs/output.md): counts and yield, statistics of every figure with its
/// unit, each requirement's pass count and worst variant (index, values,
/// margin with unit), and the sensitivity (`drivers`: Spearman ρ of every
/// swept value and tolerance factor that drives a figure or a margin above
/// the noise level). `units` and `value_units` as for [`summary_text`].
pub fn summary_json(
    s: &Summary,
    units: &BTreeMap<String, Unit>,
    value_units: &BTreeMap<String, String>,
) -> serde_json::Value {
    use serde_json::json;
    let figures: serde_json::Map<String, serde_json::Value> = s
        .figures
        .iter()
        .map(|(name, f)| {
            let percentiles: serde_json::Map<String, serde_json::Value> = f
                .percentiles
                .iter()
                .map(|(p, v)| (format!("p{p}"), json!(v)))
                .collect();
            let stats = json!({
                "unit": crate::assemble::variant::figure_unit(name),
                "count": f.count,
                "min": f.min,
                "median": f.median,
                "mean": f.mean,
                "max": f.max,
                "percentiles": percentiles,
            });
            (name.clone(), stats)
        })
        .collect();
    let requirements: serde_json::Map<String, serde_json::Value> = s
        .requirements
        .iter()
        .map(|(name, r)| {
            let values: serde_json::Map<String, serde_json::Value> = r
                .worst_values
                .iter()
                .map(|(k, v)| {
                    let unit = if k.ends_with(".factor") {
                        ""
                    } else {
                        value_units.get(k).map(String::as_str).unwrap_or("")
                    };
                    (k.clone(), json!({"value": v, "unit": unit}))
                })
                .collect();
            let stats = json!({
                "evaluated": r.evaluated,
                "passed": r.passed,
                "worst_variant": {"index": r.worst_index, "values": values},
                "worst_margin": r.worst_margin,
                "margin_unit": units.get(name).map(|u| u.symbol()).unwrap_or(""),
            });
            (name.clone(), stats)
        })
        .collect();
    let n = s
        .figure_drivers
        .values()
        .chain(s.requirement_drivers.values())
        .map(|d| d.variants)
        .max()
        .unwrap_or(0);
    json!({
        "variants": s.variants,
        "failed": s.failed,
        "passed_all": s.passed_all,
        "yield": s.yield_fraction,
        "figures": figures,
        "requirements": requirements,
        "drivers": {
            "method": "spearman",
            "variants": n,
            "noise_level": tankwave_study::sensitivity::noise_level(n as usize),
            "figures": drivers_json(&s.figure_drivers),
            "requirements": drivers_json(&s.requirement_drivers),
        },
    })
}

/// The summary of a study as two report sections: the counts (variants,
/// failures, yield) with pass/fail counts per requirement, then the
/// statistics of every figure (count, min, mean, median, max and the
/// summary's percentiles) followed by `figures` (histograms, sweep curves).
/// `heading` names the study, e.g. "Monte Carlo over stage.tank".
/// `units` and `value_units` as for [`summary_text`].
pub fn study_sections(
    s: &Summary,
    units: &BTreeMap<String, Unit>,
    value_units: &BTreeMap<String, String>,
    heading: &str,
    figures: Vec<Figure>,
) -> Vec<StudySection> {
    let mut lines = vec![
        ("variants".to_string(), s.variants.to_string()),
        ("failed to solve".to_string(), s.failed.to_string()),
        (
            "pass every requirement".to_string(),
            format!("{} of {}", s.passed_all, s.variants),
        ),
        ("yield".to_string(), fixed(s.yield_fraction * 100.0, 1, "%")),
    ];
    if s.requirements.is_empty() {
        lines.push((
            "requirements".to_string(),
            "none (yield is the fraction of variants that solved)".to_string(),
        ));
    }
    let requirements = (!s.requirements.is_empty()).then(|| PlainTable {
        header: [
            "requirement",
            "passed",
            "failed",
            "not evaluated",
            "worst variant",
            "worst margin",
        ]
        .iter()
        .map(|h| h.to_string())
        .collect(),
        rows: s
            .requirements
            .iter()
            .map(|(name, r)| {
                vec![
                    name.clone(),
                    r.passed.to_string(),
                    (r.evaluated - r.passed.min(r.evaluated)).to_string(),
                    s.variants.saturating_sub(r.evaluated).to_string(),
                    worst_variant(r, value_units),
                    margin_text(units, name, r.worst_margin),
                ]
            })
            .collect(),
    });
    let pct: Vec<f64> = s
        .figures
        .values()
        .next()
        .map(|f| f.percentiles.iter().map(|(p, _)| *p).collect())
        .unwrap_or_default();
    let mut header: Vec<String> = ["figure", "count", "min", "mean", "median", "max"]
        .iter()
        .map(|h| h.to_string())
        .collect();
    header.extend(pct.iter().map(|p| format!("p{p}")));
    let stats = PlainTable {
        header,
        rows: s
            .figures
            .iter()
            .map(|(name, f)| {
                let show = |v: f64| show_figure(name, v);
                let mut r = vec![
                    name.clone(),
                    f.count.to_string(),
                    show(f.min),
                    show(f.mean),
                    show(f.median),
                    show(f.max),
                ];
                r.extend(f.percentiles.iter().map(|(_, v)| show(*v)));
                r
            })
            .collect(),
    };
    let mut sections = vec![
        StudySection {
            title: heading.to_string(),
            lines,
            table: requirements,
            figures: Vec::new(),
        },
        StudySection {
            title: format!("Figures over the {} variants", s.variants),
            lines: Vec::new(),
            table: (!s.figures.is_empty()).then_some(stats),
            figures,
        },
    ];
    if let Some(caption) = drivers_caption(s) {
        sections.push(StudySection {
            title: "What drives the figures".to_string(),
            lines: vec![("method".to_string(), caption)],
            table: Some(PlainTable {
                header: vec!["figure or requirement".into(), "driven by (ρ)".into()],
                rows: drivers_rows(s),
            }),
            figures: Vec::new(),
        });
    }
    sections
}

/// A parameter value with its unit (empty when none is known), five
/// significant digits so that a tuned value can be written back.
fn param_value(v: f64, unit: &str) -> String {
    tankwave_measure::units::si_prefixed(v, unit, tankwave_study::tune::OPTIMUM_DIGITS)
}

/// The result of a tuning run as text. `units` gives each parameter's unit
/// (from the file or the `--param` range).
pub fn tune_text(r: &TuneResult, units: &BTreeMap<String, String>) -> String {
    let unit = |k: &str| units.get(k).map(String::as_str).unwrap_or("");
    let mut out = format!(
        "Tuning {} after {} of {} allowed iterations ({} evaluations, {} failed)\n",
        if r.converged {
            "converged"
        } else {
            "stopped without converging"
        },
        r.iterations,
        r.allowed_iterations,
        r.evaluations,
        r.failed_evaluations
    );
    let mut t = Table::new(vec![("parameter", Align::Left), ("optimum", Align::Right)]);
    for (k, v) in &r.optimum {
        t.row(vec![k.clone(), param_value(*v, unit(k))]);
    }
    out.push_str(&t.render());
    if !r.at_bound.is_empty() {
        out.push_str(&format!(
            "at the edge of its range: {} (the optimum may lie outside)\n",
            r.at_bound.join(", ")
        ));
    }
    let figures = |f: &tankwave_study::TuneFigures| {
        format!(
            "output power {}, efficiency {}, input VSWR {}",
            f.pout.map(|p| si(p, "W")).unwrap_or_else(|| "—".into()),
            f.efficiency
                .map(crate::format::percent)
                .unwrap_or_else(|| "—".into()),
            f.input_vswr.map(num).unwrap_or_else(|| "—".into())
        )
    };
    out.push_str(&format!(
        "\nAt the optimum (full drive): {}\n",
        figures(&r.figures)
    ));
    if let Some(f) = &r.search_figures {
        out.push_str(&format!("At the search drive: {}\n", figures(f)));
    }
    if !r.confirmations.is_empty() {
        out.push_str("Solved again at the optimum (full drive):\n");
        for c in &r.confirmations {
            let name = crate::stage::method_name(c.method);
            match &c.figures {
                Ok(f) => out.push_str(&format!("  {name}: {}\n", figures(f))),
                Err(e) => out.push_str(&format!("  {name}: did not solve ({e})\n")),
            }
        }
    }
    if let Some(c) = &r.constraint {
        let worst = c
            .worst_pout
            .map(|p| si(p, "W"))
            .unwrap_or_else(|| "—".into());
        let by = c
            .worst_method
            .map(crate::stage::method_name)
            .unwrap_or("the stage's own method");
        out.push_str(&if c.met {
            format!(
                "Minimum output power {} met: at least {worst} under every method (least by {by})\n",
                si(c.pout_min, "W")
            )
        } else {
            format!(
                "Minimum output power {} NOT met: {worst} by {by} (searched with a margin of {})\n",
                si(c.pout_min, "W"),
                fixed(c.margin * 100.0, 3, "%")
            )
        });
    }
    if !r.sharpness.is_empty() {
        out.push_str("\nSharpness of the peak (relative change of the goal at ± step):\n");
        let mut t = Table::new(vec![
            ("parameter", Align::Left),
            ("step", Align::Right),
            ("at -step", Align::Right),
            ("at +step", Align::Right),
        ]);
        for s in &r.sharpness {
            t.row(vec![
                s.param.clone(),
                param_value(s.step, unit(&s.param)),
                s.minus
                    .map(|v| fixed(v * 100.0, 3, "%"))
                    .unwrap_or_else(|| "—".into()),
                s.plus
                    .map(|v| fixed(v * 100.0, 3, "%"))
                    .unwrap_or_else(|| "—".into()),
            ]);
        }
        out.push_str(&t.render());
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn drivers_table_lists_inputs_with_signed_rho() {
        let mut s = Summary::default();
        assert!(drivers_caption(&s).is_none(), "no table without drivers");
        s.figure_drivers.insert(
            "pout_w".into(),
            tankwave_study::Drivers {
                variants: 60,
                noise_level: tankwave_study::sensitivity::noise_level(60),
                inputs: vec![("c1.factor".into(), -0.93), ("vcc".into(), 0.41)],
            },
        );
        let text = summary_text(&s, &BTreeMap::new(), &BTreeMap::new());
        assert!(text.contains("c1.factor -0.93, vcc +0.41"), "{text}");
        // 1.96/sqrt(59) = 0.255...
        assert!(text.contains("|ρ| below 0.26"), "{text}");
        let sections = study_sections(&s, &BTreeMap::new(), &BTreeMap::new(), "h", Vec::new());
        assert_eq!(sections.last().unwrap().title, "What drives the figures");
    }

    #[test]
    fn headings() {
        assert_eq!(heading(None, "a.tank"), "(untitled stage)\na.tank\n\n");
        let info = RunInfo {
            recorded: 9,
            threads: 2,
            skipped: 3,
            ..RunInfo::default()
        };
        assert_eq!(
            study_heading(Some("T"), "a.tank", &info),
            "T\na.tank: 9 variants run on 2 threads, 3 already recorded\n\n"
        );
        let fresh = RunInfo { skipped: 0, ..info };
        assert_eq!(
            study_heading(Some("T"), "a.tank", &fresh),
            "T\na.tank: 9 variants run on 2 threads\n\n"
        );
    }
}
