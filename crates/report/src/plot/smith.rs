//! The Smith chart: the plane of the reflection coefficient
//! Γ = (Z − Z0)/(Z + Z0) inside the unit circle, with circles of constant
//! resistance and arcs of constant reactance, and on it the loads a sweep
//! visited (one series per VSWR circle, the worst loads marked apart, loads
//! that did not solve crossed out), contours of a figure over a grid of
//! loads and an optimum.
//!
//! Written as SVG by hand (plotters has no polar or circle-grid chart):
//! every grid line is a `<circle>` or an arc `<path>` whose centre and
//! radius are those of the image of a line `Re z = r` or `Im z = x` under
//! the bilinear map (docs/check-values.md, "Smith chart"), and every marker
//! carries its Γ in `data-re` and `data-im`, so a test reads the geometry
//! back. Our own look: the chart in warm grey on white, resistance circles
//! solid, reactance arcs dotted, the series in the palette of [`super::PALETTE`].

use num_complex::Complex64;

use super::canvas::{series_style, xml_escape, Marker, FONT};
use super::{PlotError, PlotParams};

/// Normalised resistances of the constant-resistance circles.
pub const R_CIRCLES: [f64; 6] = [0.2, 0.5, 1.0, 2.0, 5.0, 10.0];
/// Normalised reactances of the constant-reactance arcs (each drawn for +x and −x).
pub const X_ARCS: [f64; 6] = [0.2, 0.5, 1.0, 2.0, 5.0, 10.0];

/// Γ = (Z − Z0)/(Z + Z0) (the bilinear map; D. M. Pozar, Microwave
/// Engineering, 4th ed., §2.3 and §2.4).
pub fn gamma_of(z: Complex64, z0: f64) -> Complex64 {
    (z - z0) / (z + z0)
}

/// The circle of constant normalised resistance r: centre (r/(1+r), 0),
/// radius 1/(1+r) in the Γ plane (Pozar §2.4).
pub fn resistance_circle(r: f64) -> (Complex64, f64) {
    (Complex64::new(r / (1.0 + r), 0.0), 1.0 / (1.0 + r))
}

/// The circle of constant normalised reactance x: centre (1, 1/x), radius
/// 1/|x| (Pozar §2.4); inside the unit circle it runs from Γ = 1 to
/// [`reactance_end`].
pub fn reactance_circle(x: f64) -> (Complex64, f64) {
    (Complex64::new(1.0, 1.0 / x), 1.0 / x.abs())
}

/// Where the arc of reactance x meets the unit circle (z = jx):
/// Γ = (x² − 1 + 2jx)/(x² + 1).
pub fn reactance_end(x: f64) -> Complex64 {
    Complex64::new(x * x - 1.0, 2.0 * x) / (x * x + 1.0)
}

/// Where the chart sits in the figure: the unit circle's centre and radius, px.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChartFrame {
    /// Centre, x (px from the left).
    pub cx: f64,
    /// Centre, y (px from the top).
    pub cy: f64,
    /// Radius of |Γ| = 1, px.
    pub radius: f64,
}

impl ChartFrame {
    /// The figure position of Γ (imaginary part up).
    pub fn to_px(&self, g: Complex64) -> (f64, f64) {
        (self.cx + self.radius * g.re, self.cy - self.radius * g.im)
    }
}

/// One load on the chart.
#[derive(Debug, Clone, PartialEq)]
pub struct SmithPoint {
    /// Its reflection coefficient.
    pub gamma: Complex64,
    /// Which series it belongs to (index into [`SmithChart::series`]).
    pub series: usize,
    /// A worst case is found here (marked apart).
    pub worst: bool,
    /// The stage did not solve here (crossed out).
    pub unsolved: bool,
    /// What the marker's tooltip says.
    pub label: String,
}

/// A contour line of a figure: closed or open polylines in the Γ plane.
#[derive(Debug, Clone, PartialEq)]
pub struct Contour {
    /// What it is, e.g. "pout 12.0 W".
    pub label: String,
    /// Which figure (contours of one figure share a style).
    pub figure: usize,
    /// The polylines.
    pub lines: Vec<Vec<Complex64>>,
}

/// Everything a Smith chart shows.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct SmithChart {
    /// Title, e.g. "Loads on circles of constant VSWR".
    pub title: String,
    /// The reference impedance, Ω (shown in the subtitle).
    pub z0: f64,
    /// Series names (e.g. "VSWR 2"), one per series index.
    pub series: Vec<String>,
    /// Draw each series' |Γ| circle through its points.
    pub circles: bool,
    /// The loads.
    pub points: Vec<SmithPoint>,
    /// Contours.
    pub contours: Vec<Contour>,
    /// Names of the contoured figures, by `Contour::figure`.
    pub contour_figures: Vec<String>,
    /// A marked optimum: (Γ, label).
    pub optimum: Option<(Complex64, String)>,
}

/// Numbers in the SVG: 3 decimals of a pixel.
fn n(v: f64) -> String {
    format!("{v:.3}")
}

/// The chart's frame for a figure `w` px wide.
pub fn frame(w: u32) -> ChartFrame {
    let w = w.max(320) as f64;
    let h = chart_height(w);
    ChartFrame {
        cx: 0.06 * w + 0.4 * h,
        cy: 70.0 + 0.4 * h,
        radius: 0.4 * h,
    }
}

fn chart_height(w: f64) -> f64 {
    (0.62 * w).min(w - 200.0).max(240.0)
}

fn check(what: &str, g: Complex64, index: usize) -> Result<(), PlotError> {
    for v in [g.re, g.im] {
        if !v.is_finite() {
            return Err(PlotError::NotFinite {
                what: what.into(),
                index,
                value: v,
            });
        }
    }
    Ok(())
}

fn marker(m: Marker, x: f64, y: f64, s: f64, fill: &str, extra: &str) -> String {
    match m {
        Marker::Disc => format!(
            "<circle cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"{fill}\"{extra}/>",
            n(x),
            n(y),
            n(s)
        ),
        Marker::Ring => format!(
            "<circle cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"white\" stroke=\"{fill}\" stroke-width=\"2\"{extra}/>",
            n(x),
            n(y),
            n(s)
        ),
        Marker::Square => format!(
            "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{fill}\"{extra}/>",
            n(x - s),
            n(y - s),
            n(2.0 * s),
            n(2.0 * s)
        ),
        Marker::Triangle => format!(
            "<path d=\"M{} {}L{} {}L{} {}Z\" fill=\"{fill}\"{extra}/>",
            n(x),
            n(y - s * 1.2),
            n(x + s * 1.1),
            n(y + s * 0.8),
            n(x - s * 1.1),
            n(y + s * 0.8)
        ),
        Marker::Diamond => format!(
            "<path d=\"M{} {}L{} {}L{} {}L{} {}Z\" fill=\"{fill}\"{extra}/>",
            n(x),
            n(y - s * 1.3),
            n(x + s * 1.3),
            n(y),
            n(x),
            n(y + s * 1.3),
            n(x - s * 1.3),
            n(y)
        ),
        Marker::Cross => format!(
            "<path d=\"M{} {}L{} {}M{} {}L{} {}\" stroke=\"{fill}\" stroke-width=\"2\" fill=\"none\"{extra}/>",
            n(x - s),
            n(y - s),
            n(x + s),
            n(y + s),
            n(x - s),
            n(y + s),
            n(x + s),
            n(y - s)
        ),
    }
}

fn hex((r, g, b): (u8, u8, u8)) -> String {
    format!("#{r:02x}{g:02x}{b:02x}")
}

/// Grid ink: a warm grey.
const GRID: &str = "#9a8f80";
/// Ink of text and the unit circle.
const INK: &str = "#222222";
/// Colour of the worst-case marks (the palette's copper).
const WORST: &str = "#b55a1c";

/// Draw the chart as an SVG document.
pub fn smith_plot(chart: &SmithChart, p: &PlotParams) -> Result<String, PlotError> {
    if chart.points.is_empty() && chart.contours.is_empty() {
        return Err(PlotError::Empty {
            what: "Smith chart".into(),
        });
    }
    if !(chart.z0.is_finite() && chart.z0 > 0.0) {
        return Err(PlotError::NotFinite {
            what: "reference impedance".into(),
            index: 0,
            value: chart.z0,
        });
    }
    for (k, pt) in chart.points.iter().enumerate() {
        check("load", pt.gamma, k)?;
    }
    for (k, c) in chart.contours.iter().enumerate() {
        for l in &c.lines {
            for g in l {
                check("contour", *g, k)?;
            }
        }
    }
    let w = p.width.max(320) as f64;
    let f = frame(p.width);
    let h = f.cy + f.radius + 40.0;
    let title = format!("{} — {}", chart.title, p.source);
    let mut s = String::with_capacity(16 * 1024);
    s.push_str(&format!(
        "<svg xmlns=\"http://www.w3.org/2000/svg\" class=\"tw-plot tw-smith\" role=\"img\" aria-label=\"{t}\" font-family=\"{FONT}\" width=\"{w}\" height=\"{h}\" viewBox=\"0 0 {w} {h}\">\n<title>{t}</title>\n",
        t = xml_escape(&title),
        w = n(w),
        h = n(h)
    ));
    s.push_str(&format!(
        "<desc>Smith chart: reflection coefficient against {}; circles of constant resistance and arcs of constant reactance, normalised to it.</desc>\n",
        xml_escape(&super::super::format::si(chart.z0, "Ohm"))
    ));
    s.push_str(&format!(
        "<rect x=\"0\" y=\"0\" width=\"{}\" height=\"{}\" fill=\"white\"/>\n",
        n(w),
        n(h)
    ));
    s.push_str(&format!(
        "<text x=\"{}\" y=\"28\" font-size=\"18\" fill=\"{INK}\">{}</text>\n",
        n(0.04 * w),
        xml_escape(&title)
    ));
    s.push_str(&format!(
        "<text x=\"{}\" y=\"50\" font-size=\"13\" fill=\"{INK}\">Γ = (Z − Z0)/(Z + Z0), Z0 = {}; grid in z = Z/Z0</text>\n",
        n(0.04 * w),
        xml_escape(&super::super::format::si(chart.z0, "Ohm"))
    ));
    // the grid
    s.push_str(&format!(
        "<g class=\"grid\" fill=\"none\" stroke=\"{GRID}\" stroke-width=\"1\">\n"
    ));
    s.push_str(&format!(
        "<circle class=\"unit\" cx=\"{}\" cy=\"{}\" r=\"{}\" stroke=\"{INK}\" stroke-width=\"1.5\"/>\n",
        n(f.cx),
        n(f.cy),
        n(f.radius)
    ));
    let (l, r) = (
        f.to_px(Complex64::new(-1.0, 0.0)),
        f.to_px(Complex64::new(1.0, 0.0)),
    );
    s.push_str(&format!(
        "<path class=\"real-axis\" d=\"M{} {}L{} {}\"/>\n",
        n(l.0),
        n(l.1),
        n(r.0),
        n(r.1)
    ));
    for rr in R_CIRCLES {
        let (c, rad) = resistance_circle(rr);
        let (x, y) = f.to_px(c);
        s.push_str(&format!(
            "<circle class=\"resistance\" data-r=\"{rr}\" cx=\"{}\" cy=\"{}\" r=\"{}\"/>\n",
            n(x),
            n(y),
            n(rad * f.radius)
        ));
        let (tx, ty) = f.to_px(Complex64::new((rr - 1.0) / (rr + 1.0), 0.0));
        s.push_str(&format!(
            "<text x=\"{}\" y=\"{}\" font-size=\"10\" fill=\"{GRID}\" stroke=\"none\">{rr}</text>\n",
            n(tx + 2.0),
            n(ty - 3.0)
        ));
    }
    for xx in X_ARCS {
        for x in [xx, -xx] {
            let (_, rad) = reactance_circle(x);
            let (x0, y0) = f.to_px(Complex64::new(1.0, 0.0));
            let end = reactance_end(x);
            let (x1, y1) = f.to_px(end);
            // from Γ = 1 to the rim along the small arc; for +x its centre
            // lies above the chart, so the arc turns clockwise on screen
            // (SVG sweep flag 1), for −x anticlockwise (0)
            let sweep = if x > 0.0 { 1 } else { 0 };
            s.push_str(&format!(
                "<path class=\"reactance\" data-x=\"{x}\" stroke-dasharray=\"2 3\" d=\"M{} {}A{} {} 0 0 {sweep} {} {}\"/>\n",
                n(x0),
                n(y0),
                n(rad * f.radius),
                n(rad * f.radius),
                n(x1),
                n(y1)
            ));
            let (tx, ty) = f.to_px(end * 1.06);
            s.push_str(&format!(
                "<text x=\"{}\" y=\"{}\" font-size=\"10\" fill=\"{GRID}\" stroke=\"none\" text-anchor=\"middle\">{}{}j</text>\n",
                n(tx),
                n(ty + 3.0),
                if x < 0.0 { "−" } else { "+" },
                xx
            ));
        }
    }
    s.push_str("</g>\n");
    // contours
    for c in &chart.contours {
        let st = series_style(chart.series.len() + c.figure);
        let col = hex(st.color);
        s.push_str(&format!(
            "<g class=\"contour\" data-label=\"{}\" fill=\"none\" stroke=\"{col}\" stroke-width=\"1.5\" stroke-dasharray=\"{}\">\n",
            xml_escape(&c.label),
            st.dash
        ));
        for line in &c.lines {
            let mut d = String::new();
            for (k, g) in line.iter().enumerate() {
                let (x, y) = f.to_px(*g);
                d.push_str(&format!(
                    "{}{} {}",
                    if k == 0 { "M" } else { "L" },
                    n(x),
                    n(y)
                ));
            }
            s.push_str(&format!("<path d=\"{d}\"/>\n"));
            if let Some(g) = line.get(line.len() / 2) {
                let (x, y) = f.to_px(*g);
                s.push_str(&format!(
                    "<text x=\"{}\" y=\"{}\" font-size=\"10\" fill=\"{col}\" stroke=\"none\">{}</text>\n",
                    n(x + 3.0),
                    n(y - 3.0),
                    xml_escape(&c.label)
                ));
            }
        }
        s.push_str("</g>\n");
    }
    // the series
    for (k, name) in chart.series.iter().enumerate() {
        let st = series_style(k);
        let col = hex(st.color);
        s.push_str(&format!(
            "<g class=\"series\" data-label=\"{}\">\n",
            xml_escape(name)
        ));
        let pts: Vec<&SmithPoint> = chart.points.iter().filter(|p| p.series == k).collect();
        if chart.circles {
            if let Some(g) = pts.first().map(|p| p.gamma.norm()) {
                s.push_str(&format!(
                    "<circle class=\"vswr\" cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"none\" stroke=\"{col}\" stroke-width=\"{}\" stroke-dasharray=\"{}\"/>\n",
                    n(f.cx),
                    n(f.cy),
                    n(g * f.radius),
                    st.width,
                    st.dash
                ));
            }
        }
        for pt in pts {
            let (x, y) = f.to_px(pt.gamma);
            let data = format!(
                " class=\"{}\" data-re=\"{}\" data-im=\"{}\"",
                if pt.unsolved { "load unsolved" } else { "load" },
                pt.gamma.re,
                pt.gamma.im
            );
            let m = if pt.unsolved {
                Marker::Cross
            } else {
                st.marker
            };
            s.push_str(&marker(m, x, y, 3.5, &col, &data));
            s.push_str(&format!("<title>{}</title>\n", xml_escape(&pt.label)));
        }
        s.push_str("</g>\n");
    }
    // worst cases: a ring around the load, apart from every series marker
    let worst: Vec<&SmithPoint> = chart.points.iter().filter(|p| p.worst).collect();
    if !worst.is_empty() {
        s.push_str(&format!(
            "<g class=\"worst\" data-label=\"worst case\" fill=\"none\" stroke=\"{WORST}\" stroke-width=\"2.5\">\n"
        ));
        for pt in worst {
            let (x, y) = f.to_px(pt.gamma);
            s.push_str(&format!(
                "<circle class=\"worst\" data-re=\"{}\" data-im=\"{}\" cx=\"{}\" cy=\"{}\" r=\"9\"><title>{}</title></circle>\n",
                pt.gamma.re,
                pt.gamma.im,
                n(x),
                n(y),
                xml_escape(&pt.label)
            ));
        }
        s.push_str("</g>\n");
    }
    if let Some((g, label)) = &chart.optimum {
        check("optimum", *g, 0)?;
        let (x, y) = f.to_px(*g);
        s.push_str(&format!(
            "<g class=\"optimum\" data-label=\"{}\" data-re=\"{}\" data-im=\"{}\">\n{}\n<text x=\"{}\" y=\"{}\" font-size=\"12\" fill=\"{INK}\">{}</text>\n</g>\n",
            xml_escape(label),
            g.re,
            g.im,
            marker(Marker::Diamond, x, y, 6.0, INK, ""),
            n(x + 10.0),
            n(y - 8.0),
            xml_escape(label)
        ));
    }
    // legend
    let lx = f.cx + f.radius + 40.0;
    let mut ly = f.cy - f.radius + 10.0;
    s.push_str("<g class=\"legend\" font-size=\"12\">\n");
    for (k, name) in chart.series.iter().enumerate() {
        let st = series_style(k);
        s.push_str(&marker(st.marker, lx, ly, 4.0, &hex(st.color), ""));
        s.push_str(&format!(
            "\n<text x=\"{}\" y=\"{}\" fill=\"{INK}\">{}</text>\n",
            n(lx + 12.0),
            n(ly + 4.0),
            xml_escape(name)
        ));
        ly += 20.0;
    }
    for (k, name) in chart.contour_figures.iter().enumerate() {
        let st = series_style(chart.series.len() + k);
        s.push_str(&format!(
            "<path d=\"M{} {}L{} {}\" stroke=\"{}\" stroke-width=\"1.5\" stroke-dasharray=\"{}\"/>\n<text x=\"{}\" y=\"{}\" fill=\"{INK}\">{}</text>\n",
            n(lx - 6.0),
            n(ly),
            n(lx + 6.0),
            n(ly),
            hex(st.color),
            st.dash,
            n(lx + 12.0),
            n(ly + 4.0),
            xml_escape(name)
        ));
        ly += 20.0;
    }
    if chart.points.iter().any(|p| p.worst) {
        s.push_str(&format!(
            "<circle cx=\"{}\" cy=\"{}\" r=\"7\" fill=\"none\" stroke=\"{WORST}\" stroke-width=\"2.5\"/>\n<text x=\"{}\" y=\"{}\" fill=\"{INK}\">worst case of a requirement</text>\n",
            n(lx),
            n(ly),
            n(lx + 12.0),
            n(ly + 4.0)
        ));
        ly += 20.0;
    }
    if chart.points.iter().any(|p| p.unsolved) {
        s.push_str(&marker(Marker::Cross, lx, ly, 4.0, INK, ""));
        s.push_str(&format!(
            "\n<text x=\"{}\" y=\"{}\" fill=\"{INK}\">not solved</text>\n",
            n(lx + 12.0),
            n(ly + 4.0)
        ));
    }
    s.push_str("</g>\n</svg>\n");
    Ok(s)
}
