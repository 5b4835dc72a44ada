//! Plots of a study from plain data: sweep curves (a figure against one
//! parameter, one curve per value of a second) and the Monte Carlo
//! histogram of a figure with its requirement limit.

use plotters::prelude::*;

use super::canvas::{
    axis_desc, draw_err, draw_panel, extent, grid_color, padded, prefix_for, render, tick, usable,
    LegendEntry, LegendKind, Line, Panel, BAR_FAIL, BAR_PASS, FONT, INK,
};
use super::{check_finite, series_style, title_of, PlotError, PlotParams};
use crate::format::{fixed, si};

/// One curve: y against x, with a legend label.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Curve {
    /// Legend label, e.g. "C2 = 470 pF".
    pub label: String,
    /// x values (drawn in the given order).
    pub x: Vec<f64>,
    /// y values, one per x.
    pub y: Vec<f64>,
}

/// Sweep curves: a figure against a parameter, one [`Curve`] per value of a
/// second parameter.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct SweepCurves {
    /// What is shown, e.g. "Output power against C1".
    pub title: String,
    /// Name of the swept parameter (x axis).
    pub x_name: String,
    /// Its unit ("F", "H", "V", … take SI prefixes; "" for none).
    pub x_unit: String,
    /// Name of the figure (y axis).
    pub y_name: String,
    /// Its unit.
    pub y_unit: String,
    /// The curves.
    pub curves: Vec<Curve>,
    /// A requirement limit on the figure, drawn as a horizontal line: (value, label).
    pub limit: Option<(f64, String)>,
}

impl SweepCurves {
    /// Group points (x, group value, y) into one curve per group value
    /// (ascending), each sorted by x; the curve label is
    /// "`group_name` = value `group_unit`" in SI notation. Points with a
    /// non-finite coordinate are dropped.
    pub fn group(points: &[(f64, f64, f64)], group_name: &str, group_unit: &str) -> Vec<Curve> {
        let mut pts: Vec<(f64, f64, f64)> = points
            .iter()
            .copied()
            .filter(|p| p.0.is_finite() && p.1.is_finite() && p.2.is_finite())
            .collect();
        pts.sort_by(|a, b| a.1.total_cmp(&b.1).then(a.0.total_cmp(&b.0)));
        let mut out: Vec<Curve> = Vec::new();
        let mut current: Option<f64> = None;
        for (x, g, y) in pts {
            let same = current.is_some_and(|c| (c - g).abs() <= 1e-12 * c.abs().max(g.abs()));
            if !same {
                current = Some(g);
                let value = if group_unit.is_empty() {
                    tick(g)
                } else {
                    si(g, group_unit)
                };
                out.push(Curve {
                    label: format!("{group_name} = {value}"),
                    x: Vec::new(),
                    y: Vec::new(),
                });
            }
            if let Some(c) = out.last_mut() {
                c.x.push(x);
                c.y.push(y);
            }
        }
        out
    }
}

/// The figure against the swept parameter, one curve per value of the
/// second parameter (palette order), with the requirement limit if given.
pub fn sweep_plot(s: &SweepCurves, p: &PlotParams) -> Result<String, PlotError> {
    if s.curves.iter().all(|c| c.x.is_empty()) {
        return Err(PlotError::Empty {
            what: format!("sweep curves of {}", s.y_name),
        });
    }
    for c in &s.curves {
        if c.x.len() != c.y.len() {
            return Err(PlotError::Shape {
                what: format!("y values of curve {}", c.label),
                expected: c.x.len(),
                found: c.y.len(),
            });
        }
        check_finite(&format!("x values of curve {}", c.label), &c.x)?;
        check_finite(&format!("y values of curve {}", c.label), &c.y)?;
    }
    let (x_lo, x_hi) = extent(s.curves.iter().flat_map(|c| c.x.iter())).unwrap_or((0.0, 1.0));
    let limit_v = s.limit.as_ref().map(|l| l.0).filter(|v| v.is_finite());
    let (y_lo, y_hi) = extent(
        s.curves
            .iter()
            .flat_map(|c| c.y.iter())
            .chain(limit_v.iter()),
    )
    .unwrap_or((0.0, 1.0));
    let (xf, xp) = prefix_for(x_lo.abs().max(x_hi.abs()), &s.x_unit);
    let (yf, yp) = prefix_for(y_lo.abs().max(y_hi.abs()), &s.y_unit);
    let pts: Vec<Vec<(f64, f64)>> = s
        .curves
        .iter()
        .map(|c| {
            c.x.iter()
                .zip(&c.y)
                .map(|(x, y)| (x / xf, y / yf))
                .collect()
        })
        .collect();
    let title = title_of(&s.title, p);
    let subtitle = format!(
        "{} against {}, {} curve{}{}",
        s.y_name,
        s.x_name,
        s.curves.len(),
        if s.curves.len() == 1 { "" } else { "s" },
        match &s.limit {
            Some((_, l)) => format!("; dashed line: {l}"),
            None => String::new(),
        }
    );
    let desc = format!(
        "Curves: {}.",
        s.curves
            .iter()
            .map(|c| c.label.as_str())
            .collect::<Vec<_>>()
            .join("; ")
    );
    let width = p.width.max(320);
    let legend_w = 240;
    render(width, 540, &title, &desc, |cv| {
        let rest = cv.header(&title, &subtitle, 64)?;
        let (plot_area, legend_area) = rest.split_horizontally(width.saturating_sub(legend_w));
        let mut panel = Panel::new(
            padded(x_lo / xf, x_hi / xf, 0.03),
            padded(y_lo / yf, y_hi / yf, 0.08),
            axis_desc(&s.x_name, xp, &s.x_unit),
            axis_desc(&s.y_name, yp, &s.y_unit),
        );
        for (k, (c, q)) in s.curves.iter().zip(&pts).enumerate() {
            panel.lines.push(Line {
                label: c.label.clone(),
                style: series_style(k),
                points: q,
                markers: 8,
            });
        }
        if let Some((v, l)) = &s.limit {
            if v.is_finite() {
                panel.hlines.push((v / yf, l.clone()));
            }
        }
        draw_panel(cv, &plot_area, &panel)?;
        let mut entries: Vec<LegendEntry> = s
            .curves
            .iter()
            .enumerate()
            .map(|(k, c)| LegendEntry {
                label: c.label.clone(),
                style: series_style(k),
                kind: LegendKind::Line,
            })
            .collect();
        if let Some((_, l)) = &s.limit {
            let mut st = series_style(0);
            st.color = (INK.0, INK.1, INK.2);
            st.dash = "6 4";
            entries.push(LegendEntry {
                label: l.clone(),
                style: st,
                kind: LegendKind::Rule,
            });
        }
        cv.begin("legend", None, None)?;
        cv.legend(&legend_area, 8, 30, &entries)?;
        cv.end()
    })
}

/// A requirement limit on a histogram's figure.
#[derive(Debug, Clone, PartialEq)]
pub struct Limit {
    /// The limit value, in the figure's unit.
    pub value: f64,
    /// Label, e.g. "pout >= 20 W".
    pub label: String,
    /// true if values above the limit pass (`>=`, `>`), false if below pass.
    pub pass_above: bool,
}

/// What a histogram shows.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct HistogramSpec {
    /// What is shown, e.g. "Output power over 1000 Monte Carlo variants".
    pub title: String,
    /// Name of the figure (x axis).
    pub name: String,
    /// Its unit.
    pub unit: String,
    /// The requirement limit, drawn as a vertical line.
    pub limit: Option<Limit>,
    /// Number of bins; `None` chooses by the Freedman–Diaconis rule
    /// (bin width 2·IQR·n^(−1/3); Freedman & Diaconis 1981, from memory),
    /// falling back to Sturges' ⌈log2 n⌉ + 1 when the IQR is zero, kept in 5..=60.
    pub bins: Option<usize>,
}

fn choose_bins(sorted: &[f64]) -> usize {
    let n = sorted.len();
    let sturges = ((n as f64).log2().ceil() as usize + 1).clamp(5, 60);
    if n < 4 {
        return 5;
    }
    let q = |p: f64| {
        let pos = p * (n - 1) as f64;
        let i = pos.floor() as usize;
        let f = pos - i as f64;
        let a = sorted[i.min(n - 1)];
        let b = sorted[(i + 1).min(n - 1)];
        a + f * (b - a)
    };
    let iqr = q(0.75) - q(0.25);
    let span = sorted[n - 1] - sorted[0];
    if iqr.is_nan() || iqr <= 0.0 || span.is_nan() || span <= 0.0 {
        return sturges;
    }
    let h = 2.0 * iqr / (n as f64).cbrt();
    ((span / h).ceil() as usize).clamp(5, 60)
}

/// Histogram of `values` (non-finite values are left out and counted in the
/// subtitle) with the requirement limit as a vertical line and the bars on
/// the failing side of it filled darker.
pub fn histogram_plot(
    values: &[f64],
    spec: &HistogramSpec,
    p: &PlotParams,
) -> Result<String, PlotError> {
    let mut v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
    let dropped = values.len() - v.len();
    if v.is_empty() {
        return Err(PlotError::Empty {
            what: format!("histogram of {}", spec.name),
        });
    }
    v.sort_by(f64::total_cmp);
    let n = v.len();
    let bins = match spec.bins {
        Some(0) => {
            return Err(PlotError::BadParameter {
                what: "histogram bins".into(),
                why: "zero bins".into(),
            })
        }
        Some(b) => b.min(1000),
        None => choose_bins(&v),
    };
    let limit = spec.limit.as_ref().filter(|l| l.value.is_finite());
    let (lo, hi) = (v[0], v[n - 1]);
    let r = padded(lo, hi, 0.0);
    let (lo, hi) = if hi > lo { (lo, hi) } else { (r.start, r.end) };
    let w = (hi - lo) / bins as f64;
    let mut counts = vec![0usize; bins];
    for x in &v {
        let k = (((x - lo) / w).floor() as usize).min(bins - 1);
        counts[k] += 1;
    }
    let fails = |x: f64| match limit {
        Some(l) if l.pass_above => x < l.value,
        Some(l) => x > l.value,
        None => false,
    };
    let failing = v.iter().filter(|x| fails(**x)).count();
    let span_lo = limit.map_or(lo, |l| l.value.min(lo));
    let span_hi = limit.map_or(hi, |l| l.value.max(hi));
    let (xf, xp) = prefix_for(span_lo.abs().max(span_hi.abs()), &spec.unit);
    let cmax = counts.iter().copied().max().unwrap_or(1).max(1);
    let title = title_of(&spec.title, p);
    let subtitle = format!(
        "{n} values in {bins} bins{}{}",
        match limit {
            Some(l) => format!(
                "; {} of them ({}) fail {}",
                failing,
                fixed(failing as f64 * 100.0 / n as f64, 1, "%"),
                l.label
            ),
            None => String::new(),
        },
        if dropped > 0 {
            format!("; {dropped} not measured")
        } else {
            String::new()
        }
    );
    let desc = format!(
        "Histogram of {} with the requirement limit marked.",
        spec.name
    );
    let width = p.width.max(320);
    let legend_w = 240;
    render(width, 520, &title, &desc, |cv| {
        let rest = cv.header(&title, &subtitle, 64)?;
        let (plot_area, legend_area) = rest.split_horizontally(width.saturating_sub(legend_w));
        let xr = padded(span_lo / xf, span_hi / xf, 0.04);
        usable("histogram axis", &xr)?;
        let mut chart = ChartBuilder::on(&plot_area)
            .margin(8)
            .margin_right(20)
            .x_label_area_size(44)
            .y_label_area_size(60)
            .build_cartesian_2d(xr, 0.0..(cmax as f64 * 1.12))
            .map_err(draw_err)?;
        let fx = |x: &f64| tick(*x);
        let fy = |x: &f64| {
            if (x - x.round()).abs() < 1e-9 {
                format!("{}", x.round() as i64)
            } else {
                String::new()
            }
        };
        cv.begin("axes", None, None)?;
        chart
            .configure_mesh()
            .x_desc(axis_desc(&spec.name, xp, &spec.unit))
            .y_desc("variants per bin")
            .x_label_formatter(&fx)
            .y_label_formatter(&fy)
            .label_style((FONT, 13).into_font().color(&INK))
            .axis_desc_style((FONT, 14).into_font().color(&INK))
            .bold_line_style(grid_color())
            .light_line_style(TRANSPARENT)
            .disable_x_mesh()
            .axis_style(INK)
            .draw()
            .map_err(draw_err)?;
        cv.end()?;
        cv.begin("series", Some(&spec.name), None)?;
        for (k, &c) in counts.iter().enumerate() {
            if c == 0 {
                continue;
            }
            let a = lo + k as f64 * w;
            let b = a + w;
            let mid = (a + b) / 2.0;
            let fill = if fails(mid) { BAR_FAIL } else { BAR_PASS };
            chart
                .draw_series([
                    Rectangle::new([(a / xf, 0.0), (b / xf, c as f64)], fill.filled()),
                    Rectangle::new([(a / xf, 0.0), (b / xf, c as f64)], INK.stroke_width(1)),
                ])
                .map_err(draw_err)?;
        }
        cv.end()?;
        if let Some(l) = limit {
            cv.begin("reference", Some(&l.label), Some("6 4"))?;
            let x = l.value / xf;
            chart
                .draw_series(std::iter::once(PathElement::new(
                    vec![(x, 0.0), (x, cmax as f64 * 1.12)],
                    INK.stroke_width(3),
                )))
                .map_err(draw_err)?;
            let px = chart.backend_coord(&(x, cmax as f64 * 1.1));
            cv.root
                .draw(&Text::new(
                    format!("limit {}", limit_text(l.value, &spec.unit)),
                    (px.0 + 6, px.1),
                    (FONT, 13).into_font().style(FontStyle::Bold).color(&INK),
                ))
                .map_err(draw_err)?;
            cv.end()?;
        }
        let mut entries = vec![LegendEntry {
            label: if limit.is_some() {
                "variants per bin (passing)".into()
            } else {
                "variants per bin".into()
            },
            style: super::canvas::SeriesStyle {
                color: (BAR_PASS.0, BAR_PASS.1, BAR_PASS.2),
                ..series_style(2)
            },
            kind: LegendKind::Box,
        }];
        if let Some(l) = limit {
            entries.push(LegendEntry {
                label: "variants per bin (failing)".into(),
                style: super::canvas::SeriesStyle {
                    color: (BAR_FAIL.0, BAR_FAIL.1, BAR_FAIL.2),
                    ..series_style(1)
                },
                kind: LegendKind::Box,
            });
            let mut st = series_style(0);
            st.color = (INK.0, INK.1, INK.2);
            st.dash = "6 4";
            entries.push(LegendEntry {
                label: l.label.clone(),
                style: st,
                kind: LegendKind::Rule,
            });
        }
        cv.begin("legend", None, None)?;
        cv.legend(&legend_area, 8, 30, &entries)?;
        cv.end()
    })
}

/// A limit value for its label: with an SI prefix when the figure has a
/// unit; a ratio such as an efficiency plainly, trailing zeros dropped
/// ("0.55", not "0.550").
fn limit_text(v: f64, unit: &str) -> String {
    if unit == "%" {
        // a percentage reads plainly, without trailing zeros: "60 %"
        return format!("{} %", limit_text(v, ""));
    }
    let t = si(v, unit);
    if unit.is_empty() && t.contains('.') && !t.contains('e') {
        t.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        t
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ratio_limits_read_plainly_and_unit_limits_keep_prefixes() {
        assert_eq!(limit_text(0.55, ""), "0.55");
        assert_eq!(limit_text(1234.6, ""), "1235");
        assert_eq!(limit_text(0.000123, ""), "0.000123");
        assert_eq!(limit_text(12.0, "W"), si(12.0, "W"));
        assert_eq!(limit_text(60.0, "%"), "60 %");
    }
}
