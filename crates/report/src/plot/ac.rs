//! AC magnitude (dB) and phase (degrees) against frequency, on a log
//! frequency axis when the sweep is logarithmic.

use std::ops::Range;

use plotters::coord::ranged1d::{AsRangedCoord, ValueFormatter};
use plotters::prelude::*;
use tankwave_circuit::Scale;
use tankwave_solve::AcResult;

use super::canvas::{
    axis_desc, draw_err, draw_marker, extent, grid_color, marker_indices, padded, prefix_for,
    render, tick, usable, Area, Canvas, LegendEntry, LegendKind, SeriesStyle, FONT, INK,
};
use super::{check_finite, series_style, title_of, PlotError, PlotParams};
use crate::format::si;

struct AcSeries {
    label: String,
    style: SeriesStyle,
    points: Vec<(f64, f64)>,
}

#[allow(clippy::too_many_arguments)]
fn ac_panel<X>(
    cv: &Canvas<'_>,
    area: &Area<'_>,
    xr: X,
    y: Range<f64>,
    x_desc: &str,
    y_desc: &str,
    y_labels: usize,
    series: &[AcSeries],
) -> Result<(), PlotError>
where
    X: AsRangedCoord<Value = f64>,
    X::CoordDescType: ValueFormatter<f64>,
{
    usable("magnitude or phase axis", &y)?;
    let mut chart = ChartBuilder::on(area)
        .margin(8)
        .margin_right(20)
        .x_label_area_size(if x_desc.is_empty() { 24 } else { 44 })
        .y_label_area_size(70)
        .build_cartesian_2d(xr, y)
        .map_err(draw_err)?;
    let fx = |v: &f64| tick(*v);
    let fy = |v: &f64| tick(*v);
    cv.begin("axes", None, None)?;
    chart
        .configure_mesh()
        .x_desc(x_desc)
        .y_desc(y_desc)
        .x_label_formatter(&fx)
        .y_label_formatter(&fy)
        .y_labels(y_labels)
        .label_style((FONT, 13).into_font().color(&INK))
        .axis_desc_style((FONT, 14).into_font().color(&INK))
        .bold_line_style(grid_color())
        .light_line_style(TRANSPARENT)
        .axis_style(INK)
        .draw()
        .map_err(draw_err)?;
    cv.end()?;
    for (k, s) in series.iter().enumerate() {
        let dash = if s.style.dash == "none" {
            None
        } else {
            Some(s.style.dash)
        };
        cv.begin("series", Some(&s.label), dash)?;
        chart
            .draw_series(LineSeries::new(s.points.iter().copied(), s.style.stroke()))
            .map_err(draw_err)?;
        cv.begin("marker", None, Some("none"))?;
        let idx = marker_indices(s.points.len(), 8, (k as f64 * 0.37).fract());
        for q in idx.into_iter().filter_map(|i| s.points.get(i)) {
            draw_marker(&cv.root, chart.backend_coord(q), s.style)?;
        }
        cv.end()?;
        cv.end()?;
    }
    Ok(())
}

/// Magnitude (dB, 20·log10 of the response to the unit excitation) and
/// phase (degrees) of the unknowns `unknowns` (indices into `ac.names`),
/// one series each, against frequency; the frequency axis is logarithmic
/// when `scale` is [`Scale::Log`].
pub fn ac_plot(
    ac: &AcResult,
    unknowns: &[usize],
    scale: Scale,
    p: &PlotParams,
) -> Result<String, PlotError> {
    if ac.freq.is_empty() || ac.x.is_empty() {
        return Err(PlotError::Empty {
            what: "AC sweep".into(),
        });
    }
    if unknowns.is_empty() {
        return Err(PlotError::Empty {
            what: "AC plot: no unknown chosen".into(),
        });
    }
    if ac.x.len() != ac.freq.len() {
        return Err(PlotError::Shape {
            what: "AC sweep points".into(),
            expected: ac.freq.len(),
            found: ac.x.len(),
        });
    }
    check_finite("AC frequencies", &ac.freq)?;
    let log = scale == Scale::Log;
    if log {
        if let Some(i) = ac.freq.iter().position(|f| *f <= 0.0) {
            return Err(PlotError::NotPositive {
                what: "AC frequencies".into(),
                index: i,
                value: ac.freq[i],
            });
        }
    }
    let (f_lo, f_hi) = extent(&ac.freq).unwrap_or((1.0, 2.0));
    let (ff, fp) = prefix_for(f_hi.abs(), "Hz");
    let xs: Vec<f64> = ac.freq.iter().map(|f| f / ff).collect();
    let mut mags = Vec::new();
    let mut phases = Vec::new();
    for (k, &u) in unknowns.iter().enumerate() {
        let name = ac.names.get(u).ok_or(PlotError::Shape {
            what: "AC unknown index".into(),
            expected: u + 1,
            found: ac.names.len(),
        })?;
        let m = ac.magnitude_db(u);
        let ph = ac.phase_deg(u);
        check_finite(&format!("magnitude of {name}"), &m)?;
        check_finite(&format!("phase of {name}"), &ph)?;
        let style = series_style(k);
        mags.push(AcSeries {
            label: name.clone(),
            style,
            points: xs.iter().copied().zip(m).collect(),
        });
        phases.push(AcSeries {
            label: name.clone(),
            style,
            points: xs.iter().copied().zip(ph).collect(),
        });
    }
    let (m_lo, m_hi) =
        extent(mags.iter().flat_map(|s| s.points.iter().map(|q| &q.1))).unwrap_or((-1.0, 1.0));
    let x_range = if f_hi > f_lo {
        f_lo / ff..f_hi / ff
    } else {
        let r = padded(f_lo / ff, f_hi / ff, 0.1);
        if log {
            (f_lo / ff * 0.9)..(f_hi / ff * 1.1)
        } else {
            r
        }
    };
    usable("frequency axis", &x_range)?;
    let title = title_of("AC response: magnitude and phase", p);
    let subtitle = format!(
        "{} points from {} to {}, {} frequency axis; response to a unit excitation",
        ac.freq.len(),
        si(f_lo, "Hz"),
        si(f_hi, "Hz"),
        if log { "logarithmic" } else { "linear" }
    );
    let desc = format!(
        "Magnitude in dB and phase in degrees of {}.",
        mags.iter()
            .map(|s| s.label.as_str())
            .collect::<Vec<_>>()
            .join(", ")
    );
    let width = p.width.max(320);
    let legend_w = 200;
    render(width, 700, &title, &desc, |cv| {
        let rest = cv.header(&title, &subtitle, 64)?;
        let (plots, legend_area) = rest.split_horizontally(width.saturating_sub(legend_w));
        let halves = plots.split_evenly((2, 1));
        let x_desc = axis_desc("frequency", fp, "Hz");
        let mag_y = padded(m_lo, m_hi, 0.08);
        let ph_y = -180.0..180.0;
        if let (Some(top), Some(bottom)) = (halves.first(), halves.get(1)) {
            if log {
                ac_panel(
                    cv,
                    top,
                    x_range.clone().log_scale(),
                    mag_y,
                    "",
                    "magnitude (dB)",
                    6,
                    &mags,
                )?;
                ac_panel(
                    cv,
                    bottom,
                    x_range.clone().log_scale(),
                    ph_y,
                    &x_desc,
                    "phase (deg)",
                    9,
                    &phases,
                )?;
            } else {
                ac_panel(
                    cv,
                    top,
                    x_range.clone(),
                    mag_y,
                    "",
                    "magnitude (dB)",
                    6,
                    &mags,
                )?;
                ac_panel(
                    cv,
                    bottom,
                    x_range.clone(),
                    ph_y,
                    &x_desc,
                    "phase (deg)",
                    9,
                    &phases,
                )?;
            }
        }
        let entries: Vec<LegendEntry> = mags
            .iter()
            .map(|s| LegendEntry {
                label: s.label.clone(),
                style: s.style,
                kind: LegendKind::Line,
            })
            .collect();
        cv.begin("legend", None, None)?;
        cv.legend(&legend_area, 8, 30, &entries)?;
        cv.end()
    })
}
