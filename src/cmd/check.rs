//! `tankwave check FILE...`: solve each file, evaluate every requirement,
//! print a verdict table; JUnit XML and JSON for CI.

use super::common::{self, BAD_INPUT, FAILED, OK, SOLVER};
use super::visual;
use clap::{Args, ValueEnum};
use std::path::PathBuf;
use tankwave_report::check::{FileCheck, FileOutcome};
use tankwave_stage::{Scope, SolveOptions, StageError};

/// Output format of `check`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// A verdict table per file.
    Table,
    /// The verdicts of every file as one JSON document.
    Json,
}

/// Arguments of `check`.
#[derive(Args, Debug)]
pub struct CheckArgs {
    /// Stage files.
    #[arg(required = true)]
    pub files: Vec<PathBuf>,
    /// What to print on stdout.
    #[arg(long, value_enum, default_value = "table")]
    pub format: Format,
    /// Also write JUnit XML: one test case per requirement, one suite per file.
    #[arg(long, value_name = "FILE")]
    pub junit: Option<PathBuf>,
    /// Write SVG plots of each file (period waveforms, spectrum against the
    /// mask) to DIR/STEM-HASH/, STEM being the file name without extension
    /// and HASH 8 hex digits of the SHA-256 of its canonical path (docs/security.md).
    #[arg(long, value_name = "DIR")]
    pub plots: Option<PathBuf>,
    /// Override a `let` parameter in every file, e.g. `--set vcc=12V` (repeatable).
    #[arg(long = "set", value_name = "NAME=VALUE")]
    pub sets: Vec<String>,
    /// Check again whenever a file or a file it includes changes (clearing
    /// the terminal first), after errors too, until interrupted.
    #[arg(long)]
    pub watch: bool,
}

/// Run the command; returns the exit code (the worst over all files:
/// 2 bad input, then 3 solver failure, then 1 a requirement failed, else 0).
pub fn run(a: &CheckArgs) -> i32 {
    if a.watch {
        return super::watch::watch(&a.files, || run_once(a));
    }
    run_once(a)
}

/// One run of the command.
fn run_once(a: &CheckArgs) -> i32 {
    let clock = crate::progress::Clock::start();
    let code = run_timed(a);
    clock.report();
    code
}

/// [`run`] without the closing time line.
fn run_timed(a: &CheckArgs) -> i32 {
    let overrides = match common::overrides(&a.sets) {
        Ok(o) => o,
        Err(m) => {
            eprintln!("error: {m}");
            return BAD_INPUT;
        }
    };
    if let Some(dir) = &a.plots {
        if let Err(e) = tankwave_report::files::ensure_output_dir(dir) {
            eprintln!("error: plot directory: {e}");
            return BAD_INPUT;
        }
    }
    let mut inputs = tankwave_report::outputs::Inputs::default();
    for f in &a.files {
        inputs.add(&common::input_files(f));
    }
    let dirs: Vec<&std::path::Path> = a.plots.iter().map(PathBuf::as_path).collect();
    let junit: Vec<PathBuf> = a.junit.iter().cloned().collect();
    if let Err(code) = common::check_outputs(&junit, &dirs, &inputs) {
        return code;
    }
    let mut plot_files: Vec<(PathBuf, Vec<u8>)> = Vec::new();
    let mut outcomes = Vec::new();
    for f in &a.files {
        let name = f.display().to_string();
        let outcome = match common::load(f, &overrides) {
            Err(fail) => {
                let code = common::report_failure(&name, &fail);
                FileOutcome::Error {
                    code,
                    message: "bad input".into(),
                    problems: common::problems(&fail),
                }
            }
            Ok(l) => {
                let shown = crate::progress::Analyses::new(&name);
                let opts = SolveOptions {
                    observer: Some(&shown),
                    ..SolveOptions::scope(Scope::Requirements)
                };
                let solved = tankwave_stage::solve(&l.circuit, &opts);
                shown.finish();
                match solved {
                    Ok(r) => {
                        if let Some(dir) = &a.plots {
                            let stem = f
                                .file_stem()
                                .map(|s| s.to_string_lossy().to_string())
                                .unwrap_or_else(|| "stage".into());
                            let canon = std::fs::canonicalize(f).unwrap_or_else(|_| f.clone());
                            let sub = dir.join(tankwave_report::outputs::plot_subdir(
                                &stem,
                                &canon.to_string_lossy(),
                            ));
                            let drawn =
                                tankwave_report::assemble::stage_plots(&name, &l.circuit, &r);
                            let files = visual::drawn_files(Some(&sub), &drawn);
                            if !files.is_empty() {
                                if let Err(e) = std::fs::create_dir_all(&sub) {
                                    eprintln!("error: cannot create '{}': {e}", sub.display());
                                }
                            }
                            plot_files.extend(files);
                        }
                        FileOutcome::Verdicts(r.verdicts)
                    }
                    Err(fail) => {
                        let code = common::report_failure(&name, &fail);
                        let problems = common::problems(&fail);
                        let message = match fail {
                            StageError::Input { .. } => "bad input".into(),
                            e => e.to_string(),
                        };
                        FileOutcome::Error {
                            code,
                            message,
                            problems,
                        }
                    }
                }
            }
        };
        outcomes.push(FileCheck {
            file: name,
            outcome,
        });
    }
    match a.format {
        Format::Table => common::show(&tankwave_report::check::check_text(&outcomes)),
        Format::Json => {
            let doc = tankwave_report::check::check_json(&visual::tool(), &outcomes);
            common::show_json(&serde_json::to_string_pretty(&doc).unwrap_or_else(|_| "{}".into()));
        }
    }
    if !plot_files.is_empty() {
        let paths: Vec<PathBuf> = plot_files.iter().map(|(p, _)| p.clone()).collect();
        if let Err(code) = common::check_outputs(&paths, &[], &inputs) {
            return code;
        }
        if let Err(e) = tankwave_report::files::write_all_atomic(&plot_files) {
            eprintln!("error: {e}");
            return BAD_INPUT;
        }
    }
    if let Some(path) = &a.junit {
        let xml = tankwave_report::check::junit_xml(&outcomes);
        if let Err(e) = tankwave_report::write_atomic(path, xml.as_bytes()) {
            eprintln!("error: {e}");
            return BAD_INPUT;
        }
    }
    let mut code = OK;
    for f in &outcomes {
        let c = match &f.outcome {
            FileOutcome::Verdicts(v) if v.iter().any(|x| !x.pass) => FAILED,
            FileOutcome::Verdicts(_) => OK,
            FileOutcome::Error { code, .. } => *code,
        };
        code = worst(code, c);
    }
    code
}

/// The worse of two exit codes: bad input, then solver failure, then a failed requirement.
fn worst(a: i32, b: i32) -> i32 {
    let rank = |c: i32| match c {
        BAD_INPUT => 3,
        SOLVER => 2,
        FAILED => 1,
        _ => 0,
    };
    if rank(b) > rank(a) {
        b
    } else {
        a
    }
}
