//! Temperatures of `analyze heat`: one line per device against time (the
//! heating of a transmission) or against the round of the electrothermal
//! iteration, with each device's junction rating as a reference line.

use super::canvas::{
    axis_desc, decimate, draw_panel, extent, padded, prefix_for, render, LegendEntry, LegendKind,
    Line, Panel,
};
use super::{check_finite, series_style, title_of, PlotError, PlotParams};

/// One device's temperatures (K) along the x values of a [`temperature_plot`].
#[derive(Debug, Clone, PartialEq)]
pub struct TemperatureSeries {
    /// The device's name.
    pub label: String,
    /// Temperature at each x, K.
    pub kelvin: Vec<f64>,
    /// The junction rating, K, drawn as a line (`None`: not rated).
    pub rating_k: Option<f64>,
}

/// Temperatures (shown in degC) against `x`: time in seconds when
/// `x_unit` is `"s"`, else a plain count (the round number) named `x_name`.
pub fn temperature_plot(
    what: &str,
    subtitle: &str,
    x_name: &str,
    x_unit: &str,
    x: &[f64],
    series: &[TemperatureSeries],
    p: &PlotParams,
) -> Result<String, PlotError> {
    if x.is_empty() || series.is_empty() {
        return Err(PlotError::Empty {
            what: format!("{what}: temperatures"),
        });
    }
    check_finite(&format!("{what}: {x_name}"), x)?;
    for s in series {
        if s.kelvin.len() != x.len() {
            return Err(PlotError::Shape {
                what: format!("{what}: temperatures of {}", s.label),
                expected: x.len(),
                found: s.kelvin.len(),
            });
        }
        check_finite(&format!("{what}: temperatures of {}", s.label), &s.kelvin)?;
    }
    let (x_lo, x_hi) = extent(x).unwrap_or((0.0, 1.0));
    let (xf, xp) = prefix_for(x_hi.abs().max(x_lo.abs()), x_unit);
    let xs: Vec<f64> = x.iter().map(|v| v / xf).collect();
    let width = p.width.max(320);
    let celsius: Vec<Vec<(f64, f64)>> = series
        .iter()
        .map(|s| {
            let y: Vec<f64> = s.kelvin.iter().map(|k| k - 273.15).collect();
            decimate(&xs, &y, width as usize)
        })
        .collect();
    let mut all: Vec<f64> = celsius.iter().flatten().map(|p| p.1).collect();
    let ratings: Vec<(f64, String)> = series
        .iter()
        .filter_map(|s| {
            s.rating_k
                .map(|r| (r - 273.15, format!("{} rating", s.label)))
        })
        .collect();
    all.extend(ratings.iter().map(|r| r.0));
    let (lo, hi) = extent(all.iter()).unwrap_or((0.0, 100.0));
    let title = title_of(what, p);
    let desc = format!("{what}: temperatures in degC against {x_name}.");
    let legend_w = 230;
    let styles: Vec<_> = (0..series.len()).map(series_style).collect();
    let x_range = if x_hi > x_lo {
        x_lo / xf..x_hi / xf
    } else {
        x_lo / xf - 0.5..x_hi / xf + 0.5
    };
    render(width, 480, &title, &desc, |cv| {
        let rest = cv.header(&title, subtitle, 64)?;
        let (plot_area, legend_area) = rest.split_horizontally(width.saturating_sub(legend_w));
        let mut panel = Panel::new(
            x_range.clone(),
            padded(lo, hi, 0.06),
            axis_desc(x_name, xp, x_unit),
            axis_desc("temperature", "", "degC"),
        );
        for ((s, pts), st) in series.iter().zip(&celsius).zip(&styles) {
            panel.lines.push(Line {
                label: s.label.clone(),
                style: *st,
                points: pts,
                markers: if x_unit.is_empty() { pts.len() } else { 10 },
            });
        }
        panel.hlines = ratings.clone();
        draw_panel(cv, &plot_area, &panel)?;
        cv.begin("legend", None, None)?;
        let entries: Vec<LegendEntry> = series
            .iter()
            .zip(&styles)
            .map(|(s, st)| LegendEntry {
                label: s.label.clone(),
                style: *st,
                kind: LegendKind::Line,
            })
            .collect();
        cv.legend(&legend_area, 8, 30, &entries)?;
        cv.end()
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn draws_each_device_and_refuses_bad_data() {
        let p = PlotParams::for_source("t.tank");
        let s = vec![
            TemperatureSeries {
                label: "q1".into(),
                kelvin: vec![298.15, 320.0, 330.0],
                rating_k: Some(423.15),
            },
            TemperatureSeries {
                label: "d1".into(),
                kelvin: vec![298.15, 305.0, 310.0],
                rating_k: None,
            },
        ];
        let svg = temperature_plot("Heating", "", "time", "s", &[0.0, 1.0, 2.0], &s, &p).unwrap();
        assert!(svg.contains("data-label=\"q1\"") && svg.contains("data-label=\"d1\""));
        assert!(svg.contains("degC"));
        let mut bad = s.clone();
        bad[0].kelvin[1] = f64::NAN;
        assert!(matches!(
            temperature_plot("Heating", "", "time", "s", &[0.0, 1.0, 2.0], &bad, &p),
            Err(PlotError::NotFinite { .. })
        ));
        assert!(matches!(
            temperature_plot("Heating", "", "time", "s", &[0.0, 1.0], &s, &p),
            Err(PlotError::Shape { .. })
        ));
    }
}
