//! Tuning: move the `tune` parameters within their ranges to optimise a goal.
//!
//! The caller supplies the objective (the CLI elaborates, solves and measures
//! the stage at the given parameter values and drive scale); this module
//! only searches. Method: Nelder–Mead (argmin 0.11, on `Vec<f64>`), with
//! restarts from the best point found.
//!
//! Bounds: each parameter x in [a, b] is searched through an unbounded
//! coordinate y with x = a + (b − a)·(1 + sin y)/2. Every y maps inside the
//! range, the ends are reachable (y = ±π/2), and the map is smooth, so the
//! simplex method needs no special case at the bounds (a transform commonly
//! used for bounded fits; common practice). The search starts at the middle
//! of each range (or at a given start), with a first simplex step of
//! `initial_step`·π in y (a quarter of the range by default).
//!
//! Cost, normalised so that the stopping tolerance is relative:
//! * `MaximisePout`: −pout / |pout at the start| (1 W if that is 0);
//! * `MaximiseEfficiencyAt { pout_min }`: −efficiency + 10·max(0, 1 − pout/pout_min)
//!   (a 10% power shortfall outweighs any efficiency gain);
//! * `MinimiseInputVswr`: VSWR.
//!
//! An evaluation that fails or lacks a needed figure costs 10⁶ (far above
//! any real cost) and is counted. The search stops when the standard
//! deviation of the costs over the simplex falls below `tolerance`, or after
//! `max_iters` iterations per start.
//!
//! Reduced drive: with `search_drive = Some(s)` the objective is asked at
//! drive scale s during the search (the caller scales its source, e.g. with
//! `tankwave_stage::scale_drive`), and the optimum is then reported at full drive (scale 1),
//! with the figures at the search drive beside it. A minimum output power is
//! a full-drive promise, so at the search drive it is judged against the
//! power the start point gives there (`pout_min` times the ratio of the start
//! point's output power at the search drive to that at full drive), and the
//! search then goes on at full drive from the reduced-drive optimum (one
//! Nelder–Mead run with a quarter of the first step) with the true constraint.
//!
//! The constraint keeps its promise. `MaximiseEfficiencyAt { pout_min }` is
//! searched against `pout_min·(1 + pout_margin)` (default margin 1e-3, more
//! than twice the largest disagreement in output power between the
//! steady-state methods at their defaults, 4e-4, docs/analyses.md). The
//! optimum is rounded to [`OPTIMUM_DIGITS`] significant digits, the digits
//! printed, so the values a person copies into the stage file are the ones
//! checked; it is then solved afresh at full drive with the stage's own
//! method and with every method in `confirm_methods` (balance, shooting,
//! settle by default). When the smallest output power among them falls short
//! of `pout_min` by less than 1% (method disagreement or rounding), the
//! margin is raised to twice the shortfall plus the old margin and the
//! full-drive search runs once more; if it still falls short, or fell short
//! by more (no point of the search meets the minimum), the result says so
//! ([`ConstraintCheck::met`] false) and the caller fails.
//!
//! Sharpness of the optimum, per parameter: the relative change of the goal
//! figure (pout, efficiency or VSWR), (f(x ± δ) − f(x))/|f(x)|, when that
//! parameter alone moves by δ = `sharpness_step`·|x| (1% by default) down
//! and up, at full drive. `None` where x ± δ leaves the range or the
//! evaluation fails. A sharp peak (large drops) means a touchy adjustment.
//!
//! Map around the optimum ([`map_around`]), for plots: the goal figure is
//! evaluated afresh on a regular grid around the optimum, at full drive
//! (the conditions the optimum is reported at). The optimiser's own
//! evaluations are not reused: they cluster where the simplex went, lie
//! on no grid, and are at the search drive when that is reduced, so they
//! would give a lopsided picture. With two parameters the grid covers both
//! (a surface); with one, or more than two, each parameter is swept alone
//! with the others held at the optimum (one curve each). The window of each
//! parameter is `span` × its range wide, centred on the optimum and shifted
//! to stay inside the range; the points are evenly spaced over it, and a
//! curve also holds the optimum itself. Points are evaluated in parallel
//! (rayon's global pool) and come back in grid order.

use std::collections::BTreeMap;
use std::sync::atomic::{AtomicU64, Ordering};

use argmin::core::{CostFunction, Executor, State, TerminationReason, TerminationStatus};
use argmin::solver::neldermead::NelderMead;
use rayon::prelude::*;
use tankwave_circuit::{SteadyMethod, Tune};

use crate::StudyError;

/// What the tuner optimises.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum TuneGoal {
    /// Largest output power.
    MaximisePout,
    /// Largest efficiency with at least `pout_min` watts out.
    MaximiseEfficiencyAt {
        /// Minimum output power, W.
        pout_min: f64,
    },
    /// Smallest input VSWR.
    MinimiseInputVswr,
}

impl TuneGoal {
    /// The figure this goal optimises (output power in W, efficiency as a
    /// fraction, or input VSWR), if `f` has it and it is finite.
    pub fn figure(&self, f: &TuneFigures) -> Option<f64> {
        figure(*self, f).ok()
    }
}

/// The figures the objective reports at one point (only those the goal needs are required).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct TuneFigures {
    /// Output power, W.
    pub pout: Option<f64>,
    /// Efficiency, fraction.
    pub efficiency: Option<f64>,
    /// Input VSWR.
    pub input_vswr: Option<f64>,
}

/// Passed to the objective with each point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TuneContext {
    /// Drive scale to apply to the input source (1 = full drive).
    pub drive_scale: f64,
    /// Steady-state method to solve with (`None`: the one the stage names).
    pub method: Option<SteadyMethod>,
}

impl Default for TuneContext {
    /// Full drive, the stage's own method.
    fn default() -> Self {
        TuneContext {
            drive_scale: 1.0,
            method: None,
        }
    }
}

/// Significant digits the optimum is rounded to before it is confirmed (and
/// printed with): what a person copies into the stage file is what was solved.
pub const OPTIMUM_DIGITS: usize = 5;

/// `v` rounded to [`OPTIMUM_DIGITS`] significant digits.
pub fn round_optimum(v: f64) -> f64 {
    if !v.is_finite() || v == 0.0 {
        return v;
    }
    format!("{:.*e}", OPTIMUM_DIGITS - 1, v)
        .parse()
        .unwrap_or(v)
}

/// Options of [`tune`].
#[derive(Debug, Clone, PartialEq)]
pub struct TuneParams {
    /// Iteration limit per start. Default 200.
    pub max_iters: u64,
    /// Stop when the simplex costs' standard deviation is below this (relative). Default 1e-10.
    pub tolerance: f64,
    /// First simplex step as a fraction of π in the search coordinate. Default 0.25.
    pub initial_step: f64,
    /// Start values by parameter name (default: middle of the range).
    pub start: BTreeMap<String, f64>,
    /// Extra Nelder–Mead runs from the best point found. Default 1.
    pub restarts: usize,
    /// Drive scale during the search (`None` = full drive). The optimum is reported at full drive.
    pub search_drive: Option<f64>,
    /// Relative parameter step of the sharpness figure. Default 0.01 (1%).
    pub sharpness_step: f64,
    /// Relative margin above `pout_min` the search aims for. Default 1e-3.
    pub pout_margin: f64,
    /// Steady-state methods the optimum is confirmed with at full drive
    /// (besides the stage's own). Default balance, shooting and settle.
    pub confirm_methods: Vec<SteadyMethod>,
}

impl Default for TuneParams {
    fn default() -> Self {
        TuneParams {
            max_iters: 200,
            tolerance: 1e-10,
            initial_step: 0.25,
            start: BTreeMap::new(),
            restarts: 1,
            search_drive: None,
            sharpness_step: 0.01,
            pout_margin: 1e-3,
            confirm_methods: vec![
                SteadyMethod::Balance,
                SteadyMethod::Shooting,
                SteadyMethod::Settle,
            ],
        }
    }
}

/// Sharpness of the optimum along one parameter.
#[derive(Debug, Clone, PartialEq)]
pub struct Sharpness {
    /// The parameter.
    pub param: String,
    /// The absolute step δ used.
    pub step: f64,
    /// Relative change of the goal figure at x − δ.
    pub minus: Option<f64>,
    /// Relative change of the goal figure at x + δ.
    pub plus: Option<f64>,
}

/// The optimum solved afresh with one steady-state method at full drive.
#[derive(Debug, Clone, PartialEq)]
pub struct Confirmation {
    /// The method.
    pub method: SteadyMethod,
    /// The figures, or why that method gave none.
    pub figures: Result<TuneFigures, String>,
}

/// Whether the optimum meets the minimum output power under every method.
#[derive(Debug, Clone, PartialEq)]
pub struct ConstraintCheck {
    /// The minimum output power asked for, W.
    pub pout_min: f64,
    /// The smallest output power at the optimum over the stage's own method
    /// and every confirming method that solved, W (`None` if none gave one).
    pub worst_pout: Option<f64>,
    /// The method that gave it (`None` for the stage's own method).
    pub worst_method: Option<SteadyMethod>,
    /// `worst_pout ≥ pout_min`.
    pub met: bool,
    /// The relative margin above `pout_min` the last search aimed for.
    pub margin: f64,
}

/// The result of [`tune`].
#[derive(Debug, Clone, PartialEq)]
pub struct TuneResult {
    /// Best parameter values.
    pub optimum: BTreeMap<String, f64>,
    /// Figures there at full drive.
    pub figures: TuneFigures,
    /// Figures there at the search drive, when it was reduced.
    pub search_figures: Option<TuneFigures>,
    /// The goal's figure at full drive (W, fraction or VSWR).
    pub goal_value: f64,
    /// Nelder–Mead iterations over all starts.
    pub iterations: u64,
    /// The iterations the run allowed over all starts: `max_iters` per start
    /// times the number of starts.
    pub allowed_iterations: u64,
    /// Objective evaluations (search, report and sharpness).
    pub evaluations: u64,
    /// Evaluations that failed.
    pub failed_evaluations: u64,
    /// The last start stopped on the tolerance (not the iteration limit).
    pub converged: bool,
    /// Sharpness per parameter.
    pub sharpness: Vec<Sharpness>,
    /// Parameters within 0.1% of the range width of an end (the optimum may lie outside).
    pub at_bound: Vec<String>,
    /// The optimum solved with each confirming method at full drive.
    pub confirmations: Vec<Confirmation>,
    /// The minimum output power and whether it holds (efficiency goal only).
    pub constraint: Option<ConstraintCheck>,
}

const FAILED_COST: f64 = 1e6;

struct Counted<'a, F> {
    names: &'a [String],
    objective: &'a F,
    evaluations: AtomicU64,
    failures: AtomicU64,
}

impl<F> Counted<'_, F>
where
    F: Fn(&BTreeMap<String, f64>, &TuneContext) -> Result<TuneFigures, String>,
{
    fn point(&self, x: &[f64]) -> BTreeMap<String, f64> {
        self.names.iter().cloned().zip(x.iter().copied()).collect()
    }
    fn eval(&self, x: &[f64], drive_scale: f64) -> Result<TuneFigures, String> {
        self.eval_with(
            x,
            &TuneContext {
                drive_scale,
                method: None,
            },
        )
    }
    fn eval_with(&self, x: &[f64], ctx: &TuneContext) -> Result<TuneFigures, String> {
        self.evaluations.fetch_add(1, Ordering::Relaxed);
        // Non-finite figures become absent, so no NaN reaches a result.
        let finite = |v: Option<f64>| v.filter(|x| x.is_finite());
        let r = (self.objective)(&self.point(x), ctx).map(|f| TuneFigures {
            pout: finite(f.pout),
            efficiency: finite(f.efficiency),
            input_vswr: finite(f.input_vswr),
        });
        if r.is_err() {
            self.failures.fetch_add(1, Ordering::Relaxed);
        }
        r
    }
}

fn figure(goal: TuneGoal, f: &TuneFigures) -> Result<f64, String> {
    let (name, v) = match goal {
        TuneGoal::MaximisePout => ("pout", f.pout),
        TuneGoal::MaximiseEfficiencyAt { .. } => ("efficiency", f.efficiency),
        TuneGoal::MinimiseInputVswr => ("input_vswr", f.input_vswr),
    };
    match v {
        Some(x) if x.is_finite() => Ok(x),
        Some(x) => Err(format!("{name} is {x}")),
        None => Err(format!("the objective gave no {name}")),
    }
}

fn cost(goal: TuneGoal, f: &TuneFigures, pout_ref: f64) -> Result<f64, String> {
    let g = figure(goal, f)?;
    Ok(match goal {
        TuneGoal::MaximisePout => -g / pout_ref,
        TuneGoal::MaximiseEfficiencyAt { pout_min } => {
            let p = match f.pout {
                Some(p) if p.is_finite() => p,
                _ => return Err("the objective gave no finite pout".to_string()),
            };
            -g + 10.0 * (1.0 - p / pout_min).max(0.0)
        }
        TuneGoal::MinimiseInputVswr => g,
    })
}

struct Search<'a, 'b, F> {
    counted: &'b Counted<'a, F>,
    ranges: &'b [(f64, f64)],
    goal: TuneGoal,
    pout_ref: f64,
    drive: f64,
}

fn to_x(ranges: &[(f64, f64)], y: &[f64]) -> Vec<f64> {
    ranges
        .iter()
        .zip(y)
        .map(|(&(a, b), &y)| (a + (b - a) * (1.0 + y.sin()) / 2.0).clamp(a, b))
        .collect()
}

fn to_y(ranges: &[(f64, f64)], x: &[f64]) -> Vec<f64> {
    ranges
        .iter()
        .zip(x)
        .map(|(&(a, b), &x)| (2.0 * (x - a) / (b - a) - 1.0).clamp(-1.0, 1.0).asin())
        .collect()
}

impl<F> CostFunction for Search<'_, '_, F>
where
    F: Fn(&BTreeMap<String, f64>, &TuneContext) -> Result<TuneFigures, String>,
{
    type Param = Vec<f64>;
    type Output = f64;
    fn cost(&self, y: &Self::Param) -> Result<f64, argmin::core::Error> {
        let x = to_x(self.ranges, y);
        let c = self
            .counted
            .eval(&x, self.drive)
            .and_then(|f| cost(self.goal, &f, self.pout_ref));
        Ok(match c {
            Ok(c) if c.is_finite() => c,
            _ => FAILED_COST,
        })
    }
}

fn describe(names: &[String], x: &[f64]) -> String {
    names
        .iter()
        .zip(x)
        .map(|(n, v)| format!("{n}={v}"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Search the `ranges` (from `tune` statements) for the best `goal`, calling
/// `objective(point, context)` for figures at each point.
pub fn tune<F>(
    ranges: &[Tune],
    objective: F,
    goal: TuneGoal,
    params: &TuneParams,
) -> Result<TuneResult, StudyError>
where
    F: Fn(&BTreeMap<String, f64>, &TuneContext) -> Result<TuneFigures, String>,
{
    if ranges.is_empty() {
        return Err(StudyError::NothingToTune);
    }
    let mut names: Vec<String> = Vec::with_capacity(ranges.len());
    let mut bounds = Vec::with_capacity(ranges.len());
    let mut x0 = Vec::with_capacity(ranges.len());
    for t in ranges {
        if !(t.from.is_finite() && t.to.is_finite() && t.from < t.to) || names.contains(&t.param) {
            return Err(StudyError::BadTuneRange {
                param: t.param.clone(),
                from: t.from,
                to: t.to,
            });
        }
        let start = params
            .start
            .get(&t.param)
            .copied()
            .unwrap_or(0.5 * (t.from + t.to));
        if !(start >= t.from && start <= t.to) {
            return Err(StudyError::BadTuneStart {
                param: t.param.clone(),
                start,
                from: t.from,
                to: t.to,
            });
        }
        names.push(t.param.clone());
        bounds.push((t.from, t.to));
        x0.push(start);
    }
    if let TuneGoal::MaximiseEfficiencyAt { pout_min } = goal {
        if !(pout_min.is_finite() && pout_min > 0.0) {
            return Err(StudyError::Objective {
                at: "goal".to_string(),
                message: format!("minimum output power {pout_min} W must be positive"),
            });
        }
    }
    let drive = params.search_drive.unwrap_or(1.0);
    let reduced = drive != 1.0;
    if !(params.pout_margin.is_finite() && params.pout_margin >= 0.0) {
        return Err(StudyError::Objective {
            at: "goal".to_string(),
            message: format!(
                "the output power margin {} must be zero or positive",
                params.pout_margin
            ),
        });
    }
    let counted = Counted {
        names: &names,
        objective: &objective,
        evaluations: AtomicU64::new(0),
        failures: AtomicU64::new(0),
    };
    let objective_err = |x: &[f64], message: String| StudyError::Objective {
        at: describe(&names, x),
        message,
    };
    // The power scale for normalising costs: the start point's output power.
    let start_figures = counted
        .eval(&x0, drive)
        .map_err(|m| objective_err(&x0, m))?;
    let pout_ref = start_figures
        .pout
        .filter(|p| p.is_finite() && p.abs() > 0.0)
        .map(f64::abs)
        .unwrap_or(1.0);
    // A minimum output power is a full-drive promise; at a reduced drive it is
    // judged against what the start point gives there.
    let search_power_ratio = match goal {
        TuneGoal::MaximiseEfficiencyAt { .. } if reduced => {
            let full = counted.eval(&x0, 1.0).map_err(|m| objective_err(&x0, m))?;
            match (start_figures.pout, full.pout) {
                (Some(ps), Some(pf)) if ps > 0.0 && pf > 0.0 => ps / pf,
                _ => drive * drive,
            }
        }
        _ => 1.0,
    };
    let with_margin = |margin: f64, ratio: f64| match goal {
        TuneGoal::MaximiseEfficiencyAt { pout_min } => TuneGoal::MaximiseEfficiencyAt {
            pout_min: pout_min * (1.0 + margin) * ratio,
        },
        g => g,
    };

    let mut y_best = to_y(&bounds, &x0);
    let mut iterations = 0;
    let mut allowed_iterations = 0u64;
    let mut converged = false;
    let step = params.initial_step * std::f64::consts::PI;
    // One Nelder–Mead run from `y_best` with first step `step`, at `drive`.
    let mut run =
        |y_best: &mut Vec<f64>, step: f64, drive: f64, goal: TuneGoal| -> Result<(), StudyError> {
            let mut simplex = vec![y_best.clone()];
            for k in 0..y_best.len() {
                let mut v = y_best.clone();
                if let Some(c) = v.get_mut(k) {
                    // Step towards the middle of the range so that the vertex moves x.
                    *c += if *c > 0.0 { -step } else { step };
                }
                simplex.push(v);
            }
            let solver = NelderMead::new(simplex)
                .with_sd_tolerance(params.tolerance)
                .map_err(|e| StudyError::Optimiser(e.to_string()))?;
            let problem = Search {
                counted: &counted,
                ranges: &bounds,
                goal,
                pout_ref,
                drive,
            };
            let res = Executor::new(problem, solver)
                .configure(|s| s.max_iters(params.max_iters))
                .run()
                .map_err(|e| StudyError::Optimiser(e.to_string()))?;
            let state = res.state();
            iterations += state.get_iter();
            allowed_iterations = allowed_iterations.saturating_add(params.max_iters);
            converged = matches!(
                state.get_termination_status(),
                TerminationStatus::Terminated(TerminationReason::SolverConverged)
            );
            if let Some(p) = state.get_best_param() {
                *y_best = p.clone();
            }
            Ok(())
        };
    let mut margin = params.pout_margin;
    for _ in 0..=params.restarts {
        run(
            &mut y_best,
            step,
            drive,
            with_margin(margin, search_power_ratio),
        )?;
    }
    let constrained = matches!(goal, TuneGoal::MaximiseEfficiencyAt { .. });
    if reduced && constrained {
        // the constraint holds at full drive: finish the search there
        run(&mut y_best, step / 4.0, 1.0, with_margin(margin, 1.0))?;
    }

    // The optimum as printed, solved afresh at full drive with every method;
    // one more full-drive search with a larger margin if it falls short.
    let mut attempt = 0;
    let (x_best, full, confirmations, constraint) = loop {
        let x_best: Vec<f64> = to_x(&bounds, &y_best)
            .into_iter()
            .zip(&bounds)
            .map(|(x, &(a, b))| round_optimum(x).clamp(a, b))
            .collect();
        let full = counted
            .eval(&x_best, 1.0)
            .map_err(|m| objective_err(&x_best, m))?;
        let confirmations: Vec<Confirmation> = params
            .confirm_methods
            .iter()
            .map(|&m| Confirmation {
                method: m,
                figures: counted.eval_with(
                    &x_best,
                    &TuneContext {
                        drive_scale: 1.0,
                        method: Some(m),
                    },
                ),
            })
            .collect();
        let TuneGoal::MaximiseEfficiencyAt { pout_min } = goal else {
            break (x_best, full, confirmations, None);
        };
        let mut worst: Option<(f64, Option<SteadyMethod>)> = full.pout.map(|p| (p, None));
        for c in &confirmations {
            if let Ok(TuneFigures { pout: Some(p), .. }) = c.figures {
                if worst.is_none_or(|(w, _)| p < w) {
                    worst = Some((p, Some(c.method)));
                }
            }
        }
        let met = worst.is_some_and(|(w, _)| w >= pout_min);
        let check = ConstraintCheck {
            pout_min,
            worst_pout: worst.map(|w| w.0),
            worst_method: worst.and_then(|w| w.1),
            met,
            margin,
        };
        match worst {
            // A shortfall of up to 1% is method disagreement or rounding, which
            // a larger margin cures; a larger one means the search found no
            // point that meets the minimum.
            Some((w, _)) if !met && attempt == 0 && w >= 0.99 * pout_min => {
                attempt += 1;
                margin += 2.0 * (pout_min / w - 1.0);
                y_best = to_y(&bounds, &x_best);
                run(&mut y_best, step / 4.0, 1.0, with_margin(margin, 1.0))?;
            }
            _ => break (x_best, full, confirmations, Some(check)),
        }
    };
    let goal_value = figure(goal, &full).map_err(|m| objective_err(&x_best, m))?;
    let search_figures = match params.search_drive {
        Some(s) if s != 1.0 => Some(
            counted
                .eval(&x_best, s)
                .map_err(|m| objective_err(&x_best, m))?,
        ),
        _ => None,
    };

    let mut sharpness = Vec::with_capacity(names.len());
    for (k, name) in names.iter().enumerate() {
        let (Some(&xk), Some(&(a, b))) = (x_best.get(k), bounds.get(k)) else {
            continue;
        };
        let delta = params.sharpness_step * xk.abs();
        let side = |sign: f64| -> Option<f64> {
            let v = xk + sign * delta;
            if !(v >= a && v <= b) || delta == 0.0 || goal_value == 0.0 {
                return None;
            }
            let mut x = x_best.clone();
            if let Some(c) = x.get_mut(k) {
                *c = v;
            }
            let f = counted.eval(&x, 1.0).ok()?;
            let g = figure(goal, &f).ok()?;
            Some((g - goal_value) / goal_value.abs())
        };
        let minus = side(-1.0);
        let plus = side(1.0);
        sharpness.push(Sharpness {
            param: name.clone(),
            step: delta,
            minus,
            plus,
        });
    }
    let at_bound = names
        .iter()
        .zip(&x_best)
        .zip(&bounds)
        .filter(|((_, &x), &(a, b))| (x - a) <= 1e-3 * (b - a) || (b - x) <= 1e-3 * (b - a))
        .map(|((n, _), _)| n.clone())
        .collect();
    Ok(TuneResult {
        optimum: counted.point(&x_best),
        figures: full,
        search_figures,
        goal_value,
        iterations,
        allowed_iterations,
        evaluations: counted.evaluations.load(Ordering::Relaxed),
        failed_evaluations: counted.failures.load(Ordering::Relaxed),
        converged,
        sharpness,
        at_bound,
        confirmations,
        constraint,
    })
}

/// Options of [`map_around`].
#[derive(Debug, Clone, PartialEq)]
pub struct TuneMapParams {
    /// Grid points per parameter; 0 picks [`TuneMapParams::CURVE_POINTS`]
    /// for curves and [`TuneMapParams::SURFACE_POINTS`] per side for a surface.
    pub points: usize,
    /// Width of each parameter's window as a fraction of its tune range
    /// (0 < span ≤ 1; 1 is the whole range). Default 0.2.
    pub span: f64,
}

impl TuneMapParams {
    /// Default points of a curve.
    pub const CURVE_POINTS: usize = 21;
    /// Default points per side of a surface (11 × 11 = 121 evaluations).
    pub const SURFACE_POINTS: usize = 11;
    /// Most points per parameter.
    pub const MAX_POINTS: usize = 201;

    /// Check the options (points 0 or 2 to [`Self::MAX_POINTS`], 0 < span ≤ 1),
    /// so a caller can refuse them before a long tuning run.
    pub fn validate(&self) -> Result<(), StudyError> {
        let points_ok = self.points == 0 || (2..=Self::MAX_POINTS).contains(&self.points);
        if points_ok && self.span > 0.0 && self.span <= 1.0 {
            Ok(())
        } else {
            Err(StudyError::BadTuneMap {
                points: self.points,
                span: self.span,
                max_points: Self::MAX_POINTS,
            })
        }
    }
}

impl Default for TuneMapParams {
    fn default() -> Self {
        TuneMapParams {
            points: 0,
            span: 0.2,
        }
    }
}

/// The figures along one parameter, the others held at the optimum.
#[derive(Debug, Clone, PartialEq)]
pub struct TuneCurve {
    /// The swept parameter.
    pub param: String,
    /// Its values, increasing (the optimum among them).
    pub xs: Vec<f64>,
    /// The figures at each value; `None` where the evaluation failed.
    pub figures: Vec<Option<TuneFigures>>,
}

/// The figures over a grid of two parameters.
#[derive(Debug, Clone, PartialEq)]
pub struct TuneSurface {
    /// First parameter (columns).
    pub x_param: String,
    /// Second parameter (rows).
    pub y_param: String,
    /// Values of the first parameter, increasing.
    pub xs: Vec<f64>,
    /// Values of the second parameter, increasing.
    pub ys: Vec<f64>,
    /// `figures[iy][ix]` at (`xs[ix]`, `ys[iy]`); `None` where the evaluation failed.
    pub figures: Vec<Vec<Option<TuneFigures>>>,
}

/// The result of [`map_around`].
#[derive(Debug, Clone, PartialEq)]
pub struct TuneMap {
    /// One curve per parameter (one parameter, or more than two); empty with a surface.
    pub curves: Vec<TuneCurve>,
    /// The surface (exactly two parameters).
    pub surface: Option<TuneSurface>,
    /// Objective evaluations made.
    pub evaluations: u64,
    /// Evaluations that failed.
    pub failed: u64,
    /// The message of the first failure (in grid order).
    pub first_failure: Option<String>,
}

/// Evenly spaced values over the window of width `span`·(b − a) centred on
/// `centre`, shifted to stay inside [a, b].
fn window(a: f64, b: f64, centre: f64, span: f64, points: usize) -> Vec<f64> {
    let w = span * (b - a);
    let mut lo = centre - w / 2.0;
    let mut hi = centre + w / 2.0;
    if lo < a {
        lo = a;
        hi = a + w;
    }
    if hi > b {
        hi = b;
        lo = (b - w).max(a);
    }
    let n = points.max(2);
    (0..n)
        .map(|k| {
            if k + 1 == n {
                hi
            } else {
                lo + (hi - lo) * k as f64 / (n - 1) as f64
            }
        })
        .collect()
}

/// Evaluate `objective` (at full drive) on a grid around `optimum` within
/// the tune `ranges`; see the module overview for the layout of the grid.
pub fn map_around<F>(
    ranges: &[Tune],
    optimum: &BTreeMap<String, f64>,
    objective: F,
    params: &TuneMapParams,
) -> Result<TuneMap, StudyError>
where
    F: Fn(&BTreeMap<String, f64>, &TuneContext) -> Result<TuneFigures, String> + Sync,
{
    if ranges.is_empty() {
        return Err(StudyError::NothingToTune);
    }
    params.validate()?;
    let surface = ranges.len() == 2;
    let points = match params.points {
        0 if surface => TuneMapParams::SURFACE_POINTS,
        0 => TuneMapParams::CURVE_POINTS,
        n => n,
    };
    let mut centre = BTreeMap::new();
    let mut axes: Vec<Vec<f64>> = Vec::with_capacity(ranges.len());
    for t in ranges {
        if !(t.from.is_finite() && t.to.is_finite() && t.from < t.to)
            || centre.contains_key(&t.param)
        {
            return Err(StudyError::BadTuneRange {
                param: t.param.clone(),
                from: t.from,
                to: t.to,
            });
        }
        let Some(&x) = optimum.get(&t.param) else {
            return Err(StudyError::Objective {
                at: t.param.clone(),
                message: "the optimum gives no value for this parameter".to_string(),
            });
        };
        if !(x >= t.from && x <= t.to) {
            return Err(StudyError::MapCentre {
                param: t.param.clone(),
                value: x,
                from: t.from,
                to: t.to,
            });
        }
        centre.insert(t.param.clone(), x);
        let mut g = window(t.from, t.to, x, params.span, points);
        if !surface {
            // a curve holds the optimum itself, so its peak is drawn where it was found
            let tol = 1e-9 * (t.to - t.from);
            if !g.iter().any(|v| (v - x).abs() <= tol) {
                let at = g.partition_point(|v| *v < x);
                g.insert(at, x);
            }
        }
        axes.push(g);
    }
    // every point to evaluate, in grid order
    let mut jobs: Vec<BTreeMap<String, f64>> = Vec::new();
    if let ([tx, ty], [gx, gy]) = (ranges, axes.as_slice()) {
        if surface {
            for &y in gy {
                for &x in gx {
                    let mut p = centre.clone();
                    p.insert(tx.param.clone(), x);
                    p.insert(ty.param.clone(), y);
                    jobs.push(p);
                }
            }
        }
    }
    if !surface {
        for (t, g) in ranges.iter().zip(&axes) {
            for &v in g {
                let mut p = centre.clone();
                p.insert(t.param.clone(), v);
                jobs.push(p);
            }
        }
    }
    let finite = |v: Option<f64>| v.filter(|x| x.is_finite());
    let ctx = TuneContext::default();
    let results: Vec<Result<TuneFigures, String>> = jobs
        .par_iter()
        .map(|p| {
            objective(p, &ctx).map(|f| TuneFigures {
                pout: finite(f.pout),
                efficiency: finite(f.efficiency),
                input_vswr: finite(f.input_vswr),
            })
        })
        .collect();
    let failed = results.iter().filter(|r| r.is_err()).count() as u64;
    let first_failure = results.iter().find_map(|r| r.as_ref().err().cloned());
    let mut figs = results.into_iter().map(Result::ok);
    let mut map = TuneMap {
        curves: Vec::new(),
        surface: None,
        evaluations: jobs.len() as u64,
        failed,
        first_failure,
    };
    if surface {
        if let ([tx, ty], [gx, gy]) = (ranges, axes.as_slice()) {
            let figures = gy
                .iter()
                .map(|_| figs.by_ref().take(gx.len()).collect())
                .collect();
            map.surface = Some(TuneSurface {
                x_param: tx.param.clone(),
                y_param: ty.param.clone(),
                xs: gx.clone(),
                ys: gy.clone(),
                figures,
            });
        }
    } else {
        for (t, g) in ranges.iter().zip(axes) {
            let figures = figs.by_ref().take(g.len()).collect();
            map.curves.push(TuneCurve {
                param: t.param.clone(),
                xs: g,
                figures,
            });
        }
    }
    Ok(map)
}
