//! Sampling a periodic solution: the current into every terminal of every
//! element, and the transport currents, at the samples of one period.
//!
//! One sampler (`sample_currents`) evaluates each element's devices alone
//! at every sample and forms `i + dq/dt` per terminal; how `dq/dt` is formed
//! is its parameter (`Derivative`): the spectral derivative on the sample
//! grid (`Spectral`), the TR-BDF2 stage formula the integrator used
//! (`TrBdf2`, shooting and settle), or harmonic balance's `jkωQ_k` on its
//! own grid (in `balance`).

use super::{PeriodicSolution, SteadyInfo, SteadyParams};
use crate::error::When;
use crate::transient::{bdf2_coefficients, GAMMA};
use crate::SolveError;
use tankwave_circuit::{Circuit, ElementId};
use tankwave_devices::{DeviceSet, EvalCtx, Idx, Stamp};

/// A stamp that keeps only the currents and charges (shared by every
/// periodic method that evaluates devices at samples of a period).
pub(crate) struct IqStamp {
    pub(crate) i: Vec<f64>,
    pub(crate) q: Vec<f64>,
}

impl Stamp for IqStamp {
    fn add_i(&mut self, row: Idx, v: f64) {
        if let Some(r) = row.and_then(|r| self.i.get_mut(r)) {
            *r += v;
        }
    }
    fn add_q(&mut self, row: Idx, v: f64) {
        if let Some(r) = row.and_then(|r| self.q.get_mut(r)) {
            *r += v;
        }
    }
    fn add_g(&mut self, _row: Idx, _col: Idx, _v: f64) {}
    fn add_c(&mut self, _row: Idx, _col: Idx, _v: f64) {}
}

impl IqStamp {
    /// A zeroed stamp for `n` unknowns.
    pub(crate) fn new(n: usize) -> Self {
        Self {
            i: vec![0.0; n],
            q: vec![0.0; n],
        }
    }

    /// Evaluate one element's devices alone at `x`, `ctx`, and hand
    /// `(terminal, i, q)` of every terminal on an unknown to `put`.
    pub(crate) fn element_terminals(
        &mut self,
        el: &ElementDevices<'_>,
        x: &[f64],
        ctx: &EvalCtx,
        state: &mut [f64],
        mut put: impl FnMut(usize, f64, f64),
    ) {
        self.i.fill(0.0);
        self.q.fill(0.0);
        for &di in &el.devs {
            let Some(d) = el.devices.devices.get(di) else {
                continue;
            };
            let off = el.devices.state_offsets.get(di).copied().unwrap_or(0);
            let sl = state.get_mut(off..off + d.state_len()).unwrap_or(&mut []);
            d.eval(x, ctx, sl, self);
        }
        for (j, t) in el.terms.iter().enumerate() {
            if let Some(k) = t {
                put(
                    j,
                    self.i.get(*k).copied().unwrap_or(0.0),
                    self.q.get(*k).copied().unwrap_or(0.0),
                );
            }
        }
    }
}

/// The devices of one circuit element and the unknowns of its terminals.
pub(crate) struct ElementDevices<'a> {
    devices: &'a DeviceSet,
    /// Indices into `devices.devices` of the element's devices.
    devs: Vec<usize>,
    /// The unknown of each terminal (`None` for ground).
    pub(crate) terms: Vec<Idx>,
}

impl<'a> ElementDevices<'a> {
    /// Element `ei` of the circuit, with terminals `terms`.
    pub(crate) fn new(devices: &'a DeviceSet, ei: ElementId, terms: Vec<Idx>) -> Self {
        let devs = devices
            .devices
            .iter()
            .enumerate()
            .filter(|(_, d)| d.element() == ei)
            .map(|(k, _)| k)
            .collect();
        Self {
            devices,
            devs,
            terms,
        }
    }
}

/// Where a periodic solution is sampled: `x[unknown][n]` at `n·T/N` after `t0`.
pub(crate) struct Grid<'a> {
    /// The unknowns at the samples.
    pub(crate) x: &'a [Vec<f64>],
    /// The time of the first sample, s.
    pub(crate) t0: f64,
    /// The period, s.
    pub(crate) period: f64,
    /// The junction leak the devices are evaluated with, S.
    pub(crate) junction_leak: f64,
}

/// How the sampler forms `dq/dt` of a terminal from its charge samples.
pub(crate) trait Derivative<'a> {
    /// States at which the charges are also needed, at this fraction of a
    /// step after each sample (the TR-BDF2 stage points), if any.
    fn stage_points(&self) -> Option<(&'a [Vec<f64>], f64)> {
        None
    }
    /// Output samples per period, from `ns` samples of the grid.
    fn out_len(&self, ns: usize) -> usize {
        ns
    }
    /// The current into one terminal at the output samples, `i + dq/dt`,
    /// from `i` and `q` at the samples and `q` at the stage points (empty
    /// without stage points).
    fn current(&mut self, i: &[f64], q: &[f64], q_stage: &[f64]) -> Vec<f64>;
}

/// The spectral derivative over the period (exact for a band-limited
/// periodic solution; the Nyquist bin is dropped).
pub(crate) struct Spectral {
    deriv: crate::spectral::Deriv,
    freq: f64,
}

impl Spectral {
    /// For `ns` samples of a period at `freq`.
    pub(crate) fn new(ns: usize, freq: f64) -> Self {
        Self {
            deriv: crate::spectral::Deriv::new(ns),
            freq,
        }
    }
}

impl Derivative<'_> for Spectral {
    fn current(&mut self, i: &[f64], q: &[f64], _: &[f64]) -> Vec<f64> {
        let dq = self.deriv.derivative(q, self.freq);
        i.iter().zip(&dq).map(|(a, b)| a + b).collect()
    }
}

/// The BDF2 stage formula of TR-BDF2 through the previous sample, the stage
/// point `stage[k][n−1]` (at `t_{n−1} + γh`) and the sample itself: the
/// derivative the integrator used, so every node's KCL (internal device nodes
/// included) holds to the Newton tolerance, which the spectral derivative of
/// a sharp conduction pulse would not give.
pub(crate) struct TrBdf2<'a> {
    stage: &'a [Vec<f64>],
    a: (f64, f64, f64),
}

impl<'a> TrBdf2<'a> {
    /// For `ns` steps per period `period`, with the stage points `stage[k][n]`.
    pub(crate) fn new(stage: &'a [Vec<f64>], ns: usize, period: f64) -> Self {
        let h = period / ns as f64;
        Self {
            stage,
            a: bdf2_coefficients((1.0 - GAMMA) * h, GAMMA * h),
        }
    }
}

impl<'a> Derivative<'a> for TrBdf2<'a> {
    fn stage_points(&self) -> Option<(&'a [Vec<f64>], f64)> {
        Some((self.stage, GAMMA))
    }
    fn current(&mut self, i: &[f64], q: &[f64], qg: &[f64]) -> Vec<f64> {
        let ns = q.len();
        let (a0, a1, a2) = self.a;
        (0..ns)
            .map(|s| {
                let p = (s + ns - 1) % ns;
                i[s] + (a0 * q[s] + a1 * qg[p] + a2 * q[p])
            })
            .collect()
    }
}

/// Current into every terminal of every element over one period, from
/// samples `x[unknown][n]` of a periodic solution at `freq`.
///
/// Each element's devices are evaluated alone at every sample; the current
/// into a terminal on node `k` is `i_k + dq_k/dt` (row `k` is the KCL sum of
/// currents leaving node `k` through the device, i.e. entering the device).
/// `dq/dt` is the spectral derivative over the period (exact for a
/// band-limited periodic solution; the Nyquist bin is dropped). A grounded
/// terminal carries minus the sum of the others (the element's charge is
/// neutral). Couplings have no terminals and get an empty entry.
pub fn terminal_currents(
    circuit: &Circuit,
    devices: &DeviceSet,
    x: &[Vec<f64>],
    freq: f64,
) -> Result<Vec<Vec<Vec<f64>>>, SolveError> {
    let ns = check_samples(devices, x)?;
    let grid = Grid::at_origin(x, freq);
    sample_currents(
        circuit,
        devices,
        &grid,
        &mut Spectral::new(ns, freq),
        "terminal currents",
    )
}

/// A periodic solution found with TR-BDF2 steps (shooting, settle) from its
/// samples and stage points: terminal currents by [`TrBdf2`], transport
/// currents, and `info`.
pub(crate) fn trbdf2_solution(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
    x: Vec<Vec<f64>>,
    stage: &[Vec<f64>],
    info: SteadyInfo,
) -> Result<PeriodicSolution, SolveError> {
    let ns = check_samples(devices, &x)?;
    let grid = Grid::at_origin(&x, params.freq);
    let mut rule = TrBdf2::new(stage, ns, grid.period);
    let terminal_currents =
        sample_currents(circuit, devices, &grid, &mut rule, "terminal currents")?;
    let transport_currents = transport_currents(circuit, devices, &x, params.freq);
    Ok(PeriodicSolution {
        freq: params.freq,
        harmonics: params.harmonics,
        samples_per_period: ns,
        x,
        terminal_currents,
        transport_currents,
        info,
    })
}

impl<'a> Grid<'a> {
    /// Samples from time 0 of a period at `freq`, devices at their default leak.
    fn at_origin(x: &'a [Vec<f64>], freq: f64) -> Self {
        Self {
            x,
            t0: 0.0,
            period: 1.0 / freq,
            junction_leak: EvalCtx::default().junction_leak,
        }
    }

    fn ctx(&self, s: f64, ns: usize) -> EvalCtx {
        EvalCtx {
            time: self.t0 + s * self.period / ns as f64,
            junction_leak: self.junction_leak,
            limit: false,
            ..EvalCtx::default()
        }
    }
}

/// The number of samples, if every one of the unknowns is sampled alike.
fn check_samples(devices: &DeviceSet, x: &[Vec<f64>]) -> Result<usize, SolveError> {
    let n = devices.n_unknowns;
    let ns = x.first().map(|v| v.len()).unwrap_or(0);
    if x.len() != n || x.iter().any(|v| v.len() != ns) || ns == 0 {
        return Err(SolveError::BadParams(format!(
            "terminal currents need {n} unknowns sampled alike, got {}",
            x.len()
        )));
    }
    Ok(ns)
}

/// The one terminal-current sampler: each element's devices alone at every
/// sample of `grid` (and at the rule's stage points), `i + dq/dt` per
/// terminal by `rule`, a grounded terminal minus the sum of the others.
/// `analysis` names the failure if a current is not finite.
pub(crate) fn sample_currents<'a>(
    circuit: &Circuit,
    devices: &DeviceSet,
    grid: &Grid<'_>,
    rule: &mut dyn Derivative<'a>,
    analysis: &str,
) -> Result<Vec<Vec<Vec<f64>>>, SolveError> {
    let n = devices.n_unknowns;
    let ns = grid.x.first().map(|v| v.len()).unwrap_or(0);
    let nout = rule.out_len(ns);
    let stage = rule.stage_points();
    let mut state = devices.initial_state();
    let mut out = Vec::with_capacity(circuit.elements.len());
    let mut xs = vec![0.0; n];
    let mut stamp = IqStamp::new(n);
    for (ei, el) in circuit.element_ids() {
        let terms = el.kind.terminals();
        if terms.is_empty() {
            out.push(Vec::new());
            continue;
        }
        let units = terms
            .iter()
            .map(|&t| devices.voltage_of(t).map(|u| u.index()))
            .collect();
        let ed = ElementDevices::new(devices, ei, units);
        let nt = terms.len();
        // q of this element's terminals at the stage points, when the rule has them.
        let mut qg = vec![Vec::new(); nt];
        if let Some((points, offset)) = stage {
            qg = vec![vec![0.0; ns]; nt];
            for s in 0..ns {
                for k in 0..n {
                    xs[k] = points[k][s];
                }
                let ctx = grid.ctx(s as f64 + offset, ns);
                stamp.element_terminals(&ed, &xs, &ctx, &mut state, |j, _, q| qg[j][s] = q);
            }
        }
        let mut iv = vec![vec![0.0; ns]; nt];
        let mut qv = vec![vec![0.0; ns]; nt];
        for s in 0..ns {
            for k in 0..n {
                xs[k] = grid.x[k][s];
            }
            let ctx = grid.ctx(s as f64, ns);
            stamp.element_terminals(&ed, &xs, &ctx, &mut state, |j, i, q| {
                iv[j][s] = i;
                qv[j][s] = q;
            });
        }
        let mut cur: Vec<Vec<f64>> = (0..nt)
            .map(|j| match terms[j].is_ground() {
                false => rule.current(&iv[j], &qv[j], &qg[j]),
                true => vec![0.0; nout],
            })
            .collect();
        // Grounded terminal: minus the sum of the others (charge neutrality).
        let grounded: Vec<usize> = (0..nt).filter(|&j| terms[j].is_ground()).collect();
        if let [g] = grounded[..] {
            for s in 0..nout {
                let sum: f64 = (0..nt).filter(|&j| j != g).map(|j| cur[j][s]).sum();
                cur[g][s] = -sum;
            }
        }
        if let Some(j) = cur.iter().position(|c| c.iter().any(|v| !v.is_finite())) {
            return Err(SolveError::NonFinite {
                analysis: analysis.into(),
                unknown: format!("terminal {} of {}", j + 1, el.name),
                when: When(None),
            });
        }
        out.push(cur);
    }
    Ok(out)
}

/// The intrinsic transport current of every element whose device has one
/// ([`tankwave_devices::Device::transport_current`]), at each sample of
/// `x[unknown][n]` over one period at `freq`; `None` for the other elements
/// (and for an element whose devices give a non-finite value or more than
/// one transport current). Evaluated exactly at the samples (no limiting).
pub fn transport_currents(
    circuit: &Circuit,
    devices: &DeviceSet,
    x: &[Vec<f64>],
    freq: f64,
) -> Vec<Option<Vec<f64>>> {
    let ns = x.first().map(|v| v.len()).unwrap_or(0);
    let period = 1.0 / freq;
    let mut xs = vec![0.0; x.len()];
    circuit
        .element_ids()
        .map(|(ei, _)| {
            let mut devs = devices.devices.iter().filter(|d| d.element() == ei);
            let dev = devs.next()?;
            if devs.next().is_some() || ns == 0 {
                return None;
            }
            let mut out = Vec::with_capacity(ns);
            for s in 0..ns {
                for (k, v) in xs.iter_mut().enumerate() {
                    *v = x.get(k).and_then(|r| r.get(s)).copied().unwrap_or(0.0);
                }
                let ctx = EvalCtx {
                    time: s as f64 * period / ns as f64,
                    limit: false,
                    ..EvalCtx::default()
                };
                out.push(dev.transport_current(&xs, &ctx).filter(|v| v.is_finite())?);
            }
            Some(out)
        })
        .collect()
}
