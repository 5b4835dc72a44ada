//! The tuning objective around the optimum: a heat map over two parameters
//! (a sequential ramp whose lightness falls monotonically, so it reads in
//! grey) with the optimum marked, or a line over one parameter.

use plotters::prelude::*;

use super::canvas::{
    axis_desc, draw_err, draw_marker, draw_panel, extent, padded, prefix_for, render, tick, usable,
    Line, Panel, FONT, INK,
};
use super::{check_finite, series_style, title_of, PlotError, PlotParams};

/// The objective sampled on a grid of two parameters.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Surface {
    /// What is shown, e.g. "Efficiency around the tuned point".
    pub title: String,
    /// First parameter (x axis) name and unit.
    pub x_name: String,
    /// Unit of the first parameter.
    pub x_unit: String,
    /// Second parameter (y axis) name.
    pub y_name: String,
    /// Unit of the second parameter.
    pub y_unit: String,
    /// Objective name (colour scale).
    pub z_name: String,
    /// Unit of the objective.
    pub z_unit: String,
    /// Grid values of the first parameter, increasing.
    pub xs: Vec<f64>,
    /// Grid values of the second parameter, increasing.
    pub ys: Vec<f64>,
    /// `values[iy][ix]`: the objective at (`xs[ix]`, `ys[iy]`). NaN marks a
    /// point with no value (e.g. the solver failed there): its cell is left
    /// blank with a grey diagonal and counted in the subtitle. Infinities
    /// are errors, and at least one value must be a number.
    pub values: Vec<Vec<f64>>,
    /// The optimum (x, y), marked with a cross and a ring.
    pub optimum: Option<(f64, f64)>,
}

/// Sequential ramp, light to dark: cream → teal → ink (L* falls monotonically).
const RAMP: [(f64, (u8, u8, u8)); 3] = [
    (0.0, (0xf6, 0xf1, 0xdc)),
    (0.5, (0x4f, 0x9a, 0x94)),
    (1.0, (0x14, 0x21, 0x3d)),
];

fn ramp(t: f64) -> RGBColor {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let (a, b) = if t <= RAMP[1].0 {
        (RAMP[0], RAMP[1])
    } else {
        (RAMP[1], RAMP[2])
    };
    let f = (t - a.0) / (b.0 - a.0);
    let mix = |x: u8, y: u8| {
        (x as f64 + f * (y as f64 - x as f64))
            .round()
            .clamp(0.0, 255.0) as u8
    };
    RGBColor(
        mix(a.1 .0, b.1 .0),
        mix(a.1 .1, b.1 .1),
        mix(a.1 .2, b.1 .2),
    )
}

/// Cell edges: midpoints between grid values, extended by half a step at the ends.
fn edges(g: &[f64]) -> Vec<f64> {
    let n = g.len();
    if n == 1 {
        let d = if g[0].abs() > 0.0 {
            g[0].abs() * 0.05
        } else {
            0.5
        };
        return vec![g[0] - d, g[0] + d];
    }
    let mut e = Vec::with_capacity(n + 1);
    e.push(g[0] - (g[1] - g[0]) / 2.0);
    for k in 0..n - 1 {
        e.push((g[k] + g[k + 1]) / 2.0);
    }
    e.push(g[n - 1] + (g[n - 1] - g[n - 2]) / 2.0);
    e
}

fn increasing(what: &str, g: &[f64]) -> Result<(), PlotError> {
    check_finite(what, g)?;
    if let Some(k) = g.windows(2).position(|w| w[1] <= w[0]) {
        return Err(PlotError::BadParameter {
            what: what.to_string(),
            why: format!(
                "values must increase; {} follows {} at index {}",
                g[k + 1],
                g[k],
                k + 1
            ),
        });
    }
    Ok(())
}

/// Line segments of the level-`level` contour of `values[iy][ix]` on the
/// grid (xs, ys) by marching squares with linear interpolation along cell
/// edges (saddle cells are split by the cell-centre average).
pub(crate) fn contour_segments(
    xs: &[f64],
    ys: &[f64],
    values: &[Vec<f64>],
    level: f64,
) -> Vec<((f64, f64), (f64, f64))> {
    let mut out = Vec::new();
    let z = |ix: usize, iy: usize| {
        values
            .get(iy)
            .and_then(|r| r.get(ix))
            .copied()
            .unwrap_or(f64::NAN)
    };
    for iy in 0..ys.len().saturating_sub(1) {
        for ix in 0..xs.len().saturating_sub(1) {
            // corners counter-clockwise: (x0,y0), (x1,y0), (x1,y1), (x0,y1)
            let c = [
                (xs[ix], ys[iy], z(ix, iy)),
                (xs[ix + 1], ys[iy], z(ix + 1, iy)),
                (xs[ix + 1], ys[iy + 1], z(ix + 1, iy + 1)),
                (xs[ix], ys[iy + 1], z(ix, iy + 1)),
            ];
            if c.iter().any(|p| !p.2.is_finite()) {
                continue;
            }
            // crossing points on the four edges
            let mut pts: Vec<(usize, (f64, f64))> = Vec::new();
            for e in 0..4 {
                let (a, b) = (c[e], c[(e + 1) % 4]);
                if (a.2 >= level) != (b.2 >= level) {
                    let t = (level - a.2) / (b.2 - a.2);
                    pts.push((e, (a.0 + t * (b.0 - a.0), a.1 + t * (b.1 - a.1))));
                }
            }
            match pts.len() {
                2 => out.push((pts[0].1, pts[1].1)),
                4 => {
                    let centre = (c[0].2 + c[1].2 + c[2].2 + c[3].2) / 4.0;
                    // corner 0 above and centre above: corner 0's region joins the centre
                    if (c[0].2 >= level) == (centre >= level) {
                        out.push((pts[0].1, pts[1].1));
                        out.push((pts[2].1, pts[3].1));
                    } else {
                        out.push((pts[3].1, pts[0].1));
                        out.push((pts[1].1, pts[2].1));
                    }
                }
                _ => {}
            }
        }
    }
    out
}

/// Heat map of the objective over two parameters with contour lines at
/// 20, 40, 60 and 80 % of its range (also marked on the colour bar), a
/// colour bar and the optimum marked.
pub fn surface_plot(s: &Surface, p: &PlotParams) -> Result<String, PlotError> {
    if s.xs.is_empty() || s.ys.is_empty() {
        return Err(PlotError::Empty {
            what: format!("tuning surface of {}", s.z_name),
        });
    }
    increasing(&format!("grid of {}", s.x_name), &s.xs)?;
    increasing(&format!("grid of {}", s.y_name), &s.ys)?;
    if s.values.len() != s.ys.len() {
        return Err(PlotError::Shape {
            what: "rows of the tuning surface".into(),
            expected: s.ys.len(),
            found: s.values.len(),
        });
    }
    for (iy, row) in s.values.iter().enumerate() {
        if row.len() != s.xs.len() {
            return Err(PlotError::Shape {
                what: format!("row {iy} of the tuning surface"),
                expected: s.xs.len(),
                found: row.len(),
            });
        }
        // NaN is a missing point; everything else must be drawable
        let present: Vec<f64> = row
            .iter()
            .map(|z| if z.is_nan() { 0.0 } else { *z })
            .collect();
        check_finite(&format!("row {iy} of the tuning surface"), &present)?;
    }
    let missing = s.values.iter().flatten().filter(|z| z.is_nan()).count();
    if missing == s.xs.len() * s.ys.len() {
        return Err(PlotError::Empty {
            what: format!("tuning surface of {} (no point has a value)", s.z_name),
        });
    }
    let (z_lo, z_hi) = extent(s.values.iter().flatten()).unwrap_or((0.0, 1.0));
    let z_span = if z_hi > z_lo { z_hi - z_lo } else { 1.0 };
    let ex = edges(&s.xs);
    let ey = edges(&s.ys);
    usable(&format!("axis of {}", s.x_name), &(ex[0]..ex[ex.len() - 1]))?;
    usable(&format!("axis of {}", s.y_name), &(ey[0]..ey[ey.len() - 1]))?;
    let (xf, xp) = prefix_for(ex[0].abs().max(ex[ex.len() - 1].abs()), &s.x_unit);
    let (yf, yp) = prefix_for(ey[0].abs().max(ey[ey.len() - 1].abs()), &s.y_unit);
    let (zf, zp) = prefix_for(z_lo.abs().max(z_hi.abs()), &s.z_unit);
    let title = title_of(&s.title, p);
    let opt_text = s.optimum.map(|(x, y)| {
        format!(
            "optimum at {} = {}{}, {} = {}{}",
            s.x_name,
            tick(x / xf),
            if s.x_unit.is_empty() {
                String::new()
            } else {
                format!(" {xp}{}", s.x_unit)
            },
            s.y_name,
            tick(y / yf),
            if s.y_unit.is_empty() {
                String::new()
            } else {
                format!(" {yp}{}", s.y_unit)
            },
        )
    });
    let subtitle = format!(
        "{} over a {}×{} grid, darker = larger{}{}",
        s.z_name,
        s.xs.len(),
        s.ys.len(),
        opt_text
            .as_ref()
            .map(|t| format!("; {t}"))
            .unwrap_or_default(),
        if missing > 0 {
            format!("; {missing} blank cells have no value")
        } else {
            String::new()
        }
    );
    let desc = format!(
        "Heat map of {} against {} and {}.",
        s.z_name, s.x_name, s.y_name
    );
    let width = p.width.max(320);
    let bar_w = 150;
    render(width, 600, &title, &desc, |cv| {
        let rest = cv.header(&title, &subtitle, 64)?;
        let (plot_area, bar_area) = rest.split_horizontally(width.saturating_sub(bar_w));
        let mut chart = ChartBuilder::on(&plot_area)
            .margin(8)
            .margin_right(20)
            .x_label_area_size(44)
            .y_label_area_size(70)
            .build_cartesian_2d(
                ex[0] / xf..ex[ex.len() - 1] / xf,
                ey[0] / yf..ey[ey.len() - 1] / yf,
            )
            .map_err(draw_err)?;
        cv.begin("series heat", Some(&s.z_name), None)?;
        let mut cells = Vec::with_capacity(s.xs.len() * s.ys.len());
        let mut blanks = Vec::with_capacity(missing);
        for (iy, row) in s.values.iter().enumerate() {
            for (ix, z) in row.iter().enumerate() {
                if z.is_nan() {
                    blanks.push((
                        (ex[ix] / xf, ey[iy] / yf),
                        (ex[ix + 1] / xf, ey[iy + 1] / yf),
                    ));
                    continue;
                }
                let c = ramp((z - z_lo) / z_span);
                cells.push(Rectangle::new(
                    [
                        (ex[ix] / xf, ey[iy] / yf),
                        (ex[ix + 1] / xf, ey[iy + 1] / yf),
                    ],
                    c.filled(),
                ));
            }
        }
        chart.draw_series(cells).map_err(draw_err)?;
        cv.end()?;
        if !blanks.is_empty() {
            cv.begin("missing", Some("no value"), None)?;
            let grey = RGBColor(0x7a, 0x7a, 0x7a);
            chart
                .draw_series(
                    blanks
                        .iter()
                        .map(|&(a, b)| Rectangle::new([a, b], grey.stroke_width(1))),
                )
                .map_err(draw_err)?;
            chart
                .draw_series(
                    blanks
                        .iter()
                        .map(|&(a, b)| PathElement::new(vec![a, b], grey.stroke_width(1))),
                )
                .map_err(draw_err)?;
            cv.end()?;
        }
        let fx = |v: &f64| tick(*v);
        cv.begin("axes", None, None)?;
        chart
            .configure_mesh()
            .x_desc(axis_desc(&s.x_name, xp, &s.x_unit))
            .y_desc(axis_desc(&s.y_name, yp, &s.y_unit))
            .x_label_formatter(&fx)
            .y_label_formatter(&fx)
            .label_style((FONT, 13).into_font().color(&INK))
            .axis_desc_style((FONT, 14).into_font().color(&INK))
            .disable_mesh()
            .axis_style(INK)
            .draw()
            .map_err(draw_err)?;
        cv.end()?;
        let levels: Vec<f64> = (1..=4)
            .map(|k| z_lo + k as f64 / 5.0 * (z_hi - z_lo))
            .collect();
        if z_hi > z_lo && s.xs.len() > 1 && s.ys.len() > 1 {
            cv.begin("contours", Some("contour lines"), None)?;
            for &lv in &levels {
                let segs = contour_segments(&s.xs, &s.ys, &s.values, lv);
                let scaled: Vec<Vec<(f64, f64)>> = segs
                    .iter()
                    .map(|(a, b)| vec![(a.0 / xf, a.1 / yf), (b.0 / xf, b.1 / yf)])
                    .collect();
                // a white casing under an ink line: visible on light and dark cells
                chart
                    .draw_series(
                        scaled
                            .iter()
                            .map(|p| PathElement::new(p.clone(), WHITE.stroke_width(3))),
                    )
                    .map_err(draw_err)?;
                chart
                    .draw_series(
                        scaled
                            .iter()
                            .map(|p| PathElement::new(p.clone(), INK.stroke_width(1))),
                    )
                    .map_err(draw_err)?;
            }
            cv.end()?;
        }
        if let Some((ox, oy)) = s.optimum {
            let inside = (ex[0]..=ex[ex.len() - 1]).contains(&ox)
                && (ey[0]..=ey[ey.len() - 1]).contains(&oy);
            if inside {
                cv.begin("optimum", Some("optimum"), None)?;
                let c = (ox / xf, oy / yf);
                // white halo then ink marks, visible on light and dark cells
                chart
                    .draw_series([
                        EmptyElement::at(c) + Circle::new((0, 0), 11, WHITE.stroke_width(5)),
                        EmptyElement::at(c) + Circle::new((0, 0), 11, INK.stroke_width(2)),
                    ])
                    .map_err(draw_err)?;
                let mut cross = series_style(3);
                cross.color = (0xff, 0xff, 0xff);
                let px = chart.backend_coord(&c);
                draw_marker(&cv.root, px, cross)?;
                cv.root
                    .draw(&Rectangle::new(
                        [(px.0 + 12, px.1 - 26), (px.0 + 80, px.1 - 6)],
                        WHITE.filled(),
                    ))
                    .map_err(draw_err)?;
                cv.root
                    .draw(&Text::new(
                        "optimum".to_string(),
                        (px.0 + 16, px.1 - 24),
                        (FONT, 14).into_font().style(FontStyle::Bold).color(&INK),
                    ))
                    .map_err(draw_err)?;
                cv.end()?;
            }
        }
        // colour bar
        cv.begin("colour-bar", Some(&s.z_name), None)?;
        let (bx, by, bh, bw) = (20, 40, 380, 24);
        let steps = 48;
        for k in 0..steps {
            let t = 1.0 - (k as f64 + 0.5) / steps as f64;
            let y0 = by + k * bh / steps;
            let y1 = by + (k + 1) * bh / steps;
            bar_area
                .draw(&Rectangle::new([(bx, y0), (bx + bw, y1)], ramp(t).filled()))
                .map_err(draw_err)?;
        }
        bar_area
            .draw(&Rectangle::new(
                [(bx, by), (bx + bw, by + bh)],
                INK.stroke_width(1),
            ))
            .map_err(draw_err)?;
        for k in 0..=4 {
            let t = k as f64 / 4.0;
            let z = z_lo + t * (z_hi - z_lo);
            let y = by + ((1.0 - t) * bh as f64) as i32;
            bar_area
                .draw(&Text::new(
                    tick(z / zf),
                    (bx + bw + 6, y - 7),
                    (FONT, 13).into_font().color(&INK),
                ))
                .map_err(draw_err)?;
        }
        for &lv in &levels {
            if z_hi > z_lo {
                let y = by + ((1.0 - (lv - z_lo) / (z_hi - z_lo)) * bh as f64) as i32;
                bar_area
                    .draw(&PathElement::new(
                        vec![(bx - 4, y), (bx + bw, y)],
                        INK.stroke_width(1),
                    ))
                    .map_err(draw_err)?;
            }
        }
        bar_area
            .draw(&Text::new(
                axis_desc(&s.z_name, zp, &s.z_unit),
                (bx - 8, by - 30),
                (FONT, 14).into_font().color(&INK),
            ))
            .map_err(draw_err)?;
        cv.end()
    })
}

/// The objective against one tuned parameter with the optimum marked by a
/// vertical line.
#[allow(clippy::too_many_arguments)]
pub fn tuning_curve_plot(
    title: &str,
    x_name: &str,
    x_unit: &str,
    y_name: &str,
    y_unit: &str,
    xs: &[f64],
    ys: &[f64],
    optimum: Option<f64>,
    p: &PlotParams,
) -> Result<String, PlotError> {
    if xs.is_empty() {
        return Err(PlotError::Empty {
            what: format!("tuning curve of {y_name}"),
        });
    }
    if xs.len() != ys.len() {
        return Err(PlotError::Shape {
            what: format!("values of {y_name}"),
            expected: xs.len(),
            found: ys.len(),
        });
    }
    check_finite(&format!("values of {x_name}"), xs)?;
    check_finite(&format!("values of {y_name}"), ys)?;
    let (x_lo, x_hi) = extent(xs).unwrap_or((0.0, 1.0));
    let (y_lo, y_hi) = extent(ys).unwrap_or((0.0, 1.0));
    let (xf, xp) = prefix_for(x_lo.abs().max(x_hi.abs()), x_unit);
    let (yf, yp) = prefix_for(y_lo.abs().max(y_hi.abs()), y_unit);
    let pts: Vec<(f64, f64)> = xs.iter().zip(ys).map(|(x, y)| (x / xf, y / yf)).collect();
    let full_title = title_of(title, p);
    let subtitle = match optimum.filter(|o| o.is_finite()) {
        Some(o) => format!(
            "{y_name} against {x_name}; optimum at {} {}{}",
            tick(o / xf),
            xp,
            x_unit
        ),
        None => format!("{y_name} against {x_name}"),
    };
    let desc = format!("{y_name} against the tuned parameter {x_name}.");
    render(p.width.max(320), 480, &full_title, &desc, |cv| {
        let rest = cv.header(&full_title, &subtitle, 64)?;
        let mut panel = Panel::new(
            padded(x_lo / xf, x_hi / xf, 0.03),
            padded(y_lo / yf, y_hi / yf, 0.08),
            axis_desc(x_name, xp, x_unit),
            axis_desc(y_name, yp, y_unit),
        );
        panel.lines.push(Line {
            label: y_name.to_string(),
            style: series_style(0),
            points: &pts,
            markers: 10,
        });
        if let Some(o) = optimum.filter(|o| o.is_finite()) {
            panel.vlines.push((o / xf, "optimum".into()));
        }
        draw_panel(cv, &rest, &panel)
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn contour_of_a_plane_is_a_straight_line() {
        // z = x: the 0.37 level is the line x = 0.37, exactly (linear
        // interpolation is exact for a linear field)
        let g: Vec<f64> = (0..6).map(|k| k as f64 * 0.2).collect();
        let v: Vec<Vec<f64>> = g.iter().map(|_| g.clone()).collect();
        let segs = contour_segments(&g, &g, &v, 0.37);
        assert_eq!(segs.len(), 5, "one segment per row of cells");
        for (a, b) in segs {
            assert!((a.0 - 0.37).abs() < 1e-12 && (b.0 - 0.37).abs() < 1e-12);
        }
    }

    #[test]
    fn contour_of_a_paraboloid_is_near_a_circle() {
        // z = x² + y²: level r² is the circle of radius r. Edge interpolation
        // of a quadratic errs by at most h²/4 in z (h the grid step), i.e.
        // h²/(8r) in radius: 0.05²/(8·0.6) ≈ 5e-4; allow 1e-3.
        let g: Vec<f64> = (0..41).map(|k| -1.0 + k as f64 * 0.05).collect();
        let v: Vec<Vec<f64>> = g
            .iter()
            .map(|y| g.iter().map(|x| x * x + y * y).collect())
            .collect();
        let r = 0.6;
        let segs = contour_segments(&g, &g, &v, r * r);
        assert!(segs.len() > 40);
        for (a, b) in segs {
            for p in [a, b] {
                let rho = (p.0 * p.0 + p.1 * p.1).sqrt();
                assert!((rho - r).abs() < 1e-3, "point {p:?} at radius {rho}");
            }
        }
    }

    #[test]
    fn ramp_darkens_monotonically() {
        // relative luminance (WCAG 2.x sRGB definition) must fall along the ramp
        let lum = |c: RGBColor| {
            let f = |v: u8| {
                let v = v as f64 / 255.0;
                if v <= 0.04045 {
                    v / 12.92
                } else {
                    ((v + 0.055) / 1.055).powf(2.4)
                }
            };
            0.2126 * f(c.0) + 0.7152 * f(c.1) + 0.0722 * f(c.2)
        };
        let l: Vec<f64> = (0..=20).map(|k| lum(ramp(k as f64 / 20.0))).collect();
        assert!(l.windows(2).all(|w| w[1] < w[0]), "{l:?}");
    }
}
