//! Verification of a periodic steady state by its Floquet multipliers.
//!
//! A periodic solution found by Newton (shooting or harmonic balance) is a
//! fixed point of the period map, but Newton finds unstable fixed points as
//! readily as stable ones; a stage that never settles into that orbit would
//! then be reported with figures it never shows. So every steady state is
//! checked before it is accepted:
//!
//! 1. **Multipliers.** One period is integrated from the solution's state at
//!    the start of a period with the sensitivity (monodromy) matrix
//!    `Φ = ∂x(T)/∂x(0)`, exactly as shooting carries it
//!    ([`mod@crate::periodic::shooting`]: the same TR-BDF2 steps, `N` per period). The
//!    eigenvalues `μ` of `Φ` are the Floquet multipliers of the orbit as the
//!    integrator sees it (G. Floquet 1883; for circuits, Aprille and Trick
//!    1972, who introduced shooting with `Φ`). A perturbation of the orbit
//!    along an eigenvector is multiplied by `μ` every period, so the orbit is
//!    stable only when every `|μ| < 1`.
//! 2. **Margin δ.** TR-BDF2 is L-stable and damps a little even an undamped
//!    oscillation: over one period of `N` steps it multiplies `e^{jω₀t}` at the
//!    drive frequency by `|R(jω₀h)|^N < 1`, `R` its amplification factor,
//!    `h = T/N`. A lossless tank tuned to the drive (neutral, not stable)
//!    would show `|μ| = 1 − δ` with `δ = 1 − |R(j2π/N)|^N` ([`margin`]; 3.4e-7
//!    at 256 steps per period). An orbit is accepted only when its largest
//!    `|μ| < 1 − δ`.
//! 3. **Repetition.** The state is integrated [`EXTRA_PERIODS`] periods more
//!    from the end of that period (without sensitivities); no later
//!    period-to-period change of any unknown may exceed both the change over
//!    the first period and [`REPEAT_UNITS`] tolerance units
//!    (`rel_tolerance·peak + floor`, as shooting's own test): the state must
//!    not move away. This catches an orbit that is left through a nonlinear
//!    effect the linearisation does not show. (A harmonic-balance solution
//!    starts off the TR-BDF2 orbit by the difference of the two
//!    discretisations, hundreds of units on the class-C stage; a stable map
//!    only shrinks that.)
//!
//! **Without `Φ`.** From [`super::shooting::MATRIX_FREE_FROM`] unknowns (by
//! the shooting mode) `Φ` is never formed: the period keeps its per-step
//! factors and the multipliers of largest magnitude come from the Arnoldi
//! process on `v ↦ Φv` ([`crate::krylov::dominant_eigenvalues`], in tolerance
//! units, from a fixed start vector); only those matter for stability. A
//! shooting solution is checked with the last period shooting itself
//! integrated at the solution (its factors or its `Φ`, and its end state as
//! the start of the repetition) when that period kept them (a Newton
//! period, or a chord period that was likely the last), so the check then
//! integrates no period with sensitivities of its own; otherwise, and for
//! other methods' solutions, the period is integrated here.
//!
//! A failure of either test is [`crate::SolveError::NotPeriodic`] (a solver
//! failure, exit 3) with the reason and the numbers, never a figure.

use super::shooting::{FinalPeriod, Guide, PeriodLin, Sens, ShootingMode};
use super::{PeriodicSolution, SteadyParams};
use crate::krylov::{dominant_eigenvalues, ArnoldiParams};
use crate::transient::{bdf2_coefficients, Stepper, GAMMA};
use crate::SolveError;
use faer::Mat;
use num_complex::Complex64;
use tankwave_circuit::{Circuit, SteadyMethod};
use tankwave_devices::DeviceSet;

/// Periods integrated after the one with sensitivities, to see the state repeat.
pub const EXTRA_PERIODS: usize = 3;

/// Period-to-period change, in tolerance units, that a repeating state may
/// always show (a converged shooting orbit changes by at most 1 unit); above
/// it, a change is accepted only when it is no larger than over the first
/// period.
pub const REPEAT_UNITS: f64 = 100.0;

/// Multipliers kept in [`FloquetInfo::multipliers`].
pub const SHOWN: usize = 4;

/// The Floquet multipliers of an accepted periodic steady state.
#[derive(Debug, Clone, PartialEq)]
pub struct FloquetInfo {
    /// Largest `|μ|`.
    pub largest: f64,
    /// The [`SHOWN`] multipliers of largest magnitude, as (real, imaginary),
    /// largest first.
    pub multipliers: Vec<(f64, f64)>,
    /// The margin δ: accepted only when `largest < 1 − δ` (see [`margin`]).
    pub margin: f64,
    /// Largest period-to-period change over the extra periods, in tolerance units.
    pub repeat_change: f64,
}

/// TR-BDF2's amplification factor `R(z)` for `y' = λy`, `z = λh`: a
/// trapezoidal stage over `γh`, then a BDF2 stage through `0, γh, h` (the
/// coefficients of [`mod@crate::transient`]).
pub fn amplification(z: Complex64) -> Complex64 {
    let one = Complex64::new(1.0, 0.0);
    let r1 = (one + z * (GAMMA / 2.0)) / (one - z * (GAMMA / 2.0));
    // h = 1: stage lengths γ and 1 − γ.
    let (a0, a1, a2) = bdf2_coefficients(1.0 - GAMMA, GAMMA);
    -(r1 * a1 + a2) / (Complex64::new(a0, 0.0) - z)
}

/// The margin δ for `n` TR-BDF2 steps per period: the fraction of an
/// undamped oscillation at the drive frequency the integrator removes in one
/// period, `1 − |R(j2π/n)|^n`.
pub fn margin(n: usize) -> f64 {
    let z = Complex64::new(0.0, 2.0 * std::f64::consts::PI / n as f64);
    1.0 - amplification(z).norm().powi(n as i32)
}

/// Eigenvalues of `phi`, largest magnitude first.
pub fn multipliers(phi: &Mat<f64>) -> Result<Vec<Complex64>, String> {
    let n = phi.nrows();
    if n == 0 {
        return Ok(Vec::new());
    }
    let m = nalgebra::DMatrix::<f64>::from_fn(n, n, |r, c| phi[(r, c)]);
    if m.iter().any(|v| !v.is_finite()) {
        return Err("the monodromy matrix is not finite".into());
    }
    crate::krylov::eigenvalues_by_magnitude(m)
        .ok_or_else(|| "the eigenvalues of the monodromy matrix did not converge".to_string())
}

/// The unknowns that carry most of the (real) mode of multiplier `m`,
/// largest share first: the right singular vector of `Φ − Re(m)·I` for its
/// smallest singular value. Empty for a complex `m` or when the SVD fails.
fn mode_unknowns(phi: &Mat<f64>, m: Complex64) -> Vec<usize> {
    let n = phi.nrows();
    if n == 0 || m.im.abs() > 1e-9 * m.norm().max(1.0) {
        return Vec::new();
    }
    let a = nalgebra::DMatrix::<f64>::from_fn(n, n, |r, c| phi[(r, c)]);
    let Some(v) = crate::krylov::null_vector(&a, m.re) else {
        return Vec::new();
    };
    let mut idx: Vec<usize> = (0..n).collect();
    idx.sort_by(|i, j| v[*j].abs().total_cmp(&v[*i].abs()));
    let top = v[idx[0]].abs();
    idx.retain(|k| v[*k].abs() >= 0.1 * top);
    idx
}

/// The first whole period at or after which every source is periodic.
fn start_of_period(circuit: &Circuit, period: f64) -> f64 {
    let from = super::start_time(circuit, period);
    (from / period - 1e-9).ceil().max(0.0) * period
}

/// Check that `sol` is a stable periodic orbit (module overview); on
/// success it carries its [`FloquetInfo`].
pub fn verify(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
    sol: PeriodicSolution,
) -> Result<PeriodicSolution, SolveError> {
    verify_with(circuit, devices, params, sol, None)
}

/// The monodromy of the checked period, in either form.
enum Monodromy {
    Dense(Mat<f64>),
    Free(PeriodLin),
}

/// Multipliers of largest magnitude first, and the unknowns that carry the
/// mode of the first (computed only when asked: on a failure).
type ModeOf<'a> = Box<dyn Fn(Complex64) -> Vec<usize> + 'a>;

fn multipliers_of<'a>(
    m: &'a Monodromy,
    scale: &[f64],
) -> Result<(Vec<Complex64>, ModeOf<'a>), String> {
    match m {
        Monodromy::Dense(phi) => {
            let mu = multipliers(phi)?;
            Ok((mu, Box::new(move |z| mode_unknowns(phi, z))))
        }
        Monodromy::Free(lin) => {
            let n = lin.order();
            // in tolerance units, as shooting's Newton steps
            let apply = |v: &[f64], out: &mut [f64]| {
                let w: Vec<f64> = v.iter().zip(scale).map(|(a, s)| a * s).collect();
                lin.apply(&w, out);
                for (o, s) in out.iter_mut().zip(scale) {
                    *o /= s;
                }
            };
            // a fixed start with a component along every unknown
            let start: Vec<f64> = (0..n)
                .map(|k| 1.0 + 0.5 * (1.7 * k as f64 + 0.3).sin())
                .collect();
            let p = ArnoldiParams {
                wanted: SHOWN,
                ..ArnoldiParams::default()
            };
            let e = dominant_eigenvalues(apply, &start, &p)
                .ok_or_else(|| "the Arnoldi estimate of the multipliers failed".to_string())?;
            if !(e.change <= ARNOLDI_SETTLED) {
                return Err(format!(
                    "the multipliers of largest magnitude did not settle: they still moved \
                     by {:.1e} with {} Arnoldi vectors",
                    e.change, e.basis
                ));
            }
            let vector = e.vector;
            Ok((
                e.values,
                Box::new(move |_| {
                    let top = vector.iter().fold(0.0f64, |a, b| a.max(b.abs()));
                    let mut idx: Vec<usize> = (0..vector.len())
                        .filter(|&k| vector[k].abs() >= 0.1 * top && top > 0.0)
                        .collect();
                    idx.sort_by(|i, j| vector[*j].abs().total_cmp(&vector[*i].abs()));
                    idx
                }),
            ))
        }
    }
}

/// Largest relative change of the wanted Arnoldi multipliers accepted as
/// settled: a tenth of the margin δ at 256 steps per period (3.4e-7), so the
/// test `|μ| < 1 − δ` is not decided by the estimate's own movement.
pub const ARNOLDI_SETTLED: f64 = 3e-8;

/// [`verify`], reusing the last period shooting integrated (`last`) when given.
pub(crate) fn verify_with(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
    mut sol: PeriodicSolution,
    last: Option<FinalPeriod>,
) -> Result<PeriodicSolution, SolveError> {
    let n = devices.n_unknowns;
    if n == 0 || sol.x.len() != n {
        return Ok(sol);
    }
    let period = 1.0 / params.freq;
    let ns = params.samples();
    let h = period / ns as f64;
    let x0: Vec<f64> = sol
        .x
        .iter()
        .map(|row| row.first().copied().unwrap_or(0.0))
        .collect();
    let dense_small = params.shooting.mode.resolve(n) == ShootingMode::Dense
        || !super::shooting::record_fits(n, ns);
    let mut guide = None;
    let reuse = last.and_then(|l| {
        guide = Some(l.guide);
        let mono = match (l.monodromy, l.lin) {
            (Some(phi), _) => Monodromy::Dense(phi),
            (None, Some(lin)) if dense_small => Monodromy::Dense(lin.monodromy()),
            (None, Some(lin)) => Monodromy::Free(lin),
            (None, None) => return None,
        };
        Some((l.t0, l.end, mono))
    });
    let (t0, mut st, end, samples, mono) = match reuse {
        Some((t0, end, mono)) => {
            let st = Stepper::from_zero(devices, params.tol, params.linear_solver, t0);
            (t0, st, end, sol.x.clone(), mono)
        }
        _ => {
            let t0 = start_of_period(circuit, period);
            let mut st = Stepper::from_zero(devices, params.tol, params.linear_solver, t0);
            let sens = if dense_small {
                Sens::Dense
            } else {
                Sens::Record
            };
            let run =
                super::shooting::integrate_period(&mut st, devices, &x0, t0, h, ns, sens, None)?;
            let mono = match (run.monodromy, run.lin) {
                (Some(phi), _) => Monodromy::Dense(phi),
                (None, Some(l)) => Monodromy::Free(l),
                (None, None) => {
                    return Err(SolveError::BadParams(
                        "Floquet check: no monodromy matrix".into(),
                    ))
                }
            };
            (t0, st, run.end, run.samples, mono)
        }
    };
    // Tolerance units, as shooting's own test.
    let scale: Vec<f64> = samples
        .iter()
        .enumerate()
        .map(|(k, row)| {
            let peak = row.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            params.shooting.rel_tolerance * peak
                + crate::newton::unknown_floor(devices, &params.tol, k)
        })
        .collect();
    let analysis = method_name(sol.info.method);
    let (mu, mode_of) =
        multipliers_of(&mono, &scale).map_err(|reason| SolveError::NotPeriodic {
            analysis: analysis.into(),
            reason,
        })?;
    let delta = margin(ns);
    let largest = mu.first().map(|m| m.norm()).unwrap_or(0.0);
    if largest.is_nan() || largest >= 1.0 - delta {
        let m = mu.first().copied().unwrap_or_default();
        let names: Vec<String> = mode_of(m)
            .into_iter()
            .take(4)
            .filter_map(|k| devices.names.get(k).cloned())
            .collect();
        let lives_in = if names.is_empty() {
            String::new()
        } else {
            format!("; the mode lives mostly in {}", names.join(", "))
        };
        return Err(SolveError::NotPeriodic {
            analysis: analysis.into(),
            reason: format!(
                "the orbit is not stable: its largest Floquet multiplier is {:.4}{:+.4}j, \
                 |μ| = {:.6} ≥ 1 − δ with δ = {:.1e}{}{lives_in}",
                m.re,
                m.im,
                largest,
                delta,
                kind_of(m)
            ),
        });
    }
    // Repetition over a few more periods, in shooting's tolerance units.
    // The change over the period just integrated (from the solution's state).
    let first = (0..n)
        .map(|k| (end[k] - x0[k]).abs() / scale[k])
        .fold(0.0f64, f64::max);
    let mut prev = end;
    let mut worst = (0.0f64, 0usize, 0usize);
    for p in 1..=EXTRA_PERIODS {
        let tp = t0 + p as f64 * period;
        // each period's Newton starts from the period before (Guide)
        let run = super::shooting::plain_period(
            &mut st,
            devices,
            &prev,
            tp,
            h,
            ns,
            guide.as_ref(),
            "Floquet check",
        )?;
        guide = Some(Guide::from_parts(run.samples, run.stage, run.end));
        for k in 0..n {
            let c = (st.x[k] - prev[k]).abs() / scale[k];
            if !c.is_finite() {
                return Err(SolveError::NonFinite {
                    analysis: "Floquet check".into(),
                    unknown: devices.names.get(k).cloned().unwrap_or_default(),
                    when: crate::error::When(Some(st.t)),
                });
            }
            if c > worst.0 {
                worst = (c, k, p);
            }
        }
        prev = st.x.clone();
    }
    if worst.0 > REPEAT_UNITS.max(first) {
        return Err(SolveError::NotPeriodic {
            analysis: analysis.into(),
            reason: format!(
                "the state does not repeat: in period {} after the solution {} changed by \
                 {:.1} tolerance units, more than in the first period ({:.1}) and more than \
                 {REPEAT_UNITS}",
                worst.2 + 1,
                devices.names.get(worst.1).cloned().unwrap_or_default(),
                worst.0,
                first
            ),
        });
    }
    sol.info.floquet = Some(FloquetInfo {
        largest,
        multipliers: mu.iter().take(SHOWN).map(|m| (m.re, m.im)).collect(),
        margin: delta,
        repeat_change: worst.0,
    });
    Ok(sol)
}

/// The method's name in messages.
fn method_name(m: SteadyMethod) -> &'static str {
    match m {
        SteadyMethod::Shooting => "shooting",
        SteadyMethod::Balance => "harmonic balance",
        SteadyMethod::Settle => "settle",
        SteadyMethod::Auto => "steady state",
    }
}

/// What the leading multiplier says about how the orbit is left.
fn kind_of(m: Complex64) -> &'static str {
    let tiny = 1e-9 * m.norm().max(1.0);
    if m.im.abs() > tiny {
        " (a complex pair: an oscillation at a frequency unrelated to the drive grows)"
    } else if m.re < 0.0 {
        " (negative: a subharmonic at half the drive frequency grows)"
    } else {
        " (positive: the state drifts away from the orbit)"
    }
}
