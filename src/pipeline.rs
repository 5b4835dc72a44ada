//! Wiring of the library crates for one stage file: load (parse + elaborate),
//! instantiate devices, run every analysis the file declares, measure the
//! steady state and evaluate the requirements, into the
//! [`StageResults`] that tankwave-report shows. Nothing here prints.

use std::path::{Path, PathBuf};
use std::sync::{Arc, OnceLock};

use tankwave_circuit::{Analysis, Circuit, Overrides};
use tankwave_devices::DeviceSet;
use tankwave_measure::{MeasureParams, Metrics, PeriodData};
use tankwave_netlist::{Diagnostic, SourceMap};
use tankwave_report::assemble::{StageResults, SteadyOutcome};
use tankwave_solve::{AcParams, OpParams, PeriodicSolution, SteadyParams, TransientParams};

/// A stage file that parsed and elaborated.
pub struct Loaded {
    /// The checked circuit.
    pub circuit: Circuit,
    /// Warnings found on the way.
    pub warnings: Vec<Diagnostic>,
    /// The sources, for rendering the warnings.
    pub sources: Arc<SourceMap>,
}

/// Why a file produced no results.
pub enum Failure {
    /// Bad input: every diagnostic, with its sources (exit 2).
    Input {
        /// Diagnostics (errors and warnings).
        diagnostics: Vec<Diagnostic>,
        /// Sources to render them with.
        sources: Arc<SourceMap>,
    },
    /// The solver (or the measurement of its result) failed (exit 3).
    Solve(String),
    /// The file is valid but cannot do what was asked (exit 2).
    Setup(String),
}

/// The include roots given with `--include-root`.
static INCLUDE_ROOTS: OnceLock<Vec<PathBuf>> = OnceLock::new();

/// Record the `--include-root` directories (once, at start-up).
pub fn set_include_roots(roots: Vec<PathBuf>) {
    let _ = INCLUDE_ROOTS.set(roots);
}

/// Parse the stage file at `path`, includes confined to its default roots
/// and those given with `--include-root`.
pub fn parse(path: &Path) -> tankwave_netlist::Parsed {
    let roots = INCLUDE_ROOTS.get().map(Vec::as_slice).unwrap_or(&[]);
    tankwave_netlist::parse_file_with_roots(path, roots)
}

/// Every file `path` reads (itself and its includes), for the output checks.
pub fn input_files(path: &Path) -> Vec<PathBuf> {
    let mut files = parse(path).files_read;
    files.push(path.to_path_buf());
    files
}

/// Parse and elaborate `path` with `overrides`.
pub fn load(path: &Path, overrides: &Overrides) -> Result<Loaded, Failure> {
    let parsed = parse(path);
    if let Some(m) = empty_file(&parsed) {
        return Err(Failure::Setup(m));
    }
    match tankwave_circuit::elaborate(&parsed, overrides) {
        Ok(e) => Ok(Loaded {
            circuit: e.circuit,
            warnings: e.warnings,
            sources: parsed.sources.clone(),
        }),
        Err(diagnostics) => Err(Failure::Input {
            diagnostics,
            sources: parsed.sources.clone(),
        }),
    }
}

/// The message for a file that read cleanly but holds no statement at all
/// (empty, blank or only comments): nothing to check or solve, so bad input.
pub fn empty_file(parsed: &tankwave_netlist::Parsed) -> Option<String> {
    (parsed.statements.is_empty() && parsed.diagnostics.is_empty())
        .then(|| "the file holds no statements (it is empty or only comments)".to_string())
}

/// Which analyses to run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scope {
    /// Every analysis in the file.
    All,
    /// Only what the requirements need: the steady state.
    Requirements,
}

/// Run the analyses of `circuit` (with `scope`), measure and evaluate.
pub fn solve(circuit: &Circuit, scope: Scope) -> Result<StageResults, Failure> {
    solve_warm(circuit, scope, None)
}

/// [`solve`], with the steady state warm-started from `warm` (the state at
/// the start of a period of a solved neighbouring variant) where given.
pub fn solve_warm(
    circuit: &Circuit,
    scope: Scope,
    warm: Option<&[f64]>,
) -> Result<StageResults, Failure> {
    let devices: DeviceSet = tankwave_devices::instantiate(circuit)
        .map_err(|e| Failure::Solve(format!("cannot build the devices: {e}")))?;
    let mut res = StageResults::default();
    let solve_err = |e: tankwave_solve::SolveError| Failure::Solve(e.to_string());
    for a in &circuit.analyses {
        match a {
            Analysis::Bias => {
                if scope == Scope::All && res.op.is_none() {
                    res.op = Some(
                        tankwave_solve::operating_point(circuit, &devices, &OpParams::default())
                            .map_err(solve_err)?,
                    );
                }
            }
            Analysis::Transient { .. } => {
                if scope == Scope::All {
                    let p = TransientParams::from_analysis(a).unwrap_or_default();
                    res.transients
                        .push(tankwave_solve::transient(circuit, &devices, &p).map_err(solve_err)?);
                }
            }
            Analysis::Ac { .. } => {
                if scope == Scope::All {
                    if let Some(p) = AcParams::from_analysis(a) {
                        res.acs
                            .push(tankwave_solve::ac(circuit, &devices, &p).map_err(solve_err)?);
                    }
                }
            }
            Analysis::Steady { .. } => {
                if res.steady.is_some() {
                    continue;
                }
                let Some(mut p) = SteadyParams::from_analysis(a) else {
                    continue;
                };
                p.shooting.initial = warm.map(|w| w.to_vec());
                let solution = tankwave_solve::steady(circuit, &devices, &p).map_err(solve_err)?;
                let metrics = measure(circuit, &solution)?;
                res.steady = Some(SteadyOutcome { solution, metrics });
            }
        }
    }
    if let Some(s) = &res.steady {
        res.verdicts = tankwave_measure::evaluate(circuit, &s.metrics);
    } else if !circuit.requirements.is_empty() {
        return Err(Failure::Setup(
            "the file has `require` statements but no `analyze steady`: requirements are \
             measured on the periodic steady state"
                .to_string(),
        ));
    }
    Ok(res)
}

/// Measure a periodic solution.
pub fn measure(circuit: &Circuit, s: &PeriodicSolution) -> Result<Metrics, Failure> {
    let n_nodes = circuit.nodes.len().min(s.x.len());
    let data = PeriodData {
        circuit,
        freq: s.freq,
        node_voltages: &s.x[..n_nodes],
        terminal_currents: &s.terminal_currents,
        transport_currents: &s.transport_currents,
        harmonics: s.harmonics,
    };
    tankwave_measure::measure(&data, &MeasureParams::default())
        .map_err(|e| Failure::Solve(format!("measuring the steady state: {e}")))
}
