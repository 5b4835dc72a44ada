//! Plots and the HTML report for `run` and `check`: which SVGs a stage gets,
//! and the inputs of the self-contained report (file hash, mask evaluations,
//! provenance).

use crate::pipeline::Results;
use sha2::{Digest, Sha256};
use std::path::{Path, PathBuf};
use tankwave_circuit::{builtin, Analysis, Bound, Circuit, Metric, Scale};
use tankwave_measure::{evaluate_mask, MaskEvaluation, Metrics};
use tankwave_report::html::{AcView, Provenance, ReportInput};
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

/// Plots of a study: a histogram of every figure (with the requirement limit
/// where one applies) and, for a sweep without Monte Carlo, each figure
/// against the first swept parameter, one curve per value of the second.
pub fn study_plots(
    dir: &Path,
    file: &str,
    c: &Circuit,
    records: &[tankwave_study::Record],
) -> (Vec<(PathBuf, Vec<u8>)>, Vec<String>) {
    let p = PlotParams::for_source(file);
    let mut files = Vec::new();
    let mut notes = Vec::new();
    let mut names: Vec<String> = records
        .iter()
        .flat_map(|r| r.metrics.keys().cloned())
        .collect();
    names.sort();
    names.dedup();
    let axes: Vec<String> =
        c.study
            .vary
            .iter()
            .map(|v| match &v.target {
                tankwave_circuit::VaryTarget::Param(n)
                | tankwave_circuit::VaryTarget::Element(n) => n.clone(),
            })
            .collect();
    for name in &names {
        let values: Vec<f64> = records
            .iter()
            .filter_map(|r| r.metrics.get(name).copied())
            .collect();
        let safe: String = name
            .chars()
            .map(|ch| if ch.is_ascii_alphanumeric() { ch } else { '-' })
            .collect();
        let spec = plot::HistogramSpec {
            title: format!("{name} over {} variants", values.len()),
            name: name.clone(),
            unit: figure_unit(name).to_string(),
            limit: figure_limit(c, name),
            bins: None,
        };
        match plot::histogram_plot(&values, &spec, &p) {
            Ok(svg) => files.push((dir.join(format!("hist-{safe}.svg")), svg.into_bytes())),
            Err(e) => notes.push(format!("hist-{safe}.svg: not drawn: {e}")),
        }
        if c.study.montecarlo.is_none() && !axes.is_empty() {
            let x_key = &axes[0];
            let g_key = axes.get(1);
            let pts: Vec<(f64, f64, f64)> = records
                .iter()
                .filter_map(|r| {
                    let x = *r.values.get(x_key)?;
                    let g = g_key.and_then(|k| r.values.get(k).copied()).unwrap_or(0.0);
                    Some((x, g, *r.metrics.get(name)?))
                })
                .collect();
            let curves = plot::SweepCurves {
                title: format!("{name} against {x_key}"),
                x_name: x_key.clone(),
                x_unit: String::new(),
                y_name: name.clone(),
                y_unit: figure_unit(name).to_string(),
                curves: plot::SweepCurves::group(&pts, g_key.map(|s| s.as_str()).unwrap_or(""), ""),
                limit: figure_limit(c, name).map(|l| (l.value, l.label)),
            };
            match plot::sweep_plot(&curves, &p) {
                Ok(svg) => files.push((dir.join(format!("sweep-{safe}.svg")), svg.into_bytes())),
                Err(e) => notes.push(format!("sweep-{safe}.svg: not drawn: {e}")),
            }
        }
    }
    (files, notes)
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
