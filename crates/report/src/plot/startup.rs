//! Transient start-up of the output voltage: the waveform and its
//! per-period peak envelope, with the time the envelope reaches 90 % of its
//! final amplitude marked.

use tankwave_circuit::Circuit;
use tankwave_devices::UnknownId;
use tankwave_solve::TransientResult;

use super::canvas::{
    axis_desc, decimate, draw_panel, extent, padded, prefix_for, render, LegendEntry, LegendKind,
    Line, Panel,
};
use super::{check_finite, series_style, title_of, PlotError, PlotParams};
use crate::format::si;

/// The peak of one period of a transient waveform.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EnvelopePoint {
    /// Period number (0 = the first period from the start of the run).
    pub period: usize,
    /// Time of the largest value in the period, s.
    pub t_max: f64,
    /// Largest value in the period.
    pub max: f64,
    /// Time of the smallest value in the period, s.
    pub t_min: f64,
    /// Smallest value in the period.
    pub min: f64,
}

/// Per-period peaks of `v(t)`: the run from `time[0]` is cut into periods of
/// 1/`freq_hz`, and each period that holds at least one sample gives its
/// largest and smallest sample. Empty if the inputs are empty, of different
/// lengths, or the frequency is not positive.
pub fn peak_envelope(time: &[f64], v: &[f64], freq_hz: f64) -> Vec<EnvelopePoint> {
    if time.is_empty() || time.len() != v.len() || !(freq_hz.is_finite() && freq_hz > 0.0) {
        return Vec::new();
    }
    let t0 = time[0];
    let period = 1.0 / freq_hz;
    let mut out: Vec<EnvelopePoint> = Vec::new();
    for (&t, &x) in time.iter().zip(v) {
        if !(t.is_finite() && x.is_finite()) {
            continue;
        }
        let k = ((t - t0) / period).floor().max(0.0) as usize;
        match out.last_mut() {
            Some(e) if e.period == k => {
                if x > e.max {
                    e.max = x;
                    e.t_max = t;
                }
                if x < e.min {
                    e.min = x;
                    e.t_min = t;
                }
            }
            _ => out.push(EnvelopePoint {
                period: k,
                t_max: t,
                max: x,
                t_min: t,
                min: x,
            }),
        }
    }
    out
}

/// The start-up plot from a transient run: the voltage across the circuit's
/// output element over the whole run with its per-period peak envelope.
pub fn startup_plot(
    circuit: &Circuit,
    tr: &TransientResult,
    freq_hz: f64,
    p: &PlotParams,
) -> Result<String, PlotError> {
    let (label, v) = output_voltage(circuit, tr)?;
    startup_plot_series(&tr.time, &v, freq_hz, &label, p)
}

/// When the start-up of the output voltage settles: the time of the peak
/// of the first complete carrier period whose amplitude reaches 90 % of
/// the last complete period's (the mark of the start-up plot); `None` when
/// the run has no output voltage or no complete period with a swing.
pub fn startup_settling(circuit: &Circuit, tr: &TransientResult, freq_hz: f64) -> Option<f64> {
    let (_, v) = output_voltage(circuit, tr).ok()?;
    if tr.time.len() != v.len() || !(freq_hz.is_finite() && freq_hz > 0.0) {
        return None;
    }
    let env = peak_envelope(&tr.time, &v, freq_hz);
    let (_, t_hi) = extent(&tr.time)?;
    settling(&complete_periods(&env, tr.time[0], t_hi, freq_hz))
}

/// The envelope points of the complete periods (the last may be cut short).
fn complete_periods(
    env: &[EnvelopePoint],
    t0: f64,
    t_hi: f64,
    freq_hz: f64,
) -> Vec<&EnvelopePoint> {
    let period = 1.0 / freq_hz;
    env.iter()
        .filter(|e| t0 + (e.period as f64 + 1.0) * period <= t_hi * (1.0 + 1e-12))
        .collect()
}

/// Settling mark: the first period whose amplitude reaches 90 % of the last one's.
fn settling(full: &[&EnvelopePoint]) -> Option<f64> {
    let amp = |e: &EnvelopePoint| (e.max - e.min) / 2.0;
    let last = full.last()?;
    let target = 0.9 * amp(last);
    if target > 0.0 {
        full.iter().find(|e| amp(e) >= target).map(|e| e.t_max)
    } else {
        None
    }
}

/// The voltage across the circuit's output element over a transient run,
/// with its label.
fn output_voltage(
    circuit: &Circuit,
    tr: &TransientResult,
) -> Result<(String, Vec<f64>), PlotError> {
    let id = circuit.output.ok_or_else(|| PlotError::BadParameter {
        what: "output element".into(),
        why: "the circuit names no output element".into(),
    })?;
    let el = circuit
        .elements
        .get(id.index())
        .ok_or(PlotError::NoElement {
            index: id.index(),
            count: circuit.elements.len(),
        })?;
    let terms = el.kind.terminals();
    let (a, b) = match (terms.first(), terms.get(1)) {
        (Some(a), Some(b)) => (
            UnknownId::voltage(*a).map(|u| u.index()),
            UnknownId::voltage(*b).map(|u| u.index()),
        ),
        _ => {
            return Err(PlotError::BadParameter {
                what: format!("output element {}", el.name),
                why: "it has no two terminals".into(),
            })
        }
    };
    let nu = tr.names.len();
    for node in [a, b].into_iter().flatten() {
        if node >= nu {
            return Err(PlotError::Shape {
                what: "unknowns of the transient run".into(),
                expected: node + 1,
                found: nu,
            });
        }
    }
    let at = |row: &Vec<f64>, n: Option<usize>| n.and_then(|k| row.get(k).copied()).unwrap_or(0.0);
    let v: Vec<f64> = tr.x.iter().map(|row| at(row, a) - at(row, b)).collect();
    Ok((tankwave_devices::names::element_voltage(&el.name), v))
}

/// The start-up plot from plain data: `v` against `time` (seconds), labelled
/// `label`, with the per-period peak envelope for a carrier at `freq_hz`.
pub fn startup_plot_series(
    time: &[f64],
    v: &[f64],
    freq_hz: f64,
    label: &str,
    p: &PlotParams,
) -> Result<String, PlotError> {
    if time.is_empty() {
        return Err(PlotError::Empty {
            what: "transient waveform".into(),
        });
    }
    if time.len() != v.len() {
        return Err(PlotError::Shape {
            what: "transient waveform values".into(),
            expected: time.len(),
            found: v.len(),
        });
    }
    check_finite("transient time", time)?;
    check_finite(&format!("transient {label}"), v)?;
    if !(freq_hz.is_finite() && freq_hz > 0.0) {
        return Err(PlotError::BadParameter {
            what: "carrier frequency".into(),
            why: format!("{freq_hz} Hz is not a positive number"),
        });
    }
    let env = peak_envelope(time, v, freq_hz);
    let (t_lo, t_hi) = extent(time).unwrap_or((0.0, 1.0));
    let (tf, tp) = prefix_for(t_hi.abs().max(t_lo.abs()), "s");
    let vmax = v.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    let (vf, vp) = prefix_for(vmax, "V");
    let ts: Vec<f64> = time.iter().map(|t| t / tf).collect();
    let vs: Vec<f64> = v.iter().map(|x| x / vf).collect();
    let width = p.width.max(320);
    let wave = decimate(&ts, &vs, width as usize);
    // complete periods only for the envelope (the last may be cut short)
    let full = complete_periods(&env, time[0], t_hi, freq_hz);
    let upper: Vec<(f64, f64)> = full.iter().map(|e| (e.t_max / tf, e.max / vf)).collect();
    let lower: Vec<(f64, f64)> = full.iter().map(|e| (e.t_min / tf, e.min / vf)).collect();
    let settle = settling(&full);
    let subtitle = format!(
        "{} periods of {} simulated; envelope: largest and smallest value in each period{}",
        env.len(),
        si(freq_hz, "Hz"),
        match settle {
            Some(t) => format!("; 90 % of final amplitude at {}", si(t, "s")),
            None => String::new(),
        }
    );
    let title = title_of(&format!("Start-up of the output voltage {label}"), p);
    let desc = format!("Transient waveform of {label} with its per-period peak envelope.");
    let legend_w = 230;
    render(width, 520, &title, &desc, |cv| {
        let rest = cv.header(&title, &subtitle, 64)?;
        let (plot_area, legend_area) = rest.split_horizontally(width.saturating_sub(legend_w));
        let (lo, hi) = extent(vs.iter()).unwrap_or((-1.0, 1.0));
        let mut panel = Panel::new(
            t_lo / tf..t_hi / tf,
            padded(lo, hi, 0.06),
            axis_desc("time", tp, "s"),
            axis_desc(label, vp, "V"),
        );
        let mut wave_style = series_style(2);
        wave_style.dash = "none";
        wave_style.width = 1;
        // a mid tone of the palette's sky, behind the darker envelopes
        wave_style.color = (0x6f, 0xab, 0xcc);
        panel.lines.push(Line {
            label: label.to_string(),
            style: wave_style,
            points: &wave,
            markers: 0,
        });
        let env_style = series_style(0);
        let mut low_style = series_style(3);
        low_style.width = 2;
        panel.lines.push(Line {
            label: "upper envelope".into(),
            style: env_style,
            points: &upper,
            markers: 10,
        });
        panel.lines.push(Line {
            label: "lower envelope".into(),
            style: low_style,
            points: &lower,
            markers: 10,
        });
        if let Some(t) = settle {
            panel
                .vlines
                .push((t / tf, "90 % of final amplitude".into()));
        }
        draw_panel(cv, &plot_area, &panel)?;
        cv.begin("legend", None, None)?;
        cv.legend(
            &legend_area,
            8,
            30,
            &[
                LegendEntry {
                    label: label.to_string(),
                    style: wave_style,
                    kind: LegendKind::Rule,
                },
                LegendEntry {
                    label: "upper envelope".into(),
                    style: env_style,
                    kind: LegendKind::Line,
                },
                LegendEntry {
                    label: "lower envelope".into(),
                    style: low_style,
                    kind: LegendKind::Line,
                },
            ],
        )?;
        cv.end()
    })
}
