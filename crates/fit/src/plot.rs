//! SVG plots of data against model, one per curve: the data as dots, the
//! model as a line through its values at the same biases (one line per
//! value of the second bias column, e.g. per V_CE), points left out of the
//! fit as open circles. Currents and reverse voltages on a logarithmic axis.

use crate::curve::CurveKind;
use crate::fit::CurveFit;
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;
use tankwave_circuit::si::si_prefixed;

const DATA: RGBColor = RGBColor(0x1f, 0x4e, 0x9c);
const MODEL: RGBColor = RGBColor(0xc0, 0x39, 0x2b);
const INK: RGBColor = RGBColor(0x22, 0x22, 0x22);

/// Axis names of a curve kind: (x, y).
fn axes(kind: CurveKind) -> (&'static str, &'static str) {
    match kind {
        CurveKind::Gain => ("collector current I_C", "static current gain"),
        CurveKind::BaseVoltage => ("collector current I_C", "base–emitter voltage V_BE"),
        CurveKind::OutputCap => ("reverse voltage V_CB", "collector–base capacitance"),
        CurveKind::InputCap => ("reverse voltage V_EB", "emitter–base capacitance"),
        CurveKind::Transition => ("collector current I_C", "transition frequency f_T"),
        CurveKind::Saturation => ("collector current I_C", "saturation voltage V_CE(sat)"),
        CurveKind::Output => ("collector–emitter voltage V_CE", "collector current I_C"),
        CurveKind::Power => ("input power P_in", "collector efficiency η"),
    }
}

/// The SVG text of the plot of one curve.
pub fn svg(c: &CurveFit) -> Result<String, String> {
    let xu = c.kind.columns().0.quantity.unit();
    let yu = c.kind.measured().unit();
    let pts: Vec<_> = c.points.iter().filter(|q| q.point.w > 0.0).collect();
    let xs = pts.iter().map(|q| q.point.a).filter(|v| *v > 0.0);
    let (x_lo, x_hi) = xs.fold((f64::INFINITY, 0.0f64), |(l, h), v| (l.min(v), h.max(v)));
    let ys = pts
        .iter()
        .flat_map(|q| std::iter::once(q.point.y).chain(q.model))
        .filter(|v| v.is_finite());
    let (y_lo, y_hi) = ys.fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), v| {
        (l.min(v), h.max(v))
    });
    if !(x_lo.is_finite() && x_hi > 0.0 && y_lo.is_finite() && y_hi.is_finite()) {
        return Err(format!("{}: nothing to plot", c.file));
    }
    let pad = 0.08 * (y_hi - y_lo).max(y_hi.abs() * 1e-3);
    let (y0, y1) = (
        (y_lo - pad).max(if y_lo >= 0.0 { 0.0 } else { f64::MIN }),
        y_hi + pad,
    );
    let (x0, x1) = if x_hi > x_lo {
        (x_lo / 1.2, x_hi * 1.2)
    } else {
        (x_lo / 2.0, x_lo * 2.0)
    };
    let (xname, yname) = axes(c.kind);
    let x_desc = format!("{xname} ({xu})");
    let y_desc = if yu.is_empty() {
        yname.to_string()
    } else {
        format!("{yname} ({yu})")
    };
    let title = format!("{} — {} (model line, data dots)", c.kind.word(), c.file);
    let fx = |v: &f64| si_prefixed(*v, xu, 3);
    let fy = |v: &f64| si_prefixed(*v, yu, 3);
    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, (720, 460)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| e.to_string())?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 15).into_font().color(&INK))
            .margin(10)
            .margin_right(24)
            .x_label_area_size(44)
            .y_label_area_size(80)
            .build_cartesian_2d((x0..x1).log_scale(), y0..y1)
            .map_err(|e| e.to_string())?;
        chart
            .configure_mesh()
            .x_desc(x_desc)
            .y_desc(y_desc)
            .x_label_formatter(&fx)
            .y_label_formatter(&fy)
            .label_style(("sans-serif", 12).into_font().color(&INK))
            .axis_desc_style(("sans-serif", 13).into_font().color(&INK))
            .light_line_style(TRANSPARENT)
            .draw()
            .map_err(|e| e.to_string())?;
        // one model line per value of the second bias column
        let mut groups: Vec<f64> = pts.iter().map(|q| q.point.b).collect();
        groups.sort_by(f64::total_cmp);
        groups.dedup_by(|a, b| (*a - *b).abs() <= 1e-9 * b.abs().max(1e-30));
        for g in groups {
            let mut line: Vec<(f64, f64)> = pts
                .iter()
                .filter(|q| (q.point.b - g).abs() <= 1e-9 * g.abs().max(1e-30))
                .filter_map(|q| q.model.map(|m| (q.point.a, m)))
                .collect();
            line.sort_by(|a, b| a.0.total_cmp(&b.0));
            draw_line(&mut chart, line)?;
        }
        for q in &pts {
            let style = if q.used {
                DATA.filled()
            } else {
                DATA.stroke_width(1)
            };
            chart
                .draw_series(std::iter::once(Circle::new(
                    (q.point.a, q.point.y),
                    3,
                    style,
                )))
                .map_err(|e| e.to_string())?;
        }
        root.present().map_err(|e| e.to_string())?;
    }
    Ok(buf)
}

type Chart<'a, 'b> = ChartContext<
    'a,
    SVGBackend<'b>,
    Cartesian2d<plotters::coord::combinators::LogCoord<f64>, RangedCoordf64>,
>;

fn draw_line(chart: &mut Chart<'_, '_>, line: Vec<(f64, f64)>) -> Result<(), String> {
    chart
        .draw_series(LineSeries::new(line, MODEL.stroke_width(2)))
        .map_err(|e| e.to_string())?;
    Ok(())
}
