//! Settle: the periodic steady state by plain transient, at the
//! discretisation shooting uses, until one period repeats the previous one.

use super::sample::trbdf2_solution;
use super::shooting::{Guide, GUIDE_WITHIN};
use super::{PeriodicSolution, SteadyInfo, SteadyParams};
use crate::newton::unknown_floor;
use crate::transient::Stepper;
use crate::SolveError;
use tankwave_circuit::{Circuit, SteadyMethod};
use tankwave_devices::DeviceSet;

/// Plain transient at `N` fixed TR-BDF2 steps per period (the discretisation
/// shooting uses, so both reach the same discrete solution) from the
/// operating point until the largest period-to-period change is within
/// tolerance; the last period is the result.
pub fn settle(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
) -> Result<PeriodicSolution, SolveError> {
    params.check()?;
    if let Some(d) = devices
        .devices
        .iter()
        .find(|d| d.frequency_domain() && !d.time_model())
    {
        return Err(crate::transient::time_domain_refused(circuit, d.element()));
    }
    let n = devices.n_unknowns;
    let ns = params.samples();
    let period = 1.0 / params.freq;
    let h = period / ns as f64;
    let mut st = Stepper::from_op(devices, params.tol, params.linear_solver, 0.0)?;
    // the last few periods, newest last, for the repeat test on failure
    let mut history: std::collections::VecDeque<Vec<Vec<f64>>> =
        std::collections::VecDeque::with_capacity(MAX_REPEAT + 1);
    let mut last_change = (f64::INFINITY, 0.0, 0usize, 0.0);
    // the period before, once within GUIDE_WITHIN units of repeating: the
    // Newton start of each stage (shooting's Guide; the steps themselves
    // are the same TR-BDF2 steps)
    let mut guide: Option<Guide> = None;
    let err = |e: crate::transient::StepFail| e.into_error(devices, "settle");
    for p in 0..params.settle.max_periods {
        let mut cur = vec![vec![0.0; ns]; n];
        let mut stage = vec![vec![0.0; ns]; n];
        let g = guide.take().filter(|g| g.fits(n, ns));
        for s in 0..ns {
            for (k, row) in cur.iter_mut().enumerate() {
                row[s] = st.x[k];
            }
            // Land exactly on the period grid to avoid drift of t.
            let t1 = (p * ns + s + 1) as f64 * h;
            let xg = st
                .step_trbdf2_from(t1, |x, at_stage| {
                    g.as_ref().map(|g| g.guess(s, x, at_stage))
                })
                .map_err(err)?;
            for (k, row) in stage.iter_mut().enumerate() {
                row[s] = xg[k];
            }
        }
        if let Some(pv) = history.back() {
            let worst = period_change(devices, params, &cur, pv);
            last_change = (worst.1, worst.3, worst.2, worst.4);
            if worst.0 <= GUIDE_WITHIN {
                guide = Some(Guide::from_parts(cur.clone(), stage.clone(), st.x.clone()));
            }
            if worst.0 <= 1.0 {
                // the numerical floor: keep going on half the grid until
                // that repeats too (from here, at the same phase)
                let floor = match half_grid(&mut st, devices, params, (p + 1) as f64 * period) {
                    Some(h) => super::floor::grid_floor(
                        &cur,
                        &h,
                        params.harmonics,
                        params.settle.rel_tolerance,
                    ),
                    // no second grid: the spectrum's own tail (conservative;
                    // floor.rs), never no floor at all
                    None => super::floor::tail_floor(
                        &cur,
                        params.harmonics,
                        params.settle.rel_tolerance,
                    ),
                };
                let info = SteadyInfo {
                    method: SteadyMethod::Settle,
                    fell_back_from: None,
                    iterations: p + 1,
                    residual: worst.0 * params.settle.rel_tolerance,
                    tolerance: params.settle.rel_tolerance,
                    system_size: 0,
                    balance: None,
                    shooting: None,
                    floquet: None,
                    floor,
                    accuracy: None,
                };
                return trbdf2_solution(circuit, devices, params, cur, &stage, info);
            }
        }
        if history.len() > MAX_REPEAT {
            history.pop_front();
        }
        history.push_back(cur);
    }
    // Not periodic at the drive frequency: does the end repeat every m periods?
    let repeats_every = history.back().and_then(|last| {
        (2..=MAX_REPEAT).find(|&m| {
            history.len() > m
                && period_change(devices, params, last, &history[history.len() - 1 - m]).0
                    <= REPEAT_TOLERANCES
        })
    });
    Err(SolveError::NotSettled {
        periods: params.settle.max_periods,
        change: last_change.0,
        tolerance: last_change.1,
        unknown: devices
            .names
            .get(last_change.2)
            .cloned()
            .unwrap_or_default(),
        repeats_every,
        relative_change: last_change.3,
    })
}

/// The settled orbit continued on a grid of `ns/2` steps per period from
/// time `t_start` (a whole number of periods) until one period repeats the
/// previous one within the settle tolerance: the last period's samples, or
/// `None` when the half grid cannot carry harmonic 2, a step fails, or it
/// does not repeat within `max_periods` (the floor is then not estimated).
fn half_grid(
    st: &mut Stepper<'_>,
    devices: &DeviceSet,
    params: &SteadyParams,
    t_start: f64,
) -> Option<Vec<Vec<f64>>> {
    let n = devices.n_unknowns;
    let ns = params.samples() / 2;
    if ns < 8 {
        return None;
    }
    let h = 1.0 / (params.freq * ns as f64);
    let mut prev: Option<Vec<Vec<f64>>> = None;
    for p in 0..params.settle.max_periods {
        let mut cur = vec![vec![0.0; ns]; n];
        for s in 0..ns {
            for (k, row) in cur.iter_mut().enumerate() {
                row[s] = st.x[k];
            }
            st.step_trbdf2(t_start + (p * ns + s + 1) as f64 * h).ok()?;
        }
        if let Some(pv) = &prev {
            if period_change(devices, params, &cur, pv).0 <= 1.0 {
                return Some(cur);
            }
        }
        prev = Some(cur);
    }
    None
}

/// Longest repeat (in periods) looked for when settle fails.
const MAX_REPEAT: usize = 4;

/// A repeat every m periods counts when the change over m periods is within
/// this many settle tolerances (the settle tolerance is for the fundamental
/// period; a subharmonic state reached after the same number of periods is
/// settled less tightly, and 100 tolerances, 1e-4 of the swing at the default,
/// still tells a repeating state from a drifting or chaotic one).
const REPEAT_TOLERANCES: f64 = 100.0;

/// Largest change between two periods against the settle tolerance:
/// (ratio, change, unknown, tolerance, change / (range + peak)), tolerance
/// `rel_tolerance·(range + peak) + current_floor`.
fn period_change(
    devices: &DeviceSet,
    params: &SteadyParams,
    cur: &[Vec<f64>],
    pv: &[Vec<f64>],
) -> (f64, f64, usize, f64, f64) {
    let mut worst = (0.0f64, 0.0f64, 0usize, 0.0f64, 0.0f64);
    for (k, (row, old)) in cur.iter().zip(pv).enumerate() {
        let (lo, hi) = row
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
                (a.min(*v), b.max(*v))
            });
        let mag = lo.abs().max(hi.abs());
        let tol = params.settle.rel_tolerance * ((hi - lo) + mag)
            + unknown_floor(devices, &params.tol, k);
        let ch = row
            .iter()
            .zip(old)
            .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
        let ratio = ch / tol;
        if !(ratio <= worst.0) {
            let size = (hi - lo) + mag;
            let rel = if size > 0.0 { ch / size } else { 0.0 };
            worst = (ratio, ch, k, tol, rel);
        }
    }
    worst
}
