//! The fitted model checked against large-signal data: output power and
//! collector efficiency against input power, measured in a test stage (a
//! data sheet's test fixture, described as a stage file that uses the
//! fitted part).
//!
//! For each point of a [`CurveKind::Power`] curve the drive of the stage's
//! `input` source is scaled so that the stage takes the point's input
//! power, the steady state is solved (by the stage file's own `analyze
//! steady`, through `tankwave_stage`), and the model's output power
//! P₁,out and collector efficiency η = P₁,out / P_dc are set beside the
//! data. The input power is the drive's **available power** |V_s1|²/(8 R_s)
//! when the drive source has a source resistance (what a data sheet's
//! fixture is driven with from a matched generator; common practice), and
//! otherwise the fundamental power delivered into the circuit,
//! ½ Re(V₁ I₁*).
//!
//! The available power is exactly proportional to the square of the drive
//! amplitude, so the scale for a point is √(P_target / P_nominal) at once.
//! The delivered power is not (the input impedance moves with drive): the
//! scale is then refined by the same square-root step from the power each
//! solve took, until the power is within [`PowerCheckParams::drive_tolerance`]
//! of the target (a fixed-point iteration; it converges while the input
//! impedance changes slowly with drive, and a point where it does not is
//! reported as such).
//!
//! Nothing here changes the fit: the check says how far a model fitted to
//! small-signal and d.c. curves is from the large-signal figures, which
//! also depend on everything the test stage holds (matching, parasitics,
//! the fixture's losses).

use crate::curve::{Curve, CurveKind};
use tankwave_circuit::Circuit;
use tankwave_stage::{scale_drive, solve, Scope, SolveOptions, StageError};

/// Options of the large-signal check.
#[derive(Debug, Clone, PartialEq)]
pub struct PowerCheckParams {
    /// Relative error of the input power at which a point's drive is taken
    /// as found (default 1e-3).
    pub drive_tolerance: f64,
    /// Most solves per point while the drive is refined (default 12).
    pub max_solves: usize,
}

impl Default for PowerCheckParams {
    fn default() -> Self {
        Self {
            drive_tolerance: 1e-3,
            max_solves: 12,
        }
    }
}

/// How the input power of a point is read.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum InputBasis {
    /// The drive's available power (the source has a resistance).
    Available,
    /// The fundamental power delivered into the circuit.
    Delivered,
}

impl InputBasis {
    /// For a person.
    pub fn describe(self) -> &'static str {
        match self {
            InputBasis::Available => "the drive's available power |Vs1|²/(8 Rs)",
            InputBasis::Delivered => "the fundamental power delivered into the circuit",
        }
    }
}

/// One point: the data and the model's figures at the same input power.
#[derive(Debug, Clone, PartialEq)]
pub struct PowerPoint {
    /// Line in the curve file.
    pub line: usize,
    /// Input power, W.
    pub pin_w: f64,
    /// Output power of the data, W.
    pub data_pout_w: f64,
    /// Collector efficiency of the data, fraction.
    pub data_efficiency: f64,
    /// The model's output power at the fundamental, W.
    pub model_pout_w: f64,
    /// The model's collector efficiency, fraction.
    pub model_efficiency: f64,
    /// The drive scale found (1 = the stage file's own drive).
    pub drive_scale: f64,
    /// Solves spent on the point.
    pub solves: usize,
}

impl PowerPoint {
    /// (model − data) / data of the output power.
    pub fn pout_rel(&self) -> f64 {
        (self.model_pout_w - self.data_pout_w) / self.data_pout_w
    }

    /// Model − data of the efficiency, in fractions (0.01 = one
    /// percentage point).
    pub fn efficiency_diff(&self) -> f64 {
        self.model_efficiency - self.data_efficiency
    }
}

/// The check of one power curve.
#[derive(Debug, Clone, PartialEq)]
pub struct PowerCheck {
    /// File of the curve.
    pub file: String,
    /// How the input power was read.
    pub basis: InputBasis,
    /// The points, in file order.
    pub points: Vec<PowerPoint>,
    /// RMS of the output power's relative error.
    pub pout_rms_rel: f64,
    /// The output power's largest relative error (by magnitude, signed).
    pub pout_worst_rel: f64,
    /// Line of that point.
    pub pout_worst_line: usize,
    /// RMS of the efficiency's difference, fraction.
    pub efficiency_rms: f64,
    /// The efficiency's largest difference (by magnitude, signed), fraction.
    pub efficiency_worst: f64,
    /// Line of that point.
    pub efficiency_worst_line: usize,
}

/// Why the check could not be made.
#[derive(Debug, thiserror::Error)]
pub enum PowerCheckError {
    /// The curve is not a power curve.
    #[error("{file}: not a power curve (pin[W], pout[W], efficiency)")]
    NotPower {
        /// File of the curve.
        file: String,
    },
    /// The test stage cannot have its drive scaled or measured.
    #[error("the test stage: {0}")]
    Stage(String),
    /// The test stage failed to load or solve.
    #[error("the test stage at {file}:{line} (input power {pin_w:e} W): {source}")]
    Solve {
        /// File of the curve.
        file: String,
        /// Line of the point being solved.
        line: usize,
        /// Its input power, W.
        pin_w: f64,
        /// What failed.
        #[source]
        source: Box<StageError>,
    },
    /// The drive for a point was not found.
    #[error(
        "{file}:{line}: no drive gives the input power {pin_w:e} W within {tol:e} in {solves} solves (last {got_w:e} W)"
    )]
    NoDrive {
        /// File of the curve.
        file: String,
        /// Line of the point.
        line: usize,
        /// The target, W.
        pin_w: f64,
        /// The power of the last solve, W.
        got_w: f64,
        /// The tolerance asked for.
        tol: f64,
        /// Solves spent.
        solves: usize,
    },
}

impl PowerCheckError {
    /// Whether the input (the curve, the test stage) is at fault rather
    /// than the solver: exit 2 for these, 3 for the others.
    pub fn is_input(&self) -> bool {
        match self {
            PowerCheckError::NotPower { .. } | PowerCheckError::Stage(_) => true,
            PowerCheckError::Solve { source, .. } => source.is_input(),
            PowerCheckError::NoDrive { .. } => false,
        }
    }
}

/// The figures one solve of `circuit` gives: (input power on `basis`,
/// output power, efficiency).
fn figures(circuit: &Circuit, basis: Option<InputBasis>) -> Result<Figures, StageError> {
    let r = solve(circuit, &SolveOptions::scope(Scope::Requirements))?;
    let steady = r.steady.ok_or(StageError::RequirementsWithoutSteady)?;
    let m = &steady.metrics;
    let drive = m.drive.as_ref();
    let basis = basis.unwrap_or(match drive.and_then(|d| d.pavs_w) {
        Some(_) => InputBasis::Available,
        None => InputBasis::Delivered,
    });
    let pin = match basis {
        InputBasis::Available => drive.and_then(|d| d.pavs_w),
        InputBasis::Delivered => drive.map(|d| d.pin_w),
    };
    Ok(Figures {
        basis,
        pin,
        pout: m.output.as_ref().map(|o| o.p1_w),
        efficiency: m.efficiency,
    })
}

struct Figures {
    basis: InputBasis,
    pin: Option<f64>,
    pout: Option<f64>,
    efficiency: Option<f64>,
}

/// Check `curve` (a [`CurveKind::Power`] curve) against `circuit`, the test
/// stage with the fitted part in it.
pub fn check(
    circuit: &Circuit,
    curve: &Curve,
    params: &PowerCheckParams,
) -> Result<PowerCheck, PowerCheckError> {
    if curve.kind != CurveKind::Power {
        return Err(PowerCheckError::NotPower {
            file: curve.file.clone(),
        });
    }
    let file = curve.file.clone();
    let solve_err = |line: usize, pin_w: f64| {
        let file = file.clone();
        move |e: StageError| PowerCheckError::Solve {
            file,
            line,
            pin_w,
            source: Box::new(e),
        }
    };
    let first = curve.points.first().map_or((1, 0.0), |p| (p.line, p.a));
    let nominal = figures(circuit, None).map_err(solve_err(first.0, first.1))?;
    let basis = nominal.basis;
    let missing = |what: &str| {
        PowerCheckError::Stage(format!(
            "the stage gives no {what}; it needs an `input` source with a sine drive, an `output` element and a supply"
        ))
    };
    let p_nom = nominal
        .pin
        .filter(|p| *p > 0.0)
        .ok_or_else(|| missing("input power"))?;
    let mut points = Vec::new();
    for pt in &curve.points {
        let target = pt.a;
        // the scale that would give the target if the power went as the
        // square of the drive (exact for the available power)
        let mut k = (target / p_nom).sqrt();
        let mut solves = 0;
        let found = loop {
            let mut c = circuit.clone();
            scale_drive(&mut c, k).map_err(|e| PowerCheckError::Stage(e.to_string()))?;
            let f = figures(&c, Some(basis)).map_err(solve_err(pt.line, target))?;
            solves += 1;
            let got = f
                .pin
                .filter(|p| *p > 0.0)
                .ok_or_else(|| missing("input power"))?;
            if (got - target).abs() <= params.drive_tolerance * target {
                break f;
            }
            if solves >= params.max_solves {
                return Err(PowerCheckError::NoDrive {
                    file: file.clone(),
                    line: pt.line,
                    pin_w: target,
                    got_w: got,
                    tol: params.drive_tolerance,
                    solves,
                });
            }
            k *= (target / got).sqrt();
        };
        let pout = found.pout.ok_or_else(|| missing("output power"))?;
        let eff = found.efficiency.ok_or_else(|| missing("efficiency"))?;
        points.push(PowerPoint {
            line: pt.line,
            pin_w: target,
            data_pout_w: pt.b,
            data_efficiency: pt.y,
            model_pout_w: pout,
            model_efficiency: eff,
            drive_scale: k,
            solves,
        });
    }
    let rms = |v: &[f64]| (v.iter().map(|x| x * x).sum::<f64>() / v.len().max(1) as f64).sqrt();
    let worst = |v: &[f64]| {
        v.iter()
            .enumerate()
            .fold((0.0f64, 0usize), |(w, i), (j, x)| {
                if x.abs() > w.abs() {
                    (*x, j)
                } else {
                    (w, i)
                }
            })
    };
    let pr: Vec<f64> = points.iter().map(PowerPoint::pout_rel).collect();
    let ed: Vec<f64> = points.iter().map(PowerPoint::efficiency_diff).collect();
    let (pw, pi) = worst(&pr);
    let (ew, ei) = worst(&ed);
    let line_of = |i: usize| points.get(i).map_or(0, |p| p.line);
    Ok(PowerCheck {
        file,
        basis,
        pout_rms_rel: rms(&pr),
        pout_worst_rel: pw,
        pout_worst_line: line_of(pi),
        efficiency_rms: rms(&ed),
        efficiency_worst: ew,
        efficiency_worst_line: line_of(ei),
        points,
    })
}

/// The check as plain text, every number with its unit.
pub fn text(c: &PowerCheck) -> String {
    use tankwave_circuit::si::si_prefixed;
    let mut s = format!(
        "\nLarge-signal check in the test stage ({}; input power is {}):\n",
        c.file,
        c.basis.describe()
    );
    s.push_str(&format!(
        "  {:>5}  {:>11}  {:>11} {:>11} {:>8}  {:>8} {:>8} {:>8}\n",
        "line", "P_in", "P_out data", "P_out model", "error", "η data", "η model", "η diff"
    ));
    for p in &c.points {
        s.push_str(&format!(
            "  {:>5}  {:>11}  {:>11} {:>11} {:>6.1} %  {:>6.1} % {:>6.1} % {:>+5.1} pt\n",
            p.line,
            si_prefixed(p.pin_w, "W", 3),
            si_prefixed(p.data_pout_w, "W", 3),
            si_prefixed(p.model_pout_w, "W", 3),
            p.pout_rel() * 100.0,
            p.data_efficiency * 100.0,
            p.model_efficiency * 100.0,
            p.efficiency_diff() * 100.0
        ));
    }
    s.push_str(&format!(
        "  output power: RMS error {:.1} %, worst {:+.1} % (line {}); efficiency: RMS {:.1} points, worst {:+.1} points (line {})\n",
        c.pout_rms_rel * 100.0,
        c.pout_worst_rel * 100.0,
        c.pout_worst_line,
        c.efficiency_rms * 100.0,
        c.efficiency_worst * 100.0,
        c.efficiency_worst_line
    ));
    s
}
