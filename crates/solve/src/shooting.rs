//! Shooting-Newton periodic steady state (T. J. Aprille, T. N. Trick,
//! "Steady-state analysis of nonlinear circuits with periodic inputs",
//! Proc. IEEE 60(1), 1972).
//!
//! The unknown is the state `x₀` at the start of a period. One period is
//! integrated with `N` uniform trapezoidal steps, carrying the sensitivity
//! (monodromy) matrix `Φ = ∂x(T)/∂x₀` through the steps; Newton then solves
//! `(Φ − I) Δx₀ = −(x(T) − x₀)`. With the trapezoidal rule the derivative
//! state `q̇ₙ = −i(xₙ, tₙ)` is a function of `xₙ`, so the step sensitivity is
//! `Sₙ₊₁ = (Gₙ₊₁ + αCₙ₊₁)⁻¹ (αCₙ − Gₙ) Sₙ` with `α = 2/h`.
//! The iteration starts from the operating point followed by a few plain
//! transient periods. Converged when every `|x_k(T) − x_k(0)|` is within
//! `reltol·max_n |x_k| + (vntol | abstol)`.

use crate::newton::unknown_abstol;
use crate::steady::{terminal_currents, PeriodicSolution, SteadyInfo, SteadyParams};
use crate::transient::{Method, Stepper};
use crate::SolveError;
use faer::Mat;
use tankwave_circuit::{Circuit, SteadyMethod};
use tankwave_devices::DeviceSet;

/// Periodic steady state by shooting-Newton.
pub fn shooting(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
) -> Result<PeriodicSolution, SolveError> {
    params.check()?;
    let n = devices.n_unknowns;
    let ns = params.samples();
    let period = 1.0 / params.freq;
    let h = period / ns as f64;
    let alpha = 2.0 / h;
    let err = |e: crate::transient::StepFail| e.into_error(devices, "shooting");
    let mut st = Stepper::from_op(devices, params.tol, params.linear_solver, 0.0)?;
    let warm = params.shooting.warmup_periods;
    for s in 0..warm * ns {
        st.step_to((s + 1) as f64 * h, Method::Trapezoidal)
            .map_err(err)?;
    }
    let t0 = warm as f64 * period;
    let mut x0 = st.x.clone();
    let mut last = (f64::INFINITY, 0usize);
    for it in 0..params.shooting.max_iter {
        st.init_at(&x0, t0);
        let mut g0 = Mat::<f64>::from_fn(n, n, |r, c| st.ws.stamp.g_at(r, c));
        let mut c0 = Mat::<f64>::from_fn(n, n, |r, c| st.ws.stamp.c_at(r, c));
        let mut sens = Mat::<f64>::identity(n, n);
        let mut samples = vec![vec![0.0; ns]; n];
        for s in 0..ns {
            for (k, row) in samples.iter_mut().enumerate() {
                row[s] = st.x[k];
            }
            let t1 = t0 + (s + 1) as f64 * h;
            let a = st.attempt(t1, Method::Trapezoidal).map_err(err)?;
            // ws.jac holds G₁ + αC₁ at the converged point.
            st.ws
                .lu
                .factor(&st.ws.jac)
                .map_err(|k| SolveError::Singular {
                    analysis: "shooting".into(),
                    unknown: devices.names.get(k).cloned().unwrap_or_default(),
                    when: crate::error::When(Some(t1)),
                })?;
            let m = Mat::<f64>::from_fn(n, n, |r, c| alpha * c0[(r, c)] - g0[(r, c)]);
            let mut rhs = &m * &sens;
            st.ws.lu.solve_mat(rhs.as_mut());
            sens = rhs;
            g0 = Mat::<f64>::from_fn(n, n, |r, c| st.ws.stamp.g_at(r, c));
            c0 = Mat::<f64>::from_fn(n, n, |r, c| st.ws.stamp.c_at(r, c));
            st.commit(a);
        }
        // Periodicity error.
        let r: Vec<f64> = (0..n).map(|k| st.x[k] - x0[k]).collect();
        let mut worst = (0.0f64, 0usize);
        for k in 0..n {
            let mag = samples[k].iter().fold(0.0f64, |m, v| m.max(v.abs()));
            let tol = params.shooting.reltol * mag + unknown_abstol(devices, &params.tol, k);
            let ratio = r[k].abs() / tol;
            if !ratio.is_finite() {
                return Err(SolveError::NonFinite {
                    analysis: "shooting".into(),
                    unknown: devices.names.get(k).cloned().unwrap_or_default(),
                    when: crate::error::When(Some(st.t)),
                });
            }
            if ratio > worst.0 {
                worst = (ratio, k);
            }
        }
        last = (r[worst.1].abs(), worst.1);
        if worst.0 <= 1.0 {
            let terminal_currents = terminal_currents(circuit, devices, &samples, params.freq)?;
            return Ok(PeriodicSolution {
                freq: params.freq,
                harmonics: params.harmonics,
                samples_per_period: ns,
                x: samples,
                terminal_currents,
                info: SteadyInfo {
                    method: SteadyMethod::Shooting,
                    fell_back_from: None,
                    iterations: it,
                    residual: worst.0,
                    system_size: n,
                    balance: None,
                },
            });
        }
        // Newton update: (Φ − I) Δ = −r.
        let mut jm = vec![0.0; n * n];
        for i in 0..n {
            for j in 0..n {
                jm[i * n + j] = sens[(i, j)] - if i == j { 1.0 } else { 0.0 };
            }
        }
        let mut lu = crate::linalg::RealLu::new(crate::linalg::LinearSolver::Dense, n);
        lu.factor(&jm).map_err(|k| SolveError::Singular {
            analysis: "shooting (monodromy − I)".into(),
            unknown: devices.names.get(k).cloned().unwrap_or_default(),
            when: crate::error::When(Some(t0)),
        })?;
        let mut dx: Vec<f64> = r.iter().map(|v| -v).collect();
        lu.solve(&mut dx);
        for k in 0..n {
            x0[k] += dx[k];
        }
    }
    Err(SolveError::NoConvergence {
        analysis: "shooting".into(),
        unknown: devices.names.get(last.1).cloned().unwrap_or_default(),
        iterations: params.shooting.max_iter,
        residual: last.0,
        unit: match devices.kinds.get(last.1) {
            Some(tankwave_devices::UnknownKind::Current) => "A",
            _ => "V",
        },
        when: crate::error::When(None),
    })
}
