//! One steady-state period of a transistor: collector–emitter voltage,
//! collector current, base–emitter voltage and the output voltage in panels
//! sharing the time axis, with the conduction interval shaded.
//!
//! The shading is exactly what the conduction angle counts
//! (`tankwave_measure::conduction`, docs/measurements.md): the pulses of the
//! collector transport current, drawn as a second line in the i_c panel,
//! with saturation notches bridged.

use tankwave_circuit::{Circuit, ElementId, ElementKind, ModelParams, NodeId};
use tankwave_devices::UnknownId;
use tankwave_solve::PeriodicSolution;

use super::canvas::{axis_desc, draw_panel, extent, padded, prefix_for, render, Line, Panel};
use super::{check_finite, series_style, title_of, PlotError, PlotParams};
use crate::format::{fixed, si};

pub use tankwave_measure::conduction_intervals;

fn node_wave(sol: &PeriodicSolution, node: NodeId, what: &str) -> Result<Vec<f64>, PlotError> {
    let n = sol.samples_per_period;
    match UnknownId::voltage(node).map(|u| u.index()) {
        None => Ok(vec![0.0; n]),
        Some(k) => {
            let w = sol.x.get(k).ok_or_else(|| PlotError::Shape {
                what: format!("{what}: node voltages in the solution"),
                expected: k + 1,
                found: sol.x.len(),
            })?;
            if w.len() != n {
                return Err(PlotError::Shape {
                    what: format!("{what}: samples of unknown {k}"),
                    expected: n,
                    found: w.len(),
                });
            }
            Ok(w.clone())
        }
    }
}

fn diff(a: &[f64], b: &[f64], s: f64) -> Vec<f64> {
    a.iter().zip(b).map(|(x, y)| s * (x - y)).collect()
}

/// The output voltage over the period (across the output element's first
/// two terminals), if the circuit names an output element.
fn output_wave(
    circuit: &Circuit,
    sol: &PeriodicSolution,
) -> Result<Option<(String, Vec<f64>)>, PlotError> {
    let Some(id) = circuit.output else {
        return Ok(None);
    };
    let Some(el) = circuit.elements.get(id.index()) else {
        return Ok(None);
    };
    let t = el.kind.terminals();
    match (t.first(), t.get(1)) {
        (Some(a), Some(b)) => {
            let va = node_wave(sol, *a, "output voltage")?;
            let vb = node_wave(sol, *b, "output voltage")?;
            Ok(Some((el.name.clone(), diff(&va, &vb, 1.0))))
        }
        _ => Ok(None),
    }
}

/// One steady-state period of transistor `element` (an index into
/// `circuit.elements`): panels of v_ce, i_c, v_be and the output voltage
/// sharing the time axis, the conduction interval shaded in every panel.
/// Signs are flipped for pnp so that normal operation reads positive.
pub fn period_plot(
    circuit: &Circuit,
    sol: &PeriodicSolution,
    element: ElementId,
    p: &PlotParams,
) -> Result<String, PlotError> {
    let el = circuit
        .elements
        .get(element.index())
        .ok_or(PlotError::NoElement {
            index: element.index(),
            count: circuit.elements.len(),
        })?;
    let ElementKind::Bjt { c, b, e, model, .. } = &el.kind else {
        return Err(PlotError::NotTransistor {
            element: el.name.clone(),
            kind: el.kind.keyword().to_string(),
        });
    };
    let n = sol.samples_per_period;
    if n < 2 {
        return Err(PlotError::Empty {
            what: format!("period of {}", el.name),
        });
    }
    if !(sol.freq.is_finite() && sol.freq > 0.0) {
        return Err(PlotError::BadParameter {
            what: "fundamental frequency".into(),
            why: format!("{} Hz is not a positive number", sol.freq),
        });
    }
    let pnp = matches!(circuit.models.get(model.index()).map(|m| &m.params), Some(ModelParams::Bjt(bp)) if bp.pnp);
    let s = if pnp { -1.0 } else { 1.0 };
    let vc = node_wave(sol, *c, &el.name)?;
    let vb = node_wave(sol, *b, &el.name)?;
    let ve = node_wave(sol, *e, &el.name)?;
    let vce = diff(&vc, &ve, s);
    let vbe = diff(&vb, &ve, s);
    let ic_raw = sol
        .terminal_current(element.terminal(0))
        .ok_or_else(|| PlotError::Shape {
            what: format!("collector current of {}", el.name),
            expected: 1,
            found: 0,
        })?;
    if ic_raw.len() != n {
        return Err(PlotError::Shape {
            what: format!("collector current samples of {}", el.name),
            expected: n,
            found: ic_raw.len(),
        });
    }
    let ic: Vec<f64> = ic_raw.iter().map(|v| s * v).collect();
    check_finite(&format!("v_ce of {}", el.name), &vce)?;
    check_finite(&format!("v_be of {}", el.name), &vbe)?;
    check_finite(&format!("i_c of {}", el.name), &ic)?;
    let out = output_wave(circuit, sol)?;
    if let Some((name, v)) = &out {
        check_finite(&format!("voltage across {name}"), v)?;
    }

    let period = 1.0 / sol.freq;
    let (tf, tp) = prefix_for(period, "s");
    // close the period: sample N is sample 0 again
    let times: Vec<f64> = (0..=n).map(|k| k as f64 * period / n as f64 / tf).collect();
    let closed = |w: &[f64]| -> Vec<f64> {
        let mut v = w.to_vec();
        v.push(w.first().copied().unwrap_or(0.0));
        v
    };
    // shade exactly what the conduction angle counts: the measure's rule on
    // the transport current (the terminal current when there is none)
    let transport: Option<Vec<f64>> = match sol.transport_current(element) {
        Some(t) if t.len() == n => Some(t.iter().map(|v| s * v).collect()),
        _ => None,
    };
    let it: Vec<f64> = transport.clone().unwrap_or_else(|| ic.clone());
    check_finite(&format!("transport current of {}", el.name), &it)?;
    let cond = tankwave_measure::conduction(&it, Some(&vce), period, p.conduction_threshold);
    let shades: Vec<(f64, f64)> = cond
        .intervals
        .iter()
        .map(|(a, b)| (a / tf, b / tf))
        .collect();
    let angle = cond.angle_deg;

    struct Q {
        name: String,
        unit: &'static str,
        wave: Vec<f64>,
        /// A second trace in the same panel (the transport current).
        extra: Option<(String, Vec<f64>)>,
    }
    let mut qs = vec![
        Q {
            name: "v_ce".into(),
            unit: "V",
            wave: closed(&vce),
            extra: None,
        },
        Q {
            name: "i_c".into(),
            unit: "A",
            wave: closed(&ic),
            extra: transport
                .as_ref()
                .map(|t| ("i_t (transport)".to_string(), closed(t))),
        },
        Q {
            name: "v_be".into(),
            unit: "V",
            wave: closed(&vbe),
            extra: None,
        },
    ];
    if let Some((name, v)) = &out {
        qs.push(Q {
            name: tankwave_devices::names::element_voltage(name),
            unit: "V",
            wave: closed(v),
            extra: None,
        });
    }

    let width = p.width.max(320);
    let panel_h = 190;
    let band = 64;
    let height = band + panel_h * qs.len() as u32 + 24;
    let title = title_of(&format!("One steady-state period of {}", el.name), p);
    let subtitle = format!(
        "{} at {}; shaded: conduction ({} in {} pulse{}{}; {} above {} of its peak {})",
        if pnp { "pnp" } else { "npn" },
        si(sol.freq, "Hz"),
        fixed(angle, 0, "deg"),
        cond.pulses,
        if cond.pulses == 1 { "" } else { "s" },
        match cond.notches {
            0 => String::new(),
            1 => ", 1 notch bridged".to_string(),
            k => format!(", {k} notches bridged"),
        },
        if transport.is_some() {
            "transport current"
        } else {
            "i_c"
        },
        fixed(p.conduction_threshold * 100.0, 0, "%"),
        si(it.iter().copied().fold(f64::NEG_INFINITY, f64::max), "A"),
    );
    let desc = format!(
        "Panels sharing the time axis: {} over one period of {}.",
        qs.iter()
            .map(|q| q.name.as_str())
            .collect::<Vec<_>>()
            .join(", "),
        si(period, "s")
    );
    let count = qs.len();
    render(width, height, &title, &desc, |cv| {
        let rest = cv.header(&title, &subtitle, band)?;
        let panels = rest.split_evenly((count, 1));
        let x_range = 0.0..period / tf;
        for (k, (q, area)) in qs.iter().zip(panels.iter()).enumerate() {
            let extra = q.extra.iter().flat_map(|(_, w)| w.iter());
            let max_abs = q
                .wave
                .iter()
                .chain(extra)
                .fold(0.0f64, |m, v| m.max(v.abs()));
            let (f, pre) = prefix_for(max_abs, q.unit);
            let pts: Vec<(f64, f64)> = times
                .iter()
                .zip(&q.wave)
                .map(|(t, v)| (*t, v / f))
                .collect();
            let extra_pts: Option<(&str, Vec<(f64, f64)>)> = q.extra.as_ref().map(|(name, w)| {
                let p = times.iter().zip(w).map(|(t, v)| (*t, v / f)).collect();
                (name.as_str(), p)
            });
            let all = pts
                .iter()
                .chain(extra_pts.iter().flat_map(|(_, p)| p.iter()))
                .map(|p| &p.1);
            let (lo, hi) = extent(all).unwrap_or((0.0, 1.0));
            let x_desc = if k + 1 == count {
                axis_desc("time", tp, "s")
            } else {
                String::new()
            };
            let mut panel = Panel::new(
                x_range.clone(),
                padded(lo, hi, 0.08),
                x_desc,
                axis_desc(&q.name, pre, q.unit),
            );
            panel.shades = shades.clone();
            // the darker palette entries: one series per panel on white
            let mut style = series_style([0, 1, 3, 5][k % 4]);
            style.dash = "none";
            panel.lines.push(Line {
                label: q.name.clone(),
                style,
                points: &pts,
                markers: 0,
            });
            if let Some((name, p)) = &extra_pts {
                panel.lines.push(Line {
                    label: (*name).to_string(),
                    style: series_style(2),
                    points: p,
                    markers: 0,
                });
            }
            draw_panel(cv, area, &panel)?;
        }
        Ok(())
    })
}

/// [`period_plot`] for every bipolar transistor of the circuit, in element
/// order: (element name, SVG).
pub fn period_plots(
    circuit: &Circuit,
    sol: &PeriodicSolution,
    p: &PlotParams,
) -> Result<Vec<(String, String)>, PlotError> {
    circuit
        .element_ids()
        .filter(|(_, e)| matches!(e.kind, ElementKind::Bjt { .. }))
        .map(|(id, e)| Ok((e.name.clone(), period_plot(circuit, sol, id, p)?)))
        .collect()
}
