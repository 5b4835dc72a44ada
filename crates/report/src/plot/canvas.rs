//! The drawing surface shared by every plot: an SVG document drawn by
//! plotters, the palette, markers, legends, axis scaling, and the finishing
//! pass that turns group sentinels into `<g>` elements.
//!
//! plotters writes one SVG element per line and has no notion of groups or
//! dash patterns in its SVG backend. To mark series, the canvas draws a tiny
//! sentinel `<text>` whose content is `twg-begin-K` (or `twg-end`) before
//! and after each series; [`Canvas::finish`] replaces each sentinel with the
//! `<g>` tag recorded under K (class, `data-label`, `stroke-dasharray`).
//! Child elements inherit the dash pattern, which gives real dashed lines.

use std::cell::RefCell;
use std::ops::Range;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::PlotError;

/// Backend type of every plot.
pub(crate) type Area<'a> = DrawingArea<SVGBackend<'a>, Shift>;

/// Marker shapes, drawn at a few points of each series.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Marker {
    /// Filled circle.
    Disc,
    /// Filled upward triangle.
    Triangle,
    /// Filled square.
    Square,
    /// Diagonal cross (two strokes).
    Cross,
    /// Open circle.
    Ring,
    /// Filled diamond.
    Diamond,
}

/// How one series is drawn.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SeriesStyle {
    /// Stroke and fill colour (sRGB).
    pub color: (u8, u8, u8),
    /// SVG `stroke-dasharray` ("none" for solid).
    pub dash: &'static str,
    /// Marker shape.
    pub marker: Marker,
    /// Stroke width, px.
    pub width: u32,
}

impl SeriesStyle {
    pub(crate) fn rgb(&self) -> RGBColor {
        RGBColor(self.color.0, self.color.1, self.color.2)
    }
    pub(crate) fn stroke(&self) -> ShapeStyle {
        ShapeStyle::from(&self.rgb()).stroke_width(self.width)
    }
}

/// The series palette, in the order series take it. Lightness (CIE L*,
/// approximate) alternates dark and light so that neighbouring series differ
/// strongly in grey; hues avoid the red–green pairs that colour-blind readers
/// confuse; dash pattern and marker differ for every entry as well.
pub const PALETTE: [SeriesStyle; 6] = [
    // deep ink blue, L* ≈ 13, solid, disc
    SeriesStyle {
        color: (0x14, 0x21, 0x3d),
        dash: "none",
        marker: Marker::Disc,
        width: 2,
    },
    // copper, L* ≈ 49, long dashes, triangle
    SeriesStyle {
        color: (0xb5, 0x5a, 0x1c),
        dash: "9 4",
        marker: Marker::Triangle,
        width: 2,
    },
    // pale sky, L* ≈ 80, dots, square
    SeriesStyle {
        color: (0x8f, 0xcf, 0xea),
        dash: "2 3",
        marker: Marker::Square,
        width: 3,
    },
    // plum, L* ≈ 30, dash-dot, cross
    SeriesStyle {
        color: (0x6e, 0x2f, 0x5f),
        dash: "10 3 2 3",
        marker: Marker::Cross,
        width: 2,
    },
    // straw, L* ≈ 77, short dashes, ring
    SeriesStyle {
        color: (0xe0, 0xbb, 0x4a),
        dash: "5 3",
        marker: Marker::Ring,
        width: 3,
    },
    // slate teal, L* ≈ 43, dash-dot-dot, diamond
    SeriesStyle {
        color: (0x2f, 0x6f, 0x73),
        dash: "12 3 2 3 2 3",
        marker: Marker::Diamond,
        width: 2,
    },
];

/// Dash patterns: the palette's six, then one more, so that the number of
/// patterns (7) is prime to the number of colours (6).
const DASHES: [&str; 7] = [
    "none",
    "9 4",
    "2 3",
    "10 3 2 3",
    "5 3",
    "12 3 2 3 2 3",
    "1 5",
];

/// Markers in the palette's order.
const MARKERS: [Marker; 6] = [
    Marker::Disc,
    Marker::Triangle,
    Marker::Square,
    Marker::Cross,
    Marker::Ring,
    Marker::Diamond,
];

/// How many series [`series_style`] keeps apart: colour, dash and marker
/// together differ for the first 6 × 7 × 6 = 252 series.
pub const DISTINCT_STYLES: usize = PALETTE.len() * DASHES.len() * MARKERS.len();

/// The style of series `k`. The first six are the [`PALETTE`]; after that
/// the colour cycles with period 6, the dash pattern moves on by one per
/// round of six and the marker by one per seven rounds, so that no two of
/// the first [`DISTINCT_STYLES`] series look alike.
pub fn series_style(k: usize) -> SeriesStyle {
    let c = k % PALETTE.len();
    let round = k / PALETTE.len();
    let base = PALETTE[c];
    SeriesStyle {
        dash: DASHES[(c + round) % DASHES.len()],
        marker: MARKERS[(c + round / DASHES.len()) % MARKERS.len()],
        ..base
    }
}

/// Ink for text and axes.
pub(crate) const INK: RGBColor = RGBColor(0x22, 0x22, 0x22);
/// Grey of shaded intervals (drawn with opacity).
pub(crate) const SHADE: RGBColor = RGBColor(0x7a, 0x7a, 0x7a);
/// Fill of passing bars (a mid tone of the palette's sky).
pub(crate) const BAR_PASS: RGBColor = RGBColor(0x8c, 0xc4, 0xe0);
/// Fill of failing bars (the palette's copper, darker than passing bars).
pub(crate) const BAR_FAIL: RGBColor = RGBColor(0xb5, 0x5a, 0x1c);

/// Font family of every text element (a generic family: no font files).
pub(crate) const FONT: &str = "sans-serif";

pub(crate) fn draw_err<E: std::fmt::Display>(e: E) -> PlotError {
    PlotError::Draw(e.to_string())
}

/// An SVG document being drawn.
pub(crate) struct Canvas<'a> {
    /// The whole figure.
    pub root: Area<'a>,
    groups: RefCell<Vec<String>>,
}

/// Draw a figure of `w`×`h` px with `body`, then finish the document.
pub(crate) fn render<F>(
    w: u32,
    h: u32,
    title: &str,
    desc: &str,
    body: F,
) -> Result<String, PlotError>
where
    F: for<'c> FnOnce(&Canvas<'c>) -> Result<(), PlotError>,
{
    let mut buf = String::new();
    let groups = {
        let root = SVGBackend::with_string(&mut buf, (w, h)).into_drawing_area();
        root.fill(&WHITE).map_err(draw_err)?;
        let canvas = Canvas {
            root,
            groups: RefCell::new(Vec::new()),
        };
        body(&canvas)?;
        canvas.root.present().map_err(draw_err)?;
        canvas.groups.into_inner()
    };
    Ok(finish(&buf, title, desc, &groups))
}

impl<'a> Canvas<'a> {
    fn sentinel(&self, text: String) -> Result<(), PlotError> {
        self.root
            .draw(&Text::new(text, (0, 0), (FONT, 1).into_font()))
            .map_err(draw_err)
    }

    /// Open a group with `class`, an optional `data-label` and dash pattern.
    pub fn begin(
        &self,
        class: &str,
        label: Option<&str>,
        dash: Option<&str>,
    ) -> Result<(), PlotError> {
        let mut tag = format!("<g class=\"{}\"", xml_escape(class));
        if let Some(l) = label {
            tag.push_str(&format!(" data-label=\"{}\"", xml_escape(l)));
        }
        if let Some(d) = dash {
            tag.push_str(&format!(" stroke-dasharray=\"{}\"", xml_escape(d)));
        }
        tag.push('>');
        let k = {
            let mut g = self.groups.borrow_mut();
            g.push(tag);
            g.len() - 1
        };
        self.sentinel(format!("twg-begin-{k}"))
    }

    /// Close the innermost group.
    pub fn end(&self) -> Result<(), PlotError> {
        self.sentinel("twg-end".to_string())
    }

    /// Title and subtitle across the top band of height `band`; returns the rest.
    pub fn header(&self, title: &str, subtitle: &str, band: u32) -> Result<Area<'a>, PlotError> {
        let (top, rest) = self.root.split_vertically(band);
        self.begin("title", None, None)?;
        top.draw(&Text::new(
            title.to_string(),
            (12, 8),
            (FONT, 20).into_font().style(FontStyle::Bold).color(&INK),
        ))
        .map_err(draw_err)?;
        if !subtitle.is_empty() {
            top.draw(&Text::new(
                subtitle.to_string(),
                (12, 34),
                (FONT, 14).into_font().color(&INK),
            ))
            .map_err(draw_err)?;
        }
        self.end()?;
        Ok(rest)
    }

    /// A legend drawn in pixel coordinates of `area` starting at (x, y).
    pub fn legend(
        &self,
        area: &Area<'_>,
        x: i32,
        y: i32,
        entries: &[LegendEntry],
    ) -> Result<(), PlotError> {
        let row = 22;
        for (k, e) in entries.iter().enumerate() {
            let yy = y + k as i32 * row;
            let style = e.style;
            let dash = match e.kind {
                LegendKind::Line | LegendKind::Rule if style.dash != "none" => Some(style.dash),
                _ => None,
            };
            self.begin("legend-entry", Some(&e.label), dash)?;
            match e.kind {
                LegendKind::Line => {
                    area.draw(&PathElement::new(
                        vec![(x, yy), (x + 34, yy)],
                        style.stroke(),
                    ))
                    .map_err(draw_err)?;
                    self.begin("marker", None, Some("none"))?;
                    draw_marker(area, (x + 17, yy), style)?;
                    self.end()?;
                }
                LegendKind::Rule => {
                    area.draw(&PathElement::new(
                        vec![(x, yy), (x + 34, yy)],
                        style.stroke(),
                    ))
                    .map_err(draw_err)?;
                }
                LegendKind::Box => {
                    area.draw(&Rectangle::new(
                        [(x + 4, yy - 7), (x + 30, yy + 7)],
                        style.rgb().filled(),
                    ))
                    .map_err(draw_err)?;
                    area.draw(&Rectangle::new(
                        [(x + 4, yy - 7), (x + 30, yy + 7)],
                        INK.stroke_width(1),
                    ))
                    .map_err(draw_err)?;
                }
            }
            area.draw(&Text::new(
                e.label.clone(),
                (x + 42, yy - 7),
                (FONT, 14).into_font().color(&INK),
            ))
            .map_err(draw_err)?;
            self.end()?;
        }
        Ok(())
    }
}

/// What a legend entry shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum LegendKind {
    /// A line with its marker.
    Line,
    /// A line without marker.
    Rule,
    /// A filled box (bars).
    Box,
}

/// One legend line.
pub(crate) struct LegendEntry {
    pub label: String,
    pub style: SeriesStyle,
    pub kind: LegendKind,
}

/// Draw a marker of `style` centred at pixel `(x, y)` of `area`.
pub(crate) fn draw_marker(
    area: &Area<'_>,
    (x, y): (i32, i32),
    style: SeriesStyle,
) -> Result<(), PlotError> {
    let col = style.rgb();
    let r = match style.marker {
        Marker::Disc => area.draw(&Circle::new((x, y), 5, col.filled())),
        Marker::Ring => area.draw(&Circle::new((x, y), 5, col.stroke_width(2))),
        Marker::Square => area.draw(&Rectangle::new(
            [(x - 5, y - 5), (x + 5, y + 5)],
            col.filled(),
        )),
        Marker::Triangle => area.draw(&Polygon::new(
            vec![(x, y - 6), (x + 6, y + 5), (x - 6, y + 5)],
            col.filled(),
        )),
        Marker::Diamond => area.draw(&Polygon::new(
            vec![(x, y - 6), (x + 6, y), (x, y + 6), (x - 6, y)],
            col.filled(),
        )),
        Marker::Cross => area
            .draw(&PathElement::new(
                vec![(x - 5, y - 5), (x + 5, y + 5)],
                col.stroke_width(2),
            ))
            .and_then(|_| {
                area.draw(&PathElement::new(
                    vec![(x - 5, y + 5), (x + 5, y - 5)],
                    col.stroke_width(2),
                ))
            }),
    };
    r.map_err(draw_err)
}

/// About `count` evenly spread indices into a series of `n` points, shifted
/// by `phase` (0..1) so that markers of different series do not sit on top
/// of each other.
pub(crate) fn marker_indices(n: usize, count: usize, phase: f64) -> Vec<usize> {
    if n == 0 || count == 0 {
        return Vec::new();
    }
    if n <= count {
        return (0..n).collect();
    }
    let step = n as f64 / count as f64;
    (0..count)
        .map(|k| (((k as f64 + phase.clamp(0.0, 1.0)) * step) as usize).min(n - 1))
        .collect()
}

/// Escape text for XML attribute values and content.
pub(crate) fn xml_escape(s: &str) -> String {
    let mut o = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '&' => o.push_str("&amp;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&apos;"),
            // characters XML 1.0 does not allow
            c if (c as u32) < 0x20 && c != '\n' && c != '\t' && c != '\r' => o.push(' '),
            c => o.push(c),
        }
    }
    o
}

/// Turn plotters' output into the final document: root attributes, title,
/// description, and groups in place of the sentinels.
fn finish(raw: &str, title: &str, desc: &str, groups: &[String]) -> String {
    let mut out = String::with_capacity(raw.len() + 512);
    let lines: Vec<&str> = raw.lines().collect();
    let mut k = 0;
    let mut depth = 0usize;
    let mut first = true;
    while k < lines.len() {
        let line = lines[k];
        if first && line.starts_with("<svg") {
            first = false;
            let rest = line.trim_start_matches("<svg");
            out.push_str(&format!(
                "<svg class=\"tw-plot\" role=\"img\" aria-label=\"{}\" font-family=\"{FONT}\"{}\n",
                xml_escape(title),
                rest
            ));
            out.push_str(&format!("<title>{}</title>\n", xml_escape(title)));
            if !desc.is_empty() {
                out.push_str(&format!("<desc>{}</desc>\n", xml_escape(desc)));
            }
            k += 1;
            continue;
        }
        if line.starts_with("<text") {
            if let (Some(content), Some(close)) = (lines.get(k + 1), lines.get(k + 2)) {
                if *close == "</text>" {
                    if let Some(idx) = content.strip_prefix("twg-begin-") {
                        if let Some(tag) = idx.parse::<usize>().ok().and_then(|i| groups.get(i)) {
                            out.push_str(tag);
                            out.push('\n');
                            depth += 1;
                            k += 3;
                            continue;
                        }
                    }
                    if *content == "twg-end" {
                        if depth > 0 {
                            out.push_str("</g>\n");
                            depth -= 1;
                        }
                        k += 3;
                        continue;
                    }
                }
            }
        }
        if line == "</svg>" {
            while depth > 0 {
                out.push_str("</g>\n");
                depth -= 1;
            }
        }
        out.push_str(line);
        out.push('\n');
        k += 1;
    }
    out
}

/// Narrowest span an axis may have: relative to the magnitude of its ends
/// (finer than f64 tick arithmetic resolves) and absolute (subnormal steps).
fn min_span(lo: f64, hi: f64) -> f64 {
    (lo.abs().max(hi.abs()) * 1e-9).max(1e-200)
}

/// A data range padded by `pad` of its span on both sides, never narrower
/// than the drawing arithmetic resolves (a flat series gets ±10 % of its
/// magnitude, or ±1 at zero).
pub(crate) fn padded(lo: f64, hi: f64, pad: f64) -> Range<f64> {
    let (lo, hi) = if lo <= hi { (lo, hi) } else { (hi, lo) };
    let span = hi - lo;
    if !span.is_finite() || span < min_span(lo, hi) {
        let mag = lo.abs().max(hi.abs());
        let d = if mag > 1e-190 { mag * 0.1 } else { 1.0 };
        return (lo - d)..(hi + d);
    }
    (lo - pad * span)..(hi + pad * span)
}

/// Check that an axis range can be drawn: finite ends, increasing, and a
/// span the tick arithmetic resolves.
pub(crate) fn usable(what: &str, r: &Range<f64>) -> Result<(), PlotError> {
    let (lo, hi) = (r.start, r.end);
    let ok = lo.is_finite()
        && hi.is_finite()
        && (hi - lo).is_finite()
        && hi - lo >= min_span(lo, hi)
        && lo.abs().max(hi.abs()) <= 1.1 * super::MAX_MAGNITUDE;
    if ok {
        Ok(())
    } else {
        Err(PlotError::BadParameter {
            what: what.to_string(),
            why: format!("axis from {lo:e} to {hi:e} cannot be drawn"),
        })
    }
}

/// Smallest and largest of finite values (None if none).
pub(crate) fn extent<'v>(vals: impl IntoIterator<Item = &'v f64>) -> Option<(f64, f64)> {
    let mut r: Option<(f64, f64)> = None;
    for &v in vals {
        if v.is_finite() {
            r = Some(match r {
                None => (v, v),
                Some((a, b)) => (a.min(v), b.max(v)),
            });
        }
    }
    r
}

/// Units that take SI prefixes on axes.
fn prefixable(unit: &str) -> bool {
    matches!(
        unit,
        "V" | "A" | "W" | "Hz" | "s" | "F" | "H" | "Ohm" | "Ω" | "S" | "J"
    )
}

/// The divisor and prefix that put `max_abs` in [1, 1000) for `unit`
/// (no prefix for units such as %, dB, dBc, deg).
pub(crate) fn prefix_for(max_abs: f64, unit: &str) -> (f64, &'static str) {
    if !(prefixable(unit) && max_abs.is_finite() && max_abs > 0.0) {
        return (1.0, "");
    }
    for (f, p) in tankwave_measure::units::SI_PREFIXES {
        if max_abs / f >= 0.9995 {
            return (f, p);
        }
    }
    (1e-18, "a")
}

/// An axis description "name (unit)" with the prefix applied.
pub(crate) fn axis_desc(name: &str, prefix: &str, unit: &str) -> String {
    if unit.is_empty() {
        name.to_string()
    } else {
        format!("{name} ({prefix}{unit})")
    }
}

/// A short tick label: up to 4 significant digits, no trailing zeros.
pub(crate) fn tick(v: f64) -> String {
    if !v.is_finite() {
        return String::new();
    }
    let a = v.abs();
    if a != 0.0 && !(1e-3..1e5).contains(&a) {
        return format!("{v:.2e}");
    }
    let s = format!("{v:.4}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".to_string()
    } else {
        s.to_string()
    }
}

/// Reduce a long series for drawing: keep the min and max of each of about
/// `buckets` consecutive runs (keeps peaks; SVG size stays bounded).
pub(crate) fn decimate(x: &[f64], y: &[f64], buckets: usize) -> Vec<(f64, f64)> {
    let n = x.len().min(y.len());
    if n <= 2 * buckets.max(1) {
        return x.iter().zip(y).map(|(a, b)| (*a, *b)).collect();
    }
    let per = n.div_ceil(buckets.max(1));
    let mut out = Vec::with_capacity(2 * buckets + 2);
    let mut start = 0;
    while start < n {
        let end = (start + per).min(n);
        let (mut imin, mut imax) = (start, start);
        for i in start..end {
            if y[i] < y[imin] {
                imin = i;
            }
            if y[i] > y[imax] {
                imax = i;
            }
        }
        let (a, b) = if imin <= imax {
            (imin, imax)
        } else {
            (imax, imin)
        };
        out.push((x[a], y[a]));
        if b != a {
            out.push((x[b], y[b]));
        }
        start = end;
    }
    out
}

/// Mesh (grid and axes) style shared by all plots, applied by the caller
/// through this helper so every figure looks the same.
pub(crate) fn grid_color() -> RGBAColor {
    RGBColor(0, 0, 0).mix(0.12)
}

/// One line series of a panel.
pub(crate) struct Line<'d> {
    pub label: String,
    pub style: SeriesStyle,
    pub points: &'d [(f64, f64)],
    /// Draw markers on it (about this many).
    pub markers: usize,
}

/// A panel of line series on linear axes.
pub(crate) struct Panel<'d> {
    pub x: Range<f64>,
    pub y: Range<f64>,
    pub x_desc: String,
    pub y_desc: String,
    pub lines: Vec<Line<'d>>,
    /// x intervals to shade grey (drawn under the lines).
    pub shades: Vec<(f64, f64)>,
    /// Vertical reference lines: x, label.
    pub vlines: Vec<(f64, String)>,
    /// Horizontal reference lines: y, label.
    pub hlines: Vec<(f64, String)>,
    /// Left label area width, px.
    pub y_label_width: u32,
}

impl<'d> Panel<'d> {
    pub fn new(x: Range<f64>, y: Range<f64>, x_desc: String, y_desc: String) -> Self {
        Panel {
            x,
            y,
            x_desc,
            y_desc,
            lines: Vec::new(),
            shades: Vec::new(),
            vlines: Vec::new(),
            hlines: Vec::new(),
            y_label_width: 70,
        }
    }
}

/// Draw `panel` into `area`.
pub(crate) fn draw_panel(
    canvas: &Canvas<'_>,
    area: &Area<'_>,
    panel: &Panel<'_>,
) -> Result<(), PlotError> {
    usable("x axis", &panel.x)?;
    usable("y axis", &panel.y)?;
    let mut chart = ChartBuilder::on(area)
        .margin(8)
        .margin_right(20)
        .x_label_area_size(if panel.x_desc.is_empty() { 24 } else { 44 })
        .y_label_area_size(panel.y_label_width)
        .build_cartesian_2d(panel.x.clone(), panel.y.clone())
        .map_err(draw_err)?;
    let fx = |v: &f64| tick(*v);
    let fy = |v: &f64| tick(*v);
    canvas.begin("axes", None, None)?;
    chart
        .configure_mesh()
        .x_desc(panel.x_desc.clone())
        .y_desc(panel.y_desc.clone())
        .x_label_formatter(&fx)
        .y_label_formatter(&fy)
        .label_style((FONT, 13).into_font().color(&INK))
        .axis_desc_style((FONT, 14).into_font().color(&INK))
        .bold_line_style(grid_color())
        .light_line_style(TRANSPARENT)
        .axis_style(INK)
        .x_labels(10)
        .y_labels(6)
        .draw()
        .map_err(draw_err)?;
    canvas.end()?;
    if !panel.shades.is_empty() {
        canvas.begin("shade", Some("conduction interval"), None)?;
        let (y0, y1) = (panel.y.start, panel.y.end);
        chart
            .draw_series(
                panel
                    .shades
                    .iter()
                    .map(|&(a, b)| Rectangle::new([(a, y0), (b, y1)], SHADE.mix(0.25).filled())),
            )
            .map_err(draw_err)?;
        canvas.end()?;
    }
    // reference lines outside the axes are left out (they would map to
    // pixels beyond the figure)
    let (xa, xb) = (
        panel.x.start.min(panel.x.end),
        panel.x.start.max(panel.x.end),
    );
    let (ya, yb) = (
        panel.y.start.min(panel.y.end),
        panel.y.start.max(panel.y.end),
    );
    for (x, label) in panel.vlines.iter().filter(|(x, _)| (xa..=xb).contains(x)) {
        canvas.begin("reference", Some(label), Some("6 4"))?;
        chart
            .draw_series(std::iter::once(PathElement::new(
                vec![(*x, panel.y.start), (*x, panel.y.end)],
                INK.stroke_width(2),
            )))
            .map_err(draw_err)?;
        let px = chart.backend_coord(&(*x, panel.y.end));
        canvas
            .root
            .draw(&Text::new(
                label.clone(),
                (px.0 + 6, px.1 + 4),
                (FONT, 13).into_font().color(&INK),
            ))
            .map_err(draw_err)?;
        canvas.end()?;
    }
    for (y, label) in panel.hlines.iter().filter(|(y, _)| (ya..=yb).contains(y)) {
        canvas.begin("reference", Some(label), Some("6 4"))?;
        chart
            .draw_series(std::iter::once(PathElement::new(
                vec![(panel.x.start, *y), (panel.x.end, *y)],
                INK.stroke_width(2),
            )))
            .map_err(draw_err)?;
        canvas.end()?;
    }
    for (k, line) in panel.lines.iter().enumerate() {
        let dash = if line.style.dash == "none" {
            None
        } else {
            Some(line.style.dash)
        };
        canvas.begin("series", Some(&line.label), dash)?;
        chart
            .draw_series(LineSeries::new(
                line.points.iter().copied(),
                line.style.stroke(),
            ))
            .map_err(draw_err)?;
        if line.markers > 0 {
            canvas.begin("marker", None, Some("none"))?;
            let phase = (k as f64 * 0.37).fract();
            let idx = marker_indices(line.points.len(), line.markers, phase);
            for q in idx.into_iter().filter_map(|i| line.points.get(i)) {
                draw_marker(&canvas.root, chart.backend_coord(q), line.style)?;
            }
            canvas.end()?;
        }
        canvas.end()?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_first_six_series_are_the_palette() {
        for (k, p) in PALETTE.iter().enumerate() {
            assert_eq!(series_style(k), *p);
        }
    }

    #[test]
    fn no_two_of_the_first_252_series_look_alike() {
        let styles: Vec<SeriesStyle> = (0..DISTINCT_STYLES).map(series_style).collect();
        for i in 0..styles.len() {
            for j in i + 1..styles.len() {
                let (a, b) = (styles[i], styles[j]);
                assert!(
                    (a.color, a.dash, a.marker) != (b.color, b.dash, b.marker),
                    "series {i} and {j} share a style"
                );
            }
        }
    }
}
