//! A keying ([`tankwave_stage::keying`]) as a terminal table, JSON, an HTML
//! section and plots: the output envelope by envelope following and by the
//! quasi-static path over the measured period of the pattern, the AM–AM and
//! AM–PM curves, the key-click sideband spectrum against the necessary
//! bandwidth and any sideband mask the requirements name.

use serde_json::{json, Value};
use tankwave_circuit::{builtin, Bound, Circuit, Figure, MaskRange};
use tankwave_measure::units::dbm;
use tankwave_measure::KeyingFigures;
use tankwave_stage::keying::{KeyingRun, QUASI_ENOUGH};

use crate::format::{db, fixed, si};
use crate::plot::{Curve, PlotError, PlotParams, SweepCurves};
use crate::table::{Align, Table};

/// Caption of the envelope plot.
pub const ENVELOPE_CAPTION: &str = "Output envelope over the last period of the keying pattern: \
     envelope following, the quasi-static path, and the drive envelope scaled to key-down.";
/// Caption of the transfer plot.
pub const TRANSFER_CAPTION: &str =
    "AM–AM: output amplitude at the fundamental against drive amplitude (harmonic balance).";
/// Caption of the phase plot.
pub const PHASE_CAPTION: &str =
    "AM–PM: output phase at the fundamental against drive amplitude, relative to full drive.";
/// Caption of the sideband plot.
pub const SIDEBAND_CAPTION: &str = "Keying sidebands of the periodic pattern around the carrier, \
     dBc against the key-down carrier at the stated resolution bandwidth; the necessary \
     bandwidth B·K and any sideband mask drawn over it.";

fn power(w: f64) -> String {
    format!("{} ({})", si(w, "W"), db(dbm(w), "dBm"))
}

fn opt_si(v: Option<f64>, unit: &str) -> String {
    v.map(|x| si(x, unit)).unwrap_or_else(|| "—".into())
}

fn opt_pct(v: Option<f64>) -> String {
    v.map(|x| fixed(100.0 * x, 2, "%"))
        .unwrap_or_else(|| "—".into())
}

/// The strongest sideband at or beyond `offset` from the carrier (either
/// side), dBc.
fn strongest_beyond(f: &KeyingFigures, offset: f64) -> Option<f64> {
    f.sideband_offsets_hz
        .iter()
        .zip(&f.sideband_dbc)
        .filter(|(o, _)| o.abs() >= offset * (1.0 - 1e-9))
        .map(|(_, d)| *d)
        .reduce(f64::max)
}

/// The speed and edges, as one line.
fn heading(k: &KeyingRun) -> String {
    format!(
        "{} keyed at {:.4} wpm ({:.4} baud), {}, {} edges {} rise / {} fall of the drive",
        k.source,
        k.spec.wpm(),
        k.spec.baud(),
        k.spec.keyed_text(),
        k.spec.shape.word(),
        si(k.spec.rise, "s"),
        si(k.spec.fall, "s")
    )
}

/// Whether the quasi-static path is enough, as words.
fn verdict_words(k: &KeyingRun) -> String {
    let pct = fixed(100.0 * k.departure, 2, "%");
    if k.departure <= QUASI_ENOUGH {
        format!(
            "{pct} of key-down: within {}, the quasi-static path (AM–AM and AM–PM alone) is enough here",
            fixed(100.0 * QUASI_ENOUGH, 0, "%")
        )
    } else {
        format!(
            "{pct} of key-down: over {}, the stage's memory (tank, bias network) matters; use envelope following",
            fixed(100.0 * QUASI_ENOUGH, 0, "%")
        )
    }
}

/// Offsets at which the table shows the strongest sideband beyond: half,
/// one, two, five and ten times the necessary bandwidth.
const BEYOND: [f64; 5] = [0.5, 1.0, 2.0, 5.0, 10.0];

/// A keying for the terminal.
pub fn keying_text(k: &KeyingRun) -> String {
    let f = &k.figures;
    let q = &k.quasi_figures;
    let mut s = format!("Keying: {}\n", heading(k));
    s.push_str(&format!(
        "  followed {} period(s) of {} in slow steps of {} ({} steps, {} Newton iterations); figures from the last\n",
        k.cycles,
        si(k.period_s(), "s"),
        si(k.dt, "s"),
        k.info.steps,
        k.info.newton_iterations
    ));
    s.push_str(&format!(
        "  key-down output     {} at {}\n",
        power(k.key_down_w()),
        si(k.carrier_hz, "Hz")
    ));
    let mut t = Table::new(vec![
        ("output envelope", Align::Left),
        ("rise 10-90 %", Align::Right),
        ("fall 90-10 %", Align::Right),
        ("overshoot", Align::Right),
        ("occupied bandwidth", Align::Right),
    ]);
    for (name, g) in [("envelope following", f), ("quasi-static", q)] {
        t.row(vec![
            name.into(),
            opt_si(g.rise_s, "s"),
            opt_si(g.fall_s, "s"),
            opt_pct(g.overshoot),
            opt_si(g.occupied_bw_hz, "Hz"),
        ]);
    }
    s.push_str(&t.render());
    s.push_str(&format!(
        "  quasi-static against envelope following: largest difference {}\n",
        verdict_words(k)
    ));
    s.push_str(&format!(
        "  necessary bandwidth {} (B·K, B = {:.4} baud, K = {}; ITU Radio Regulations Appendix 1); \
         clean keying occupies more than B·K, and no rule sets the number (docs/measurements.md)\n",
        si(f.necessary_bw_hz, "Hz"),
        k.spec.baud(),
        k.spec.k_factor
    ));
    s.push_str(&format!(
        "  sidebands: lines every {}, resolution bandwidth {}, window {}\n",
        si(f.line_spacing_hz, "Hz"),
        si(f.rbw_hz, "Hz"),
        f.window
    ));
    let mut t = Table::new(vec![
        ("beyond offset", Align::Right),
        ("strongest, envelope following", Align::Right),
        ("strongest, quasi-static", Align::Right),
    ]);
    for m in BEYOND {
        let off = m * f.necessary_bw_hz;
        let lvl = |g: &KeyingFigures| {
            strongest_beyond(g, off)
                .map(|d| db(d, "dBc"))
                .unwrap_or_else(|| "—".into())
        };
        t.row(vec![si(off, "Hz"), lvl(f), lvl(q)]);
    }
    s.push_str(&t.render());
    s.push_str("  AM–AM and AM–PM (harmonic balance at each drive level)\n");
    let mut t = Table::new(vec![
        ("drive", Align::Right),
        ("output amplitude", Align::Right),
        ("output power", Align::Right),
        ("phase", Align::Right),
    ]);
    let full = k.key_down();
    let step = (k.transfer.len() / 8).max(1);
    for (i, p) in k.transfer.iter().enumerate() {
        if (i + 1) % step != 0 && i + 1 != k.transfer.len() {
            continue;
        }
        t.row(vec![
            fixed(100.0 * p.drive, 1, "%"),
            si(2.0 * p.output.norm(), "V"),
            si(p.pout_w, "W"),
            fixed(relative_phase_deg(p.output, full), 2, "deg"),
        ]);
    }
    s.push_str(&t.render());
    s
}

/// The phase of `x` relative to `reference`, degrees in (−180, 180].
fn relative_phase_deg(x: num_complex::Complex64, reference: num_complex::Complex64) -> f64 {
    if x.norm() == 0.0 || reference.norm() == 0.0 {
        return 0.0;
    }
    let d = (x / reference).arg().to_degrees();
    // below the 0.01 deg the tables show, a sign is noise: no "-0.00 deg"
    if d.abs() < 5e-3 {
        0.0
    } else {
        d
    }
}

/// The sideband masks the requirements name (`require sidebands <= M`),
/// as (name, step points (offset Hz, allowed dBc)) at the key-down carrier.
fn sideband_masks(c: &Circuit, k: &KeyingRun) -> Vec<(String, Vec<(f64, f64)>)> {
    let mut out: Vec<(String, Vec<(f64, f64)>)> = Vec::new();
    for r in &c.requirements {
        if r.metric.figure != Figure::Sidebands {
            continue;
        }
        let mask = match &r.bound {
            Bound::Mask(i) => c.masks.get(*i).cloned(),
            Bound::BuiltinMask(n) => builtin::builtin_mask(n),
            Bound::Value(_) => None,
        };
        let Some(mask) = mask else { continue };
        if out.iter().any(|(n, _)| *n == mask.name) {
            continue;
        }
        let mut pts = Vec::new();
        for rule in &mask.rules {
            if let MaskRange::Offset { from, to } = rule.range {
                let a = rule.limit.allowed_dbc(k.key_down_w());
                if a.is_finite() {
                    pts.push((from, a));
                    pts.push((to, a));
                }
            }
        }
        pts.sort_by(|a, b| a.0.total_cmp(&b.0));
        out.push((mask.name.clone(), pts));
    }
    out
}

/// The envelope plot's curves (peak output amplitude, V, against time, ms).
pub fn envelope_curves(k: &KeyingRun) -> SweepCurves {
    let t: Vec<f64> = (0..k.dynamic.len()).map(|i| i as f64 * k.dt).collect();
    let full = 2.0 * k.key_down().norm();
    SweepCurves {
        title: "Output envelope".into(),
        x_name: "time in the last period".into(),
        x_unit: "s".into(),
        y_name: "output amplitude".into(),
        y_unit: "V".into(),
        curves: vec![
            Curve {
                label: "envelope following".into(),
                x: t.clone(),
                y: k.dynamic.iter().map(|v| 2.0 * v.norm()).collect(),
            },
            Curve {
                label: "quasi-static".into(),
                x: t.clone(),
                y: k.quasi.iter().map(|v| 2.0 * v.norm()).collect(),
            },
            Curve {
                label: "drive × key-down output".into(),
                x: t,
                y: k.drive.iter().map(|a| a * full).collect(),
            },
        ],
        limit: None,
    }
}

/// The AM–AM curve (output amplitude against drive).
pub fn transfer_curves(k: &KeyingRun) -> SweepCurves {
    SweepCurves {
        title: "AM–AM".into(),
        x_name: "drive amplitude".into(),
        x_unit: "%".into(),
        y_name: "output amplitude".into(),
        y_unit: "V".into(),
        curves: vec![Curve {
            label: "harmonic balance".into(),
            x: k.transfer.iter().map(|p| 100.0 * p.drive).collect(),
            y: k.transfer.iter().map(|p| 2.0 * p.output.norm()).collect(),
        }],
        limit: None,
    }
}

/// The AM–PM curve (output phase against drive, relative to full drive).
pub fn phase_curves(k: &KeyingRun) -> SweepCurves {
    let full = k.key_down();
    SweepCurves {
        title: "AM–PM".into(),
        x_name: "drive amplitude".into(),
        x_unit: "%".into(),
        y_name: "output phase".into(),
        y_unit: "deg".into(),
        curves: vec![Curve {
            label: "harmonic balance".into(),
            x: k.transfer.iter().map(|p| 100.0 * p.drive).collect(),
            y: k.transfer
                .iter()
                .map(|p| relative_phase_deg(p.output, full))
                .collect(),
        }],
        limit: None,
    }
}

/// The sideband plot's curves (dBc against offset, Hz), with the
/// necessary bandwidth's edges and the masks the requirements name.
pub fn sideband_curves(c: &Circuit, k: &KeyingRun) -> SweepCurves {
    let f = &k.figures;
    let q = &k.quasi_figures;
    let floor = f
        .sideband_dbc
        .iter()
        .copied()
        .filter(|d| d.is_finite())
        .fold(0.0, f64::min);
    let half = 0.5 * f.necessary_bw_hz;
    let mut curves = vec![
        Curve {
            label: "envelope following".into(),
            x: f.sideband_offsets_hz.clone(),
            y: f.sideband_dbc.clone(),
        },
        Curve {
            label: "quasi-static".into(),
            x: q.sideband_offsets_hz.clone(),
            y: q.sideband_dbc.clone(),
        },
        Curve {
            label: "necessary bandwidth B·K".into(),
            x: vec![-half, -half, half, half],
            y: vec![floor, 0.0, 0.0, floor],
        },
    ];
    for (name, pts) in sideband_masks(c, k) {
        // one curve each side of the carrier
        curves.push(Curve {
            label: format!("mask {name}, below the carrier"),
            x: pts.iter().rev().map(|p| -p.0).collect(),
            y: pts.iter().rev().map(|p| p.1).collect(),
        });
        curves.push(Curve {
            label: format!("mask {name}, above the carrier"),
            x: pts.iter().map(|p| p.0).collect(),
            y: pts.iter().map(|p| p.1).collect(),
        });
    }
    SweepCurves {
        title: "Keying sidebands".into(),
        x_name: "offset from the carrier".into(),
        x_unit: "Hz".into(),
        y_name: "level".into(),
        y_unit: "dBc".into(),
        curves,
        limit: None,
    }
}

/// Every plot of a keying as (file stem, caption, SVG or error).
pub fn keying_plots(
    c: &Circuit,
    k: &KeyingRun,
    p: &PlotParams,
) -> Vec<(&'static str, &'static str, Result<String, PlotError>)> {
    vec![
        (
            "keying-envelope",
            ENVELOPE_CAPTION,
            crate::plot::sweep_plot(&envelope_curves(k), p),
        ),
        (
            "keying-am-am",
            TRANSFER_CAPTION,
            crate::plot::sweep_plot(&transfer_curves(k), p),
        ),
        (
            "keying-am-pm",
            PHASE_CAPTION,
            crate::plot::sweep_plot(&phase_curves(k), p),
        ),
        (
            "keying-sidebands",
            SIDEBAND_CAPTION,
            crate::plot::sweep_plot(&sideband_curves(c, k), p),
        ),
    ]
}

/// A keying as a section of the HTML report.
pub fn keying_section(c: &Circuit, k: &KeyingRun, p: &PlotParams) -> crate::html::StudySection {
    let f = &k.figures;
    let q = &k.quasi_figures;
    let lines = vec![
        ("keying".to_string(), heading(k)),
        (
            "key-down output".to_string(),
            format!("{} at {}", power(k.key_down_w()), si(k.carrier_hz, "Hz")),
        ),
        (
            "quasi-static against envelope following".to_string(),
            verdict_words(k),
        ),
        (
            "necessary bandwidth".to_string(),
            format!(
                "{} (B·K, K = {}; ITU Radio Regulations Appendix 1)",
                si(f.necessary_bw_hz, "Hz"),
                k.spec.k_factor
            ),
        ),
        (
            "sideband spectrum".to_string(),
            format!(
                "lines every {}, resolution bandwidth {}, window {}",
                si(f.line_spacing_hz, "Hz"),
                si(f.rbw_hz, "Hz"),
                f.window
            ),
        ),
        ("caution".to_string(), crate::stage::SAFETY_NOTE.to_string()),
    ];
    let rows = [("envelope following", f), ("quasi-static", q)]
        .iter()
        .map(|(name, g)| {
            vec![
                name.to_string(),
                opt_si(g.rise_s, "s"),
                opt_si(g.fall_s, "s"),
                opt_pct(g.overshoot),
                opt_si(g.occupied_bw_hz, "Hz"),
            ]
        })
        .collect();
    crate::html::StudySection {
        title: format!("Keying at {:.4} wpm", k.spec.wpm()),
        lines,
        table: Some(crate::html::PlainTable {
            header: [
                "output envelope",
                "rise 10-90 %",
                "fall 90-10 %",
                "overshoot",
                "occupied bandwidth",
            ]
            .iter()
            .map(|h| h.to_string())
            .collect(),
            rows,
        }),
        figures: keying_plots(c, k, p)
            .into_iter()
            .filter_map(|(_, caption, svg)| {
                svg.ok().map(|svg| crate::html::Figure {
                    caption: caption.into(),
                    svg,
                })
            })
            .collect(),
    }
}

fn figures_json(f: &KeyingFigures) -> Value {
    serde_json::to_value(f).unwrap_or(Value::Null)
}

/// A keying as JSON (docs/output.md, "keying").
pub fn keying_json(k: &KeyingRun) -> Value {
    let full = k.key_down();
    json!({
        "source": k.source,
        "carrier_hz": k.carrier_hz,
        "wpm": k.spec.wpm(),
        "baud": k.spec.baud(),
        "pattern": k.spec.pattern.word(),
        "message": k.spec.message,
        "shape": k.spec.shape.word(),
        "rise_s": k.spec.rise,
        "fall_s": k.spec.fall,
        "cycles": k.cycles,
        "period_s": k.period_s(),
        "step_s": k.dt,
        "key_down_w": k.key_down_w(),
        "departure": k.departure,
        "quasi_static_enough": k.departure <= QUASI_ENOUGH,
        "envelope_following": figures_json(&k.figures),
        "quasi_static": figures_json(&k.quasi_figures),
        "transfer": k.transfer.iter().map(|p| json!({
            "drive": p.drive,
            "amplitude_v": 2.0 * p.output.norm(),
            "pout_w": p.pout_w,
            "phase_deg": relative_phase_deg(p.output, full),
        })).collect::<Vec<_>>(),
        "envelope": {
            "step_s": k.dt,
            "drive": k.drive,
            "dynamic_v": k.dynamic.iter().map(|v| 2.0 * v.norm()).collect::<Vec<_>>(),
            "quasi_static_v": k.quasi.iter().map(|v| 2.0 * v.norm()).collect::<Vec<_>>(),
        },
        "info": {
            "steps": k.info.steps,
            "newton_iterations": k.info.newton_iterations,
            "system_size": k.info.system_size,
        },
    })
}
