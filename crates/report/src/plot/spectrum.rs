//! The output spectrum in dBc as bars, the emission mask as a step line, and
//! the worst margin annotated.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use tankwave_measure::{HarmonicPower, MaskEvaluation};

use super::canvas::{
    draw_err, grid_color, render, tick, LegendEntry, LegendKind, BAR_FAIL, BAR_PASS, FONT, INK,
};
use super::{series_style, title_of, PlotError, PlotParams};
use crate::format::{db, si};

/// Lowest level drawn, dBc: weaker harmonics are drawn down to the axis
/// floor and flagged "below" (common practice: no mask asks below −100 dBc).
const FLOOR_LIMIT: f64 = -160.0;

/// The output harmonics (from `Metrics::output`) as bars in dBc, with the
/// allowed level of `mask` (if given) as a step line over each harmonic it
/// constrains, bars that exceed the mask filled darker, and the worst margin
/// written on the figure. Harmonics without a dBc level are left out; those
/// below the solver's numerical floor draw no bar, only a "(below floor)"
/// label at the foot of the axis.
pub fn spectrum_plot(
    harmonics: &[HarmonicPower],
    mask: Option<&MaskEvaluation>,
    p: &PlotParams,
) -> Result<String, PlotError> {
    let bars: Vec<(usize, f64, f64)> = harmonics
        .iter()
        .filter_map(|h| h.dbc.map(|d| (h.n, d, h.freq_hz)))
        .collect();
    if bars.is_empty() {
        return Err(PlotError::Empty {
            what: "output spectrum (no harmonic has a dBc level)".into(),
        });
    }
    if let Some((k, b)) = bars.iter().enumerate().find(|(_, b)| b.1.is_nan()) {
        return Err(PlotError::NotFinite {
            what: "harmonic level".into(),
            index: k,
            value: b.1,
        });
    }
    // per-harmonic allowed level and pass flag from the mask
    let rows = mask.map(|m| m.rows.as_slice()).unwrap_or(&[]);
    let allowed = |n: usize| rows.iter().find(|r| r.n == n).and_then(|r| r.allowed_dbc);
    let fails = |n: usize| rows.iter().any(|r| r.n == n && !r.pass);
    // harmonics below the solver's numerical floor: no bar, a label at the axis
    let unresolved: Vec<usize> = harmonics
        .iter()
        .filter(|h| !h.resolved)
        .map(|h| h.n)
        .collect();
    let k_max = bars
        .iter()
        .map(|b| b.0)
        .chain(unresolved.iter().copied())
        .max()
        .unwrap_or(1)
        .max(1);
    let lowest = bars
        .iter()
        .map(|b| b.1)
        .chain(rows.iter().filter_map(|r| r.allowed_dbc))
        .filter(|v| v.is_finite())
        .fold(0.0f64, f64::min);
    let floor = ((lowest - 10.0) / 10.0).floor() * 10.0;
    let floor = floor.max(FLOOR_LIMIT);
    let top = 10.0;

    let f0 = bars
        .iter()
        .find(|b| b.0 == 1)
        .map(|b| b.2)
        .or(mask.map(|m| m.f0_hz))
        .unwrap_or(0.0);
    let worst = mask.and_then(|m| m.worst_row());
    let mask_name = mask.map(|m| m.mask.clone()).unwrap_or_default();
    let subtitle = match (mask, worst) {
        (Some(m), Some(w)) => format!(
            "levels relative to the carrier; mask {}: {}, worst margin {} at harmonic {} ({})",
            m.mask,
            if m.pass { "passes" } else { "FAILS" },
            w.margin_db
                .filter(|d| d.is_finite())
                .map(|d| format!("{d:+.1} dB"))
                .unwrap_or_else(|| "—".into()),
            w.n,
            si(w.freq_hz, "Hz")
        ),
        (Some(m), None) => format!(
            "levels relative to the carrier; mask {} constrains no harmonic here",
            m.mask
        ),
        (None, _) => "levels relative to the carrier; no mask given".to_string(),
    };
    let title = title_of("Output spectrum against the emission mask", p);
    let desc =
        format!(
        "Bars: level of harmonics 1 to {k_max} in dBc at {}; step line: allowed level of mask {}.",
        si(f0, "Hz"),
        if mask_name.is_empty() { "(none)" } else { &mask_name }
    );
    let width = p.width.max(320);
    let legend_w = 250;
    let height = 520;
    render(width, height, &title, &desc, |cv| {
        let rest = cv.header(&title, &subtitle, 64)?;
        let (plot_area, legend_area) = rest.split_horizontally(width.saturating_sub(legend_w));
        let mut chart = ChartBuilder::on(&plot_area)
            .margin(8)
            .margin_right(16)
            .x_label_area_size(44)
            .y_label_area_size(70)
            .build_cartesian_2d(0.4..(k_max as f64 + 0.6), floor..top)
            .map_err(draw_err)?;
        let fx = |v: &f64| {
            if (v - v.round()).abs() < 1e-6 && *v >= 1.0 {
                format!("{}", v.round() as i64)
            } else {
                String::new()
            }
        };
        let fy = |v: &f64| tick(*v);
        cv.begin("axes", None, None)?;
        chart
            .configure_mesh()
            .x_desc(format!(
                "harmonic number n (frequency n × {})",
                si(f0, "Hz")
            ))
            .y_desc("level (dBc)")
            .x_label_formatter(&fx)
            .y_label_formatter(&fy)
            .x_labels(k_max.min(30) + 1)
            .y_labels(8)
            .disable_x_mesh()
            .label_style((FONT, 13).into_font().color(&INK))
            .axis_desc_style((FONT, 14).into_font().color(&INK))
            .bold_line_style(grid_color())
            .light_line_style(TRANSPARENT)
            .axis_style(INK)
            .draw()
            .map_err(draw_err)?;
        cv.end()?;

        cv.begin("series", Some("measured level"), None)?;
        let mut wanted: Vec<(i32, i32, String)> = Vec::new();
        for &(n, level, _) in &bars {
            let x = n as f64;
            let y = level.clamp(floor, top);
            let fill = if fails(n) { BAR_FAIL } else { BAR_PASS };
            chart
                .draw_series([
                    Rectangle::new([(x - 0.3, floor), (x + 0.3, y)], fill.filled()),
                    Rectangle::new([(x - 0.3, floor), (x + 0.3, y)], INK.stroke_width(1)),
                ])
                .map_err(draw_err)?;
            // the value above the bar; a level below the floor says so in its label
            let text = if level < floor {
                format!("{level:.0} (below)")
            } else {
                format!("{level:.1}")
            };
            let px = chart.backend_coord(&(x, y));
            wanted.push((px.0, px.1 - 4, text));
        }
        for &n in &unresolved {
            let px = chart.backend_coord(&(n as f64, floor));
            wanted.push((px.0, px.1 - 4, "(below floor)".to_string()));
        }
        for (x, bottom, text) in place_labels(&wanted, LABEL_FONT) {
            cv.root
                .draw(&Text::new(
                    text,
                    (x, bottom),
                    (FONT, LABEL_FONT)
                        .into_font()
                        .color(&INK)
                        .pos(Pos::new(HPos::Center, VPos::Bottom)),
                ))
                .map_err(draw_err)?;
        }
        cv.end()?;

        if !rows.is_empty() {
            let ms = series_style(0);
            cv.begin(
                "series mask",
                Some(&format!("mask {mask_name}")),
                Some("8 3"),
            )?;
            // a step line: a level over each constrained harmonic, joined
            // vertically where neighbours are both constrained
            let mut path: Vec<(f64, f64)> = Vec::new();
            let mut segments: Vec<Vec<(f64, f64)>> = Vec::new();
            for n in 1..=k_max {
                match allowed(n) {
                    Some(a) if a.is_finite() => {
                        let a = a.clamp(floor, top);
                        path.push((n as f64 - 0.5, a));
                        path.push((n as f64 + 0.5, a));
                    }
                    _ => {
                        if !path.is_empty() {
                            segments.push(std::mem::take(&mut path));
                        }
                    }
                }
            }
            if !path.is_empty() {
                segments.push(path);
            }
            for s in segments {
                chart
                    .draw_series(std::iter::once(PathElement::new(
                        s,
                        ms.rgb().stroke_width(3),
                    )))
                    .map_err(draw_err)?;
            }
            cv.end()?;
        }

        if let Some(w) = worst {
            if let (Some(a), Some(m)) = (
                w.allowed_dbc.filter(|a| a.is_finite()),
                w.margin_db
                    .filter(|m| m.is_finite() && w.judged_dbc.is_finite()),
            ) {
                let x = w.n as f64 + 0.36;
                let (y0, y1) = (w.judged_dbc.clamp(floor, top), a.clamp(floor, top));
                cv.begin("annotation", Some("worst margin"), None)?;
                chart
                    .draw_series(std::iter::once(PathElement::new(
                        vec![(x, y0), (x, y1)],
                        INK.stroke_width(2),
                    )))
                    .map_err(draw_err)?;
                for y in [y0, y1] {
                    chart
                        .draw_series(std::iter::once(PathElement::new(
                            vec![(x - 0.06, y), (x + 0.06, y)],
                            INK.stroke_width(2),
                        )))
                        .map_err(draw_err)?;
                }
                let px = chart.backend_coord(&(x, y0.max(y1)));
                cv.root
                    .draw(&Text::new(
                        format!("worst margin {}", db(m, "dB")),
                        (px.0 + 4, px.1 - 40),
                        (FONT, 14).into_font().style(FontStyle::Bold).color(&INK),
                    ))
                    .map_err(draw_err)?;
                cv.end()?;
            }
        }

        let mut entries = vec![LegendEntry {
            label: "measured, within mask".into(),
            style: super::canvas::SeriesStyle {
                color: (BAR_PASS.0, BAR_PASS.1, BAR_PASS.2),
                ..series_style(2)
            },
            kind: LegendKind::Box,
        }];
        if rows.iter().any(|r| !r.pass) {
            entries.push(LegendEntry {
                label: "measured, exceeds mask".into(),
                style: super::canvas::SeriesStyle {
                    color: (BAR_FAIL.0, BAR_FAIL.1, BAR_FAIL.2),
                    ..series_style(1)
                },
                kind: LegendKind::Box,
            });
        }
        if !rows.is_empty() {
            let mut ms = series_style(0);
            ms.dash = "8 3";
            entries.push(LegendEntry {
                label: format!("allowed ({mask_name})"),
                style: ms,
                kind: LegendKind::Rule,
            });
        }
        cv.begin("legend", None, None)?;
        cv.legend(&legend_area, 8, 30, &entries)?;
        cv.end()
    })
}

/// Font size of the value labels over the bars, px.
const LABEL_FONT: u32 = 12;

/// A label's box as drawn centred on `x` with its bottom at `bottom`:
/// (left, top, right, bottom) in px, from a generous width per character
/// (0.62 of the font size, wider than the digits and letters of the sans
/// faces SVG viewers pick) and the font size as height.
pub fn label_box(x: i32, bottom: i32, text: &str, font: u32) -> (i32, i32, i32, i32) {
    let w = (text.chars().count() as f64 * 0.62 * font as f64).ceil() as i32;
    (x - w / 2 - 1, bottom - font as i32, x + w / 2 + 1, bottom)
}

/// Place value labels (centre x, bottom y, text) so that no two boxes
/// overlap: each label goes at its wanted place or, if that overlaps a
/// label already placed, is lifted a line at a time (up to four lines);
/// a label that still does not fit is left out (the value stays in the
/// harmonics table).
pub fn place_labels(wanted: &[(i32, i32, String)], font: u32) -> Vec<(i32, i32, String)> {
    let overlaps = |a: (i32, i32, i32, i32), b: (i32, i32, i32, i32)| {
        a.0 < b.2 && b.0 < a.2 && a.1 < b.3 && b.1 < a.3
    };
    let mut placed: Vec<(i32, i32, String)> = Vec::new();
    let mut boxes: Vec<(i32, i32, i32, i32)> = Vec::new();
    for (x, bottom, text) in wanted {
        let step = font as i32 + 2;
        let spot = (0..5).map(|k| bottom - k * step).find(|&b| {
            let bx = label_box(*x, b, text, font);
            !boxes.iter().any(|o| overlaps(*o, bx))
        });
        if let Some(b) = spot {
            boxes.push(label_box(*x, b, text, font));
            placed.push((*x, b, text.clone()));
        }
    }
    placed
}
