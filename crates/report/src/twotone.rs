//! A two-tone test ([`tankwave_stage::twotone`]) as a terminal table, JSON
//! and the plot of intermodulation against output power over the drive
//! sweep: the tones' output powers, PEP, IM3/IM5/IM7 on each side in dBc
//! and in dB against PEP, the intercept estimates and the gain change.

use serde_json::{json, Value};
use tankwave_measure::units::dbm;
use tankwave_measure::{Side, TwoToneMetrics};
use tankwave_stage::twotone::TwoToneTest;

use crate::format::{db, fixed, si};
use crate::plot::{Curve, PlotError, PlotParams, SweepCurves};
use crate::table::{Align, Table};

/// Caption of the sweep plot.
pub const PLOT_CAPTION: &str =
    "Intermodulation products (worse side, dB below PEP) against output PEP over the drive sweep.";

fn side(s: Side) -> &'static str {
    match s {
        Side::Lower => "lower",
        Side::Upper => "upper",
    }
}

/// A frequency with the digits a tone spacing needs (seven significant).
fn hz(v: f64) -> String {
    tankwave_measure::units::si_prefixed(v, "Hz", 7)
}

fn power(w: f64) -> String {
    format!("{} ({})", si(w, "W"), db(dbm(w), "dBm"))
}

fn level(v: Option<f64>, unit: &str, floor: f64) -> String {
    match v {
        Some(d) => db(d, unit),
        None => format!("below floor ({})", db(floor, "dBc")),
    }
}

/// The figures of one drive level as a table.
fn metrics_text(m: &TwoToneMetrics) -> String {
    let mut s = String::new();
    s.push_str(&format!(
        "  tone power       {} lower, {} upper\n",
        power(m.tone_w[0]),
        power(m.tone_w[1])
    ));
    s.push_str(&format!("  PEP              {}\n", power(m.pep_w)));
    let mut t = Table::new(vec![
        ("product", Align::Left),
        ("side", Align::Left),
        ("frequency", Align::Right),
        ("level", Align::Right),
        ("against PEP", Align::Right),
    ]);
    for r in &m.products {
        t.row(vec![
            format!("IM{}", r.order),
            side(r.side).into(),
            hz(r.freq_hz),
            level(r.dbc, "dBc", m.floor_dbc),
            level(r.below_pep_db, "dB", m.floor_dbc),
        ]);
    }
    s.push_str(&t.render());
    let est = |v: Option<f64>| v.map(power).unwrap_or_else(|| "—".into());
    s.push_str(&format!(
        "  intercept estimates: third order {}, fifth order {}\n",
        est(m.oip3_w),
        est(m.oip5_w)
    ));
    s
}

/// A two-tone test for the terminal.
pub fn two_tone_text(t: &TwoToneTest) -> String {
    let mut s = format!(
        "Two-tone test: tones {} and {} (spacing {}), order {}, {} mixing products\n",
        hz(t.full.tones_hz[0]),
        hz(t.full.tones_hz[1]),
        si(t.spacing_hz, "Hz"),
        t.order,
        t.products
    );
    s.push_str(&metrics_text(&t.full));
    let edge_db = 20.0 * t.edge.max(1e-300).log10();
    s.push_str(&format!(
        "  truncation: the largest product on the box's edge is {} against the largest tone\n",
        db(edge_db, "dB")
    ));
    // the products left out are of the size of those on the edge: within
    // 20 dB of a reported product they change it by about 1 dB or more
    let lowest = t
        .full
        .products
        .iter()
        .filter_map(|r| r.dbc)
        .reduce(f64::min);
    if lowest.is_some_and(|l| edge_db > l - 20.0) {
        s.push_str(&format!(
            "  note: the truncation is within 20 dB of the weakest product reported; \
             raise order= (now {}) until the figures stop changing\n",
            t.order
        ));
    }
    if !t.sweep.is_empty() {
        s.push_str("  Drive sweep (dB relative to the input's amplitude)\n");
        let mut tb = Table::new(vec![
            ("drive", Align::Right),
            ("tone power", Align::Right),
            ("PEP", Align::Right),
            ("IM3", Align::Right),
            ("IM5", Align::Right),
            ("IM7", Align::Right),
            ("gain change", Align::Right),
        ]);
        for l in &t.sweep {
            let m = &l.metrics;
            let worst = |o: u32| {
                m.worst_dbc(o)
                    .map(|d| db(d, "dBc"))
                    .unwrap_or_else(|| "below floor".into())
            };
            tb.row(vec![
                fixed(l.level_db, 1, "dB"),
                db(dbm(m.mean_tone_w()), "dBm"),
                db(dbm(m.pep_w), "dBm"),
                worst(3),
                worst(5),
                worst(7),
                fixed(l.gain_change_db, 2, "dB"),
            ]);
        }
        s.push_str(&tb.render());
    }
    if !t.by_spacing.is_empty() {
        s.push_str("  Intermodulation against tone spacing (input's own drive)\n");
        let mut tb = Table::new(vec![
            ("spacing", Align::Right),
            ("tone power", Align::Right),
            ("IM3", Align::Right),
            ("IM5", Align::Right),
            ("IM7", Align::Right),
        ]);
        for (sp, m) in &t.by_spacing {
            let worst = |o: u32| {
                m.worst_dbc(o)
                    .map(|d| db(d, "dBc"))
                    .unwrap_or_else(|| "below floor".into())
            };
            tb.row(vec![
                si(*sp, "Hz"),
                db(dbm(m.mean_tone_w()), "dBm"),
                worst(3),
                worst(5),
                worst(7),
            ]);
        }
        s.push_str(&tb.render());
    }
    s
}

/// A two-tone test as a section of the HTML report: the headline figures
/// as lines, the products as a table, the sweep plot.
pub fn two_tone_section(t: &TwoToneTest, p: &PlotParams) -> crate::html::StudySection {
    let m = &t.full;
    let mut lines = vec![
        (
            "tones".to_string(),
            format!(
                "{} and {} (spacing {}), order {}, {} mixing products",
                hz(m.tones_hz[0]),
                hz(m.tones_hz[1]),
                si(t.spacing_hz, "Hz"),
                t.order,
                t.products
            ),
        ),
        (
            "tone power".to_string(),
            format!("{} lower, {} upper", power(m.tone_w[0]), power(m.tone_w[1])),
        ),
        ("PEP".to_string(), power(m.pep_w)),
    ];
    let est = |v: Option<f64>| v.map(power).unwrap_or_else(|| "—".into());
    lines.push(("third-order intercept (estimate)".into(), est(m.oip3_w)));
    lines.push(("fifth-order intercept (estimate)".into(), est(m.oip5_w)));
    let rows = m
        .products
        .iter()
        .map(|r| {
            vec![
                format!("IM{}", r.order),
                side(r.side).into(),
                hz(r.freq_hz),
                level(r.dbc, "dBc", m.floor_dbc),
                level(r.below_pep_db, "dB", m.floor_dbc),
            ]
        })
        .collect();
    crate::html::StudySection {
        title: format!("Two-tone test, spacing {}", si(t.spacing_hz, "Hz")),
        lines,
        table: Some(crate::html::PlainTable {
            header: ["product", "side", "frequency", "level", "against PEP"]
                .iter()
                .map(|h| h.to_string())
                .collect(),
            rows,
        }),
        figures: sweep_plot(t, p)
            .ok()
            .map(|svg| crate::html::Figure {
                caption: PLOT_CAPTION.into(),
                svg,
            })
            .into_iter()
            .collect(),
    }
}

fn metrics_json(m: &TwoToneMetrics) -> Value {
    json!({
        "tones_hz": m.tones_hz,
        "tone_w": m.tone_w,
        "pep_w": m.pep_w,
        "floor_dbc": m.floor_dbc,
        "oip3_w": m.oip3_w,
        "oip5_w": m.oip5_w,
        "products": m.products.iter().map(|r| json!({
            "order": r.order,
            "side": side(r.side),
            "freq_hz": r.freq_hz,
            "power_w": r.power_w,
            "dbc": r.dbc,
            "below_pep_db": r.below_pep_db,
        })).collect::<Vec<_>>(),
    })
}

/// A two-tone test as JSON (docs/output.md, "two_tone").
pub fn two_tone_json(t: &TwoToneTest) -> Value {
    json!({
        "centre_hz": t.centre_hz,
        "spacing_hz": t.spacing_hz,
        "order": t.order,
        "products": t.products,
        "edge": t.edge,
        "iterations": t.iterations,
        "system_size": t.system_size,
        "full": metrics_json(&t.full),
        "sweep": t.sweep.iter().map(|l| json!({
            "level_db": l.level_db,
            "gain_change_db": l.gain_change_db,
            "metrics": metrics_json(&l.metrics),
        })).collect::<Vec<_>>(),
        "by_spacing": t.by_spacing.iter().map(|(sp, m)| json!({
            "spacing_hz": sp,
            "metrics": metrics_json(m),
        })).collect::<Vec<_>>(),
    })
}

/// The sweep as plot curves: for IM3, IM5 and IM7 the worse side in dB
/// against PEP, over the output PEP in dBm (levels where the order is not
/// resolved are left out). `None` without a sweep of at least two levels.
pub fn sweep_curves(t: &TwoToneTest) -> Option<SweepCurves> {
    if t.sweep.len() < 2 {
        return None;
    }
    let curves: Vec<Curve> = [3u32, 5, 7]
        .iter()
        .map(|&o| {
            let (x, y) = t
                .sweep
                .iter()
                .filter_map(|l| {
                    let m = &l.metrics;
                    m.worst_below_pep_db(o).map(|d| (dbm(m.pep_w), d))
                })
                .unzip();
            Curve {
                label: format!("IM{o}"),
                x,
                y,
            }
        })
        .filter(|c| !c.x.is_empty())
        .collect();
    (!curves.is_empty()).then(|| SweepCurves {
        title: "Two-tone intermodulation against output power".into(),
        x_name: "output PEP".into(),
        x_unit: "dBm".into(),
        y_name: "level against PEP".into(),
        y_unit: "dB".into(),
        curves,
        limit: None,
    })
}

/// The plot of intermodulation against output PEP over the sweep.
pub fn sweep_plot(t: &TwoToneTest, p: &PlotParams) -> Result<String, PlotError> {
    let curves = sweep_curves(t).ok_or_else(|| PlotError::Empty {
        what: "two-tone drive sweep (two or more levels)".into(),
    })?;
    crate::plot::sweep_plot(&curves, p)
}
