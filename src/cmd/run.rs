//! `tankwave run FILE`: solve every analysis the file declares and report.

use super::common::{self, BAD_INPUT, FAILED, OK};
use super::visual;
use clap::{Args, ValueEnum};
use std::path::PathBuf;
use tankwave_report::assemble;
use tankwave_report::stage;
use tankwave_stage::{Scope, SolveOptions, StageResults};

/// Output format of `run`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// A readable report.
    Table,
    /// Every figure, with units, as one JSON document (schema `tankwave/4`).
    Json,
    /// The spectrum as CSV on stdout (waveforms go to --out).
    Csv,
}

/// Arguments of `run`.
#[derive(Args, Debug)]
pub struct RunArgs {
    /// The stage file.
    pub file: PathBuf,
    /// What to print on stdout.
    #[arg(long, value_enum, default_value = "table")]
    pub format: Format,
    /// Also write full results to this directory: results.json, op.csv,
    /// transient-N.csv, ac-N.csv, period.csv and spectrum.csv (written whole, or not at all).
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// Override a `let` parameter, e.g. `--set vcc=12V` (repeatable).
    #[arg(long = "set", value_name = "NAME=VALUE")]
    pub sets: Vec<String>,
    /// Write SVG plots (waveforms of one period, spectrum against the mask,
    /// start-up envelope, AC sweep) to this directory.
    #[arg(long, value_name = "DIR")]
    pub plots: Option<PathBuf>,
    /// Write a self-contained HTML report (inline SVG and CSS, no network) to this file.
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,
    /// In a transient's CSV (transient-N.csv, `--format csv`), keep one
    /// accepted step in N (the first and the last are always kept).
    #[arg(long, value_name = "N", default_value_t = 1,
          value_parser = clap::value_parser!(u64).range(1..))]
    pub csv_every: u64,
    /// In a transient's CSV, write only these signals, comma-separated:
    /// unknowns as the report names them (`V[out]`, `I[rfc]`) or bare node
    /// names (`out` for `V[out]`).
    #[arg(long, value_name = "LIST", value_delimiter = ',')]
    pub csv_signals: Vec<String>,
    /// Print solver details (Newton system size, iterations, samples).
    #[arg(long, short)]
    pub verbose: bool,
    /// Run again whenever the file or a file it includes changes (clearing
    /// the terminal first), after errors too, until interrupted.
    #[arg(long)]
    pub watch: bool,
}

/// Run the command; returns the exit code.
pub fn run(a: &RunArgs) -> i32 {
    if a.watch {
        return super::watch::watch(std::slice::from_ref(&a.file), || run_once(a));
    }
    run_once(a)
}

/// One run of the command.
fn run_once(a: &RunArgs) -> i32 {
    let clock = crate::progress::Clock::start();
    let code = run_timed(a);
    // the closing time line only after work was done (not after refused options)
    if code != BAD_INPUT {
        clock.report();
    }
    code
}

/// [`run`] without the closing time line.
fn run_timed(a: &RunArgs) -> i32 {
    let file = a.file.display().to_string();
    let overrides = match common::overrides(&a.sets) {
        Ok(o) => o,
        Err(m) => {
            eprintln!("error: {m}");
            return BAD_INPUT;
        }
    };
    for dir in [&a.out, &a.plots].into_iter().flatten() {
        if let Err(e) = tankwave_report::files::ensure_output_dir(dir) {
            eprintln!("error: output directory: {e}");
            return BAD_INPUT;
        }
    }
    let loaded = match common::load(&a.file, &overrides) {
        Ok(l) => l,
        Err(f) => return common::report_failure(&file, &f),
    };
    let inputs = tankwave_report::outputs::Inputs::new(&common::input_files(&a.file));
    let mut out_files: Vec<PathBuf> = a.report.iter().cloned().collect();
    if let Some(dir) = &a.out {
        out_files.extend(out_file_names(&loaded.circuit).iter().map(|n| dir.join(n)));
    }
    let dirs: Vec<&std::path::Path> = [&a.out, &a.plots]
        .into_iter()
        .flatten()
        .map(PathBuf::as_path)
        .collect();
    if let Err(code) = common::check_outputs(&out_files, &dirs, &inputs) {
        return code;
    }
    if !loaded.warnings.is_empty() {
        eprint!(
            "{}",
            crate::diag::render(&loaded.warnings, loaded.sources())
        );
    }
    let c = &loaded.circuit;
    // the transient's CSV columns, checked before any solving
    let columns = if a.csv_signals.is_empty() {
        None
    } else {
        let names = tankwave_devices::instantiate(c)
            .map(|d| d.names)
            .unwrap_or_default();
        match stage::transient_columns(&names, &a.csv_signals) {
            Ok(cols) => Some(cols),
            Err(m) => {
                eprintln!("error: --csv-signals: {}", common::esc(&m));
                return BAD_INPUT;
            }
        }
    };
    let chosen = stage::TransientCsv {
        every: usize::try_from(a.csv_every).unwrap_or(usize::MAX),
        columns,
    };
    let shown = crate::progress::Analyses::new(&file);
    let solved = tankwave_stage::solve(
        c,
        &SolveOptions {
            observer: Some(&shown),
            ..SolveOptions::scope(Scope::All)
        },
    );
    shown.finish();
    let res = match solved {
        Ok(r) => r,
        Err(f) => {
            // a runaway still draws how the iteration got there
            if let Some(dir) = &a.plots {
                let drawn = assemble::failure_plots(&file, &f);
                let figures = visual::drawn_files(Some(dir), &drawn);
                let paths: Vec<PathBuf> = figures.iter().map(|(p, _)| p.clone()).collect();
                if !figures.is_empty() && common::check_outputs(&paths, &[], &inputs).is_ok() {
                    match tankwave_report::files::write_all_atomic(&figures) {
                        Ok(()) => {
                            for p in &paths {
                                eprintln!("wrote {}", common::esc(&p.display().to_string()));
                            }
                        }
                        Err(e) => eprintln!("error: {e}"),
                    }
                }
            }
            return common::report_failure(&file, &f);
        }
    };
    let doc = assemble::results_json(&visual::tool(), &file, c, &res);
    match a.format {
        Format::Table => common::show(&assemble::results_text(&file, c, &res, a.verbose)),
        Format::Json => {
            common::show_json(&serde_json::to_string_pretty(&doc).unwrap_or_else(|_| "{}".into()))
        }
        Format::Csv => match &res.steady {
            Some(s) => common::show(&stage::spectrum_csv(&s.metrics)),
            None => {
                if let Some(t) = res.transients.first() {
                    common::show(&stage::transient_csv_chosen(t, &chosen))
                } else if let Some(ac) = res.acs.first() {
                    common::show(&stage::ac_csv(ac))
                }
            }
        },
    }
    if let Some(dir) = &a.out {
        let mut files: Vec<(PathBuf, Vec<u8>)> = vec![(
            dir.join("results.json"),
            serde_json::to_vec_pretty(&doc).unwrap_or_default(),
        )];
        if let Some(op) = &res.op {
            files.push((dir.join("op.csv"), stage::op_csv(op).into_bytes()));
        }
        for (k, t) in res.transients.iter().enumerate() {
            files.push((
                dir.join(format!("transient-{}.csv", k + 1)),
                stage::transient_csv_chosen(t, &chosen).into_bytes(),
            ));
        }
        for (k, ac) in res.acs.iter().enumerate() {
            files.push((
                dir.join(format!("ac-{}.csv", k + 1)),
                stage::ac_csv(ac).into_bytes(),
            ));
        }
        if let Some(s) = &res.steady {
            let names = unknown_names(c, &res);
            files.push((
                dir.join("period.csv"),
                stage::period_csv(c, &names, &s.solution).into_bytes(),
            ));
            files.push((
                dir.join("spectrum.csv"),
                stage::spectrum_csv(&s.metrics).into_bytes(),
            ));
        }
        if let Err(e) = tankwave_report::files::write_all_atomic(&files) {
            eprintln!("error: {e}");
            return BAD_INPUT;
        }
    }
    let mut figures: Vec<(PathBuf, Vec<u8>)> = Vec::new();
    if let Some(dir) = &a.plots {
        let drawn = assemble::stage_plots(&file, c, &res);
        figures.extend(visual::drawn_files(Some(dir), &drawn));
    }
    if let Some(path) = &a.report {
        let options = vec![
            ("command".to_string(), "run".to_string()),
            ("--set".to_string(), a.sets.join(" ")),
        ];
        let html = assemble::stage_report(
            &file,
            c,
            &res,
            visual::file_sha256(&a.file),
            visual::provenance(options),
        );
        figures.push((path.clone(), html.into_bytes()));
    }
    if !figures.is_empty() {
        let paths: Vec<PathBuf> = figures.iter().map(|(p, _)| p.clone()).collect();
        if let Err(code) = common::check_outputs(&paths, &[], &inputs) {
            return code;
        }
        if let Err(e) = tankwave_report::files::write_all_atomic(&figures) {
            eprintln!("error: {e}");
            return BAD_INPUT;
        }
    }
    let sweep_failed = res
        .ruggedness
        .iter()
        .any(|s| s.worst.iter().any(|w| !w.pass));
    if sweep_failed || res.verdicts.iter().any(|v| !v.pass) {
        FAILED
    } else {
        OK
    }
}

/// The names of the files `--out` may write for `c` (every one is checked
/// before work starts).
fn out_file_names(c: &tankwave_circuit::Circuit) -> Vec<String> {
    use tankwave_circuit::Analysis;
    let mut names: Vec<String> = ["results.json", "op.csv", "period.csv", "spectrum.csv"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    let count = |f: fn(&Analysis) -> bool| c.analyses.iter().filter(|a| f(a)).count();
    for k in 1..=count(|a| matches!(a, Analysis::Transient { .. })) {
        names.push(format!("transient-{k}.csv"));
    }
    for k in 1..=count(|a| matches!(a, Analysis::Ac { .. })) {
        names.push(format!("ac-{k}.csv"));
    }
    names
}

/// Names of the unknowns (from the operating point, else from the devices).
fn unknown_names(c: &tankwave_circuit::Circuit, res: &StageResults) -> Vec<String> {
    if let Some(op) = &res.op {
        return op.names.clone();
    }
    match tankwave_devices::instantiate(c) {
        Ok(d) => d.names,
        Err(_) => Vec::new(),
    }
}
