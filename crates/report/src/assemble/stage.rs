//! One solved stage ([`StageResults`], from tankwave-stage): its SVG plots
//! (with the emission masks its requirements name), the terminal text and
//! JSON document of `run`, and its self-contained HTML report.

use serde_json::{json, Value};
use tankwave_circuit::{Analysis, Circuit, Scale};
use tankwave_devices::UnknownId;
use tankwave_stage::{mask_evaluations, StageResults};

use super::Drawn;
use crate::html::{AcView, Provenance, ReportInput};
use crate::plot::{self, PlotParams};
use crate::stage as text;

/// The SVG plots of one stage: a period plot per transistor
/// (`period-Q.svg`), the spectrum against the first mask (`spectrum.svg`),
/// the start-up envelope of the first transient (`startup.svg`) and the
/// first AC sweep (`ac.svg`) and the loads of each ruggedness sweep on a
/// Smith chart (`smith-ruggedness.svg`, then `smith-ruggedness-2.svg`, …),
/// and each load-pull's contours on one (`smith-loadpull.svg`, …). `file` names the stage in the titles. A plot
/// that cannot be drawn is noted instead.
pub fn stage_plots(file: &str, c: &Circuit, r: &StageResults) -> Drawn {
    let p = PlotParams::for_source(file);
    let mut d = Drawn::default();
    if let Some(s) = &r.steady {
        match plot::period_plots(c, &s.solution, &p) {
            Ok(v) => {
                for (q, svg) in v {
                    d.add(
                        format!("period-{q}.svg"),
                        format!("One steady-state period of {q}, conduction interval shaded."),
                        Ok(svg),
                    );
                }
            }
            Err(e) => d.add("period.svg".into(), String::new(), Err(e)),
        }
        if let Some(o) = &s.metrics.output {
            let masks = mask_evaluations(c, &s.metrics, s.solution.freq).evaluated;
            d.add(
                "spectrum.svg".into(),
                "Output harmonics in dBc against the mask.".into(),
                plot::spectrum_plot(&o.harmonics, masks.first(), &p),
            );
        }
    }
    if let (Some(t), Some(f0)) = (r.transients.first(), steady_freq(c)) {
        d.add(
            "startup.svg".into(),
            "Start-up of the output voltage with its peak envelope.".into(),
            plot::startup_plot(c, t, f0, &p),
        );
    }
    if let Some(ac) = r.acs.first() {
        let (unknowns, scale) = ac_view(c);
        d.add(
            "ac.svg".into(),
            "AC magnitude and phase.".into(),
            plot::ac_plot(ac, &unknowns, scale, &p),
        );
    }
    if let Some(h) = &r.heat {
        for (name, caption, svg) in crate::heat::heat_plots(h, &p) {
            d.add(name, caption, svg);
        }
    }
    for (k, t) in r.two_tone.iter().enumerate() {
        if t.sweep.len() < 2 {
            continue;
        }
        let name = if k == 0 {
            "twotone.svg".to_string()
        } else {
            format!("twotone-{}.svg", k + 1)
        };
        d.add(
            name,
            crate::twotone::PLOT_CAPTION.into(),
            crate::twotone::sweep_plot(t, &p),
        );
    }
    for (k, run) in r.keyings.iter().enumerate() {
        for (stem, caption, svg) in crate::keying::keying_plots(c, run, &p) {
            let name = if k == 0 {
                format!("{stem}.svg")
            } else {
                format!("{stem}-{}.svg", k + 1)
            };
            d.add(name, caption.into(), svg);
        }
    }
    for (k, s) in r.ruggedness.iter().enumerate() {
        let name = if k == 0 {
            "smith-ruggedness.svg".to_string()
        } else {
            format!("smith-ruggedness-{}.svg", k + 1)
        };
        d.add(
            name,
            crate::ruggedness::CHART_CAPTION.into(),
            plot::smith_plot(&crate::ruggedness::ruggedness_chart(s), &p),
        );
    }
    for (k, s) in r.load_pulls.iter().enumerate() {
        let name = if k == 0 {
            "smith-loadpull.svg".to_string()
        } else {
            format!("smith-loadpull-{}.svg", k + 1)
        };
        d.add(
            name,
            crate::loadpull::CHART_CAPTION.into(),
            plot::smith_plot(&crate::loadpull::load_pull_chart(s), &p),
        );
    }
    d
}

/// The plots a failed solve can still draw: for a thermal runaway, the
/// rounds of the electrothermal iteration up to it (`heat-rounds.svg`).
/// Empty for every other failure.
pub fn failure_plots(file: &str, e: &tankwave_stage::StageError) -> Drawn {
    let mut d = Drawn::default();
    if let tankwave_stage::StageError::Runaway { trail, .. } = e {
        let (name, caption, svg) = crate::heat::runaway_plot(trail, &PlotParams::for_source(file));
        d.add(name, caption, svg);
    }
    d
}

/// Frequency of the first steady-state analysis, if any.
fn steady_freq(c: &Circuit) -> Option<f64> {
    c.analyses.iter().find_map(|a| match a {
        Analysis::Steady { freq, .. } => Some(*freq),
        _ => None,
    })
}

/// Which node voltage an AC plot shows (the first terminal of the output
/// element) and on what scale (that of the first AC analysis; log without one).
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
        .and_then(|o| c.elements.get(o.index()))
        .map(|e| {
            e.kind
                .terminals()
                .into_iter()
                .filter_map(|n| UnknownId::voltage(n).map(|u| u.index()))
                .collect()
        })
        .unwrap_or_default();
    unknowns.truncate(1);
    (unknowns, scale)
}

/// The self-contained HTML report of one stage: every analysis that ran,
/// the masks its requirements name, the verdicts. `file` is the stage file
/// as given, `file_sha256` the hex SHA-256 of its bytes (empty if unknown).
pub fn stage_report(
    file: &str,
    c: &Circuit,
    r: &StageResults,
    file_sha256: String,
    provenance: Provenance,
) -> String {
    let masks = r
        .steady
        .as_ref()
        .map(|s| mask_evaluations(c, &s.metrics, s.solution.freq).evaluated)
        .unwrap_or_default();
    let (unknowns, scale) = ac_view(c);
    let input =
        ReportInput {
            title: c.title.clone().unwrap_or_else(|| file.to_string()),
            file: file.to_string(),
            file_sha256,
            circuit: Some(c),
            solution: r.steady.as_ref().map(|s| &s.solution),
            metrics: r.steady.as_ref().map(|s| &s.metrics),
            loads: r.steady.as_ref().map(|s| s.loads.as_slice()).unwrap_or(&[]),
            verdicts: &r.verdicts,
            masks: &masks,
            transient: r.transients.first(),
            ac: r.acs.first().map(|result| AcView {
                result,
                unknowns: &unknowns,
                scale,
            }),
            studies: &[],
            load_sweeps: r
                .heat
                .iter()
                .map(|h| crate::heat::heat_section(h, &PlotParams::for_source(file)))
                .chain(r.ruggedness.iter().map(|s| {
                    crate::ruggedness::ruggedness_section(s, &PlotParams::for_source(file))
                }))
                .chain(
                    r.two_tone.iter().map(|t| {
                        crate::twotone::two_tone_section(t, &PlotParams::for_source(file))
                    }),
                )
                .chain(
                    r.load_pulls.iter().map(|s| {
                        crate::loadpull::load_pull_section(s, &PlotParams::for_source(file))
                    }),
                )
                .chain(
                    r.keyings.iter().map(|k| {
                        crate::keying::keying_section(c, k, &PlotParams::for_source(file))
                    }),
                )
                .chain(crate::fitted::fits_section(c))
                .collect(),
            intro: Vec::new(),
            stage_label: None,
            omit_stage: false,
            provenance,
            plot: PlotParams::for_source(file),
        };
    crate::html::stage_report(&input)
}

/// The terminal report of one stage: title and file, the operating point,
/// each transient and AC sweep in brief, the steady state (with solver
/// details when `verbose`), the requirement verdicts and the safety note.
pub fn results_text(file: &str, c: &Circuit, r: &StageResults, verbose: bool) -> String {
    let mut s = String::new();
    s.push_str(&format!(
        "{}\n{}\n\n",
        c.title.as_deref().unwrap_or("(untitled stage)"),
        file
    ));
    if let Some(op) = &r.op {
        s.push_str(&text::op_text(c, op));
        s.push('\n');
    }
    let fits = crate::fitted::fits_text(c);
    if !fits.is_empty() {
        s.push_str(&fits);
        s.push('\n');
    }
    for t in &r.transients {
        s.push_str(&text::transient_text(t));
    }
    let (view, _) = ac_view(c);
    let ac_analyses = c.analyses.iter().filter_map(|a| match a {
        Analysis::Ac {
            source,
            impedance_at,
            ..
        } => Some((*source, *impedance_at)),
        _ => None,
    });
    for (ac, (source, impedance_at)) in r.acs.iter().zip(ac_analyses) {
        s.push_str(&text::ac_text(ac));
        let name = |e: Option<tankwave_circuit::ElementId>| {
            e.and_then(|e| c.elements.get(e.index()))
                .map(|e| e.name.as_str())
        };
        let labels = text::AcLabels {
            output: view.first().copied(),
            source: name(source.or(c.input)).unwrap_or("the input"),
            impedance_at: name(impedance_at),
        };
        let table = text::ac_table(ac, &labels);
        if !table.is_empty() {
            s.push_str(&table);
            s.push('\n');
        }
    }
    if !r.transients.is_empty() || !r.acs.is_empty() {
        s.push_str("(waveforms and sweeps: use --out DIR or --format csv)\n\n");
    }
    if let Some(st) = &r.steady {
        s.push_str(&text::steady_text(c, &st.solution, &st.metrics, verbose));
        let loads = crate::loads::loads_text(&st.loads);
        if !loads.is_empty() {
            s.push('\n');
            s.push_str(&loads);
        }
        s.push('\n');
    }
    if let Some(h) = &r.heat {
        s.push_str(&crate::heat::heat_text(h));
        s.push('\n');
    }
    if !r.verdicts.is_empty() {
        s.push_str("Requirements\n");
        s.push_str(&text::verdict_text(&r.verdicts));
        let failed = r.verdicts.iter().filter(|v| !v.pass).count();
        s.push_str(&format!(
            "{} of {} requirements pass\n",
            r.verdicts.len() - failed,
            r.verdicts.len()
        ));
    }
    for sweep in &r.ruggedness {
        s.push('\n');
        s.push_str(&crate::ruggedness::ruggedness_text(sweep));
    }
    for t in &r.two_tone {
        s.push('\n');
        s.push_str(&crate::twotone::two_tone_text(t));
    }
    for p in &r.load_pulls {
        s.push('\n');
        s.push_str(&crate::loadpull::load_pull_text(p));
    }
    for k in &r.keyings {
        s.push('\n');
        s.push_str(&crate::keying::keying_text(k));
    }
    if r.steady.is_some()
        || !r.ruggedness.is_empty()
        || !r.two_tone.is_empty()
        || !r.load_pulls.is_empty()
        || !r.keyings.is_empty()
    {
        s.push_str(&format!("\n{}\n", text::SAFETY_NOTE));
    }
    s
}

/// The JSON document of one stage (schema [`crate::SCHEMA_VERSION`], fields
/// in docs/output.md). `tool` names the program and its version.
pub fn results_json(tool: &str, file: &str, c: &Circuit, r: &StageResults) -> Value {
    let mut doc = json!({
        "schema": crate::SCHEMA_VERSION,
        "tool": tool,
        "file": file,
        "title": c.title,
        "op": r.op.as_ref().map(text::op_json),
        "transients": r.transients.iter().map(text::transient_json).collect::<Vec<_>>(),
        "ac": r.acs.iter().map(text::ac_json).collect::<Vec<_>>(),
        "steady": r.steady.as_ref().map(|s| {
            let mut j = text::steady_json(&s.solution, &s.metrics);
            if let Some(o) = j.as_object_mut() {
                o.insert("collector_loads".into(), crate::loads::loads_json(&s.loads));
            }
            j
        }),
        "requirements": crate::format::verdicts_json(&r.verdicts),
        "ruggedness": r.ruggedness.iter().map(crate::ruggedness::ruggedness_json).collect::<Vec<_>>(),
        "caution": text::SAFETY_NOTE,
    });
    // only when the file asks for one: the documents of other stages keep their shape
    if !r.load_pulls.is_empty() {
        if let Some(o) = doc.as_object_mut() {
            o.insert(
                "load_pull".into(),
                r.load_pulls
                    .iter()
                    .map(crate::loadpull::load_pull_json)
                    .collect(),
            );
        }
    }
    // only with a fitted measured network: other documents keep their shape
    if let (Some(f), Some(o)) = (crate::fitted::fits_json(c), doc.as_object_mut()) {
        o.insert("measured_fits".into(), f);
    }
    // present only with `analyze heat` (documents without it are unchanged)
    if let (Some(h), Some(o)) = (&r.heat, doc.as_object_mut()) {
        o.insert("heat".into(), crate::heat::heat_json(h));
    }
    // only when the file asks for one: the documents of other stages keep their shape
    if !r.two_tone.is_empty() {
        if let Some(o) = doc.as_object_mut() {
            o.insert(
                "two_tone".into(),
                r.two_tone
                    .iter()
                    .map(crate::twotone::two_tone_json)
                    .collect(),
            );
        }
    }
    // only when the file asks for one: the documents of other stages keep their shape
    if !r.keyings.is_empty() {
        if let Some(o) = doc.as_object_mut() {
            o.insert(
                "keying".into(),
                r.keyings.iter().map(crate::keying::keying_json).collect(),
            );
        }
    }
    doc
}

#[cfg(test)]
mod tests {
    use super::*;

    use crate::assemble::test_circuit as circuit;

    const DIVIDER: &str =
        "title \"divider\"\nvoltage vdrv src gnd wave=sine(amp=10V, freq=1MHz) internal=50Ohm\n\
        resistor rload src gnd 50Ohm\noutput rload\ninput vdrv\n";

    /// The AC plot shows the output element's first terminal on the scale of
    /// the first AC analysis, log when the file has none.
    #[test]
    fn ac_view_follows_output_and_analysis() {
        let c = circuit(DIVIDER);
        let (u, s) = ac_view(&c);
        assert_eq!(u.len(), 1);
        assert_eq!(c.nodes.get(u[0]).map(|n| n.as_str()), Some("src"));
        assert_eq!(s, Scale::Log);
        assert_eq!(steady_freq(&c), None);
        let c = circuit(&format!(
            "{DIVIDER}analyze ac from=1kHz to=10MHz points=11 scale=linear\nanalyze steady freq=2MHz harmonics=4\n"
        ));
        assert_eq!(ac_view(&c).1, Scale::Linear);
        assert_eq!(steady_freq(&c), Some(2e6));
    }

    /// Results without any analysis give only the title block.
    #[test]
    fn text_and_json_of_empty_results() {
        let c = circuit(DIVIDER);
        let r = StageResults::default();
        assert_eq!(results_text("t.tank", &c, &r, false), "divider\nt.tank\n\n");
        let j = results_json("tankwave 0", "t.tank", &c, &r);
        assert_eq!(j["schema"], crate::SCHEMA_VERSION);
        assert_eq!(j["tool"], "tankwave 0");
        assert_eq!(j["title"], "divider");
        assert!(j["steady"].is_null());
        assert!(stage_plots("t.tank", &c, &r).figures.is_empty());
    }
}
