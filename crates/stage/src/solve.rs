//! Solving a loaded stage: every analysis the file declares (or only what
//! its requirements need), the steady state optionally warm-started from a
//! neighbouring variant, measured and its requirements evaluated, into
//! [`StageResults`]. [`Caps`] bound the work for untrusted input (the fuzz
//! target and its smoke test).

use tankwave_circuit::{Analysis, Circuit};
use tankwave_devices::DeviceSet;
use tankwave_measure::{CollectorLoad, MeasureParams, Metrics, PeriodData, Verdict};
use tankwave_solve::{
    AcParams, AcResult, OpParams, OpResult, PeriodicSolution, SteadyParams, TransientParams,
    TransientResult,
};

use crate::mismatch::{sweep_from, Circle, MismatchSweep};
use crate::twotone::{two_tone, TwoToneSpec, TwoToneTest};
use crate::StageError;

/// The steady state of a stage and what was measured on it.
#[derive(Debug, Clone)]
pub struct SteadyOutcome {
    /// The periodic solution.
    pub solution: PeriodicSolution,
    /// Figures measured on it.
    pub metrics: Metrics,
    /// The load each transistor's collector sees at the fundamental and
    /// harmonics 2..5 ([`tankwave_measure::load`]).
    pub loads: Vec<CollectorLoad>,
}

impl SteadyOutcome {
    /// The state at the start of the period: the warm start of a
    /// neighbouring variant.
    pub fn warm_start(&self) -> Vec<f64> {
        self.solution
            .x
            .iter()
            .map(|u| u.first().copied().unwrap_or(0.0))
            .collect()
    }
}

/// Everything computed for one stage file, in the order the file declares
/// its analyses.
#[derive(Debug, Default)]
pub struct StageResults {
    /// The operating point (computed first: every other analysis starts from it).
    pub op: Option<OpResult>,
    /// Each transient in file order.
    pub transients: Vec<TransientResult>,
    /// Each AC sweep in file order.
    pub acs: Vec<AcResult>,
    /// The first steady-state analysis, measured.
    pub steady: Option<SteadyOutcome>,
    /// With `analyze heat`: the junction temperatures solved together with
    /// the steady state (which is then the one at those temperatures), and
    /// the heating over a transmission.
    pub heat: Option<crate::heat::HeatOutcome>,
    /// Requirement verdicts (empty without a steady state or requirements).
    pub verdicts: Vec<Verdict>,
    /// Each `analyze ruggedness` in file order: the output load moved
    /// around its circles ([`crate::mismatch`]).
    pub ruggedness: Vec<MismatchSweep>,
    /// Each `analyze twotone` in file order ([`crate::twotone`]).
    pub two_tone: Vec<TwoToneTest>,
    /// Each `analyze loadpull` in file order ([`crate::loadpull`]).
    pub load_pulls: Vec<crate::loadpull::LoadPull>,
    /// Each `analyze keying` in file order ([`crate::keying`]).
    pub keyings: Vec<crate::keying::KeyingRun>,
    /// The analyses that failed, when solving with
    /// [`SolveOptions::keep_going`] (always empty otherwise: the first
    /// failure is returned as the error).
    pub failures: Vec<StageError>,
}

impl Clone for StageResults {
    /// A copy of the results; the failures (errors are not `Clone`) are left out.
    fn clone(&self) -> Self {
        StageResults {
            op: self.op.clone(),
            transients: self.transients.clone(),
            acs: self.acs.clone(),
            steady: self.steady.clone(),
            heat: self.heat.clone(),
            verdicts: self.verdicts.clone(),
            ruggedness: self.ruggedness.clone(),
            two_tone: self.two_tone.clone(),
            load_pulls: self.load_pulls.clone(),
            keyings: self.keyings.clone(),
            failures: Vec::new(),
        }
    }
}

/// Which analyses to run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Scope {
    /// Every analysis in the file.
    #[default]
    All,
    /// Only what the requirements need: the steady state.
    Requirements,
}

/// Bounds on the work of one solve, for input nobody has checked (the fuzz
/// target): each analysis is shrunk to at most these sizes before it runs.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Caps {
    /// Most unknowns for which the analyses beyond the operating point run.
    pub max_unknowns: usize,
    /// Most output steps of a transient (its stop time is cut to fit; the
    /// internal step is kept within 1/1000 of the output step and at most
    /// the output step).
    pub max_transient_steps: f64,
    /// Most points of an AC sweep.
    pub max_ac_points: usize,
    /// Most harmonics of a steady state (and of balance's own refinement).
    pub max_harmonics: usize,
    /// Most time steps per period of a steady state.
    pub max_steps_per_period: usize,
    /// Most continuation levels of harmonic balance.
    pub max_balance_levels: usize,
    /// Most Newton iterations of harmonic balance.
    pub max_balance_iter: usize,
    /// Most iterations of shooting.
    pub max_shooting_iter: usize,
    /// Most warm-up periods of shooting.
    pub max_warmup_periods: usize,
    /// Most periods of settling.
    pub max_settle_periods: usize,
}

/// Most rounds of the electrothermal iteration under [`Caps`].
pub const CAPPED_HEAT_ROUNDS: usize = 4;
/// Most keying cycles of a heating run under [`Caps`] (the transmission
/// is cut to fit).
pub const CAPPED_KEYING_CYCLES: f64 = 1000.0;

/// Most circles, and phases per circle, of a ruggedness sweep under [`Caps`].
pub const CAPPED_CIRCLES: usize = 2;
/// See [`CAPPED_CIRCLES`].
pub const CAPPED_PHASES: usize = 4;
/// Most grid points across a load-pull under [`Caps`] (the smallest grid).
pub const CAPPED_PULL_POINTS: usize = 3;

impl Default for Caps {
    /// Small enough for a fuzzer's time budget; 128 steps per period keep
    /// both grids of shooting in play (the coarse one needs 128 or more).
    fn default() -> Self {
        Caps {
            max_unknowns: 20,
            max_transient_steps: 200.0,
            max_ac_points: 16,
            max_harmonics: 8,
            max_steps_per_period: 128,
            max_balance_levels: 40,
            max_balance_iter: 30,
            max_shooting_iter: 20,
            max_warmup_periods: 2,
            max_settle_periods: 50,
        }
    }
}

/// What a caller is told while a stage is being solved, e.g. to draw a
/// progress bar: this crate prints nothing, the command line does. Every
/// method does nothing by default.
pub trait Observer: Sync {
    /// Analysis `index` (0-based) of the `count` this solve will run has
    /// started; `what` names its kind (`bias`, `transient`, `ac`, `steady`,
    /// the words of `analyze`).
    fn started(&self, index: usize, count: usize, what: &str) {
        let _ = (index, count, what);
    }
    /// The running analysis has done this fraction (0 to 1) of its work
    /// (told only by analyses that know how far they are: a transient, by
    /// the time reached).
    fn advanced(&self, fraction: f64) {
        let _ = fraction;
    }
}

impl std::fmt::Debug for dyn Observer + '_ {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str("Observer")
    }
}

/// How to solve a stage.
#[derive(Debug, Clone, Default)]
pub struct SolveOptions<'a> {
    /// Which analyses to run.
    pub scope: Scope,
    /// The state at the start of a period of a solved neighbouring variant,
    /// to warm-start the steady state.
    pub warm: Option<&'a [f64]>,
    /// Bounds on the work (`None`: the analyses as the file declares them).
    pub caps: Option<Caps>,
    /// Go on after an analysis fails, collecting the failures in
    /// [`StageResults::failures`], instead of returning the first.
    pub keep_going: bool,
    /// Told as each analysis starts and advances (`None`: nobody listens).
    pub observer: Option<&'a dyn Observer>,
    /// Set by another thread to stop the solve: checked before each
    /// analysis (and each ruggedness sweep), the solve then returns
    /// [`StageError::Cancelled`] (`None`: it runs to the end).
    pub cancel: Option<&'a std::sync::atomic::AtomicBool>,
}

impl SolveOptions<'_> {
    /// The analyses of `scope`, as declared, stopping at the first failure.
    pub fn scope(scope: Scope) -> Self {
        SolveOptions {
            scope,
            ..SolveOptions::default()
        }
    }
}

/// Run the analyses of `circuit` as `opts` asks, measure the steady state
/// and evaluate the requirements.
pub fn solve(circuit: &Circuit, opts: &SolveOptions<'_>) -> Result<StageResults, StageError> {
    let devices: DeviceSet = tankwave_devices::instantiate(circuit).map_err(StageError::Devices)?;
    let mut res = StageResults::default();
    let beyond_op = opts
        .caps
        .is_none_or(|c| devices.n_unknowns <= c.max_unknowns);
    // the first failure ends the solve unless the options say to go on
    let fail = |res: &mut StageResults, e: StageError| -> Result<(), StageError> {
        if opts.keep_going {
            res.failures.push(e);
            Ok(())
        } else {
            Err(e)
        }
    };
    // a steady state that failed (going on) or was left out by the caps
    let mut steady_tried = false;
    let runs = |a: &Analysis| match a {
        Analysis::Steady { .. } => true,
        _ => opts.scope == Scope::All,
    };
    let count = circuit.analyses.iter().filter(|a| runs(a)).count();
    let mut index = 0;
    let cancelled = || {
        opts.cancel
            .is_some_and(|c| c.load(std::sync::atomic::Ordering::Relaxed))
    };
    for a in &circuit.analyses {
        if cancelled() {
            return Err(StageError::Cancelled);
        }
        if let (Some(o), true) = (opts.observer, runs(a)) {
            o.started(index, count, a.keyword());
            index += 1;
        }
        match a {
            Analysis::Bias => {
                if opts.scope == Scope::All && res.op.is_none() {
                    match tankwave_solve::operating_point(circuit, &devices, &OpParams::default()) {
                        Ok(op) => res.op = Some(op),
                        Err(e) => fail(&mut res, e.into())?,
                    }
                }
            }
            Analysis::Transient { .. } => {
                if opts.scope == Scope::All && beyond_op {
                    let mut p = TransientParams::from_analysis(a).unwrap_or_default();
                    if let Some(c) = &opts.caps {
                        cap_transient(&mut p, c);
                    }
                    let told = |f: f64| {
                        if let Some(o) = opts.observer {
                            o.advanced(f);
                        }
                    };
                    match tankwave_solve::transient_observed(circuit, &devices, &p, &told) {
                        Ok(t) => res.transients.push(t),
                        Err(e) => fail(&mut res, e.into())?,
                    }
                }
            }
            Analysis::Ac { .. } => {
                if opts.scope == Scope::All && beyond_op {
                    if let Some(mut p) = AcParams::from_analysis(a) {
                        if let Some(c) = &opts.caps {
                            p.points = p.points.min(c.max_ac_points);
                        }
                        match tankwave_solve::ac(circuit, &devices, &p) {
                            Ok(r) => res.acs.push(r),
                            Err(e) => fail(&mut res, e.into())?,
                        }
                    }
                }
            }
            // run after the loop, from the nominal steady state
            Analysis::Ruggedness { .. } => {}
            // solved with the steady state
            Analysis::Heat(_) => {}
            // run after the loop, from the nominal steady state
            Analysis::LoadPull(_) => {}
            Analysis::Keying(spec) => {
                // the first one also when a requirement reads its figures
                let needed =
                    opts.scope == Scope::All || (res.keyings.is_empty() && needs_keying(circuit));
                if needed && beyond_op {
                    match crate::keying::keying(circuit, &devices, spec, opts.caps.as_ref()) {
                        Ok(k) => res.keyings.push(k),
                        Err(e) => fail(&mut res, e)?,
                    }
                }
            }
            Analysis::TwoTone {
                spacing,
                spacings,
                order,
                levels,
            } => {
                // the first one also when a requirement reads its figures
                let needed = opts.scope == Scope::All
                    || (res.two_tone.is_empty() && needs_two_tone(circuit));
                if needed && beyond_op {
                    // only the test at full drive when only requirements are asked for
                    let all = opts.scope == Scope::All;
                    let spec = TwoToneSpec {
                        spacing: *spacing,
                        order: *order,
                        levels: if all { levels.clone() } else { Vec::new() },
                        spacings: if all { spacings.clone() } else { Vec::new() },
                    };
                    match two_tone(circuit, &devices, &spec, opts.caps.as_ref()) {
                        Ok(t) => res.two_tone.push(t),
                        Err(e) => fail(&mut res, e)?,
                    }
                }
            }
            Analysis::Steady { .. } => {
                if res.steady.is_some() || steady_tried {
                    continue;
                }
                if !beyond_op {
                    steady_tried = true;
                    continue;
                }
                let Some(mut p) = SteadyParams::from_analysis(a) else {
                    continue;
                };
                p.shooting.initial = opts.warm.map(|w| w.to_vec());
                p.balance.initial = opts.warm.map(|w| w.to_vec());
                if let Some(c) = &opts.caps {
                    cap_steady(&mut p, c);
                }
                let heat_spec = circuit.analyses.iter().find_map(|a| match a {
                    Analysis::Heat(h) => Some(h),
                    _ => None,
                });
                let solved = match heat_spec {
                    None => tankwave_solve::steady(circuit, &devices, &p)
                        .map_err(StageError::from)
                        .map(|s| (s, None)),
                    Some(h) => {
                        let mut h = h.clone();
                        if opts.caps.is_some() {
                            h.rounds = h.rounds.min(CAPPED_HEAT_ROUNDS);
                            if let Some(t) = &mut h.transmit {
                                let period = if h.space > 0.0 { h.mark + h.space } else { *t };
                                *t = t.min(CAPPED_KEYING_CYCLES * period);
                                h.mark = h.mark.min(*t);
                            }
                        }
                        crate::heat::electrothermal(circuit, &p, &h, opts.warm)
                            .map(|(s, o)| (s, Some(o)))
                    }
                }
                .and_then(|(solution, heat)| {
                    let mut metrics = measure(circuit, &solution)?;
                    if let Some(h) = &heat {
                        h.apply(&mut metrics);
                    }
                    let loads = collector_loads(circuit, &solution)?;
                    res.heat = heat;
                    Ok(SteadyOutcome {
                        solution,
                        metrics,
                        loads,
                    })
                });
                match solved {
                    Ok(s) => res.steady = Some(s),
                    Err(e) => {
                        fail(&mut res, e)?;
                        // a failed steady state is not tried again from a later statement
                        steady_tried = true;
                    }
                }
            }
        }
    }
    if let (Some(s), Some(t)) = (res.steady.as_mut(), res.two_tone.first()) {
        s.metrics.two_tone = Some(t.full.clone());
    }
    if let (Some(s), Some(k)) = (res.steady.as_mut(), res.keyings.first()) {
        s.metrics.keying = Some(k.figures.clone());
    }
    if let Some(s) = &res.steady {
        res.verdicts = tankwave_measure::evaluate(circuit, &s.metrics);
    }
    if opts.scope == Scope::All && beyond_op {
        let nominal = res.steady.as_ref().map(|s| s.warm_start());
        for a in &circuit.analyses {
            let Analysis::Ruggedness {
                vswr,
                phases,
                reference,
            } = a
            else {
                continue;
            };
            if cancelled() {
                return Err(StageError::Cancelled);
            }
            let mut circles: Vec<Circle> = vswr
                .iter()
                .map(|&vswr| Circle {
                    vswr,
                    phases: *phases,
                })
                .collect();
            if opts.caps.is_some() {
                circles.truncate(CAPPED_CIRCLES);
                for c in &mut circles {
                    c.phases = c.phases.min(CAPPED_PHASES);
                }
            }
            match sweep_from(circuit, &circles, *reference, nominal.as_deref(), opts.caps) {
                Ok(s) => res.ruggedness.push(s),
                Err(e) => fail(&mut res, e)?,
            }
        }
    }
    if opts.scope == Scope::All && beyond_op {
        let nominal = res.steady.as_ref().map(|s| s.warm_start());
        for a in &circuit.analyses {
            let Analysis::LoadPull(spec) = a else {
                continue;
            };
            if cancelled() {
                return Err(StageError::Cancelled);
            }
            let mut spec = spec.clone();
            if opts.caps.is_some() {
                spec.points = spec.points.min(CAPPED_PULL_POINTS);
            }
            match crate::loadpull::load_pull_from(circuit, &spec, nominal.as_deref(), opts.caps) {
                Ok(p) => res.load_pulls.push(p),
                Err(e) => fail(&mut res, e)?,
            }
        }
    }
    if res.steady.is_none() && !circuit.requirements.is_empty() && !steady_tried {
        fail(&mut res, StageError::RequirementsWithoutSteady)?;
    }
    Ok(res)
}

/// Whether a requirement reads a two-tone figure.
fn needs_two_tone(circuit: &Circuit) -> bool {
    use tankwave_circuit::figure::Figure;
    circuit.requirements.iter().any(|r| {
        matches!(
            r.metric.figure,
            Figure::Imd3 | Figure::Imd5 | Figure::Imd7 | Figure::Pep
        )
    })
}

/// Whether a requirement reads a keying figure (the first keying then runs
/// also when only the requirements are asked for).
fn needs_keying(circuit: &Circuit) -> bool {
    circuit
        .requirements
        .iter()
        .any(|r| r.metric.figure.is_keying())
}

/// Shrink a transient to the caps (left alone when its step or stop time
/// is not a positive finite number: the solver refuses those itself).
fn cap_transient(p: &mut TransientParams, c: &Caps) {
    if !(p.step.is_finite() && p.step > 0.0 && p.stop.is_finite()) {
        return;
    }
    p.stop = p.stop.min(c.max_transient_steps * p.step);
    p.max_step = Some(p.max_step.unwrap_or(p.step).min(p.step));
    p.min_step = Some(p.step * 1e-3);
}

/// Shrink a steady state to the caps.
pub(crate) fn cap_steady(p: &mut SteadyParams, c: &Caps) {
    p.harmonics = p.harmonics.min(c.max_harmonics);
    p.steps_per_period = p.steps_per_period.min(c.max_steps_per_period);
    p.accuracy.max_steps_per_period = p.accuracy.max_steps_per_period.min(c.max_steps_per_period);
    p.balance.max_harmonics = c.max_harmonics;
    p.balance.max_levels = p.balance.max_levels.min(c.max_balance_levels);
    p.balance.max_iter = p.balance.max_iter.min(c.max_balance_iter);
    p.shooting.max_iter = p.shooting.max_iter.min(c.max_shooting_iter);
    p.shooting.warmup_periods = p.shooting.warmup_periods.min(c.max_warmup_periods);
    p.settle.max_periods = p.settle.max_periods.min(c.max_settle_periods);
}

/// The measurement's view of a periodic solution of `circuit`.
fn period_data<'a>(circuit: &'a Circuit, s: &'a PeriodicSolution) -> PeriodData<'a> {
    let n_nodes = circuit.nodes.len().min(s.x.len());
    PeriodData {
        circuit,
        freq: s.freq,
        node_voltages: &s.x[..n_nodes],
        terminal_currents: &s.terminal_currents,
        transport_currents: &s.transport_currents,
        harmonics: s.harmonics,
        node_floors: s.info.floor.get(..n_nodes).unwrap_or(&[]),
    }
}

/// Measure a periodic solution of `circuit`.
pub fn measure(circuit: &Circuit, s: &PeriodicSolution) -> Result<Metrics, StageError> {
    let mut m = tankwave_measure::measure(&period_data(circuit, s), &MeasureParams::default())
        .map_err(StageError::Measure)?;
    multiplication(circuit, s, &mut m)?;
    Ok(m)
}

/// The peak avalanche multiplication of every transistor whose part has
/// it, from the device's own law at every sample of the period (at the
/// circuit's temperature: avalanche breakdown rises with temperature, so
/// a heated junction multiplies less than this says).
fn multiplication(
    circuit: &Circuit,
    s: &PeriodicSolution,
    m: &mut Metrics,
) -> Result<(), StageError> {
    let has = circuit.models.iter().any(
        |md| matches!(&md.params, tankwave_circuit::ModelParams::Bjt(p) if p.bv_cbo.is_finite()),
    );
    if !has {
        return Ok(());
    }
    let set = tankwave_devices::instantiate(circuit).map_err(StageError::Devices)?;
    if set.n_unknowns != s.x.len() {
        return Ok(());
    }
    let ctx = tankwave_devices::EvalCtx::default();
    let samples = s.x.first().map(|v| v.len()).unwrap_or(0);
    let mut x = vec![0.0; set.n_unknowns];
    for d in &set.devices {
        let mut peak: Option<f64> = None;
        for n in 0..samples {
            for (u, v) in x.iter_mut().zip(&s.x) {
                *u = v[n];
            }
            if let Some((_, mv)) = d
                .op_info(&x, &ctx)
                .into_iter()
                .find(|(f, _)| *f == tankwave_devices::OpFigure::Multiplication)
            {
                peak = Some(peak.map_or(mv, |p: f64| p.max(mv)));
            }
        }
        if let Some(p) = peak {
            m.set_multiplication(d.element(), p);
        }
    }
    Ok(())
}

/// The collector load of every transistor of a periodic solution of `circuit`.
pub fn collector_loads(
    circuit: &Circuit,
    s: &PeriodicSolution,
) -> Result<Vec<CollectorLoad>, StageError> {
    tankwave_measure::collector_loads(&period_data(circuit, s)).map_err(StageError::Measure)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::sync::atomic::AtomicBool;
    use tankwave_circuit::{Overrides, StageSource};

    /// A set cancel flag stops the solve before its first analysis; a clear
    /// one lets it run to the end.
    #[test]
    fn a_set_cancel_flag_stops_the_solve() {
        let src = StageSource::from_text(
            "t.tank",
            "voltage v1 a gnd dc=1V\nresistor r1 a gnd 50Ohm\nanalyze bias\n",
        );
        let stage = crate::load_source(src, &Overrides::default()).expect("loads");
        let stop = AtomicBool::new(true);
        let opts = SolveOptions {
            cancel: Some(&stop),
            ..SolveOptions::scope(Scope::All)
        };
        assert!(matches!(
            solve(&stage.circuit, &opts),
            Err(StageError::Cancelled)
        ));
        let go = AtomicBool::new(false);
        let opts = SolveOptions {
            cancel: Some(&go),
            ..SolveOptions::scope(Scope::All)
        };
        let r = solve(&stage.circuit, &opts).expect("solves");
        // 1 V across 50 Ω: the node voltage is the source's 1 V (Ohm's law)
        let op = r.op.expect("bias point");
        assert!((op.value("V[a]").expect("V[a]") - 1.0).abs() < 1e-9);
    }
}
