//! Reports of one stage: the readable text report (headline figures first,
//! then harmonics, then stress, then requirements), the JSON document with
//! every figure and its unit, and CSV files of waveforms and spectra.

use crate::format::{db, fixed, harmonic_level, harmonic_power, row_level, row_verdict, si};
use crate::table::{Align, Table};
use serde_json::{json, Value};
use tankwave_circuit::{Circuit, SteadyMethod};
use tankwave_devices::{names, OpFigure, UnknownId, UnknownKind};
use tankwave_measure::{Metrics, StressQuantity, Verdict};
use tankwave_solve::{AcResult, OpResult, PeriodicSolution, Strategy, TransientResult};

/// The caution printed with every steady-state report.
pub const SAFETY_NOTE: &str = "Caution: tank and output-network capacitors carry RF voltages several times \
the supply and RF current burns; test into a dummy load, and transmit only as your licence and local \
regulations allow.";

/// Harmonics always listed under a mask verdict (failing ones and close calls are listed too).
pub const VERDICT_HARMONICS: usize = 10;
/// A harmonic closer than this to its limit (dB) is always listed.
pub const CLOSE_CALL_DB: f64 = 10.0;

/// Harmonics listed in the text report (all of them are in the JSON).
pub const SHOWN_HARMONICS: usize = 16;

/// How a steady-state method is named in text and JSON.
pub(crate) fn method_name(m: SteadyMethod) -> &'static str {
    match m {
        SteadyMethod::Auto => "auto",
        SteadyMethod::Balance => "harmonic balance",
        SteadyMethod::Shooting => "shooting",
        SteadyMethod::Settle => "settled transient",
    }
}

fn strategy_text(s: &Strategy) -> String {
    match s {
        Strategy::Newton => "Newton".to_string(),
        Strategy::LeakStepping { stages } => format!("junction-leak stepping, {stages} stages"),
        Strategy::SourceStepping { stages } => format!("source stepping, {stages} stages"),
    }
}

/// One section of the operating-point report: every device that reports
/// `marker`, one row each, with these columns (a figure a device does not
/// report prints as "—").
struct OpSection {
    /// Section heading.
    title: &'static str,
    /// Header of the name column.
    head: &'static str,
    /// The figure that puts a device in this section.
    marker: OpFigure,
    /// The figures shown, in column order.
    columns: &'static [OpFigure],
}

/// The element sections of the operating-point report, in report order.
const OP_SECTIONS: &[OpSection] = &[
    OpSection {
        title: "Sources (delivered current and power are positive when the source supplies the circuit)",
        head: "source",
        marker: OpFigure::DeliveredPower,
        columns: &[
            OpFigure::SetVoltage,
            OpFigure::Voltage,
            OpFigure::DeliveredCurrent,
            OpFigure::DeliveredPower,
        ],
    },
    OpSection {
        title: "Transistors, bias (currents positive into the terminal)",
        head: "transistor",
        marker: OpFigure::CollectorCurrent,
        columns: &[
            OpFigure::BaseEmitterVoltage,
            OpFigure::BaseCollectorVoltage,
            OpFigure::CollectorEmitterVoltage,
            OpFigure::CollectorCurrent,
            OpFigure::BaseCurrent,
            OpFigure::EmitterCurrent,
            OpFigure::Dissipation,
        ],
    },
    OpSection {
        title: "Transistors, small signal (intrinsic transistor)",
        head: "transistor",
        marker: OpFigure::Transconductance,
        columns: &[
            OpFigure::Transconductance,
            OpFigure::InputConductance,
            OpFigure::OutputConductance,
            OpFigure::BaseEmitterCapacitance,
            OpFigure::BaseCollectorCapacitance,
        ],
    },
    OpSection {
        title: "Transistors, avalanche multiplication of the collector–base junction",
        head: "transistor",
        marker: OpFigure::Multiplication,
        columns: &[OpFigure::Multiplication],
    },
    OpSection {
        title: "Diodes (junction, anode to cathode)",
        head: "diode",
        marker: OpFigure::ForwardVoltage,
        columns: &[
            OpFigure::ForwardVoltage,
            OpFigure::JunctionCurrent,
            OpFigure::JunctionConductance,
            OpFigure::JunctionCapacitance,
        ],
    },
    OpSection {
        title: "Resistors",
        head: "resistor",
        marker: OpFigure::Power,
        columns: &[OpFigure::Voltage, OpFigure::Current, OpFigure::Power],
    },
    OpSection {
        title: "Capacitors",
        head: "capacitor",
        marker: OpFigure::Charge,
        columns: &[OpFigure::Voltage, OpFigure::Charge],
    },
    OpSection {
        title: "Inductors",
        head: "inductor",
        marker: OpFigure::Flux,
        columns: &[OpFigure::Current, OpFigure::Flux],
    },
];

/// How a person reads an operating-point figure: plain words, or the
/// textbook symbol of a transistor quantity (g_m, g_π, C_π, … as
/// circuit-design textbooks write the hybrid-π model).
pub fn figure_label(f: OpFigure) -> &'static str {
    match f {
        OpFigure::Voltage => "voltage",
        OpFigure::Current => "current",
        OpFigure::Power => "power",
        OpFigure::Charge => "charge",
        OpFigure::Flux => "flux",
        OpFigure::SetVoltage => "set voltage",
        OpFigure::DeliveredCurrent => "delivered current",
        OpFigure::DeliveredPower => "delivered power",
        OpFigure::ForwardVoltage => "forward voltage",
        OpFigure::JunctionCurrent => "current",
        OpFigure::JunctionConductance => "conductance",
        OpFigure::JunctionCapacitance => "capacitance",
        OpFigure::BaseEmitterVoltage => "V_BE",
        OpFigure::BaseCollectorVoltage => "V_BC",
        OpFigure::CollectorEmitterVoltage => "V_CE",
        OpFigure::CollectorCurrent => "I_C",
        OpFigure::BaseCurrent => "I_B",
        OpFigure::EmitterCurrent => "I_E",
        OpFigure::Transconductance => "g_m",
        OpFigure::InputConductance => "g_π",
        OpFigure::OutputConductance => "g_o",
        OpFigure::BaseEmitterCapacitance => "C_π",
        OpFigure::BaseCollectorCapacitance => "C_μ",
        OpFigure::Dissipation => "dissipation",
        OpFigure::Multiplication => "M − 1",
    }
}

/// The unknowns an operating-point report lists by name: every node voltage
/// and every branch current except a source's (a source is shown by the
/// current it delivers, see [`OP_SECTIONS`]), as (index, name, kind); the
/// kind gives the unit, the name is only shown.
fn listed_unknowns(op: &OpResult) -> impl Iterator<Item = (usize, &String, UnknownKind)> {
    let source_branches: Vec<UnknownId> = op
        .devices
        .iter()
        .filter(|d| {
            d.figures
                .iter()
                .any(|(f, _)| *f == OpFigure::DeliveredPower)
        })
        .filter_map(|d| d.branch)
        .collect();
    op.names
        .iter()
        .zip(&op.kinds)
        .enumerate()
        .filter(move |(k, _)| !source_branches.contains(&UnknownId::new(*k)))
        .map(|(k, (n, kind))| (k, n, *kind))
}

/// Text report of an operating point: node voltages, then one table per
/// kind of element (sources with delivered current and power, transistors,
/// diodes, resistors, capacitors, inductors), every number with its unit.
pub fn op_text(circuit: &Circuit, op: &OpResult) -> String {
    let mut s = format!(
        "Operating point ({}, {} iterations)\n\nNode voltages\n",
        strategy_text(&op.info.strategy),
        op.info.iterations
    );
    let mut t = Table::new(vec![("node", Align::Left), ("voltage", Align::Right)]);
    for (k, name, kind) in listed_unknowns(op) {
        if kind == UnknownKind::Voltage {
            t.row(vec![name.clone(), si(op.x[k], "V")]);
        }
    }
    s.push_str(&t.render());
    for sec in OP_SECTIONS {
        let mut head = vec![(sec.head, Align::Left)];
        head.extend(sec.columns.iter().map(|f| (figure_label(*f), Align::Right)));
        let mut t = Table::new(head);
        for d in &op.devices {
            if !d.figures.iter().any(|(f, _)| *f == sec.marker) {
                continue;
            }
            let mut row = vec![d.name.clone()];
            for c in sec.columns {
                row.push(match d.figures.iter().find(|(f, _)| f == c) {
                    Some((f, v)) => si(*v, f.unit()),
                    None => "—".to_string(),
                });
            }
            t.row(row);
        }
        if !t.is_empty() {
            s.push_str(&format!("\n{}\n{}", sec.title, t.render()));
        }
    }
    let _ = circuit;
    s
}

/// One-paragraph summary of a transient run.
pub fn transient_text(t: &TransientResult) -> String {
    let stop = t.time.last().copied().unwrap_or(0.0);
    format!(
        "Transient to {}: {} accepted steps ({} rejected for truncation error, {} for Newton), {} Newton iterations\n",
        si(stop, "s"),
        t.info.accepted,
        t.info.rejected_lte,
        t.info.rejected_newton,
        t.info.newton_iterations
    )
}

/// One-paragraph summary of an AC sweep.
pub fn ac_text(a: &AcResult) -> String {
    let (f0, f1) = (
        a.freq.first().copied().unwrap_or(0.0),
        a.freq.last().copied().unwrap_or(0.0),
    );
    format!(
        "AC sweep {} to {}, {} points{}\n",
        si(f0, "Hz"),
        si(f1, "Hz"),
        a.freq.len(),
        if a.impedance.is_some() {
            ", with impedance"
        } else {
            ""
        }
    )
}

/// What the terminal table of an AC sweep shows: the unknown at the output
/// (index into the sweep's unknowns), the source driven with unit amplitude
/// and the element whose impedance the analysis asked for.
#[derive(Debug, Clone, Copy, Default)]
pub struct AcLabels<'a> {
    /// The output unknown (the output element's first terminal), if any.
    pub output: Option<usize>,
    /// Name of the driven source.
    pub source: &'a str,
    /// Name of the element at which the impedance is reported, if asked.
    pub impedance_at: Option<&'a str>,
}

/// Frequencies shown in the terminal table of an AC sweep (evenly spread
/// over its points; the point of largest response is added).
pub const AC_TABLE_ROWS: usize = 9;

/// Collector current at bias below which a transistor counts as cut off in
/// the note under an AC table, A (common practice: a microampere gives a
/// transconductance of about 40 µS, a voltage gain below 0.01 into the
/// tens of ohms of a power stage's load).
pub const CUT_OFF_CURRENT: f64 = 1e-6;

/// The terminal table of an AC sweep: up to [`AC_TABLE_ROWS`] frequencies
/// (and the one of largest response), with the magnitude and phase at the
/// output and the impedance asked for; then a note for every transistor
/// cut off at its bias point (its small-signal response is only
/// feedthrough). Empty when there is nothing to show.
pub fn ac_table(a: &AcResult, l: &AcLabels<'_>) -> String {
    let n = a.freq.len();
    let out = l
        .output
        .filter(|&k| a.x.first().is_some_and(|x| k < x.len()));
    let z = a.impedance.as_ref().filter(|z| z.len() == n);
    if n == 0 || (out.is_none() && z.is_none()) {
        return String::new();
    }
    let mag: Vec<f64> = out.map(|k| a.magnitude_db(k)).unwrap_or_default();
    let phase: Vec<f64> = out.map(|k| a.phase_deg(k)).unwrap_or_default();
    let mut rows: Vec<usize> = (0..AC_TABLE_ROWS)
        .map(|i| (i * (n - 1) + (AC_TABLE_ROWS - 1) / 2) / (AC_TABLE_ROWS - 1))
        .collect();
    let peak = mag
        .iter()
        .enumerate()
        .filter(|(_, v)| v.is_finite())
        .max_by(|x, y| x.1.total_cmp(y.1))
        .map(|(k, _)| k);
    rows.extend(peak);
    rows.sort_unstable();
    rows.dedup();
    let out_name = out
        .and_then(|k| a.names.get(k))
        .cloned()
        .unwrap_or_default();
    let mut head: Vec<(String, Align)> = vec![("frequency".into(), Align::Right)];
    if out.is_some() {
        head.push((format!("{out_name} gain"), Align::Right));
        head.push((format!("{out_name} phase"), Align::Right));
    }
    if let Some(at) = l.impedance_at {
        head.push((format!("impedance at {at}"), Align::Right));
    }
    let mut t = Table::new(head.iter().map(|(h, al)| (h.as_str(), *al)).collect());
    for &k in &rows {
        let mut row = vec![si(a.freq[k], "Hz")];
        if out.is_some() {
            let mark = if Some(k) == peak { " (largest)" } else { "" };
            row.push(format!("{}{mark}", db(mag[k], "dB")));
            row.push(fixed(phase[k], 1, "°"));
        }
        if let (Some(z), Some(_)) = (z, l.impedance_at) {
            row.push(crate::format::impedance(z[k].re, z[k].im));
        }
        t.row(row);
    }
    let mut s = format!(
        "Small-signal response to a unit amplitude at {} (gain: output amplitude over drive amplitude)\n",
        l.source
    );
    s.push_str(&t.render());
    for d in &a.op.devices {
        let ic = d
            .figures
            .iter()
            .find(|(f, _)| *f == OpFigure::CollectorCurrent)
            .map(|(_, v)| *v);
        if let Some(ic) = ic.filter(|ic| ic.abs() < CUT_OFF_CURRENT) {
            s.push_str(&format!(
                "note: {} is cut off at its bias point (I_C = {}): the AC analysis linearises \
                 there, so it shows only what the network and the junction capacitances pass \
                 (feedthrough), not the gain the stage has when the drive swings it into \
                 conduction; the steady state shows that\n",
                d.name,
                si(ic, "A")
            ));
        }
    }
    s
}

/// The readable steady-state report: headline figures, harmonics, transistors, stress.
pub fn steady_text(
    circuit: &Circuit,
    sol: &PeriodicSolution,
    m: &Metrics,
    verbose: bool,
) -> String {
    let mut s = String::new();
    let info = &sol.info;
    s.push_str(&format!(
        "Steady state at {} by {}{}: {} {}, relative residual {:.1e} (tolerance {:.0e}), {} harmonics{}
",
        si(sol.freq, "Hz"),
        method_name(info.method),
        match info.fell_back_from {
            Some(f) => format!(" (after {} failed)", method_name(f)),
            None => String::new(),
        },
        info.iterations,
        if info.method == SteadyMethod::Settle {
            "periods"
        } else {
            "iterations"
        },
        info.residual,
        info.tolerance,
        sol.harmonics,
        match &info.floquet {
            Some(f) => format!(", largest Floquet multiplier |μ| {:.4}", f.largest),
            // Only a stage with a measured network is accepted unverified
            // (solve::periodic: the Floquet check integrates in time).
            None => ", orbit stability NOT verified (a measured network has no time-domain \
                      model for the Floquet check)"
                .to_string(),
        }
    ));
    if let Some(a) = &info.accuracy {
        s.push_str(&format!(
            "  estimated error {} its target: output power {:.1e} relative (target {:.0e}), \
             harmonics above {} off by {:.4} dB (target {:.3} dB), from {} against {} steps per period\n",
            if a.met { "within" } else { "NOT within" },
            a.power_rel,
            a.target.power_rel,
            db(a.target.harmonics_above_dbc, "dBc"),
            a.harmonic_db,
            a.target.harmonic_db,
            a.steps_per_period,
            a.compared_with,
        ));
    }
    if verbose {
        s.push_str(&format!(
            "  Newton system size {}, {} samples per period\n",
            info.system_size, sol.samples_per_period
        ));
        if let Some(sh) = &info.shooting {
            let coarse = if sh.coarse_steps > 0 {
                format!(
                    "{} on the coarse grid of {} steps, ",
                    sh.coarse_periods, sh.coarse_steps
                )
            } else {
                String::new()
            };
            s.push_str(&format!(
                "  shooting: {} warm-up periods, then periods integrated: {coarse}{} on the \
                 fine grid; {} of them carried the monodromy matrix (Newton), the rest were \
                 chord steps\n",
                sh.warmup_periods, sh.fine_periods, sh.monodromy_periods
            ));
            if sh.restarts > 0 {
                s.push_str(&format!(
                    "  shooting: the coarse level restarted {} time(s) from its best period                      after a Newton step that overshot
",
                    sh.restarts
                ));
            }
        }
        if let Some(b) = &info.balance {
            let tried: Vec<String> = b.harmonics_tried.iter().map(|k| k.to_string()).collect();
            s.push_str(&format!(
                "  harmonic balance: K tried {}, FFT size {}, {} ports{}, {} continuation \
                 steps, {} line-search cuts, truncation {:.2e}\n",
                tried.join(", "),
                b.fft_size,
                b.ports,
                if b.reduced {
                    " (linear network reduced)"
                } else {
                    ""
                },
                b.continuation_steps,
                b.line_search_cuts,
                b.truncation
            ));
        }
    }
    let mut t = Table::new(vec![("figure", Align::Left), ("value", Align::Right)]);
    for (figure, value) in headline_rows(m) {
        t.row(vec![figure, value]);
    }
    s.push_str(&t.render());

    if !m.transistors.is_empty() {
        s.push('\n');
        let mut t = Table::new(vec![
            ("transistor", Align::Left),
            ("conduction", Align::Right),
            ("pulses", Align::Right),
            ("vce peak", Align::Right),
            ("vce min", Align::Right),
            ("ic peak", Align::Right),
            ("dissipation", Align::Right),
            ("junction", Align::Right),
        ]);
        for q in &m.transistors {
            t.row(vec![
                q.element.clone(),
                fixed(q.conduction_deg, 0, "deg"),
                pulses_cell(q),
                si(q.vce_peak_v, "V"),
                si(q.vce_min_v, "V"),
                si(q.ic_peak_a, "A"),
                si(q.dissipation_w, "W"),
                q.tj_k
                    .map(|k| fixed(k - 273.15, 0, "degC"))
                    .unwrap_or_else(|| "no Rth".into()),
            ]);
        }
        s.push_str(&t.render());
    }

    if let Some(o) = &m.output {
        s.push_str(&format!("\nHarmonics at {}\n", o.element));
        let mut t = Table::new(vec![
            ("n", Align::Right),
            ("frequency", Align::Right),
            ("power", Align::Right),
            ("level", Align::Right),
        ]);
        for h in o.harmonics.iter().take(SHOWN_HARMONICS) {
            t.row(vec![
                h.n.to_string(),
                si(h.freq_hz, "Hz"),
                harmonic_power(h),
                harmonic_level(h, o.floor_dbc),
            ]);
        }
        s.push_str(&t.render());
        let rest: Vec<f64> = o
            .harmonics
            .iter()
            .skip(SHOWN_HARMONICS)
            .filter_map(|h| h.dbc)
            .collect();
        if !rest.is_empty() {
            let worst = rest.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            s.push_str(&format!(
                "harmonics {}..{}: highest {} (all of them in --format json)\n",
                SHOWN_HARMONICS + 1,
                o.harmonics.len(),
                db(worst, "dBc")
            ));
        } else if o.harmonics.len() > SHOWN_HARMONICS {
            s.push_str(&format!(
                "harmonics {}..{}: all below floor ({})\n",
                SHOWN_HARMONICS + 1,
                o.harmonics.len(),
                o.floor_dbc.map(|f| db(f, "dBc")).unwrap_or_default()
            ));
        }
        if let Some(f) = o.floor_dbc {
            s.push_str(&format!(
                "numerical floor {} (harmonics below it are not resolved by the method)\n",
                db(f, "dBc")
            ));
        }
    }

    if !m.stress.is_empty() {
        s.push_str("\nComponent stress\n");
        let mut t = Table::new(vec![
            ("element", Align::Left),
            ("quantity", Align::Left),
            ("value", Align::Right),
            ("rating", Align::Right),
            ("used", Align::Right),
        ]);
        for r in &m.stress {
            let c = stress_cells(r);
            t.row(vec![
                r.element.clone(),
                c.quantity.to_string(),
                c.value,
                c.rating.unwrap_or_default(),
                c.used.unwrap_or_default(),
            ]);
        }
        s.push_str(&t.render());
        for r in &m.stress {
            if let Some(b) = &r.basis {
                s.push_str(&format!(
                    "{} peak vce rating: {}\n",
                    r.element,
                    vce_basis_text(b)
                ));
            }
        }
    }
    for n in &m.notes {
        s.push_str(&format!("note: {} not measured: {}\n", n.figure, n.reason));
    }
    let _ = circuit;
    s
}

/// Where a verdict's value was found (element and quantity, e.g. `rfc peak
/// current`), when the requirement's own text does not already name that
/// element: a `require stress` or an unselected per-transistor requirement
/// then says which part set its value.
pub fn located_at(v: &Verdict) -> Option<&str> {
    // Mask and harmonics verdicts list every harmonic beneath already.
    if !v.harmonics.is_empty() {
        return None;
    }
    let at = v.element.as_deref()?;
    let name = at.split_whitespace().next()?;
    let named = v.requirement.split_whitespace().any(|w| w == name);
    (!named).then_some(at)
}

/// The verdict table: requirement, limit, value, margin, pass/fail; mask
/// requirements list each harmonic's margin beneath.
pub fn verdict_text(verdicts: &[Verdict]) -> String {
    let mut t = Table::new(vec![
        ("requirement", Align::Left),
        ("limit", Align::Right),
        ("value", Align::Right),
        ("margin", Align::Right),
        ("verdict", Align::Left),
    ]);
    for v in verdicts {
        t.row(vec![
            v.requirement.clone(),
            crate::format::limit_text(v),
            crate::format::value_text(v),
            crate::format::margin_text(v),
            if v.pass { "pass" } else { "FAIL" }.to_string(),
        ]);
        if let Some(at) = located_at(v) {
            t.row(vec![
                format!("  at {at}"),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
            ]);
        }
        let mut hidden = 0usize;
        let mut hidden_min = f64::INFINITY;
        for h in &v.harmonics {
            if let (Some(a), Some(mg)) = (h.allowed_dbc, h.margin_db) {
                // every failing harmonic, the low ones, and the close calls are listed
                if h.n > VERDICT_HARMONICS && mg >= CLOSE_CALL_DB {
                    hidden += 1;
                    hidden_min = hidden_min.min(mg);
                    continue;
                }
                t.row(vec![
                    format!("  harmonic {} ({})", h.n, si(h.freq_hz, "Hz")),
                    db(a, "dBc"),
                    row_level(h),
                    format!("{:+.1} dB", mg),
                    row_verdict(h).to_string(),
                ]);
            }
        }
        if hidden > 0 {
            t.row(vec![
                format!("  {hidden} more harmonics"),
                String::new(),
                String::new(),
                format!(">= {:+.1} dB", hidden_min),
                "pass".to_string(),
            ]);
        }
        if let Some(r) = &v.not_measured {
            t.row(vec![
                format!("  ({r})"),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
            ]);
        }
    }
    t.render()
}

fn clean(v: f64) -> Value {
    if v.is_finite() {
        json!(v)
    } else {
        Value::Null
    }
}

/// JSON of an operating point: node voltages and branch currents by
/// name (`V[node]`, `I[element]`; a source's branch current is left out,
/// its delivered current is among its figures), then every element's
/// figures keyed by [`OpFigure::key`], each with its unit.
pub fn op_json(op: &OpResult) -> Value {
    let unknown = |(k, n, kind): (usize, &String, UnknownKind)| json!({"name": n, "value": clean(op.x[k]), "unit": kind.unit().symbol()});
    json!({
        "iterations": op.info.iterations,
        "residual": clean(op.info.residual),
        "strategy": strategy_text(&op.info.strategy),
        "node_voltages": listed_unknowns(op).filter(|u| u.2 == UnknownKind::Voltage).map(unknown).collect::<Vec<_>>(),
        "branch_currents": listed_unknowns(op).filter(|u| u.2 == UnknownKind::Current).map(unknown).collect::<Vec<_>>(),
        "elements": op.devices.iter().map(|d| json!({
            "element": d.name,
            "figures": d.figures.iter().map(|(f, v)| (f.key().to_string(), json!({"value": clean(*v), "unit": f.unit()}))).collect::<serde_json::Map<String, Value>>(),
        })).collect::<Vec<_>>(),
    })
}

/// JSON summary of a transient (the waveforms go to CSV).
pub fn transient_json(t: &TransientResult) -> Value {
    json!({
        "stop_s": clean(t.time.last().copied().unwrap_or(0.0)),
        "points": t.time.len(),
        "accepted": t.info.accepted,
        "rejected_truncation": t.info.rejected_lte,
        "rejected_newton": t.info.rejected_newton,
        "newton_iterations": t.info.newton_iterations,
        "unknowns": t.names,
    })
}

/// JSON of an AC sweep: magnitude (dB) and phase (degrees) of every unknown.
pub fn ac_json(a: &AcResult) -> Value {
    let series: Vec<Value> = a
        .names
        .iter()
        .enumerate()
        .map(|(k, n)| {
            json!({"name": n,
                "magnitude_db": a.magnitude_db(k).into_iter().map(clean).collect::<Vec<_>>(),
                "phase_deg": a.phase_deg(k).into_iter().map(clean).collect::<Vec<_>>()})
        })
        .collect();
    let z = a.impedance.as_ref().map(|z| {
        z.iter()
            .map(|c| json!({"re_ohm": clean(c.re), "im_ohm": clean(c.im)}))
            .collect::<Vec<_>>()
    });
    json!({"freq_hz": a.freq.iter().map(|f| clean(*f)).collect::<Vec<_>>(), "unknowns": series, "impedance": z})
}

/// JSON of a steady state: solver info and every measured figure.
pub fn steady_json(sol: &PeriodicSolution, m: &Metrics) -> Value {
    json!({
        "freq_hz": clean(sol.freq),
        "harmonics": sol.harmonics,
        "samples_per_period": sol.samples_per_period,
        "method": method_name(sol.info.method),
        "fell_back_from": sol.info.fell_back_from.map(method_name),
        "iterations": sol.info.iterations,
        "residual": clean(sol.info.residual),
        "tolerance": clean(sol.info.tolerance),
        "system_size": sol.info.system_size,
        "floquet": sol.info.floquet.as_ref().map(|f| json!({
            "largest_magnitude": clean(f.largest),
            "margin": clean(f.margin),
            "multipliers": f.multipliers.iter().map(|(re, im)| json!([clean(*re), clean(*im)])).collect::<Vec<_>>(),
            "repeat_change_tolerance_units": clean(f.repeat_change),
        })),
        "shooting": sol.info.shooting.map(|sh| json!({
            "coarse_steps": sh.coarse_steps,
            "coarse_periods": sh.coarse_periods,
            "fine_periods": sh.fine_periods,
            "monodromy_periods": sh.monodromy_periods,
            "warmup_periods": sh.warmup_periods,
            "restarts": sh.restarts,
        })),
        "balance": sol.info.balance.as_ref().map(|b| json!({
            "harmonics": b.harmonics,
            "harmonics_tried": b.harmonics_tried,
            "fft_size": b.fft_size,
            "ports": b.ports,
            "reduced": b.reduced,
            "continuation_steps": b.continuation_steps,
            "line_search_cuts": b.line_search_cuts,
            "truncation": clean(b.truncation),
        })),
        "accuracy": sol.info.accuracy.as_ref().map(|a| json!({
            "power_rel": clean(a.power_rel),
            "harmonic_db": clean(a.harmonic_db),
            "worst_harmonic": a.worst_harmonic,
            "harmonics_compared": a.harmonics_compared,
            "steps_per_period": a.steps_per_period,
            "compared_with_steps": a.compared_with,
            "grids": a.grids,
            "met": a.met,
            "target_power_rel": clean(a.target.power_rel),
            "target_harmonic_db": clean(a.target.harmonic_db),
            "target_harmonics_above_dbc": clean(a.target.harmonics_above_dbc),
        })),
        "metrics": serde_json::to_value(m).unwrap_or(Value::Null),
    })
}

/// CSV of the operating point (`quantity,value,unit`): one row per node
/// voltage and branch current as in [`op_json`] (`V[coll]`, `I[rfc]`), then
/// one row per element figure written `key[element]` (`g_m[q1]`,
/// `delivered_power[vsup]`), the value to 13 significant digits.
pub fn op_csv(op: &OpResult) -> String {
    let mut s = String::from("quantity,value,unit\n");
    for (k, n, kind) in listed_unknowns(op) {
        s.push_str(&format!(
            "{},{:.12e},{}\n",
            csv_field(n),
            op.x[k],
            kind.unit().symbol()
        ));
    }
    for d in &op.devices {
        for (f, v) in &d.figures {
            let q = format!("{}[{}]", f.key(), d.name);
            s.push_str(&format!("{},{v:.12e},{}\n", csv_field(&q), f.unit()));
        }
    }
    s
}

/// CSV of a transient: a time column, then every unknown.
pub fn transient_csv(t: &TransientResult) -> String {
    transient_csv_chosen(t, &TransientCsv::default())
}

/// Which rows and columns of a transient go into its CSV (`run --csv-every`,
/// `--csv-signals`; docs/output.md).
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct TransientCsv {
    /// Keep one accepted step in this many (the first and the last are
    /// always kept); 0 and 1 keep every step.
    pub every: usize,
    /// The unknowns to write, as indices into the result's names, in this
    /// order (`None`: every unknown).
    pub columns: Option<Vec<usize>>,
}

/// The columns of `names` (the unknowns of a transient) that `wanted` asks
/// for: each an unknown's name (`V[out]`, `I[rfc]`) or a node's bare name
/// (`out` for `V[out]`). An unknown name is an error naming what there is.
pub fn transient_columns(names: &[String], wanted: &[String]) -> Result<Vec<usize>, String> {
    wanted
        .iter()
        .map(|w| {
            let w = w.trim();
            let voltage = format!("V[{w}]");
            names
                .iter()
                .position(|n| n == w)
                .or_else(|| names.iter().position(|n| *n == voltage))
                .ok_or_else(|| format!("no signal '{w}'; the transient has {}", names.join(", ")))
        })
        .collect()
}

/// CSV of a transient with the rows and columns `chosen` keeps: a time
/// column, then the chosen unknowns.
pub fn transient_csv_chosen(t: &TransientResult, chosen: &TransientCsv) -> String {
    let all: Vec<usize> = (0..t.names.len()).collect();
    let columns = chosen.columns.as_deref().unwrap_or(&all);
    let mut s = String::from("time_s");
    for &c in columns {
        s.push(',');
        s.push_str(&csv_field(t.names.get(c).map(String::as_str).unwrap_or("")));
    }
    s.push('\n');
    let every = chosen.every.max(1);
    let last = t.time.len().saturating_sub(1);
    for (k, time) in t.time.iter().enumerate() {
        if k % every != 0 && k != last {
            continue;
        }
        s.push_str(&format!("{time:.12e}"));
        if let Some(row) = t.x.get(k) {
            for &c in columns {
                s.push_str(&format!(",{:.9e}", row.get(c).copied().unwrap_or(f64::NAN)));
            }
        }
        s.push('\n');
    }
    s
}

/// CSV of one steady-state period: time, every unknown, then every element terminal current.
pub fn period_csv(circuit: &Circuit, names: &[String], sol: &PeriodicSolution) -> String {
    let mut s = String::from("time_s");
    for n in names.iter().take(sol.x.len()) {
        s.push(',');
        s.push_str(&csv_field(n));
    }
    let mut cols: Vec<&Vec<f64>> = sol.x.iter().collect();
    for (e, terms) in sol.terminal_currents.iter().enumerate() {
        let name = circuit
            .elements
            .get(e)
            .map(|e| e.name.as_str())
            .unwrap_or("?");
        for (k, col) in terms.iter().enumerate() {
            s.push(',');
            s.push_str(&csv_field(&names::terminal_current(name, k + 1)));
            cols.push(col);
        }
    }
    s.push('\n');
    for (k, t) in sol.times().iter().enumerate() {
        s.push_str(&format!("{t:.12e}"));
        for c in &cols {
            s.push_str(&format!(",{:.9e}", c.get(k).copied().unwrap_or(0.0)));
        }
        s.push('\n');
    }
    s
}

/// CSV of the output spectrum: n, frequency, power W, dBm, dBc.
pub fn spectrum_csv(m: &Metrics) -> String {
    let mut s = String::from("n,freq_hz,power_w,power_dbm,level_dbc\n");
    if let Some(o) = &m.output {
        for h in &o.harmonics {
            s.push_str(&format!(
                "{},{:.9e},{:.9e},{:.6},{}\n",
                h.n,
                h.freq_hz,
                h.power_w,
                h.dbm,
                h.dbc.map(|d| format!("{d:.6}")).unwrap_or_default()
            ));
        }
    }
    s
}

/// CSV of an AC sweep: frequency, then magnitude dB and phase of every unknown.
pub fn ac_csv(a: &AcResult) -> String {
    let mut s = String::from("freq_hz");
    for n in &a.names {
        s.push_str(&format!(",{}_db,{}_deg", csv_field(n), csv_field(n)));
    }
    if a.impedance.is_some() {
        s.push_str(",z_re_ohm,z_im_ohm");
    }
    s.push('\n');
    let mags: Vec<Vec<f64>> = (0..a.names.len()).map(|k| a.magnitude_db(k)).collect();
    let phs: Vec<Vec<f64>> = (0..a.names.len()).map(|k| a.phase_deg(k)).collect();
    for (i, f) in a.freq.iter().enumerate() {
        s.push_str(&format!("{f:.9e}"));
        for k in 0..a.names.len() {
            s.push_str(&format!(
                ",{:.6},{:.4}",
                mags[k].get(i).copied().unwrap_or(0.0),
                phs[k].get(i).copied().unwrap_or(0.0)
            ));
        }
        if let Some(z) = &a.impedance {
            if let Some(c) = z.get(i) {
                s.push_str(&format!(",{:.9e},{:.9e}", c.re, c.im));
            }
        }
        s.push('\n');
    }
    s
}

fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// The headline figures as (figure, value) text, in report order, shared by
/// the terminal report and the HTML report: output power, supply power,
/// efficiencies, gain, drive power, input impedance and VSWR, THD (each
/// only when measured).
pub fn headline_rows(m: &Metrics) -> Vec<(String, String)> {
    let mut rows = Vec::new();
    if let Some(o) = &m.output {
        rows.push((
            format!("output power ({})", o.element),
            format!("{} ({})", si(o.p1_w, "W"), db(o.p1_dbm, "dBm")),
        ));
    }
    rows.push(("supply power".into(), si(m.pdc_w, "W")));
    if let Some(e) = m.efficiency {
        rows.push(("collector efficiency".into(), fixed(e * 100.0, 1, "%")));
    }
    if let Some(e) = m.pae {
        rows.push(("power-added efficiency".into(), fixed(e * 100.0, 1, "%")));
    }
    if let Some(g) = m.gain_db {
        rows.push(("transducer gain".into(), db(g, "dB")));
    }
    if let Some(d) = &m.drive {
        rows.push((format!("drive power in ({})", d.element), si(d.pin_w, "W")));
        if let Some(z) = d.z_in {
            rows.push((
                "input impedance".into(),
                crate::format::impedance(z.re, z.im),
            ));
        }
        if let Some(v) = d.vswr {
            rows.push(("input VSWR".into(), fixed(v, 2, "")));
        }
    }
    if let Some(thd) = m.output.as_ref().and_then(|o| o.thd) {
        rows.push(("THD".into(), fixed(thd * 100.0, 2, "%")));
    }
    rows
}

/// One row of the component stress table as text, shared by the terminal
/// table and the HTML report.
pub(crate) struct StressCells {
    /// What is measured ("peak voltage", "RMS current", …).
    pub quantity: &'static str,
    /// The measured value with its unit (temperatures in degC).
    pub value: String,
    /// The rating in the same unit, when the element carries one.
    pub rating: Option<String>,
    /// The fraction of the rating used, in %.
    pub used: Option<String>,
}

/// Why a transistor's peak v_ce is checked against the rating it is: its
/// d.c. base return and the rating that selects (docs/measurements.md).
pub fn vce_basis_text(b: &tankwave_measure::base_return::VceBasis) -> String {
    use tankwave_measure::base_return::{BaseReturn, VceRating};
    let ret = match b.base_return {
        BaseReturn::Open => "no d.c. path from base to emitter".to_string(),
        BaseReturn::Resistor(r) => format!("base returned to the emitter through {}", si(r, "Ohm")),
        BaseReturn::Short(r) => format!("base shorted to the emitter at d.c. ({})", si(r, "Ohm")),
    };
    match b.rating {
        VceRating::ShortedBase => format!("{ret}: the shorted-base rating (V_CES) applies"),
        VceRating::Resistor => format!(
            "{ret}, within the {} the resistor rating (V_CER) is given at: it applies",
            si(b.resistor_at_ohm, "Ohm")
        ),
        VceRating::OpenBase => format!(
            "{ret}: no resistor or shorted-base rating covers it, the open-base rating (V_CEO) applies"
        ),
    }
}

/// The text of one stress row.
pub(crate) fn stress_cells(r: &tankwave_measure::StressRow) -> StressCells {
    let (quantity, unit) = match r.quantity {
        StressQuantity::PeakVoltage => ("peak voltage", "V"),
        StressQuantity::RmsCurrent => ("RMS current", "A"),
        StressQuantity::AveragePower => ("power", "W"),
        StressQuantity::VcePeak => ("peak vce", "V"),
        StressQuantity::IcPeak => ("peak ic", "A"),
        StressQuantity::Dissipation => ("dissipation", "W"),
        StressQuantity::JunctionTemp => ("junction temperature", "K"),
        StressQuantity::VbeReverse => ("reverse vbe", "V"),
        StressQuantity::VcbPeak => ("peak vcb", "V"),
    };
    let show = |v: f64| {
        if unit == "K" {
            fixed(v - 273.15, 0, "degC")
        } else {
            si(v, unit)
        }
    };
    StressCells {
        quantity,
        value: show(r.value),
        rating: r.rating.map(show),
        used: r.fraction.map(|f| fixed(f * 100.0, 0, "%")),
    }
}

/// Pulses per period of a transistor's collector current, with the
/// saturation notches bridged inside them.
pub(crate) fn pulses_cell(q: &tankwave_measure::TransistorMetrics) -> String {
    match q.conduction_notches {
        0 => q.conduction_pulses.to_string(),
        1 => format!("{} (1 notch)", q.conduction_pulses),
        k => format!("{} ({k} notches)", q.conduction_pulses),
    }
}

#[cfg(test)]
mod tests {
    use super::{figure_label, OP_SECTIONS};
    use tankwave_devices::OpFigure;

    /// Every figure a device reports has a label and appears in a section of
    /// the text report (the JSON and CSV list every figure by key).
    #[test]
    fn every_figure_is_labelled_and_placed() {
        for f in OpFigure::ALL {
            assert!(!figure_label(f).is_empty(), "{f:?}");
            let placed = OP_SECTIONS.iter().any(|s| s.columns.contains(&f));
            assert!(placed, "{f:?} is in no section of the text report");
        }
    }
}
