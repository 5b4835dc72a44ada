//! `tankwave fit NAME --out PART [curve files]`: fit a bipolar model to
//! curves read off a data sheet (the fitting is `tankwave_fit`).
//!
//! Reads one CSV file per curve kind, prints the fit report, and writes the
//! `part` block to `--out`, which must not exist unless `--replace` is given
//! and can never be one of the curve files. `--plots DIR` writes one SVG of
//! data against model per curve, `--report FILE` an HTML page with the
//! report and the plots. Bad curve files, a bad name or a curve that cannot
//! be fitted: the message with file:line, exit 2, nothing written.
//!
//! `--power CSV --power-stage STAGE` checks the fitted model against
//! large-signal output power and efficiency (`tankwave_fit::power`): the
//! test stage is read with the fitted part added at its end (the stage uses
//! `part=NAME` and does not define NAME), solved at each point's input
//! power, and the comparison printed after the fit report. The check does
//! not change the fit; a test stage that does not load is exit 2, one that
//! does not solve exit 3, and nothing is written then either.

use super::common::{BAD_INPUT, OK};
use clap::Args;
use std::path::{Path, PathBuf};
use tankwave_fit::{curve, CurveKind, FitParams};

/// Arguments of `fit`.
#[derive(Args, Debug)]
pub struct FitArgs {
    /// Name of the part to write (a letter, then letters, digits or `_`).
    pub name: String,
    /// Static current gain against collector current: columns `ic[A]`, `vce[V]`, gain.
    #[arg(long, value_name = "CSV")]
    pub gain: Option<PathBuf>,
    /// Base–emitter voltage against collector current: `ic[A]`, `vce[V]`, `vbe[V]`.
    #[arg(long, value_name = "CSV")]
    pub vbe: Option<PathBuf>,
    /// Collector–base capacitance against reverse voltage: `reverse[V]`, `cap[F]`.
    #[arg(long = "cap-bc", value_name = "CSV")]
    pub cap_bc: Option<PathBuf>,
    /// Emitter–base capacitance against reverse voltage: `reverse[V]`, `cap[F]`.
    #[arg(long = "cap-be", value_name = "CSV")]
    pub cap_be: Option<PathBuf>,
    /// Transition frequency against collector current: `ic[A]`, `vce[V]`, `ft[Hz]`.
    #[arg(long, value_name = "CSV")]
    pub ft: Option<PathBuf>,
    /// Saturation voltage at a forced base current: `ic[A]`, `ib[A]`, `vce[V]`.
    #[arg(long = "vce-sat", value_name = "CSV")]
    pub vce_sat: Option<PathBuf>,
    /// Output characteristics, collector current against collector–emitter
    /// voltage at fixed base currents: `vce[V]`, `ib[A]`, `ic[A]`.
    #[arg(long = "ic-vce", value_name = "CSV")]
    pub ic_vce: Option<PathBuf>,
    /// Large-signal data to check the fitted model against: `pin[W]`,
    /// `pout[W]`, `efficiency` (a fraction), measured in the --power-stage.
    #[arg(long, value_name = "CSV", requires = "power_stage")]
    pub power: Option<PathBuf>,
    /// The test stage the --power data was measured in: a stage file that
    /// uses `part=NAME` (the fitted part is added to it).
    #[arg(long = "power-stage", value_name = "STAGE", requires = "power")]
    pub power_stage: Option<PathBuf>,
    /// Write a pnp part (the curves are given as magnitudes).
    #[arg(long)]
    pub pnp: bool,
    /// File to write the part block to (refused if it exists, unless --replace).
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Replace --out if it exists (never a curve file).
    #[arg(long)]
    pub replace: bool,
    /// Directory for one SVG per curve, data against model.
    #[arg(long, value_name = "DIR")]
    pub plots: Option<PathBuf>,
    /// Write the fit report with its plots as one HTML file.
    #[arg(long, value_name = "FILE")]
    pub report: Option<PathBuf>,
}

fn read_curve(kind: CurveKind, path: &Path) -> Result<tankwave_fit::Curve, String> {
    let name = path.display().to_string();
    let md = std::fs::metadata(path).map_err(|e| format!("cannot read {name}: {e}"))?;
    if !md.is_file() {
        return Err(format!("cannot read {name}: not a regular file"));
    }
    if md.len() > curve::MAX_BYTES as u64 {
        return Err(format!(
            "{name}: more than the {} byte limit of a curve file",
            curve::MAX_BYTES
        ));
    }
    let bytes = std::fs::read(path).map_err(|e| format!("cannot read {name}: {e}"))?;
    let text = String::from_utf8(bytes).map_err(|_| format!("{name} is not UTF-8 text"))?;
    curve::parse(kind, &name, &text).map_err(|e| e.to_string())
}

/// Run the command; returns the exit code.
pub fn run(a: &FitArgs) -> i32 {
    if !tankwave_fit::part::valid_name(&a.name) {
        eprintln!(
            "error: '{}' cannot name a part: a letter, then letters, digits or '_' (at most 64)",
            tankwave_report::escape_path(Path::new(&a.name))
        );
        return BAD_INPUT;
    }
    let given: Vec<(CurveKind, &PathBuf)> = [
        (CurveKind::OutputCap, &a.cap_bc),
        (CurveKind::InputCap, &a.cap_be),
        (CurveKind::Gain, &a.gain),
        (CurveKind::BaseVoltage, &a.vbe),
        (CurveKind::Transition, &a.ft),
        (CurveKind::Saturation, &a.vce_sat),
        (CurveKind::Output, &a.ic_vce),
    ]
    .into_iter()
    .filter_map(|(k, p)| p.as_ref().map(|p| (k, p)))
    .collect();
    if given.is_empty() {
        eprintln!("error: no curves given: name at least one of --gain, --vbe, --cap-bc, --cap-be, --ft, --vce-sat, --ic-vce");
        return BAD_INPUT;
    }
    let mut curves = Vec::new();
    for (k, p) in &given {
        match read_curve(*k, p) {
            Ok(c) => curves.push(c),
            Err(m) => {
                eprintln!("error: {m}");
                return BAD_INPUT;
            }
        }
    }
    let power_curve = match &a.power {
        Some(p) => match read_curve(CurveKind::Power, p) {
            Ok(c) => Some(c),
            Err(m) => {
                eprintln!("error: {m}");
                return BAD_INPUT;
            }
        },
        None => None,
    };
    let mut paths: Vec<&PathBuf> = given.iter().map(|(_, p)| *p).collect();
    paths.extend(a.power.iter());
    let stage_inputs: Vec<PathBuf> = a
        .power_stage
        .iter()
        .flat_map(|s| super::common::input_files(s))
        .collect();
    paths.extend(stage_inputs.iter());
    let inputs = tankwave_report::outputs::Inputs::new(&paths);
    if !a.replace && std::fs::symlink_metadata(&a.out).is_ok() {
        eprintln!(
            "error: --out {} exists; give --replace to write over it",
            tankwave_report::escape_path(&a.out)
        );
        return BAD_INPUT;
    }
    let mut outs = vec![a.out.clone()];
    outs.extend(a.report.iter().cloned());
    if let Err(e) = tankwave_report::outputs::check_output_files(&outs, &inputs) {
        eprintln!("error: {e}");
        return BAD_INPUT;
    }
    let r = match tankwave_fit::fit(&curves, a.pnp, &FitParams::default()) {
        Ok(r) => r,
        Err(e) => {
            eprintln!("error: {e}");
            eprintln!("nothing written");
            return BAD_INPUT;
        }
    };
    let mut svgs = Vec::new();
    for c in &r.curves {
        match tankwave_fit::plot::svg(c) {
            Ok(s) => svgs.push(s),
            Err(m) => {
                eprintln!("error: plot: {m}");
                return BAD_INPUT;
            }
        }
    }
    let part = tankwave_fit::part::part_text(&a.name, &r);
    let power_text = match (&power_curve, &a.power_stage) {
        (Some(curve), Some(stage)) => match check_power(stage, &part, curve) {
            Ok(t) => Some(t),
            Err(code) => {
                eprintln!("nothing written");
                return code;
            }
        },
        _ => None,
    };
    let mut files = vec![(a.out.clone(), part.clone().into_bytes())];
    if let Some(rep) = &a.report {
        files.push((
            rep.clone(),
            tankwave_fit::report::html(&a.name, &r, &svgs).into_bytes(),
        ));
    }
    if let Some(dir) = &a.plots {
        if let Err(e) = tankwave_report::files::ensure_output_dir(dir) {
            eprintln!("error: output directory: {e}");
            return BAD_INPUT;
        }
        let plot_files: Vec<PathBuf> = r
            .curves
            .iter()
            .map(|c| dir.join(format!("{}-{}.svg", a.name, c.kind.word())))
            .collect();
        if let Err(e) = tankwave_report::outputs::check_output_files(&plot_files, &inputs) {
            eprintln!("error: {e}");
            return BAD_INPUT;
        }
        files.extend(
            plot_files
                .into_iter()
                .zip(svgs.into_iter().map(String::into_bytes)),
        );
    }
    print!("{}", tankwave_fit::report::text(&a.name, &r));
    if let Some(t) = &power_text {
        print!("{t}");
        // the check printed output powers: the caution goes with them
        println!("\n{}", tankwave_report::stage::SAFETY_NOTE);
    }
    if let Err(e) = tankwave_report::files::write_all_atomic(&files) {
        eprintln!("error: {e}");
        return BAD_INPUT;
    }
    for (p, _) in &files {
        eprintln!("wrote {}", tankwave_report::escape_path(p));
    }
    OK
}

/// The large-signal check: the test stage at `stage` with the fitted `part`
/// added, solved at each point of `curve`. The report text, or the exit
/// code after the error was printed.
fn check_power(stage: &Path, part: &str, curve: &tankwave_fit::Curve) -> Result<String, i32> {
    let name = stage.display().to_string();
    let limit = tankwave_netlist::limits::LIMITS.max_file_bytes;
    let text = match std::fs::metadata(stage) {
        Ok(md) if !md.is_file() => Err(format!("cannot read {name}: not a regular file")),
        Ok(md) if md.len() > limit => Err(format!(
            "{name}: more than the {limit} byte limit of a stage file"
        )),
        Ok(_) => std::fs::read(stage)
            .map_err(|e| format!("cannot read {name}: {e}"))
            .and_then(|b| String::from_utf8(b).map_err(|_| format!("{name} is not UTF-8 text"))),
        Err(e) => Err(format!("cannot read {name}: {e}")),
    };
    let text = text.map_err(|m| {
        eprintln!("error: {}", super::common::esc(&m));
        BAD_INPUT
    })?;
    // the fitted part after the stage's own text, so the stage's lines keep
    // their numbers in messages
    let joined = format!("{text}\n{part}");
    let source = tankwave_stage::StageSource::from_text_with_roots(
        &name,
        &joined,
        super::common::include_roots(),
    );
    let loaded = tankwave_stage::load_source(source, &tankwave_circuit::Overrides::default())
        .map_err(|e| super::common::report_failure(&name, &e))?;
    let params = tankwave_fit::power::PowerCheckParams::default();
    match tankwave_fit::power::check(&loaded.circuit, curve, &params) {
        Ok(c) => Ok(tankwave_fit::power::text(&c)),
        Err(e) => {
            if let tankwave_fit::power::PowerCheckError::Solve { source, .. } = &e {
                if let tankwave_stage::StageError::Input { .. } = **source {
                    return Err(super::common::report_failure(&name, source));
                }
            }
            eprintln!("error: {}", super::common::esc(&e.to_string()));
            Err(if e.is_input() {
                BAD_INPUT
            } else {
                super::common::SOLVER
            })
        }
    }
}
