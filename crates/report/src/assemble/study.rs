//! Figures and the HTML report of a study: a histogram of every recorded
//! figure (with its requirement limit) and, for a sweep without Monte
//! Carlo, each figure against the first swept parameter; then the report
//! that leads with the study summary and its figures and follows with the
//! nominal stage.

use tankwave_circuit::{Circuit, VaryTarget};
use tankwave_study::{Record, RunInfo, Shard, Summary};

use super::units::{element_unit, param_unit};
use super::variant::{figure_limit, record_unit};
use super::{safe_name, Drawn, NamedFigure};
use crate::html::{Figure, Provenance, ReportInput};
use crate::plot::{self, PlotParams};
use tankwave_stage::{mask_evaluations, StageResults};

/// Figures of a study from its `records`: `hist-NAME.svg`, a histogram of
/// every figure (with the requirement limit where one applies) and, for a
/// sweep without Monte Carlo, `sweep-NAME.svg`, each figure against the
/// first swept parameter with one curve per value of the second. Axis units
/// come from the circuit. A plot that cannot
/// be drawn is noted instead.
pub fn study_figures(file: &str, c: &Circuit, records: &[Record]) -> Drawn {
    let p = PlotParams::for_source(file);
    let mut d = Drawn::default();
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
            VaryTarget::Param(n) => (n.clone(), param_unit(c, n)),
            VaryTarget::Element(n) => (n.clone(), element_unit(c, n).to_string()),
        })
        .collect();
    for name in &names {
        // the axis unit of the figure (fractions are drawn in percent)
        let (scale, unit) = record_unit(name)
            .map(tankwave_measure::Unit::axis)
            .unwrap_or((1.0, ""));
        let values: Vec<f64> = records
            .iter()
            .filter_map(|r| r.metrics.get(name).map(|v| v * scale))
            .collect();
        let safe = safe_name(name);
        let limit = figure_limit(c, name).map(|l| plot::Limit {
            value: l.value * scale,
            ..l
        });
        let limit_note = if limit.is_some() {
            "; dashed: the requirement limit"
        } else {
            ""
        };
        let spec = plot::HistogramSpec {
            title: format!("{name} over {} variants", values.len()),
            name: name.clone(),
            unit: unit.to_string(),
            limit: limit.clone(),
            bins: None,
        };
        d.add(
            format!("hist-{safe}.svg"),
            format!(
                "Histogram of {name} over the {} variants that solved{limit_note}.",
                values.len()
            ),
            plot::histogram_plot(&values, &spec, &p),
        );
        let Some((x_key, x_unit)) = axes.first().filter(|_| c.study.montecarlo.is_none()) else {
            continue;
        };
        let g_key = axes.get(1).map(|(k, _)| k);
        let pts: Vec<(f64, f64, f64)> = records
            .iter()
            .filter_map(|r| {
                let x = *r.values.get(x_key)?;
                let g = g_key.and_then(|k| r.values.get(k).copied()).unwrap_or(0.0);
                Some((x, g, *r.metrics.get(name)? * scale))
            })
            .collect();
        let curves = plot::SweepCurves {
            title: format!("{name} against {x_key}"),
            x_name: x_key.clone(),
            x_unit: x_unit.clone(),
            y_name: name.clone(),
            y_unit: unit.to_string(),
            // the legend names each curve by its value with the unit of the swept value
            curves: plot::SweepCurves::group(
                &pts,
                g_key.map(|s| s.as_str()).unwrap_or(""),
                axes.get(1).map(|(_, u)| u.as_str()).unwrap_or(""),
            ),
            limit: limit.map(|l| (l.value, l.label)),
        };
        d.add(
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
    d
}

/// A one-line description of what a study of `c` with `total` variants varies.
fn study_description(c: &Circuit, total: u64) -> String {
    let mut parts: Vec<String> = c
        .study
        .vary
        .iter()
        .map(|v| {
            let n = match &v.target {
                VaryTarget::Param(n) | VaryTarget::Element(n) => n,
            };
            format!("{n} swept over {} values", v.sweep.values().len())
        })
        .collect();
    if let Some(mc) = &c.study.montecarlo {
        let names: Vec<&str> = c
            .study
            .tolerances
            .iter()
            .filter_map(|t| c.elements.get(t.element.index()).map(|e| e.name.as_str()))
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

/// The nominal stage of a study: the file's own values, solved for its
/// steady state only, or why it did not solve.
#[derive(Debug, Clone)]
pub enum NominalStage {
    /// The nominal stage solved.
    Solved(Box<StageResults>),
    /// It did not; the message is shown in the report.
    NotSolved(String),
}

/// What the study report needs besides the circuit.
#[derive(Debug, Clone)]
pub struct StudyReport<'a> {
    /// The stage file as given.
    pub file: &'a str,
    /// Hex SHA-256 of the stage file's bytes (empty if unknown).
    pub file_sha256: String,
    /// The study summary.
    pub summary: &'a Summary,
    /// Variants in the whole plan.
    pub total: u64,
    /// The run's counts.
    pub info: &'a RunInfo,
    /// The shard run, if any.
    pub shard: Option<Shard>,
    /// Figures (histograms, sweep curves), e.g. from [`study_figures`].
    pub figures: Vec<NamedFigure>,
    /// The nominal stage.
    pub nominal: NominalStage,
    /// Tool, date and options in effect.
    pub provenance: Provenance,
}

/// The self-contained HTML report of a study of `c`: what was varied and
/// how much of it this run covered, the study summary with its figures
/// first, then the nominal stage (left out if it did not solve).
pub fn study_report(c: &Circuit, r: StudyReport<'_>) -> String {
    let figures = r
        .figures
        .into_iter()
        .map(|f| Figure {
            caption: f.caption,
            svg: f.svg,
        })
        .collect();
    let sections = crate::batch::study_sections(
        r.summary,
        &super::variant::requirement_units(c),
        &super::units::value_units(c, r.summary),
        &format!("Study of {}", r.file),
        figures,
    );
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
            "The summary covers every variant in the record file: {} recorded by earlier runs \
             or merged shards (--resume) and {} by this one.",
            r.info.skipped, r.info.recorded
        ));
    }
    let res = match &r.nominal {
        NominalStage::Solved(res) => {
            intro.push(
                "The sections after the study show the nominal stage: the file's own values \
                 (with any --set overrides), no sweep or tolerance applied, solved for its \
                 periodic steady state only."
                    .to_string(),
            );
            Some(res.as_ref())
        }
        NominalStage::NotSolved(m) => {
            intro.push(format!(
                "The nominal stage (the file's own values) did not solve: {m}. Only the study is shown."
            ));
            None
        }
    };
    let steady = res.and_then(|x| x.steady.as_ref());
    let masks = steady
        .map(|s| mask_evaluations(c, &s.metrics, s.solution.freq).evaluated)
        .unwrap_or_default();
    let input = ReportInput {
        title: c.title.clone().unwrap_or_else(|| r.file.to_string()),
        file: r.file.to_string(),
        file_sha256: r.file_sha256,
        circuit: Some(c),
        solution: steady.map(|s| &s.solution),
        metrics: steady.map(|s| &s.metrics),
        loads: steady.map(|s| s.loads.as_slice()).unwrap_or(&[]),
        verdicts: res.map(|x| x.verdicts.as_slice()).unwrap_or(&[]),
        masks: &masks,
        transient: None,
        ac: None,
        studies: &sections,
        load_sweeps: Vec::new(),
        intro,
        stage_label: Some("nominal stage".to_string()),
        omit_stage: res.is_none(),
        provenance: r.provenance,
        plot: PlotParams::for_source(r.file),
    };
    crate::html::stage_report(&input)
}

#[cfg(test)]
mod tests {
    use super::*;

    use crate::assemble::test_circuit as circuit;

    const STAGE: &str = "let rl = 50Ohm\nvoltage vdrv src gnd wave=sine(amp=10V, freq=1MHz) internal=50Ohm\n\
        resistor rload src gnd rl\noutput rload\ninput vdrv\nanalyze steady freq=1MHz harmonics=4\n";

    #[test]
    fn description_names_what_varies() {
        let c = circuit(STAGE);
        assert_eq!(study_description(&c, 1), "1 variants: nothing varied");
        let c = circuit(&format!(
            "{STAGE}vary rl [25Ohm, 50Ohm, 100Ohm]\ntolerance rload 10% uniform\nmontecarlo runs=4 seed=11\n"
        ));
        assert_eq!(
            study_description(&c, 12),
            "12 variants: rl swept over 3 values; 4 Monte Carlo runs per grid point (seed 11) \
             with tolerances on rload"
        );
    }

    /// A sweep without Monte Carlo gets a histogram and a sweep curve per
    /// figure, with the unit of the swept parameter from the file.
    #[test]
    fn sweep_figures_per_recorded_figure() {
        let text = format!("{STAGE}vary rl [25Ohm, 50Ohm]\nrequire pout >= 0.23W\n");
        let c = circuit(&text);
        let rec = |i: u64, rl: f64, p: f64| Record {
            index: i,
            values: [("rl".to_string(), rl)].into_iter().collect(),
            metrics: [("pout_w".to_string(), p)].into_iter().collect(),
            verdicts: Default::default(),
            error: None,
        };
        let d = study_figures("t.tank", &c, &[rec(0, 25.0, 0.22), rec(1, 50.0, 0.25)]);
        assert!(d.notes.is_empty(), "{:?}", d.notes);
        let names: Vec<&str> = d.figures.iter().map(|f| f.name.as_str()).collect();
        assert_eq!(names, vec!["hist-pout-w.svg", "sweep-pout-w.svg"]);
        assert_eq!(
            d.figures[1].caption,
            "pout_w against rl; dashed: the requirement limit."
        );
        assert!(d.figures[1].svg.contains("Ohm"));
    }
}
