//! A ruggedness sweep ([`tankwave_stage::mismatch`]: the output load moved
//! around circles of constant VSWR) as a terminal table, JSON and the cells
//! of an HTML section: per load its place on the chart and what the stage
//! did there, the worst case of each requirement with the load it was found
//! at, and the loads that did not solve.
//!
//! Per-transistor figures (peak v_ce, peak i_c, dissipation, junction
//! temperature, reverse v_be) show the largest over the stage's transistors:
//! the one closest to its rating.

use serde_json::{json, Value};
use tankwave_measure::Metrics;
use tankwave_stage::mismatch::{LoadPoint, MismatchSweep};

use crate::format::{db, fixed, impedance, si, verdict_json};
use crate::table::{Align, Table};

/// Column headings of the per-load table (terminal and HTML).
pub const HEADER: [&str; 13] = [
    "VSWR",
    "phase",
    "load Z",
    "pout",
    "efficiency",
    "vce peak",
    "ic peak",
    "dissipation",
    "tj",
    "vbe reverse",
    "worst harmonic",
    "input VSWR",
    "Floquet |mu|",
];

/// The load of a point as people read it: `VSWR 3 at 120 deg`.
pub fn load_name(p: &LoadPoint) -> String {
    format!("VSWR {} at {}", trim(p.vswr), fixed(p.phase_deg, 0, "deg"))
}

/// A VSWR with as few digits as it needs (1.5, 2, 3).
fn trim(v: f64) -> String {
    let s = format!("{v:.3}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// The largest of a per-transistor figure over the transistors.
fn worst_of(
    m: &Metrics,
    f: impl Fn(&tankwave_measure::TransistorMetrics) -> Option<f64>,
) -> Option<f64> {
    m.transistors
        .iter()
        .filter_map(f)
        .fold(None, |a: Option<f64>, x| Some(a.map_or(x, |a| a.max(x))))
}

/// The highest harmonic level (n ≥ 2) at the output: (n, dBc).
pub fn worst_harmonic(m: &Metrics) -> Option<(usize, f64)> {
    m.output
        .as_ref()?
        .harmonics
        .iter()
        .filter(|h| h.n >= 2)
        .filter_map(|h| h.dbc.map(|d| (h.n, d)))
        .fold(None, |a: Option<(usize, f64)>, x| match a {
            Some(b) if b.1 >= x.1 => Some(b),
            _ => Some(x),
        })
}

/// One row of cells per load, in the order of [`HEADER`]; a load that did
/// not solve says so in its fourth cell and leaves the rest empty.
pub fn rows(s: &MismatchSweep) -> Vec<Vec<String>> {
    let mut out = Vec::new();
    for p in &s.points {
        let mut r = vec![
            trim(p.vswr),
            fixed(p.phase_deg, 0, "deg"),
            impedance(p.z.re, p.z.im),
        ];
        match &p.metrics {
            None => {
                r.push(format!(
                    "not solved: {}",
                    p.failure.as_deref().unwrap_or("no steady state")
                ));
                r.resize(HEADER.len(), String::new());
            }
            Some(m) => {
                let opt = |v: Option<f64>, unit: &str| v.map(|v| si(v, unit)).unwrap_or("—".into());
                r.push(opt(m.output.as_ref().map(|o| o.p1_w), "W"));
                r.push(
                    m.efficiency
                        .map(|e| fixed(e * 100.0, 1, "%"))
                        .unwrap_or("—".into()),
                );
                r.push(opt(worst_of(m, |t| Some(t.vce_peak_v)), "V"));
                r.push(opt(worst_of(m, |t| Some(t.ic_peak_a)), "A"));
                r.push(opt(worst_of(m, |t| Some(t.dissipation_w)), "W"));
                r.push(
                    worst_of(m, |t| t.tj_k)
                        .map(|k| fixed(k - 273.15, 0, "degC"))
                        .unwrap_or("—".into()),
                );
                r.push(opt(worst_of(m, |t| Some(t.vbe_reverse_v)), "V"));
                r.push(
                    worst_harmonic(m)
                        .map(|(n, d)| format!("h{n} {}", db(d, "dBc")))
                        .unwrap_or("—".into()),
                );
                r.push(
                    m.drive
                        .as_ref()
                        .and_then(|d| d.vswr)
                        .map(|v| fixed(v, 2, ""))
                        .map(|t| t.trim_end().to_string())
                        .unwrap_or("—".into()),
                );
                r.push(
                    p.floquet_largest
                        .map(|f| fixed(f, 3, ""))
                        .map(|t| t.trim_end().to_string())
                        .unwrap_or("—".into()),
                );
            }
        }
        out.push(r);
    }
    out
}

/// The worst case of each requirement: (verdict text row, load name).
fn worst_rows(s: &MismatchSweep) -> Vec<[String; 6]> {
    s.worst
        .iter()
        .map(|w| {
            let v = &w.verdict;
            [
                v.requirement.clone(),
                crate::format::limit_text(v),
                crate::format::value_text(v),
                crate::format::margin_text(v),
                match (s.points.get(w.at), crate::stage::located_at(v)) {
                    (Some(p), Some(el)) => format!("{} ({el})", load_name(p)),
                    (Some(p), None) => load_name(p),
                    (None, _) => String::new(),
                },
                if w.pass { "pass" } else { "FAIL" }.to_string(),
            ]
        })
        .collect()
}

/// The heading line of a sweep.
pub fn heading(s: &MismatchSweep) -> String {
    let circles: Vec<String> = {
        let mut v: Vec<f64> = Vec::new();
        for p in &s.points {
            if !v.contains(&p.vswr) {
                v.push(p.vswr);
            }
        }
        v.iter().map(|x| trim(*x)).collect()
    };
    format!(
        "Ruggedness: output load on circles of VSWR {} around {} at {} ({} loads)",
        circles.join(", "),
        si(s.reference_ohm, "Ohm"),
        si(s.freq_hz, "Hz"),
        s.points.len()
    )
}

/// Column headings of the worst-case table.
pub const WORST_HEADER: [&str; 6] = [
    "requirement",
    "limit",
    "worst value",
    "margin",
    "at load",
    "verdict",
];

/// The one-line summary of the worst cases: how many requirements hold at
/// every load, and how many loads did not solve.
pub fn summary(s: &MismatchSweep) -> String {
    let pass = s.worst.iter().filter(|w| w.pass).count();
    let mut t = format!(
        "{pass} of {} requirements hold at every load",
        s.worst.len()
    );
    if s.unsolved > 0 {
        t.push_str(&format!(
            "; {} of {} loads not solved (a requirement cannot hold where the stage was not solved)",
            s.unsolved,
            s.points.len()
        ));
    }
    t
}

/// The terminal section of a sweep.
pub fn ruggedness_text(s: &MismatchSweep) -> String {
    let mut t = Table::new(
        HEADER
            .iter()
            .enumerate()
            .map(|(k, h)| (*h, if k == 2 { Align::Left } else { Align::Right }))
            .collect(),
    );
    for r in rows(s) {
        t.row(r);
    }
    let mut out = format!("{}\n{}", heading(s), t.render());
    let unsolved: Vec<String> = s
        .points
        .iter()
        .filter(|p| p.failure.is_some())
        .map(|p| format!("  {}: {}", load_name(p), p.failure.as_deref().unwrap_or("")))
        .collect();
    if !unsolved.is_empty() {
        out.push_str("Loads not solved\n");
        out.push_str(&unsolved.join("\n"));
        out.push('\n');
    }
    if !s.worst.is_empty() {
        let mut w = Table::new(vec![
            (WORST_HEADER[0], Align::Left),
            (WORST_HEADER[1], Align::Right),
            (WORST_HEADER[2], Align::Right),
            (WORST_HEADER[3], Align::Right),
            (WORST_HEADER[4], Align::Left),
            (WORST_HEADER[5], Align::Left),
        ]);
        for r in worst_rows(s) {
            w.row(r.to_vec());
        }
        out.push_str("Requirements at every load (worst case)\n");
        out.push_str(&w.render());
    }
    out.push_str(&summary(s));
    out.push('\n');
    out
}

/// The JSON of a sweep (docs/output.md, `ruggedness`).
pub fn ruggedness_json(s: &MismatchSweep) -> Value {
    let loads: Vec<Value> = s
        .points
        .iter()
        .map(|p| {
            let m = p.metrics.as_ref();
            json!({
                "vswr": p.vswr,
                "phase_deg": p.phase_deg,
                "gamma": {"re": p.gamma.re, "im": p.gamma.im},
                "z_ohm": {"re": p.z.re, "im": p.z.im},
                "solved": m.is_some(),
                "failure": p.failure,
                "pout_w": m.and_then(|m| m.output.as_ref().map(|o| o.p1_w)),
                "efficiency": m.and_then(|m| m.efficiency),
                "vce_peak_v": m.and_then(|m| worst_of(m, |t| Some(t.vce_peak_v))),
                "ic_peak_a": m.and_then(|m| worst_of(m, |t| Some(t.ic_peak_a))),
                "dissipation_w": m.and_then(|m| worst_of(m, |t| Some(t.dissipation_w))),
                "tj_k": m.and_then(|m| worst_of(m, |t| t.tj_k)),
                "vbe_reverse_v": m.and_then(|m| worst_of(m, |t| Some(t.vbe_reverse_v))),
                "worst_harmonic": m.and_then(worst_harmonic).map(|(n, d)| json!({"n": n, "dbc": d})),
                "input_vswr": m.and_then(|m| m.drive.as_ref().and_then(|d| d.vswr)),
                "floquet_largest": p.floquet_largest,
                "iterations": p.iterations,
                "requirements": crate::format::verdicts_json(&p.verdicts),
            })
        })
        .collect();
    let worst: Vec<Value> = s
        .worst
        .iter()
        .map(|w| {
            let p = s.points.get(w.at);
            json!({
                "requirement": w.requirement,
                "pass": w.pass,
                "at": p.map(|p| json!({"vswr": p.vswr, "phase_deg": p.phase_deg, "name": load_name(p)})),
                "verdict": verdict_json(&w.verdict),
            })
        })
        .collect();
    json!({
        "reference_ohm": s.reference_ohm,
        "freq_hz": s.freq_hz,
        "loads": loads,
        "worst": worst,
        "unsolved": s.unsolved,
    })
}

/// The loads of a sweep on a Smith chart: one series per circle, the loads
/// where a requirement has its worst case ringed, loads that did not solve
/// crossed out.
pub fn ruggedness_chart(s: &MismatchSweep) -> crate::plot::SmithChart {
    let mut series: Vec<f64> = Vec::new();
    for p in &s.points {
        if !series.contains(&p.vswr) {
            series.push(p.vswr);
        }
    }
    let points = s
        .points
        .iter()
        .enumerate()
        .map(|(k, p)| {
            let worst: Vec<&str> = s
                .worst
                .iter()
                .filter(|w| w.at == k)
                .map(|w| w.requirement.as_str())
                .collect();
            let mut label = format!("{}: Z = {}", load_name(p), impedance(p.z.re, p.z.im));
            if !worst.is_empty() {
                label.push_str(&format!("; worst case of {}", worst.join(", ")));
            }
            if p.failure.is_some() {
                label.push_str("; not solved");
            }
            crate::plot::SmithPoint {
                gamma: crate::plot::smith::gamma_of(p.z, s.reference_ohm),
                series: series.iter().position(|v| *v == p.vswr).unwrap_or(0),
                worst: !worst.is_empty(),
                unsolved: p.failure.is_some(),
                label,
            }
        })
        .collect();
    crate::plot::SmithChart {
        title: "Loads on circles of constant VSWR".into(),
        z0: s.reference_ohm,
        series: series
            .iter()
            .map(|v| format!("VSWR {}", trim(*v)))
            .collect(),
        circles: true,
        points,
        ..Default::default()
    }
}

/// The caption of the chart of a sweep.
pub const CHART_CAPTION: &str =
    "The loads of the sweep on a Smith chart; ringed: where a requirement has its worst case.";

/// The HTML section of a sweep, as a study section (lines, table, chart).
pub fn ruggedness_section(
    s: &MismatchSweep,
    p: &crate::plot::PlotParams,
) -> crate::html::StudySection {
    let mut lines: Vec<(String, String)> = worst_rows(s)
        .into_iter()
        .map(|r| {
            (
                r[0].clone(),
                format!("{} — worst {} ({}) at {}: {}", r[1], r[2], r[3], r[4], r[5]),
            )
        })
        .collect();
    lines.push(("summary".into(), summary(s)));
    for p in s.points.iter().filter(|p| p.failure.is_some()) {
        lines.push((
            format!("{} not solved", load_name(p)),
            p.failure.clone().unwrap_or_default(),
        ));
    }
    crate::html::StudySection {
        title: heading(s),
        lines,
        table: Some(crate::html::PlainTable {
            header: HEADER.iter().map(|h| h.to_string()).collect(),
            rows: rows(s),
        }),
        figures: crate::plot::smith_plot(&ruggedness_chart(s), p)
            .map(|svg| crate::html::Figure {
                caption: CHART_CAPTION.into(),
                svg,
            })
            .into_iter()
            .collect(),
    }
}
