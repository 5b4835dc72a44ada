//! What `analyze heat` found, for people and programs: the settled
//! temperatures and dissipation of each device against its rating, the
//! rounds of the electrothermal iteration, the heating of a transmission
//! (terminal text, JSON, an HTML section) and the two plots (temperature
//! against time, temperature against round).

use serde_json::{json, Value};
use tankwave_stage::heat::{HeatOutcome, HeatRound, RunawayTrail};

use crate::format::{fixed, si};
use crate::plot::{temperature_plot, PlotError, PlotParams, TemperatureSeries};
use crate::table::{Align, Table};

const DEVICE_HEADER: [&str; 6] = [
    "device",
    "temperature",
    "dissipation",
    "key-up dissipation",
    "peak in transmission",
    "rating",
];

fn degc(k: f64) -> String {
    fixed(k - 273.15, 1, "degC")
}

fn device_rows(h: &HeatOutcome) -> Vec<Vec<String>> {
    h.devices
        .iter()
        .map(|d| {
            vec![
                match (d.transistor, d.resistance_ohm) {
                    (true, _) => d.name.clone(),
                    (false, Some(r)) => format!("{} (on the sink, {})", d.name, si(r, "Ohm")),
                    (false, None) => format!("{} (on the sink)", d.name),
                },
                degc(d.temperature_k),
                si(d.dissipation_w, "W"),
                d.idle_w.map(|w| si(w, "W")).unwrap_or_else(|| "—".into()),
                d.peak
                    .map(|(k, t)| format!("{} at {}", degc(k), si(t, "s")))
                    .unwrap_or_else(|| "—".into()),
                d.rating_k.map(degc).unwrap_or_else(|| "—".into()),
            ]
        })
        .collect()
}

fn summary(h: &HeatOutcome) -> String {
    format!(
        "settled in {} rounds at an ambient of {}; loop gain of the heat feedback {:.3} (below 1: no runaway)",
        h.rounds.len(),
        degc(h.ambient_k),
        h.loop_gain
    )
}

fn keying_line(h: &HeatOutcome) -> Option<String> {
    let c = h.heating.as_ref()?;
    let k = c.keying;
    Some(if k.space > 0.0 {
        format!(
            "transmission of {} from cold, keyed {} down / {} up",
            si(k.length, "s"),
            si(k.mark, "s"),
            si(k.space, "s")
        )
    } else {
        format!("key-down transmission of {} from cold", si(k.length, "s"))
    })
}

/// The terminal text: the device table, the keying, the rounds.
pub fn heat_text(h: &HeatOutcome) -> String {
    let mut t = Table::new(
        DEVICE_HEADER
            .iter()
            .enumerate()
            .map(|(k, s)| (*s, if k == 0 { Align::Left } else { Align::Right }))
            .collect(),
    );
    for r in device_rows(h) {
        t.row(r);
    }
    let mut out = format!("Junction temperatures (analyze heat)\n{}", t.render());
    out.push_str(&summary(h));
    out.push('\n');
    if let Some(k) = keying_line(h) {
        out.push_str(&k);
        out.push('\n');
    }
    let mut r = Table::new(vec![
        ("round", Align::Right),
        ("temperatures", Align::Left),
        ("dissipation", Align::Left),
        ("change asked", Align::Right),
        ("loop gain", Align::Right),
    ]);
    for (k, round) in h.rounds.iter().enumerate() {
        r.row(vec![
            (k + 1).to_string(),
            round
                .temperatures_k
                .iter()
                .map(|t| degc(*t))
                .collect::<Vec<_>>()
                .join(", "),
            round
                .dissipation_w
                .iter()
                .map(|w| si(*w, "W"))
                .collect::<Vec<_>>()
                .join(", "),
            fixed(round.change_k, 3, "K"),
            round
                .gain
                .map(|g| format!("{g:.3}"))
                .unwrap_or_else(|| "—".into()),
        ]);
    }
    out.push_str("Electrothermal rounds (devices in the order of the table above)\n");
    out.push_str(&r.render());
    out
}

/// The JSON of `analyze heat` (docs/output.md): temperatures in K, powers
/// in W, times in s.
pub fn heat_json(h: &HeatOutcome) -> Value {
    json!({
        "ambient_k": h.ambient_k,
        "loop_gain": h.loop_gain,
        "thermal_nodes": h.nodes,
        "devices": h.devices.iter().map(|d| json!({
            "element": d.name,
            "transistor": d.transistor,
            "temperature_k": d.temperature_k,
            "dissipation_w": d.dissipation_w,
            "idle_dissipation_w": d.idle_w,
            "rating_k": d.rating_k,
            "peak_k": d.peak.map(|p| p.0),
            "peak_at_s": d.peak.map(|p| p.1),
            "resistance_ohm": d.resistance_ohm,
        })).collect::<Vec<_>>(),
        "rounds": h.rounds.iter().map(|r| json!({
            "temperatures_k": r.temperatures_k,
            "dissipation_w": r.dissipation_w,
            "change_k": r.change_k,
            "loop_gain": r.gain,
        })).collect::<Vec<_>>(),
        "heating": h.heating.as_ref().map(|c| json!({
            "mark_s": c.keying.mark,
            "space_s": c.keying.space,
            "length_s": c.keying.length,
            "time_s": c.times,
            "temperatures_k": c.temperatures_k,
        })),
    })
}

/// Temperature against round of the electrothermal iteration, one line per
/// device (`devices`: name and junction rating, K).
fn rounds_plot(
    devices: &[(String, Option<f64>)],
    rounds: &[HeatRound],
    subtitle: &str,
    p: &PlotParams,
) -> Result<String, PlotError> {
    let x: Vec<f64> = (1..=rounds.len()).map(|k| k as f64).collect();
    let series: Vec<TemperatureSeries> = devices
        .iter()
        .enumerate()
        .map(|(i, (name, rating))| TemperatureSeries {
            label: name.clone(),
            kelvin: rounds
                .iter()
                .map(|r| r.temperatures_k.get(i).copied().unwrap_or(f64::NAN))
                .collect(),
            rating_k: *rating,
        })
        .collect();
    temperature_plot(
        "Electrothermal iteration",
        subtitle,
        "round",
        "",
        &x,
        &series,
        p,
    )
}

/// The plot of the rounds of an iteration that ran away,
/// `heat-rounds.svg`, with its caption: how the temperatures climbed to
/// where the runaway was found.
pub fn runaway_plot(
    trail: &RunawayTrail,
    p: &PlotParams,
) -> (String, String, Result<String, PlotError>) {
    (
        "heat-rounds.svg".to_string(),
        "Thermal runaway: the rounds of the electrothermal iteration up to where it was found."
            .to_string(),
        rounds_plot(
            &trail.devices,
            &trail.rounds,
            &format!(
                "thermal runaway after {} rounds at an ambient of {}",
                trail.rounds.len(),
                degc(trail.ambient_k)
            ),
            p,
        ),
    )
}

/// The plots: `heat-rounds.svg` (temperature against round) and, with a
/// transmission, `heating.svg` (temperature against time), each with its
/// caption.
pub fn heat_plots(
    h: &HeatOutcome,
    p: &PlotParams,
) -> Vec<(String, String, Result<String, PlotError>)> {
    let mut out = Vec::new();
    let devices: Vec<(String, Option<f64>)> = h
        .devices
        .iter()
        .map(|d| (d.name.clone(), d.rating_k))
        .collect();
    out.push((
        "heat-rounds.svg".to_string(),
        "The electrothermal iteration: each round solves the stage at these temperatures."
            .to_string(),
        rounds_plot(&devices, &h.rounds, &summary(h), p),
    ));
    if let Some(c) = &h.heating {
        let series: Vec<TemperatureSeries> = h
            .devices
            .iter()
            .enumerate()
            .map(|(i, d)| TemperatureSeries {
                label: d.name.clone(),
                kelvin: c
                    .temperatures_k
                    .iter()
                    .map(|r| r.get(i).copied().unwrap_or(f64::NAN))
                    .collect(),
                rating_k: d.rating_k,
            })
            .collect();
        out.push((
            "heating.svg".to_string(),
            "Junction and heatsink temperatures over the transmission, from cold.".to_string(),
            temperature_plot(
                "Heating over a transmission",
                &keying_line(h).unwrap_or_default(),
                "time",
                "s",
                &c.times,
                &series,
                p,
            ),
        ));
    }
    out
}

/// The HTML section: the device table, the summary, the plots.
pub fn heat_section(h: &HeatOutcome, p: &PlotParams) -> crate::html::StudySection {
    let mut lines = vec![("electrothermal".to_string(), summary(h))];
    if let Some(k) = keying_line(h) {
        lines.push(("transmission".into(), k));
    }
    crate::html::StudySection {
        title: "Junction temperatures (analyze heat)".into(),
        lines,
        table: Some(crate::html::PlainTable {
            header: DEVICE_HEADER.iter().map(|s| s.to_string()).collect(),
            rows: device_rows(h),
        }),
        figures: heat_plots(h, p)
            .into_iter()
            .filter_map(|(_, caption, svg)| {
                svg.ok().map(|svg| crate::html::Figure { caption, svg })
            })
            .collect(),
    }
}
