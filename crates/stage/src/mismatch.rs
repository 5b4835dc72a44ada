//! The mismatch sweep: the stage's output load replaced by loads on circles
//! of constant VSWR around the reference impedance, each solved in steady
//! state (warm-started from its neighbour on the circle), measured and its
//! requirements evaluated; the worst case of every requirement over all
//! loads; loads that do not solve are kept as failures, never dropped.
//!
//! On a circle of VSWR S the reflection coefficient is Γ = |Γ| e^{jφ},
//! |Γ| = (S − 1)/(S + 1), at φ = 360°·k/N, and the load is
//! Z = Z0 (1 + Γ)/(1 − Γ) (D. M. Pozar, Microwave Engineering, 4th ed.,
//! §2.3; docs/check-values.md, "Mismatch"). The mismatch is applied at the
//! output connector: the output resistor becomes the parallel resistance
//! 1/Re(1/Z) and one capacitor or inductor across it supplies Im(1/Z), so the
//! load is Z exactly at the fundamental; at the harmonics it is that same
//! network (R ∥ jnωL or R ∥ 1/(jnωC)), not Z0 (docs/analyses.md, "Mismatch
//! sweep").

use num_complex::Complex64;
use tankwave_circuit::{Analysis, Circuit, Element, ElementKind};
use tankwave_measure::{Metrics, Verdict};
use tankwave_solve::periodic::AccuracyEstimate;

use crate::solve::{solve, Caps, Scope, SolveOptions};
use crate::StageError;

/// One circle of constant VSWR.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Circle {
    /// The VSWR S (≥ 1).
    pub vswr: f64,
    /// Loads on the circle N (≥ 1), at phases 360°·k/N.
    pub phases: usize,
}

/// |Γ| = (S − 1)/(S + 1) (Pozar §2.3).
pub fn gamma_magnitude(vswr: f64) -> f64 {
    (vswr - 1.0) / (vswr + 1.0)
}

/// S = (1 + |Γ|)/(1 − |Γ|) (Pozar §2.3).
pub fn vswr_of(gamma_magnitude: f64) -> f64 {
    (1.0 + gamma_magnitude) / (1.0 - gamma_magnitude)
}

/// The fraction of the available power a load of reflection |Γ| takes from
/// a source matched to the reference: 1 − |Γ|² (the mismatch loss is its
/// reciprocal, in dB −10·log10(1 − |Γ|²); Pozar §2.3).
pub fn delivered_fraction(gamma_magnitude: f64) -> f64 {
    1.0 - gamma_magnitude * gamma_magnitude
}

/// Z = Z0 (1 + Γ)/(1 − Γ) (Pozar §2.3); a reactance below 1e-12 of the
/// resistance (the rounding of Γ on the real axis) is taken as zero.
pub fn load_impedance(z0: f64, gamma: Complex64) -> Complex64 {
    let z = z0 * (1.0 + gamma) / (1.0 - gamma);
    if z.im.abs() < 1e-12 * z.re.abs() {
        Complex64::new(z.re, 0.0)
    } else {
        z
    }
}

/// One load of the sweep and what it gave.
#[derive(Debug, Clone)]
pub struct LoadPoint {
    /// The circle's VSWR.
    pub vswr: f64,
    /// The phase φ of Γ, degrees.
    pub phase_deg: f64,
    /// The reflection coefficient against the reference.
    pub gamma: Complex64,
    /// The load impedance at the fundamental, Ω.
    pub z: Complex64,
    /// Figures measured at this load; `None` when it did not solve.
    pub metrics: Option<Metrics>,
    /// Requirement verdicts at this load (empty when it did not solve).
    pub verdicts: Vec<Verdict>,
    /// The largest Floquet multiplier |μ| of the periodic solution at this
    /// load (below 1: the orbit is stable; `None` when it did not solve).
    pub floquet_largest: Option<f64>,
    /// Newton iterations (harmonic balance), or periods integrated
    /// (shooting, settling), this load's steady state took.
    pub iterations: usize,
    /// The error `method=auto` estimated for this load's steady state
    /// and the target it was held to (`None` when it did not solve or the
    /// method gave no estimate).
    pub accuracy: Option<AccuracyEstimate>,
    /// Why it did not solve.
    pub failure: Option<String>,
}

/// The worst case of one requirement over every load.
#[derive(Debug, Clone)]
pub struct WorstCase {
    /// The requirement as written.
    pub requirement: String,
    /// The verdict at the load with the smallest margin.
    pub verdict: Verdict,
    /// Index into [`MismatchSweep::points`] of that load.
    pub at: usize,
    /// Passes only when it passes at every load and every load solved.
    pub pass: bool,
}

/// The result of a mismatch sweep.
#[derive(Debug, Clone)]
pub struct MismatchSweep {
    /// The reference impedance Z0, Ω.
    pub reference_ohm: f64,
    /// The fundamental frequency, Hz.
    pub freq_hz: f64,
    /// Every load, circle by circle, phase by phase.
    pub points: Vec<LoadPoint>,
    /// The worst case of each requirement, in the order of the file.
    pub worst: Vec<WorstCase>,
    /// Loads that did not solve.
    pub unsolved: usize,
}

/// Errors of a mismatch sweep that stop it before any load is solved.
fn setup_error(msg: String) -> StageError {
    StageError::Mismatch(msg)
}

/// The stage with its output load replaced by `z` at `freq` (see the
/// module documentation). The output must be a resistor.
pub fn with_load(circuit: &Circuit, z: Complex64, freq: f64) -> Result<Circuit, StageError> {
    let id = circuit
        .output
        .ok_or_else(|| setup_error("a mismatch sweep needs an output element".into()))?;
    let el = circuit
        .elements
        .get(id.index())
        .ok_or_else(|| setup_error(format!("output element #{} does not exist", id.index())))?;
    let ElementKind::Resistor { a, b, .. } = el.kind else {
        return Err(setup_error(format!(
            "a mismatch sweep replaces the output resistor; output '{}' is a {}",
            el.name,
            el.kind.keyword()
        )));
    };
    let y = 1.0 / z;
    if !(y.re.is_finite() && y.im.is_finite() && y.re > 0.0 && freq > 0.0) {
        return Err(setup_error(format!(
            "load {z} Ω has no positive conductance to realise"
        )));
    }
    let mut c = circuit.clone();
    let w = 2.0 * std::f64::consts::PI * freq;
    if let Some(Element {
        kind: ElementKind::Resistor { r, .. },
        ..
    }) = c.elements.get_mut(id.index())
    {
        *r = 1.0 / y.re;
    }
    let origin = el.origin.clone();
    let name = format!("{}_reactance", el.name);
    // a susceptance below 1e-12 of the conductance is left out (rounding of
    // Γ on the real axis)
    if y.im > 1e-12 * y.re {
        c.elements.push(Element {
            name,
            kind: ElementKind::Capacitor {
                a,
                b,
                c: y.im / w,
                rating_v: None,
                rating_a: None,
            },
            origin,
        });
    } else if y.im < -1e-12 * y.re {
        c.elements.push(Element {
            name,
            kind: ElementKind::Inductor {
                a,
                b,
                l: -1.0 / (w * y.im),
                series_r: 0.0,
                rating_a: None,
            },
            origin,
        });
    }
    Ok(c)
}

/// The reference impedance of a sweep: `reference` if given, else the
/// output resistor's value.
pub fn reference_of(circuit: &Circuit, reference: Option<f64>) -> Result<f64, StageError> {
    if let Some(r) = reference {
        return Ok(r);
    }
    match circuit
        .output
        .and_then(|id| circuit.elements.get(id.index()))
        .map(|e| &e.kind)
    {
        Some(ElementKind::Resistor { r, .. }) => Ok(*r),
        _ => Err(setup_error(
            "a mismatch sweep needs an output resistor (its value is the reference impedance)"
                .into(),
        )),
    }
}

/// Run the sweep over `circles` around `reference` Ω (the output
/// resistor's value when `None`), at the frequency of the first
/// `analyze steady`. Each load starts from the solved state of the load
/// before it on its circle (the nominal stage for the first of each circle).
pub fn sweep(
    circuit: &Circuit,
    circles: &[Circle],
    reference: Option<f64>,
) -> Result<MismatchSweep, StageError> {
    let nominal = solve(circuit, &SolveOptions::scope(Scope::Requirements))?;
    let nominal_warm = nominal.steady.as_ref().map(|s| s.warm_start());
    sweep_from(circuit, circles, reference, nominal_warm.as_deref(), None)
}

/// [`sweep`] from the nominal stage's solved state `nominal` (the state at
/// the start of its period; `None`: the first load of each circle starts
/// cold), each load's solve bounded by `caps` when given.
pub fn sweep_from(
    circuit: &Circuit,
    circles: &[Circle],
    reference: Option<f64>,
    nominal: Option<&[f64]>,
    caps: Option<Caps>,
) -> Result<MismatchSweep, StageError> {
    let z0 = reference_of(circuit, reference)?;
    if !(z0.is_finite() && z0 > 0.0) {
        return Err(setup_error(format!(
            "reference impedance {z0} Ω is not positive"
        )));
    }
    let freq = steady_freq(circuit)?;
    for c in circles {
        if !(c.vswr.is_finite() && c.vswr >= 1.0) || c.phases == 0 {
            return Err(setup_error(format!(
                "a circle needs VSWR ≥ 1 and at least one phase, got VSWR {} and {} phases",
                c.vswr, c.phases
            )));
        }
    }
    let mut points = Vec::new();
    for circle in circles {
        let g = gamma_magnitude(circle.vswr);
        let mut warm: Option<Vec<f64>> = nominal.map(<[f64]>::to_vec);
        for k in 0..circle.phases {
            let phase_deg = 360.0 * k as f64 / circle.phases as f64;
            let gamma = Complex64::from_polar(g, phase_deg.to_radians());
            let z = load_impedance(z0, gamma);
            let mut point = LoadPoint {
                vswr: circle.vswr,
                phase_deg,
                gamma,
                z,
                metrics: None,
                verdicts: Vec::new(),
                floquet_largest: None,
                iterations: 0,
                accuracy: None,
                failure: None,
            };
            match solve_load(circuit, z, freq, warm.as_deref(), caps) {
                Ok(s) => {
                    point.metrics = Some(s.metrics);
                    point.verdicts = s.verdicts;
                    point.floquet_largest = s.floquet_largest;
                    point.iterations = s.iterations;
                    point.accuracy = s.accuracy;
                    warm = Some(s.warm);
                }
                Err(e) => point.failure = Some(e.to_string()),
            }
            points.push(point);
        }
    }
    let unsolved = points.iter().filter(|p| p.failure.is_some()).count();
    let worst = worst_cases(&points, unsolved);
    Ok(MismatchSweep {
        reference_ohm: z0,
        freq_hz: freq,
        points,
        worst,
        unsolved,
    })
}

/// The frequency of the first `analyze steady`.
pub fn steady_freq(circuit: &Circuit) -> Result<f64, StageError> {
    circuit
        .analyses
        .iter()
        .find_map(|a| match a {
            Analysis::Steady { freq, .. } => Some(*freq),
            _ => None,
        })
        .ok_or(StageError::RequirementsWithoutSteady)
}

/// What one load gave.
pub struct Solved {
    /// Figures measured at the load.
    pub metrics: Metrics,
    /// Requirement verdicts at the load.
    pub verdicts: Vec<Verdict>,
    /// The largest Floquet multiplier of the periodic solution.
    pub floquet_largest: Option<f64>,
    /// Iterations (or periods) the steady state took.
    pub iterations: usize,
    /// The error estimate of the steady state (`method=auto`).
    pub accuracy: Option<AccuracyEstimate>,
    /// The state at the start of the period: the next load's warm start.
    pub warm: Vec<f64>,
}

/// Solve the stage with its output load replaced by `z` at `freq`, warm-started
/// from `warm` (a neighbouring load's state; `None`: cold), bounded by `caps`.
pub fn solve_load(
    circuit: &Circuit,
    z: Complex64,
    freq: f64,
    warm: Option<&[f64]>,
    caps: Option<Caps>,
) -> Result<Solved, StageError> {
    let c = with_load(circuit, z, freq)?;
    let n = tankwave_devices::instantiate(&c)
        .map_err(StageError::Devices)?
        .n_unknowns;
    // the neighbour's state, fitted to this load's unknowns: a reactance
    // added or dropped at the end of the element list adds or drops the
    // last unknown (an inductor's current starts at zero)
    let fitted: Option<Vec<f64>> =
        warm.map(|w| (0..n).map(|i| w.get(i).copied().unwrap_or(0.0)).collect());
    let r = solve(
        &c,
        &SolveOptions {
            scope: Scope::Requirements,
            warm: fitted.as_deref(),
            caps,
            ..SolveOptions::default()
        },
    )?;
    let s = r.steady.ok_or(StageError::RequirementsWithoutSteady)?;
    Ok(Solved {
        warm: s.warm_start(),
        floquet_largest: s.solution.info.floquet.as_ref().map(|f| f.largest),
        iterations: s.solution.info.iterations,
        accuracy: s.solution.info.accuracy.clone(),
        metrics: s.metrics,
        verdicts: r.verdicts,
    })
}

/// The verdict with the smallest margin per requirement; a requirement
/// fails when it fails anywhere or when any load did not solve.
fn worst_cases(points: &[LoadPoint], unsolved: usize) -> Vec<WorstCase> {
    let mut worst: Vec<WorstCase> = Vec::new();
    for (at, p) in points.iter().enumerate() {
        for v in &p.verdicts {
            let margin = v.margin.unwrap_or(f64::NEG_INFINITY);
            match worst.iter_mut().find(|w| w.requirement == v.requirement) {
                Some(w) => {
                    let m0 = w.verdict.margin.unwrap_or(f64::NEG_INFINITY);
                    w.pass &= v.pass;
                    if margin < m0 {
                        w.verdict = v.clone();
                        w.at = at;
                    }
                }
                None => worst.push(WorstCase {
                    requirement: v.requirement.clone(),
                    verdict: v.clone(),
                    at,
                    pass: v.pass,
                }),
            }
        }
    }
    if unsolved > 0 {
        for w in &mut worst {
            w.pass = false;
        }
    }
    worst
}
