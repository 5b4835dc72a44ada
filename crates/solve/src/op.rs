//! DC operating point: Newton–Raphson with device limiting, then junction_leak
//! stepping and source stepping as fallbacks.
//!
//! The operating point solves `i(x, t) = 0` (capacitors open, inductors
//! shorted) with every source at its value at `params.time` (default 0) with
//! its time-varying part scaled by `params.wave_scale` (default 1; the AC
//! analysis uses 0, the pure bias point).
//!
//! Fallbacks, tried in order when plain Newton fails:
//! 1. junction-leak stepping: a shunt conductance from every node to ground, started
//!    at `leak_start` and divided by 10 per stage down to zero, each stage
//!    starting from the previous solution;
//! 2. source stepping: every source's constant part scaled by `dc_scale`
//!    from 0 to 1 in adaptive increments (halved on failure, grown 1.5× on
//!    success).

use crate::linalg::LinearSolver;
use crate::newton::{self, Failure, System, Tolerances, Workspace};
use crate::SolveError;
use tankwave_circuit::{Circuit, ElementId};
use tankwave_devices::{DeviceSet, EvalCtx, OpFigure, UnknownId, UnknownKind};

/// Options of the operating point.
#[derive(Debug, Clone, PartialEq)]
pub struct OpParams {
    /// Newton tolerances.
    pub tol: Tolerances,
    /// Newton iteration limit per solve (default 100).
    pub max_iter: usize,
    /// Junction conductance the devices add, S (default 1e-12).
    pub junction_leak: f64,
    /// Try junction-leak stepping when plain Newton fails (default true).
    pub leak_stepping: bool,
    /// First shunt conductance of junction-leak stepping, S (default 1e-2).
    pub leak_start: f64,
    /// Try source stepping when junction-leak stepping fails (default true).
    pub source_stepping: bool,
    /// Time at which the sources are evaluated, s (default 0).
    pub time: f64,
    /// Scale of the time-varying part of the sources (default 1).
    pub wave_scale: f64,
    /// Linear solver.
    pub linear_solver: LinearSolver,
}

impl Default for OpParams {
    fn default() -> Self {
        Self {
            tol: Tolerances::default(),
            max_iter: 100,
            junction_leak: 1e-12,
            leak_stepping: true,
            leak_start: 1e-2,
            source_stepping: true,
            time: 0.0,
            wave_scale: 1.0,
            linear_solver: LinearSolver::default(),
        }
    }
}

/// How the operating point was finally reached.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Strategy {
    /// Plain Newton from the initial guess.
    Newton,
    /// junction-leak stepping with this many stages.
    LeakStepping {
        /// Stages solved.
        stages: usize,
    },
    /// Source stepping with this many stages.
    SourceStepping {
        /// Stages solved.
        stages: usize,
    },
}

/// Convergence report of a Newton-based solve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NewtonInfo {
    /// Newton iterations in total (all stages).
    pub iterations: usize,
    /// Largest residual magnitude at the solution (A for node equations, V for branch equations).
    pub residual: f64,
    /// The strategy that succeeded.
    pub strategy: Strategy,
}

/// Operating-point figures of one device.
#[derive(Debug, Clone, PartialEq)]
pub struct DeviceOp {
    /// The element.
    pub element: ElementId,
    /// Element name.
    pub name: String,
    /// The unknown carrying its branch current, if it has one (voltage
    /// sources, inductors): see [`tankwave_devices::Device::branch`].
    pub branch: Option<UnknownId>,
    /// Figures from [`tankwave_devices::Device::op_info`] (SI units).
    pub figures: Vec<(OpFigure, f64)>,
}

/// The operating point.
#[derive(Debug, Clone, PartialEq)]
pub struct OpResult {
    /// Every unknown (node voltages first, then branch currents and internal nodes).
    pub x: Vec<f64>,
    /// Their display names (`V[coll]`, `I[rfc]`, see [`tankwave_devices::names`]).
    pub names: Vec<String>,
    /// Their kinds (and so their units, [`UnknownKind::unit`]).
    pub kinds: Vec<UnknownKind>,
    /// How it converged.
    pub info: NewtonInfo,
    /// Device operating-point figures (devices that report any).
    pub devices: Vec<DeviceOp>,
}

impl OpResult {
    /// Value of unknown `u` (from [`DeviceSet::voltage_of`] and the other handle lookups).
    pub fn at(&self, u: UnknownId) -> f64 {
        self.x.get(u.index()).copied().unwrap_or(f64::NAN)
    }
    /// Value of the unknown a person named (e.g. `V[coll]` typed on the
    /// command line, see [`tankwave_devices::names`]); code uses [`OpResult::at`].
    pub fn value(&self, name: &str) -> Option<f64> {
        self.names.iter().position(|n| n == name).map(|k| self.x[k])
    }
}

/// Compute the DC operating point of `devices` (built from `circuit`).
pub fn operating_point(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &OpParams,
) -> Result<OpResult, SolveError> {
    let mut state = devices.initial_state();
    let x0 = vec![0.0; devices.n_unknowns];
    let (x, info) = solve_op(devices, params, &x0, &mut state)?;
    let ctx = base_ctx(params, 1.0);
    let mut devs = Vec::new();
    for d in &devices.devices {
        let figures = d.op_info(&x, &ctx);
        if !figures.is_empty() {
            let element = d.element();
            devs.push(DeviceOp {
                element,
                name: circuit
                    .elements
                    .get(element.index())
                    .map(|e| e.name.clone())
                    .unwrap_or_default(),
                branch: d.branch(),
                figures,
            });
        }
    }
    Ok(OpResult {
        x,
        names: devices.names.clone(),
        kinds: devices.kinds.clone(),
        info,
        devices: devs,
    })
}

fn base_ctx(params: &OpParams, dc_scale: f64) -> EvalCtx {
    EvalCtx {
        time: params.time,
        dc_scale,
        wave_scale: params.wave_scale * dc_scale,
        junction_leak: params.junction_leak,
        limit: true,
    }
}

/// Solve the operating point from `x0` with the device `state` (kept for later analyses).
pub(crate) fn solve_op(
    devices: &DeviceSet,
    params: &OpParams,
    x0: &[f64],
    state: &mut [f64],
) -> Result<(Vec<f64>, NewtonInfo), SolveError> {
    let n = devices.n_unknowns;
    if x0.len() != n {
        return Err(SolveError::BadParams(format!(
            "initial guess has {} values for {} unknowns",
            x0.len(),
            n
        )));
    }
    if n == 0 {
        return Ok((
            Vec::new(),
            NewtonInfo {
                iterations: 0,
                residual: 0.0,
                strategy: Strategy::Newton,
            },
        ));
    }
    let mut ws = Workspace::new(n, params.linear_solver);
    let mut sys = System {
        devices,
        ctx: base_ctx(params, 1.0),
        alpha: 0.0,
        hist: None,
        gshunt: 0.0,
        tol: params.tol,
        max_iter: params.max_iter,
    };
    let mut total = 0usize;
    // 1. Plain Newton.
    let mut x = x0.to_vec();
    let first = match newton::solve(&sys, &mut ws, &mut x, state) {
        Ok(c) => {
            return Ok((
                x,
                NewtonInfo {
                    iterations: c.iterations,
                    residual: c.residual,
                    strategy: Strategy::Newton,
                },
            ))
        }
        Err(f) => {
            total += iterations_of(&f, params.max_iter);
            f
        }
    };
    // 2. junction-leak stepping.
    if params.leak_stepping {
        let mut x = x0.to_vec();
        let mut st = devices.initial_state();
        let mut g = params.leak_start;
        let mut stages = 0usize;
        let mut ok = true;
        let mut its = 0usize;
        loop {
            sys.gshunt = g;
            match newton::solve(&sys, &mut ws, &mut x, &mut st) {
                Ok(c) => {
                    its += c.iterations;
                    stages += 1;
                    if g == 0.0 {
                        state.copy_from_slice(&st);
                        return Ok((
                            x,
                            NewtonInfo {
                                iterations: total + its,
                                residual: c.residual,
                                strategy: Strategy::LeakStepping { stages },
                            },
                        ));
                    }
                }
                Err(f) => {
                    its += iterations_of(&f, params.max_iter);
                    ok = false;
                }
            }
            if !ok {
                break;
            }
            g = if g <= params.junction_leak.max(1e-15) {
                0.0
            } else {
                g / 10.0
            };
        }
        total += its;
        sys.gshunt = 0.0;
    }
    // 3. Source stepping.
    if params.source_stepping {
        let mut x = vec![0.0; n];
        let mut st = devices.initial_state();
        let mut scale = 0.0f64;
        let mut inc = 0.1f64;
        let mut stages = 0usize;
        let mut its = 0usize;
        // Solve at zero drive first.
        sys.ctx = base_ctx(params, 0.0);
        let mut good = newton::solve(&sys, &mut ws, &mut x, &mut st).is_ok();
        if good {
            loop {
                let target = (scale + inc).min(1.0);
                let mut xt = x.clone();
                let mut stt = st.clone();
                sys.ctx = base_ctx(params, target);
                match newton::solve(&sys, &mut ws, &mut xt, &mut stt) {
                    Ok(c) => {
                        its += c.iterations;
                        stages += 1;
                        x = xt;
                        st = stt;
                        scale = target;
                        if scale >= 1.0 {
                            state.copy_from_slice(&st);
                            return Ok((
                                x,
                                NewtonInfo {
                                    iterations: total + its,
                                    residual: c.residual,
                                    strategy: Strategy::SourceStepping { stages },
                                },
                            ));
                        }
                        inc = (inc * 1.5).min(0.5);
                    }
                    Err(f) => {
                        its += iterations_of(&f, params.max_iter);
                        inc *= 0.5;
                        if inc < 1e-6 {
                            good = false;
                            break;
                        }
                    }
                }
            }
        }
        let _ = good;
    }
    Err(newton::to_error(first, devices, "operating point", None))
}

fn iterations_of(f: &Failure, max: usize) -> usize {
    match f {
        Failure::NoConvergence { iterations, .. } => *iterations,
        _ => max.min(1),
    }
}
