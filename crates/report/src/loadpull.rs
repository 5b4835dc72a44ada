//! A load-pull ([`tankwave_stage::loadpull`]: the collector's load at the
//! fundamental moved over a disc of Γ) as a terminal table, JSON, a Smith
//! chart with contours of output power and collector efficiency and the
//! optimum marked, and an HTML section.
//!
//! **Contours** are traced by marching squares over the grid of loads (our
//! own code): each cell of four solved neighbours is cut where the figure
//! crosses the level, linearly interpolated along its edges; a cell whose
//! two diagonals disagree (a saddle) is resolved by the mean of its four
//! corners; cells with a corner outside the disc or not solved are left
//! out, so a contour stops there rather than guess. Segments are joined
//! into polylines by the grid edge they share. Levels: output power 0.5, 1,
//! 2 and 3 dB below the grid's best (the usual steps of a load-pull chart,
//! common practice); collector efficiency 5, 10 and 20 percentage points
//! below its best.

use std::collections::HashMap;

use num_complex::Complex64;
use serde_json::{json, Value};
use tankwave_stage::loadpull::{LoadPull, Optimum, PullFigures, PullPoint};

use crate::fixed;
use crate::format::{impedance, si};
use crate::plot::smith::{Contour, SmithChart, SmithPoint};
use crate::table::{Align, Table};

/// Column headings of the per-load table (terminal and HTML).
pub const HEADER: [&str; 9] = [
    "Γ",
    "load Z",
    "pout",
    "efficiency",
    "vce peak",
    "vce min",
    "ic peak",
    "dissipation",
    "iterations",
];

/// Output-power contour levels, dB below the best grid point.
pub const POWER_STEPS_DB: [f64; 4] = [0.5, 1.0, 2.0, 3.0];
/// Efficiency contour levels, percentage points below the best grid point.
pub const EFFICIENCY_STEPS: [f64; 3] = [5.0, 10.0, 20.0];

/// Γ as people read it: `0.20-0.35j`.
pub fn gamma_text(g: Complex64) -> String {
    format!("{:.3}{:+.3}j", g.re, g.im)
}

fn pct(v: f64) -> String {
    fixed(v * 100.0, 1, "%")
}

/// The rows of the per-load table.
pub fn rows(s: &LoadPull) -> Vec<Vec<String>> {
    s.points
        .iter()
        .map(|p| {
            let mut r = vec![gamma_text(p.gamma), impedance(p.z.re, p.z.im)];
            match &p.figures {
                None => {
                    // the reason is listed below the table
                    r.push("not solved".into());
                    r.resize(HEADER.len(), String::new());
                }
                Some(f) => r.extend([
                    si(f.pout_w, "W"),
                    pct(f.efficiency),
                    si(f.vce_peak_v, "V"),
                    si(f.vce_min_v, "V"),
                    si(f.ic_peak_a, "A"),
                    si(f.dissipation_w, "W"),
                    f.iterations.to_string(),
                ]),
            }
            r
        })
        .collect()
}

/// The heading line of a load-pull.
pub fn heading(s: &LoadPull) -> String {
    format!(
        "Load-pull of {} at {}: Γ within {} of {} against {}, {}×{} grid ({} loads); harmonics held at the network's own",
        s.transistor,
        si(s.freq_hz, "Hz"),
        s.grid.radius,
        gamma_text(s.grid.center),
        si(s.grid.reference, "Ohm"),
        s.grid.points,
        s.grid.points,
        s.points.len()
    )
}

fn optimum_line(o: &Optimum, value: &str, grid: &str) -> String {
    format!(
        "{value} at Γ = {} (Z = {}){}",
        gamma_text(o.gamma),
        impedance(o.z.re, o.z.im),
        if o.refined {
            format!(", refined by a quadratic fit; best grid point {grid}")
        } else {
            " (best grid point, not refined)".to_string()
        }
    )
}

/// The key lines of a load-pull: the network's own load and the optima.
pub fn key_lines(s: &LoadPull) -> Vec<(String, String)> {
    let mut out = vec![(
        "network's own load at f0".to_string(),
        format!(
            "Z = {} (Γ = {})",
            impedance(s.network_z.re, s.network_z.im),
            gamma_text(crate::plot::smith::gamma_of(s.network_z, s.grid.reference))
        ),
    )];
    if let Some(o) = &s.best_power {
        out.push((
            "most output power".into(),
            optimum_line(o, &si(o.value, "W"), &si(o.grid_value, "W")),
        ));
    }
    if let Some(o) = &s.best_efficiency {
        out.push((
            "highest collector efficiency".into(),
            optimum_line(o, &pct(o.value), &pct(o.grid_value)),
        ));
    }
    out.push((
        "summary".into(),
        if s.unsolved == 0 {
            format!("all {} loads solved", s.points.len())
        } else {
            format!(
                "{} of {} loads not solved (listed, not dropped)",
                s.unsolved,
                s.points.len()
            )
        },
    ));
    out
}

/// The terminal section of a load-pull.
pub fn load_pull_text(s: &LoadPull) -> String {
    let mut t = Table::new(
        HEADER
            .iter()
            .enumerate()
            .map(|(k, h)| (*h, if k < 2 { Align::Left } else { Align::Right }))
            .collect(),
    );
    for r in rows(s) {
        t.row(r);
    }
    let mut out = format!("{}\n{}", heading(s), t.render());
    let unsolved: Vec<String> = s
        .points
        .iter()
        .filter(|p| p.failure.is_some())
        .map(|p| {
            format!(
                "  Γ = {}: {}",
                gamma_text(p.gamma),
                p.failure.as_deref().unwrap_or("")
            )
        })
        .collect();
    if !unsolved.is_empty() {
        out.push_str("Loads not solved\n");
        out.push_str(&unsolved.join("\n"));
        out.push('\n');
    }
    for (k, v) in key_lines(s) {
        out.push_str(&format!("{k}: {v}\n"));
    }
    out
}

fn optimum_json(o: &Option<Optimum>) -> Value {
    o.map_or(Value::Null, |o| {
        json!({
            "gamma": {"re": o.gamma.re, "im": o.gamma.im},
            "z_ohm": {"re": o.z.re, "im": o.z.im},
            "value": o.value,
            "grid_value": o.grid_value,
            "refined": o.refined,
        })
    })
}

/// The JSON of a load-pull (docs/output.md, `load_pull`).
pub fn load_pull_json(s: &LoadPull) -> Value {
    let loads: Vec<Value> = s
        .points
        .iter()
        .map(|p| {
            let f = p.figures.as_ref();
            json!({
                "i": p.i,
                "j": p.j,
                "gamma": {"re": p.gamma.re, "im": p.gamma.im},
                "z_ohm": {"re": p.z.re, "im": p.z.im},
                "solved": f.is_some(),
                "failure": p.failure,
                "pout_w": f.map(|f| f.pout_w),
                "collector_w": f.map(|f| f.collector_w),
                "pdc_w": f.map(|f| f.pdc_w),
                "efficiency": f.map(|f| f.efficiency),
                "vce_peak_v": f.map(|f| f.vce_peak_v),
                "vce_min_v": f.map(|f| f.vce_min_v),
                "ic_peak_a": f.map(|f| f.ic_peak_a),
                "dissipation_w": f.map(|f| f.dissipation_w),
                "iterations": f.map(|f| f.iterations),
            })
        })
        .collect();
    json!({
        "transistor": s.transistor,
        "freq_hz": s.freq_hz,
        "reference_ohm": s.grid.reference,
        "center": {"re": s.grid.center.re, "im": s.grid.center.im},
        "radius": s.grid.radius,
        "points": s.grid.points,
        "network_z_ohm": {"re": s.network_z.re, "im": s.network_z.im},
        "loads": loads,
        "unsolved": s.unsolved,
        "best_power": optimum_json(&s.best_power),
        "best_efficiency": optimum_json(&s.best_efficiency),
    })
}

/// Where a figure crosses `level` on the edge from `a` to `b` (values `fa`,
/// `fb` on either side of it).
fn cross(a: Complex64, b: Complex64, fa: f64, fb: f64, level: f64) -> Complex64 {
    let t = if fb == fa {
        0.5
    } else {
        ((level - fa) / (fb - fa)).clamp(0.0, 1.0)
    };
    a + (b - a) * t
}

/// An edge of the grid: horizontal from (i, j) to (i+1, j) or vertical
/// from (i, j) to (i, j+1).
type Edge = (usize, usize, bool);

/// Marching squares of `field` (`[j][i]`, `None`: no value) at `level` over
/// the grid whose point (i, j) is `at(i, j)`: polylines in the Γ plane.
pub fn contour_lines(
    field: &[Vec<Option<f64>>],
    level: f64,
    at: impl Fn(usize, usize) -> Complex64,
) -> Vec<Vec<Complex64>> {
    let n = field.len();
    let val = |i: usize, j: usize| field.get(j).and_then(|r| r.get(i)).copied().flatten();
    let point = |e: Edge| -> Option<Complex64> {
        let (i, j, horizontal) = e;
        let (i2, j2) = if horizontal { (i + 1, j) } else { (i, j + 1) };
        Some(cross(at(i, j), at(i2, j2), val(i, j)?, val(i2, j2)?, level))
    };
    let mut segments: Vec<(Edge, Edge)> = Vec::new();
    for j in 0..n.saturating_sub(1) {
        for i in 0..field.get(j).map_or(0, Vec::len).saturating_sub(1) {
            let (Some(f00), Some(f10), Some(f11), Some(f01)) =
                (val(i, j), val(i + 1, j), val(i + 1, j + 1), val(i, j + 1))
            else {
                continue;
            };
            // corners counter-clockwise and the edges between them
            let above = [f00 >= level, f10 >= level, f11 >= level, f01 >= level];
            let edges: [Edge; 4] = [
                (i, j, true),
                (i + 1, j, false),
                (i, j + 1, true),
                (i, j, false),
            ];
            let cut: Vec<Edge> = (0..4)
                .filter(|&k| above[k] != above[(k + 1) % 4])
                .map(|k| edges[k])
                .collect();
            match cut.len() {
                2 => segments.push((cut[0], cut[1])),
                4 => {
                    // a saddle: the centre decides which corners join
                    let centre = (f00 + f10 + f11 + f01) / 4.0 >= level;
                    if centre == above[0] {
                        // corner 0 joins corner 2: cut off corners 1 and 3
                        segments.push((edges[0], edges[1]));
                        segments.push((edges[2], edges[3]));
                    } else {
                        segments.push((edges[3], edges[0]));
                        segments.push((edges[1], edges[2]));
                    }
                }
                _ => {}
            }
        }
    }
    // join the segments into polylines through the edges they share
    let mut by_edge: HashMap<Edge, Vec<usize>> = HashMap::new();
    for (k, (a, b)) in segments.iter().enumerate() {
        by_edge.entry(*a).or_default().push(k);
        by_edge.entry(*b).or_default().push(k);
    }
    let mut used = vec![false; segments.len()];
    let mut lines = Vec::new();
    for start in 0..segments.len() {
        if used[start] {
            continue;
        }
        used[start] = true;
        let (a, b) = segments[start];
        let mut chain: std::collections::VecDeque<Edge> = [a, b].into_iter().collect();
        // grow at the back, then at the front
        for back in [true, false] {
            loop {
                let end = if back { chain.back() } else { chain.front() };
                let Some(&end) = end else { break };
                let next = by_edge
                    .get(&end)
                    .and_then(|v| v.iter().copied().find(|k| !used[*k]));
                let Some(k) = next else { break };
                used[k] = true;
                let (p, q) = segments[k];
                let other = if p == end { q } else { p };
                if back {
                    chain.push_back(other);
                } else {
                    chain.push_front(other);
                }
            }
        }
        let line: Vec<Complex64> = chain.into_iter().filter_map(point).collect();
        if line.len() >= 2 {
            lines.push(line);
        }
    }
    lines
}

/// Contours of one figure at `levels`, each with its label.
fn contours_of(
    s: &LoadPull,
    figure: usize,
    f: impl Fn(&PullFigures) -> f64,
    levels: &[(f64, String)],
) -> Vec<Contour> {
    let field = s.field(f);
    levels
        .iter()
        .map(|(level, label)| Contour {
            label: label.clone(),
            figure,
            lines: contour_lines(&field, *level, |i, j| s.grid.gamma(i, j)),
        })
        .filter(|c| !c.lines.is_empty())
        .collect()
}

/// The best figure over the grid points that solved.
fn grid_best(s: &LoadPull, f: impl Fn(&PullFigures) -> f64) -> Option<f64> {
    s.points
        .iter()
        .filter_map(|p| p.figures.as_ref().map(&f))
        .fold(None, |a: Option<f64>, x| Some(a.map_or(x, |a| a.max(x))))
}

/// The load-pull on a Smith chart: contours of output power and collector
/// efficiency, the optimum for power marked, the optimum for efficiency
/// ringed, loads that did not solve crossed out.
pub fn load_pull_chart(s: &LoadPull) -> SmithChart {
    let mut contours = Vec::new();
    if let Some(best) = grid_best(s, |f| f.pout_w).filter(|b| *b > 0.0) {
        let levels: Vec<(f64, String)> = POWER_STEPS_DB
            .iter()
            .map(|d| {
                let p = best * 10f64.powf(-d / 10.0);
                (p, format!("pout −{d} dB ({})", si(p, "W")))
            })
            .collect();
        contours.extend(contours_of(s, 0, |f| f.pout_w, &levels));
    }
    if let Some(best) = grid_best(s, |f| f.efficiency).filter(|b| *b > 0.0) {
        let levels: Vec<(f64, String)> = EFFICIENCY_STEPS
            .iter()
            .map(|d| {
                let e = best - d / 100.0;
                (e, format!("efficiency {}", pct(e)))
            })
            .filter(|(e, _)| *e > 0.0)
            .collect();
        contours.extend(contours_of(s, 1, |f| f.efficiency, &levels));
    }
    let mut points: Vec<SmithPoint> = s
        .points
        .iter()
        .filter(|p| p.failure.is_some())
        .map(|p: &PullPoint| SmithPoint {
            gamma: p.gamma,
            series: 0,
            worst: false,
            unsolved: true,
            label: format!("Z = {}; not solved", impedance(p.z.re, p.z.im)),
        })
        .collect();
    if let Some(o) = &s.best_efficiency {
        points.push(SmithPoint {
            gamma: o.gamma,
            series: 0,
            worst: true,
            unsolved: false,
            label: format!(
                "highest efficiency {} at Z = {}",
                pct(o.value),
                impedance(o.z.re, o.z.im)
            ),
        });
    }
    SmithChart {
        title: format!("Load-pull of {}", s.transistor),
        z0: s.grid.reference,
        series: vec!["optimum for efficiency (ringed)".into()],
        circles: false,
        points,
        contours,
        contour_figures: vec!["output power".into(), "collector efficiency".into()],
        optimum: s.best_power.map(|o| {
            (
                o.gamma,
                format!(
                    "most power {} at Z = {}",
                    si(o.value, "W"),
                    impedance(o.z.re, o.z.im)
                ),
            )
        }),
    }
}

/// The caption of the chart of a load-pull.
pub const CHART_CAPTION: &str = "Load-pull on a Smith chart: contours of output power (0.5, 1, 2, 3 dB below the best load) and collector efficiency (5, 10, 20 points below the best); marked: the load for the most power; ringed: the load for the highest efficiency.";

/// The HTML section of a load-pull (lines, table, chart).
pub fn load_pull_section(s: &LoadPull, p: &crate::plot::PlotParams) -> crate::html::StudySection {
    let mut lines = key_lines(s);
    for q in s.points.iter().filter(|q| q.failure.is_some()) {
        lines.push((
            format!("Γ = {} not solved", gamma_text(q.gamma)),
            q.failure.clone().unwrap_or_default(),
        ));
    }
    crate::html::StudySection {
        title: heading(s),
        lines,
        table: Some(crate::html::PlainTable {
            header: HEADER.iter().map(|h| h.to_string()).collect(),
            rows: rows(s),
        }),
        figures: crate::plot::smith_plot(&load_pull_chart(s), p)
            .map(|svg| crate::html::Figure {
                caption: CHART_CAPTION.into(),
                svg,
            })
            .into_iter()
            .collect(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A plane f = x on a 5×5 unit grid: the contour at 1.5 is the straight
    /// vertical line x = 1.5 across the whole grid, one polyline of 5 points.
    #[test]
    fn a_plane_gives_one_straight_contour() {
        let field: Vec<Vec<Option<f64>>> = (0..5)
            .map(|_| (0..5).map(|i| Some(i as f64)).collect())
            .collect();
        let lines = contour_lines(&field, 1.5, |i, j| Complex64::new(i as f64, j as f64));
        assert_eq!(lines.len(), 1);
        assert_eq!(lines[0].len(), 5);
        for p in &lines[0] {
            assert!((p.re - 1.5).abs() < 1e-12, "{p}");
        }
    }

    /// A cone f = −|z| sampled on a 9×9 grid: its contour at −r is a closed
    /// polygon whose vertices lie on the circle |z| = r up to the linear
    /// interpolation's error (the vertices sit on grid edges, where the
    /// interpolation of |z| along the edge errs by at most h²/(8r), h the step).
    #[test]
    fn a_cone_gives_a_closed_circle() {
        let at = |i: usize, j: usize| Complex64::new(i as f64 - 4.0, j as f64 - 4.0);
        let field: Vec<Vec<Option<f64>>> = (0..9)
            .map(|j| (0..9).map(|i| Some(-at(i, j).norm())).collect())
            .collect();
        let r = 2.5;
        let lines = contour_lines(&field, -r, at);
        assert_eq!(lines.len(), 1);
        let l = &lines[0];
        assert!((l[0] - l[l.len() - 1]).norm() < 1e-12, "closed");
        for p in l {
            assert!((p.norm() - r).abs() <= 1.0 / (8.0 * r) + 1e-12, "{p}");
        }
    }

    /// Cells with a missing corner are left out: no contour crosses them.
    #[test]
    fn missing_values_stop_a_contour() {
        let mut field: Vec<Vec<Option<f64>>> = (0..3)
            .map(|_| (0..3).map(|i| Some(i as f64)).collect())
            .collect();
        field[1][1] = None;
        let lines = contour_lines(&field, 0.5, |i, j| Complex64::new(i as f64, j as f64));
        assert!(lines.is_empty(), "{lines:?}");
    }
}
