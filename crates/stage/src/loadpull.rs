//! Load-pull: the load one transistor's collector sees at the fundamental
//! moved over a grid of reflection coefficients, its harmonic terminations
//! (and DC) held at those of its own network; per load the output power,
//! collector efficiency, peaks and dissipation; the optimum load for power
//! and for efficiency (docs/analyses.md, "Load-pull").
//!
//! **How the load is realised.** Harmonic balance treats the linear network
//! harmonic by harmonic, so a load that differs at the fundamental only is
//! exact there: across the collector and emitter a frequency-domain
//! admittance `Y_add` is placed that is zero at DC and at every harmonic
//! `k ≠ 1` and `Y_add = 1/Z(Γ) − Y_net(f0)` at the fundamental, where
//! `Y_net(f0)` is the small-signal admittance of the collector's own
//! external network at f0 (the network with the transistor removed,
//! [`tankwave_solve::impedance_without`]). The collector then sees
//! `Y_net + Y_add = 1/Z(Γ)` at f0 and its own network at every other
//! harmonic. `Y_add` may have a negative real part (the network's own loss
//! is taken back); it exists only at f0, where the total is passive. The
//! element is a one-point measured network (open outside its point), so
//! every steady state of the sweep is harmonic balance: shooting and
//! settling integrate in time and cannot hold a load that exists at one
//! frequency only without a rational realisation.
//!
//! **Grid.** Γ = x + jy on a square grid of `points × points` over the box
//! around `center` of half-width `radius`, kept where |Γ − center| ≤ radius;
//! Z(Γ) = Z0 (1 + Γ)/(1 − Γ) (D. M. Pozar, Microwave Engineering, 4th ed.,
//! §2.3). The loads are solved row by row, each row in the opposite
//! direction to the one before, each warm-started from the last load that
//! solved (its neighbour on the grid, or the nominal stage for the first).
//!
//! **Figures.** With `V_k` and `I_k` the phasors (peak) of the
//! collector–emitter voltage and of the current into the collector at k·f0:
//! output power `P = ½ |V_1|² Re(1/Z(Γ))`, the fundamental power delivered
//! into the load at the collector reference (before any loss of the output
//! network; equal to the collector's own `−½ Re(V_1 · conj(I_1))` when
//! nothing else nonlinear sits across the collector, both are kept); collector DC power `P_dc = V_0 · I_0`;
//! collector efficiency `η = P / P_dc`; peak v_ce and i_c, and the
//! transistor's dissipation, as the stage's own figures.
//!
//! **Optimum.** The grid point with the largest figure, refined by a
//! least-squares quadratic `f = a + b x + c y + d x² + e xy + g y²` over it
//! and its eight neighbours (all solved): the stationary point of the
//! quadratic, accepted when the quadratic has a maximum there (negative
//! definite) inside the 3 × 3 box and within the grid's disc and its value
//! there is not below the best grid point's (a least-squares quadratic
//! passes under a sharp peak, such as the corner where the current and
//! voltage limits meet), else the grid point itself (`refined = false`).

use num_complex::Complex64;
use std::sync::Arc;
use tankwave_circuit::touchstone::{MeasuredNetwork, Outside};
use tankwave_circuit::{
    Analysis, Circuit, Element, ElementId, ElementKind, LoadPullSpec, NodeId, SteadyMethod,
};

use crate::mismatch::{load_impedance, steady_freq};
use crate::solve::{solve, Caps, Scope, SolveOptions};
use crate::StageError;

/// The region of loads and how finely it is sampled.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PullGrid {
    /// Reference impedance Z0 of Γ, Ω.
    pub reference: f64,
    /// Middle of the region.
    pub center: Complex64,
    /// Radius of the disc of Γ around `center`.
    pub radius: f64,
    /// Grid points across the disc in each direction (≥ 3).
    pub points: usize,
}

impl From<&LoadPullSpec> for PullGrid {
    fn from(s: &LoadPullSpec) -> Self {
        PullGrid {
            reference: s.reference,
            center: Complex64::new(s.center.0, s.center.1),
            radius: s.radius,
            points: s.points,
        }
    }
}

impl PullGrid {
    /// The grid step in Γ.
    pub fn step(&self) -> f64 {
        2.0 * self.radius / (self.points.max(2) - 1) as f64
    }

    /// Γ at column `i`, row `j`.
    pub fn gamma(&self, i: usize, j: usize) -> Complex64 {
        let h = self.step();
        self.center + Complex64::new(-self.radius + i as f64 * h, -self.radius + j as f64 * h)
    }

    /// Whether (i, j) lies in the disc (a relative 1e-9 of the radius
    /// admits the points on its edge despite rounding).
    pub fn inside(&self, i: usize, j: usize) -> bool {
        (self.gamma(i, j) - self.center).norm() <= self.radius * (1.0 + 1e-9)
    }

    /// The grid points in the disc, in the order they are solved: rows from
    /// the bottom, alternate rows backwards, so consecutive points are
    /// neighbours.
    pub fn order(&self) -> Vec<(usize, usize)> {
        let n = self.points;
        let mut out = Vec::new();
        for j in 0..n {
            for k in 0..n {
                let i = if j % 2 == 0 { k } else { n - 1 - k };
                if self.inside(i, j) {
                    out.push((i, j));
                }
            }
        }
        out
    }
}

/// One load of the grid and what it gave.
#[derive(Debug, Clone, PartialEq)]
pub struct PullPoint {
    /// Column of the grid.
    pub i: usize,
    /// Row of the grid.
    pub j: usize,
    /// The reflection coefficient against the reference.
    pub gamma: Complex64,
    /// The load at the fundamental, Ω.
    pub z: Complex64,
    /// The figures; `None` when this load did not solve.
    pub figures: Option<PullFigures>,
    /// Why it did not solve.
    pub failure: Option<String>,
}

/// The figures of one load (see the module documentation).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PullFigures {
    /// Fundamental power delivered into the load at the collector,
    /// `½ |V_1|² Re(1/Z)`, W.
    pub pout_w: f64,
    /// Fundamental power the transistor's collector delivers,
    /// `−½ Re(V_1 · conj(I_1))`, W: equal to `pout_w` when nothing else
    /// nonlinear is connected across the collector (Kirchhoff's current law
    /// at f0, where the network is exactly 1/Z).
    pub collector_w: f64,
    /// Collector DC power V_0 · I_0, W.
    pub pdc_w: f64,
    /// Collector efficiency P / P_dc (0 to 1).
    pub efficiency: f64,
    /// Peak collector–emitter voltage, V.
    pub vce_peak_v: f64,
    /// Minimum collector–emitter voltage, V.
    pub vce_min_v: f64,
    /// Peak collector current, A.
    pub ic_peak_a: f64,
    /// Average dissipation of the transistor, W.
    pub dissipation_w: f64,
    /// Newton iterations of the harmonic balance.
    pub iterations: usize,
}

/// The optimum load for one figure.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Optimum {
    /// Where, in Γ.
    pub gamma: Complex64,
    /// The load there, Ω.
    pub z: Complex64,
    /// The figure there (from the quadratic when refined), in its unit (W
    /// or a fraction).
    pub value: f64,
    /// The best grid point's figure, same unit.
    pub grid_value: f64,
    /// Whether the quadratic refinement was accepted.
    pub refined: bool,
}

/// The result of a load-pull.
#[derive(Debug, Clone)]
pub struct LoadPull {
    /// The transistor pulled.
    pub transistor: String,
    /// The grid.
    pub grid: PullGrid,
    /// The fundamental frequency, Hz.
    pub freq_hz: f64,
    /// The impedance of the collector's own network at the fundamental
    /// (what the nominal stage presents), Ω.
    pub network_z: Complex64,
    /// Every load in the disc, in the order solved.
    pub points: Vec<PullPoint>,
    /// Loads that did not solve.
    pub unsolved: usize,
    /// The load for the most output power (`None` when nothing solved).
    pub best_power: Option<Optimum>,
    /// The load for the highest collector efficiency.
    pub best_efficiency: Option<Optimum>,
}

impl LoadPull {
    /// The point at column `i`, row `j`, if it is in the disc.
    pub fn at(&self, i: usize, j: usize) -> Option<&PullPoint> {
        self.points.iter().find(|p| p.i == i && p.j == j)
    }

    /// A figure over the grid, `[j][i]` (`None` outside the disc or unsolved).
    pub fn field(&self, f: impl Fn(&PullFigures) -> f64) -> Vec<Vec<Option<f64>>> {
        let n = self.grid.points;
        let mut out = vec![vec![None; n]; n];
        for p in &self.points {
            if let Some(fig) = &p.figures {
                out[p.j][p.i] = Some(f(fig));
            }
        }
        out
    }
}

fn setup(msg: String) -> StageError {
    StageError::LoadPull(msg)
}

/// The collector and emitter of `transistor`.
pub fn collector_port(
    circuit: &Circuit,
    transistor: ElementId,
) -> Result<(NodeId, NodeId), StageError> {
    match circuit.elements.get(transistor.index()).map(|e| &e.kind) {
        Some(ElementKind::Bjt { c, e, .. }) => Ok((*c, *e)),
        _ => Err(setup(format!(
            "element #{} is not a transistor",
            transistor.index()
        ))),
    }
}

/// The stage with its steady states set to harmonic balance and a
/// fundamental-only admittance `y_add` across `port` (module documentation).
pub fn with_fundamental_admittance(
    circuit: &Circuit,
    port: (NodeId, NodeId),
    y_add: Complex64,
    freq: f64,
) -> Circuit {
    let mut c = circuit.clone();
    for a in &mut c.analyses {
        if let Analysis::Steady { method, .. } = a {
            *method = SteadyMethod::Balance;
        }
    }
    let origin = circuit
        .elements
        .first()
        .map(|e| e.origin.clone())
        .unwrap_or_default();
    c.elements.push(Element {
        name: "loadpull_fundamental".into(),
        kind: ElementKind::Measured {
            ports: vec![port],
            network: Arc::new(MeasuredNetwork {
                ports: 1,
                freqs: vec![freq],
                values: vec![y_add],
                outside: Outside::Open,
                fit: None,
            }),
        },
        origin,
    });
    c
}

/// The impedance of the collector's own network at `freq`, Ω.
pub fn network_impedance(
    circuit: &Circuit,
    transistor: ElementId,
    freq: f64,
) -> Result<Complex64, StageError> {
    let port = collector_port(circuit, transistor)?;
    let d = tankwave_devices::instantiate(circuit).map_err(StageError::Devices)?;
    let z = tankwave_solve::impedance_without(circuit, &d, transistor, port, &[freq])?;
    z.first()
        .copied()
        .filter(|z| z.re.is_finite() && z.im.is_finite() && z.norm() > 0.0)
        .ok_or_else(|| {
            setup(format!(
                "the collector's network has no finite, non-zero impedance at {freq} Hz"
            ))
        })
}

/// Run the load-pull `spec` on the stage, starting from its nominal steady
/// state.
pub fn load_pull(circuit: &Circuit, spec: &LoadPullSpec) -> Result<LoadPull, StageError> {
    let nominal = solve(circuit, &SolveOptions::scope(Scope::Requirements))?;
    let warm = nominal.steady.as_ref().map(|s| s.warm_start());
    load_pull_from(circuit, spec, warm.as_deref(), None)
}

/// [`load_pull`] from the nominal stage's state at the start of its period
/// (`None`: the first load starts cold), each solve bounded by `caps`.
pub fn load_pull_from(
    circuit: &Circuit,
    spec: &LoadPullSpec,
    nominal: Option<&[f64]>,
    caps: Option<Caps>,
) -> Result<LoadPull, StageError> {
    let grid = PullGrid::from(spec);
    let limit = tankwave_circuit::options::analysis::GAMMA_MAX;
    if !(grid.reference.is_finite() && grid.reference > 0.0)
        || grid.points < 3
        || !(grid.radius > 0.0 && grid.center.norm() + grid.radius <= limit)
    {
        return Err(setup(format!(
            "a grid needs a positive reference, at least 3 points across and a disc inside \
             |Γ| ≤ {limit}; got {} Ω, {} points, center {} and radius {}",
            grid.reference, grid.points, grid.center, grid.radius
        )));
    }
    let freq = steady_freq(circuit)?;
    let port = collector_port(circuit, spec.transistor)?;
    let name = circuit.elements[spec.transistor.index()].name.clone();
    let network_z = network_impedance(circuit, spec.transistor, freq)?;
    let y_net = 1.0 / network_z;
    let mut warm: Option<Vec<f64>> = nominal.map(<[f64]>::to_vec);
    let mut points = Vec::new();
    for (i, j) in grid.order() {
        let gamma = grid.gamma(i, j);
        let z = load_impedance(grid.reference, gamma);
        let mut p = PullPoint {
            i,
            j,
            gamma,
            z,
            figures: None,
            failure: None,
        };
        let c = with_fundamental_admittance(circuit, port, 1.0 / z - y_net, freq);
        match solve_point(&c, z, spec.transistor, port, warm.as_deref(), caps) {
            Ok((f, w)) => {
                p.figures = Some(f);
                warm = Some(w);
            }
            Err(e) => p.failure = Some(e.to_string()),
        }
        points.push(p);
    }
    let unsolved = points.iter().filter(|p| p.failure.is_some()).count();
    let mut out = LoadPull {
        transistor: name,
        grid,
        freq_hz: freq,
        network_z,
        points,
        unsolved,
        best_power: None,
        best_efficiency: None,
    };
    out.best_power = optimum(&out, |f| f.pout_w);
    out.best_efficiency = optimum(&out, |f| f.efficiency);
    Ok(out)
}

/// Solve one load by harmonic balance and measure it at the collector;
/// the state at the start of its period is returned for the next load's
/// warm start. The stage's own output figures are not measured here: with
/// the fundamental-only admittance in place (which may take back the
/// network's loss), the output resistor's power is not what the load at
/// the collector takes.
fn solve_point(
    c: &Circuit,
    z: Complex64,
    transistor: ElementId,
    port: (NodeId, NodeId),
    warm: Option<&[f64]>,
    caps: Option<Caps>,
) -> Result<(PullFigures, Vec<f64>), StageError> {
    let devices = tankwave_devices::instantiate(c).map_err(StageError::Devices)?;
    let mut p = c
        .analyses
        .iter()
        .find_map(tankwave_solve::SteadyParams::from_analysis)
        .ok_or(StageError::RequirementsWithoutSteady)?;
    p.method = SteadyMethod::Balance;
    p.balance.initial = warm.map(<[f64]>::to_vec);
    if let Some(caps) = &caps {
        crate::solve::cap_steady(&mut p, caps);
    }
    let sol = tankwave_solve::steady(c, &devices, &p)?;
    let k = sol.harmonics;
    let n = sol.samples_per_period;
    let node = |v: NodeId| -> Vec<f64> {
        tankwave_devices::UnknownId::voltage(v)
            .and_then(|u| sol.x.get(u.index()).cloned())
            .unwrap_or_else(|| vec![0.0; n])
    };
    let (a, b) = (node(port.0), node(port.1));
    let vce: Vec<f64> = a.iter().zip(&b).map(|(a, b)| a - b).collect();
    let currents = sol
        .terminal_currents
        .get(transistor.index())
        .ok_or_else(|| setup("the transistor's terminal currents are missing".into()))?;
    let ic = currents
        .first()
        .ok_or_else(|| setup("the transistor's collector current is missing".into()))?;
    let sv = tankwave_measure::spectrum(&vce, k).map_err(StageError::Measure)?;
    let si = tankwave_measure::spectrum(ic, k).map_err(StageError::Measure)?;
    let pout_w = 0.5 * sv.phasor(1).norm_sqr() * (1.0 / z).re;
    let collector_w = -0.5 * (sv.phasor(1) * si.phasor(1).conj()).re;
    let pdc_w = sv.dc() * si.dc();
    let efficiency = if pdc_w > 0.0 { pout_w / pdc_w } else { 0.0 };
    // a pnp works with v_ce and i_c negative: its figures are read with the
    // signs flipped so that normal operation reads positive
    let sign = if sv.dc() < 0.0 { -1.0 } else { 1.0 };
    let fold =
        |v: &[f64], f: fn(f64, f64) -> f64, init: f64| v.iter().map(|x| sign * x).fold(init, f);
    // dissipation: the mean over the period of Σ v_k i_k over the terminals
    let terminals = c
        .elements
        .get(transistor.index())
        .map(|e| e.kind.terminals())
        .unwrap_or_default();
    let mut dissipation_w = 0.0;
    for (t, i) in terminals.iter().zip(currents) {
        let v = node(*t);
        dissipation_w += v.iter().zip(i).map(|(v, i)| v * i).sum::<f64>() / n.max(1) as f64;
    }
    let f = PullFigures {
        pout_w,
        collector_w,
        pdc_w,
        efficiency,
        vce_peak_v: fold(&vce, f64::max, f64::NEG_INFINITY),
        vce_min_v: fold(&vce, f64::min, f64::INFINITY),
        ic_peak_a: fold(ic, f64::max, f64::NEG_INFINITY),
        dissipation_w,
        iterations: sol.info.iterations,
    };
    let all = [
        f.pout_w,
        f.collector_w,
        f.pdc_w,
        f.efficiency,
        f.vce_peak_v,
        f.vce_min_v,
        f.ic_peak_a,
        f.dissipation_w,
    ];
    if !all.iter().all(|v| v.is_finite()) {
        return Err(setup(format!(
            "the figures at this load are not finite (P = {pout_w} W, P_dc = {pdc_w} W)"
        )));
    }
    let warm = sol
        .x
        .iter()
        .map(|u| u.first().copied().unwrap_or(0.0))
        .collect();
    Ok((f, warm))
}

/// The optimum of `figure` over the grid (module documentation).
pub fn optimum(pull: &LoadPull, figure: impl Fn(&PullFigures) -> f64) -> Option<Optimum> {
    let best = pull
        .points
        .iter()
        .filter_map(|p| p.figures.as_ref().map(|f| (p, figure(f))))
        .max_by(|a, b| a.1.total_cmp(&b.1))?;
    let (p, v) = best;
    let grid_only = Optimum {
        gamma: p.gamma,
        z: p.z,
        value: v,
        grid_value: v,
        refined: false,
    };
    let h = pull.grid.step();
    let mut rows = Vec::with_capacity(9);
    for dj in -1i64..=1 {
        for di in -1i64..=1 {
            let (i, j) = (p.i as i64 + di, p.j as i64 + dj);
            if i < 0 || j < 0 {
                return Some(grid_only);
            }
            let Some(f) = pull
                .at(i as usize, j as usize)
                .and_then(|q| q.figures.as_ref())
            else {
                return Some(grid_only);
            };
            rows.push((di as f64, dj as f64, figure(f)));
        }
    }
    // least squares in the grid's own units (steps), then back to Γ
    let a = nalgebra::DMatrix::from_fn(9, 6, |r, c| {
        let (x, y, _) = rows[r];
        [1.0, x, y, x * x, x * y, y * y][c]
    });
    let bv = nalgebra::DVector::from_iterator(9, rows.iter().map(|r| r.2));
    let coef = a.svd(true, true).solve(&bv, 1e-12).ok()?;
    let (b, c, d, e, g) = (coef[1], coef[2], coef[3], coef[4], coef[5]);
    // maximum: Hessian [[2d, e], [e, 2g]] negative definite
    let det = 4.0 * d * g - e * e;
    if !(d < 0.0 && det > 0.0) {
        return Some(grid_only);
    }
    let x = (-2.0 * g * b + e * c) / det;
    let y = (-2.0 * d * c + e * b) / det;
    let gamma = p.gamma + Complex64::new(x * h, y * h);
    let inside = (gamma - pull.grid.center).norm() <= pull.grid.radius;
    if !(x.abs() <= 1.0 && y.abs() <= 1.0 && inside) {
        return Some(grid_only);
    }
    let value = coef[0] + b * x + c * y + d * x * x + e * x * y + g * y * y;
    // a quadratic whose top lies below the best grid point does not
    // describe the peak (a least-squares fit passes under a sharp one, as
    // at the corner of the current and voltage limits)
    if value < v {
        return Some(grid_only);
    }
    Some(Optimum {
        gamma,
        z: load_impedance(pull.grid.reference, gamma),
        value,
        grid_value: v,
        refined: true,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn grid(points: usize) -> PullGrid {
        PullGrid {
            reference: 50.0,
            center: Complex64::new(0.1, -0.2),
            radius: 0.4,
            points,
        }
    }

    /// The grid spans the disc's bounding box, keeps only the disc and
    /// visits neighbours one after another.
    #[test]
    fn the_grid_covers_the_disc_in_neighbour_order() {
        let g = grid(5);
        assert!((g.gamma(0, 0) - Complex64::new(-0.3, -0.6)).norm() < 1e-12);
        assert!((g.gamma(4, 4) - Complex64::new(0.5, 0.2)).norm() < 1e-12);
        let o = g.order();
        // the 5×5 grid of step radius/2 keeps the 13 points at distance ≤ radius
        assert_eq!(o.len(), 13);
        for w in o.windows(2) {
            let d = (g.gamma(w[0].0, w[0].1) - g.gamma(w[1].0, w[1].1)).norm();
            assert!(d <= 2.0 * g.step() + 1e-12, "{w:?} are {d} apart");
        }
    }

    /// A quadratic figure's maximum off the grid is found exactly by the
    /// refinement (the fit is exact for a quadratic).
    #[test]
    fn the_refinement_finds_a_quadratic_maximum_between_grid_points() {
        let g = grid(9);
        let peak = Complex64::new(0.17, -0.23);
        let f = |z: Complex64| 10.0 - 3.0 * (z - peak).norm_sqr() - (z - peak).re * (z - peak).im;
        let points = g
            .order()
            .into_iter()
            .map(|(i, j)| {
                let gamma = g.gamma(i, j);
                PullPoint {
                    i,
                    j,
                    gamma,
                    z: load_impedance(50.0, gamma),
                    figures: Some(PullFigures {
                        pout_w: f(gamma),
                        collector_w: f(gamma),
                        pdc_w: 1.0,
                        efficiency: 0.5,
                        vce_peak_v: 0.0,
                        vce_min_v: 0.0,
                        ic_peak_a: 0.0,
                        dissipation_w: 0.0,
                        iterations: 0,
                    }),
                    failure: None,
                }
            })
            .collect();
        let pull = LoadPull {
            transistor: "q".into(),
            grid: g,
            freq_hz: 1.0,
            network_z: Complex64::new(50.0, 0.0),
            points,
            unsolved: 0,
            best_power: None,
            best_efficiency: None,
        };
        let o = optimum(&pull, |f| f.pout_w).expect("an optimum");
        assert!(o.refined);
        assert!((o.gamma - peak).norm() < 1e-9, "{}", o.gamma);
        assert!((o.value - 10.0).abs() < 1e-9);
        assert!(o.grid_value < o.value);
    }
}
