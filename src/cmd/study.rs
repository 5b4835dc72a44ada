//! `tankwave study`, `tankwave merge` and `tankwave tune`: batches of
//! variants (sweeps, tolerances, Monte Carlo) solved in parallel with
//! streamed, resumable, sharded records; merging shard outputs; peaking
//! named parameters.

use super::common::{self, BAD_INPUT, FAILED, OK, SOLVER};
use super::visual;
use clap::{Args, ValueEnum};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use tankwave_circuit::{Overrides, Tune};
use tankwave_report::assemble::{self, NominalStage, StudyReport};
use tankwave_stage::{Scope, SolveOptions, StageSource};
use tankwave_study as study;

/// Arguments of `study`.
#[derive(Args, Debug)]
pub struct StudyArgs {
    /// The stage file (with `vary`, `tolerance` and `montecarlo` statements).
    pub file: PathBuf,
    /// Stream one record per variant to this file (JSON Lines; `.csv` for CSV).
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
    /// Continue an interrupted study: skip the variants already in --out.
    /// The summary, plots, report and exit code then cover every record in
    /// the file (so `merge` then `study --out merged.jsonl --resume` gives
    /// the verdict of a whole sharded study).
    #[arg(long, requires = "out")]
    pub resume: bool,
    /// Run only share i of n (0-based), e.g. `--shard 2/8`; join the outputs with `tankwave merge`.
    #[arg(long, value_name = "I/N")]
    pub shard: Option<String>,
    /// Worker threads (default: all cores).
    #[arg(long)]
    pub threads: Option<usize>,
    /// Percentiles in the summary, comma-separated.
    #[arg(long, value_delimiter = ',', default_value = "5,95")]
    pub percentiles: Vec<f64>,
    /// Override a `let` parameter in every variant, e.g. `--set vcc=12V` (repeatable).
    #[arg(long = "set", value_name = "NAME=VALUE")]
    pub sets: Vec<String>,
    /// Write SVG plots (a histogram of every figure with its requirement
    /// limit; sweep curves when there is no Monte Carlo) to this directory.
    #[arg(long, value_name = "DIR")]
    pub plots: Option<PathBuf>,
    /// Write a self-contained HTML report (inline SVG and CSS, no network) to
    /// this file: the study summary with its histograms and sweep curves,
    /// then the nominal stage (the file's own values, steady state only).
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,
    /// What to print on stdout: the summary as text, or as one JSON
    /// document (counts, figure statistics, worst variants, drivers).
    #[arg(long, value_enum, default_value = "table")]
    pub format: SummaryFormat,
}

/// Output format of the `study` summary.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum SummaryFormat {
    /// Readable tables.
    Table,
    /// One JSON document (docs/output.md).
    Json,
}

/// Arguments of `merge`.
#[derive(Args, Debug)]
pub struct MergeArgs {
    /// Shard record files (JSON Lines) of one study.
    #[arg(required = true)]
    pub inputs: Vec<PathBuf>,
    /// The merged record file (written whole).
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
}

/// What `tune` optimises.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Goal {
    /// Largest output power at the fundamental.
    Pout,
    /// Largest collector efficiency with at least --pout-min out.
    Efficiency,
    /// Smallest input VSWR.
    Vswr,
}

/// Arguments of `tune`.
#[derive(Args, Debug)]
pub struct TuneArgs {
    /// The stage file (its `tune` statements name the parameters and ranges).
    pub file: PathBuf,
    /// A parameter and its range, e.g. `--param ctun=100pF:2nF` (repeatable; replaces the file's `tune`).
    #[arg(long = "param", value_name = "NAME=FROM:TO")]
    pub params: Vec<String>,
    /// What to optimise.
    #[arg(long, value_enum, default_value = "pout")]
    pub goal: Goal,
    /// Minimum output power for `--goal efficiency`, e.g. `20W`.
    #[arg(long, value_name = "POWER")]
    pub pout_min: Option<String>,
    /// Tune at this fraction of the drive amplitude, then report at full drive (as on the bench).
    #[arg(long, value_name = "FRACTION")]
    pub search_drive: Option<f64>,
    /// Most optimiser iterations per start (the search restarts once from
    /// its best point, so a run allows twice this many; the result says so).
    #[arg(long, default_value_t = 200)]
    pub max_iters: u64,
    /// Write SVG plots of the goal around the optimum to this directory: the
    /// goal against the parameter for one tuned parameter, a heat map over
    /// both for two, one curve per parameter for more. The goal is evaluated
    /// afresh on a grid at full drive (see --plot-points, --plot-span).
    #[arg(long, value_name = "DIR")]
    pub plots: Option<PathBuf>,
    /// Grid points per parameter for --plots (default 21 on a curve, 11 per side of a heat map; at most 201).
    #[arg(long, value_name = "N", requires = "plots")]
    pub plot_points: Option<usize>,
    /// Width of the plotted window as a fraction of each tune range, centred on the optimum (1 = the whole range).
    #[arg(
        long,
        value_name = "FRACTION",
        default_value_t = 0.2,
        requires = "plots"
    )]
    pub plot_span: f64,
}

/// What the records of this run are made from: the tool version, the `--set`
/// overrides, the SHA-256 of the stage file and of every included file.
fn provenance(
    file: &Path,
    source: &StageSource,
    overrides: &tankwave_circuit::Overrides,
) -> study::Provenance {
    use tankwave_report::provenance::sha256_hex;
    let digest = |name: &str, bytes: &[u8]| study::FileDigest {
        file: name.to_string(),
        sha256: sha256_hex(bytes),
    };
    study::Provenance {
        tool: format!("tankwave {}", env!("CARGO_PKG_VERSION")),
        overrides: overrides
            .params
            .iter()
            .map(|(k, v)| (k.clone(), format!("{v:e}")))
            .collect(),
        stage: digest(
            &file.display().to_string(),
            &std::fs::read(file).unwrap_or_default(),
        ),
        includes: source
            .sources()
            .files()
            .iter()
            .skip(1)
            .map(|f| digest(&f.name, f.text.as_bytes()))
            .collect(),
    }
}

/// A progress bar on stderr, only when stderr is a terminal and not `--quiet`.
fn progress_bar(total: u64) -> Option<indicatif::ProgressBar> {
    if !crate::progress::bars() {
        return None;
    }
    let pb = indicatif::ProgressBar::new(total);
    if let Ok(style) = indicatif::ProgressStyle::with_template(
        "{elapsed_precise} [{bar:40}] {pos}/{len} variants ({per_sec}, {eta} left)",
    ) {
        pb.set_style(style.progress_chars("=> "));
    }
    Some(pb)
}

/// Refuse a report path that cannot be written, before any work is done.
fn check_report_path(path: &Path) -> Result<(), String> {
    use tankwave_report::ReportError;
    match tankwave_report::files::check_writable_file(path) {
        Ok(()) => Ok(()),
        Err(ReportError::IsDirectory { .. }) => Err(format!(
            "--report '{}' is a directory; give a file name such as study.html",
            path.display()
        )),
        Err(e) => Err(format!("--report '{}': {e}", path.display())),
    }
}

/// Refuse a `--threads` of 0 or more than `LIMITS.max_threads_per_core`
/// times the available cores.
fn check_threads(threads: Option<usize>) -> Result<(), String> {
    let Some(n) = threads else {
        return Ok(());
    };
    let cores = std::thread::available_parallelism()
        .map(|c| c.get())
        .unwrap_or(1);
    let cap = cores * tankwave_netlist::LIMITS.max_threads_per_core;
    if n == 0 || n > cap {
        return Err(format!(
            "--threads {n}: give 1 to {cap} ({} per core on {cores} cores)",
            tankwave_netlist::LIMITS.max_threads_per_core
        ));
    }
    Ok(())
}

/// Run `study`; returns the exit code (1 if any variant fails a requirement or does not solve).
pub fn run(a: &StudyArgs) -> i32 {
    let clock = crate::progress::Clock::start();
    let code = run_timed(a);
    if code != BAD_INPUT {
        clock.report();
    }
    code
}

/// [`run`] without the closing time line.
fn run_timed(a: &StudyArgs) -> i32 {
    let file = a.file.display().to_string();
    let overrides = match common::overrides(&a.sets) {
        Ok(o) => o,
        Err(m) => {
            eprintln!("error: {m}");
            return BAD_INPUT;
        }
    };
    let loaded = match common::load(&a.file, &overrides) {
        Ok(l) => l,
        Err(f) => return common::report_failure(&file, &f),
    };
    let inputs = tankwave_report::outputs::Inputs::new(&common::input_files(&a.file));
    let outs: Vec<PathBuf> = a.out.iter().chain(a.report.iter()).cloned().collect();
    if let Err(code) = common::check_outputs(&outs, &[], &inputs) {
        return code;
    }
    if let Err(m) = check_threads(a.threads) {
        eprintln!("error: {m}");
        return BAD_INPUT;
    }
    let plan = match study::Plan::from_circuit(&loaded.circuit) {
        Ok(p) => p,
        Err(e) => {
            eprintln!("error: {file}: {e}");
            return BAD_INPUT;
        }
    };
    let shard = match &a.shard {
        Some(s) => match study::Shard::parse(s) {
            Some(s) => Some(s),
            None => {
                eprintln!("error: --shard expects I/N with 0 <= I < N, got '{s}'");
                return BAD_INPUT;
            }
        },
        None => None,
    };
    let mut params = study::StudyParams {
        threads: a.threads,
        shard,
        ..Default::default()
    };
    let fingerprint = study::input_fingerprint(&std::fs::read(&a.file).unwrap_or_default());
    let header = study::Header::new(&plan, params.chain, shard)
        .with_input(fingerprint)
        .with_provenance(provenance(&a.file, &loaded.source, &overrides));
    let base = overrides;
    let work = |v: &study::Variant, warm: Option<&study::WarmStart>| {
        tankwave_stage::study_outcome(&loaded.source, &base, v, warm)
    };
    let total = plan.len();
    let pb = progress_bar(total);
    let progress = |p: study::Progress| {
        if let Some(pb) = &pb {
            pb.set_length(p.total);
            pb.set_position(p.done);
        }
    };
    if let Some(dir) = &a.plots {
        if let Err(e) = tankwave_report::files::ensure_output_dir(dir) {
            eprintln!("error: plot directory: {e}");
            return BAD_INPUT;
        }
    }
    if let Some(path) = &a.report {
        if let Err(m) = check_report_path(path) {
            eprintln!("error: {m}");
            return BAD_INPUT;
        }
    }
    // A plain sweep short enough for a per-point table keeps its records for it.
    let point_table = plan.montecarlo().is_none()
        && plan.tolerances().is_empty()
        && !plan.axes().is_empty()
        && plan.len() <= tankwave_report::batch::SWEEP_TABLE_POINTS as u64;
    let mut summary_sink =
        study::SummarySink::new(a.plots.is_some() || a.report.is_some() || point_table);
    let result = match &a.out {
        None => study::run_study(&plan, &params, work, &mut &mut summary_sink, &progress),
        // The records already in the file are summarised too: the summary,
        // plots, report and exit code cover the whole study (earlier runs,
        // or shards joined by `merge`), not only what this run adds.
        Some(path) if a.resume => match study::resume_replaying(path, &header, &mut summary_sink) {
            Ok((done, sink, _info)) => {
                params.done = Some(done);
                let mut tee = study::TeeSink(sink, &mut summary_sink);
                study::run_study(&plan, &params, work, &mut tee, &progress)
            }
            Err(e) => {
                eprintln!("error: {e}");
                return BAD_INPUT;
            }
        },
        Some(path) => {
            let is_csv = path.extension().is_some_and(|e| e == "csv");
            let f = match std::fs::File::create(path) {
                Ok(f) => f,
                Err(e) => {
                    eprintln!("error: cannot write '{}': {e}", path.display());
                    return BAD_INPUT;
                }
            };
            if is_csv {
                let layout = study::CsvLayout {
                    values: plan.value_keys(),
                    metrics: Vec::new(),
                    verdicts: loaded
                        .circuit
                        .requirements
                        .iter()
                        .map(|r| r.text.clone())
                        .collect(),
                };
                match study::CsvSink::create(f, layout) {
                    Ok(sink) => {
                        let mut tee = study::TeeSink(sink, &mut summary_sink);
                        study::run_study(&plan, &params, work, &mut tee, &progress)
                    }
                    Err(e) => Err(e),
                }
            } else {
                match study::JsonlSink::create(f, &header) {
                    Ok(sink) => {
                        let mut tee = study::TeeSink(sink, &mut summary_sink);
                        study::run_study(&plan, &params, work, &mut tee, &progress)
                    }
                    Err(e) => Err(e),
                }
            }
        }
    };
    if let Some(pb) = &pb {
        pb.finish_and_clear();
    }
    let info = match result {
        Ok(i) => i,
        Err(e) => {
            eprintln!("error: {file}: study failed: {e}");
            return SOLVER;
        }
    };
    let (summary, kept) = match summary_sink.finish(&a.percentiles) {
        Ok(s) => s,
        Err(e) => {
            eprintln!("error: {e}");
            return BAD_INPUT;
        }
    };
    if a.plots.is_some() || a.report.is_some() {
        let drawn = assemble::study_figures(&file, &loaded.circuit, &kept);
        let mut files = visual::drawn_files(a.plots.as_deref(), &drawn);
        if let Some(path) = &a.report {
            let opts = SolveOptions::scope(Scope::Requirements);
            let nominal = match tankwave_stage::solve(&loaded.circuit, &opts) {
                Ok(r) => NominalStage::Solved(Box::new(r)),
                Err(tankwave_stage::StageError::Input { .. }) => {
                    NominalStage::NotSolved("bad input".into())
                }
                Err(e) => NominalStage::NotSolved(e.to_string()),
            };
            let options = vec![
                ("command".to_string(), "study".to_string()),
                ("--set".to_string(), a.sets.join(" ")),
                (
                    "--percentiles".to_string(),
                    a.percentiles
                        .iter()
                        .map(|p| p.to_string())
                        .collect::<Vec<_>>()
                        .join(","),
                ),
                (
                    "--shard".to_string(),
                    a.shard.clone().unwrap_or_else(|| "none".to_string()),
                ),
                ("--resume".to_string(), a.resume.to_string()),
            ];
            let html = assemble::study_report(
                &loaded.circuit,
                StudyReport {
                    file: &file,
                    file_sha256: visual::file_sha256(&a.file),
                    summary: &summary,
                    total,
                    info: &info,
                    shard,
                    figures: drawn.figures,
                    nominal,
                    provenance: visual::provenance(options),
                },
            );
            files.push((path.clone(), html.into_bytes()));
        }
        let paths: Vec<PathBuf> = files.iter().map(|(p, _)| p.clone()).collect();
        if let Err(code) = common::check_outputs(&paths, &[], &inputs) {
            return code;
        }
        if let Err(e) = tankwave_report::files::write_all_atomic(&files) {
            eprintln!("error: {e}");
            return BAD_INPUT;
        }
    }
    let units = assemble::variant::requirement_units(&loaded.circuit);
    let value_units = assemble::units::value_units(&loaded.circuit, &summary);
    match a.format {
        SummaryFormat::Table => {
            common::show(&tankwave_report::batch::study_heading(
                loaded.circuit.title.as_deref(),
                &file,
                &info,
            ));
            common::show(&tankwave_report::batch::summary_text(
                &summary,
                &units,
                &value_units,
            ));
            if let Some(points) = tankwave_report::batch::sweep_points_text(&kept, &value_units) {
                common::show(&points);
            }
        }
        SummaryFormat::Json => {
            let doc = serde_json::json!({
                "schema": tankwave_report::SCHEMA_VERSION,
                "tool": visual::tool(),
                "file": file,
                "title": loaded.circuit.title,
                "run": {"recorded": info.recorded, "skipped": info.skipped, "threads": info.threads},
                "summary": tankwave_report::batch::summary_json(&summary, &units, &value_units),
            });
            common::show_json(&serde_json::to_string_pretty(&doc).unwrap_or_else(|_| "{}".into()));
        }
    }
    if summary.failed > 0 || summary.passed_all < summary.variants {
        FAILED
    } else {
        OK
    }
}

/// Run `merge`.
pub fn merge(a: &MergeArgs) -> i32 {
    for p in &a.inputs {
        match std::fs::metadata(p) {
            Ok(md) if !md.is_file() => {
                eprintln!(
                    "error: cannot read '{}': not a regular file",
                    common::esc(&p.display().to_string())
                );
                return BAD_INPUT;
            }
            _ => {}
        }
    }
    let guard = tankwave_report::outputs::Inputs::new(&a.inputs);
    if let Err(code) = common::check_outputs(std::slice::from_ref(&a.out), &[], &guard) {
        return code;
    }
    let mut inputs = Vec::new();
    for p in &a.inputs {
        match std::fs::File::open(p) {
            Ok(f) => inputs.push((p.display().to_string(), std::io::BufReader::new(f))),
            Err(e) => {
                eprintln!("error: cannot read '{}': {e}", p.display());
                return BAD_INPUT;
            }
        }
    }
    let mut out = Vec::new();
    let info = match study::merge(inputs, &mut out) {
        Ok(i) => i,
        Err(e) => {
            eprintln!("error: {e}");
            return BAD_INPUT;
        }
    };
    if out.is_empty() {
        // No input held a complete study header line: nothing to merge.
        eprintln!(
            "error: no study records to merge: {} empty or cut off before the first line ends",
            info.truncated_inputs.join(", ")
        );
        return BAD_INPUT;
    }
    if let Err(e) = tankwave_report::write_atomic(&a.out, &out) {
        eprintln!("error: {e}");
        return BAD_INPUT;
    }
    eprintln!(
        "merged {} records into {} ({} duplicates dropped, {} variants missing)",
        info.records,
        a.out.display(),
        info.duplicates,
        info.missing
    );
    if info.missing > 0 {
        FAILED
    } else {
        OK
    }
}

/// Run `tune`.
pub fn tune(a: &TuneArgs) -> i32 {
    let clock = crate::progress::Clock::start();
    let code = tune_timed(a);
    if code != BAD_INPUT {
        clock.report();
    }
    code
}

/// [`tune`] without the closing time line.
fn tune_timed(a: &TuneArgs) -> i32 {
    let file = a.file.display().to_string();
    let map_params = study::TuneMapParams {
        points: a.plot_points.unwrap_or(0),
        span: a.plot_span,
    };
    if let Some(dir) = &a.plots {
        if let Err(e) = map_params.validate() {
            eprintln!("error: --plot-points/--plot-span: {e}");
            return BAD_INPUT;
        }
        if let Err(e) = tankwave_report::files::ensure_output_dir(dir) {
            eprintln!("error: plot directory: {e}");
            return BAD_INPUT;
        }
    }
    if let Some(f) = a.search_drive {
        if !(f.is_finite() && f > 0.0 && f <= 1.0) {
            eprintln!("error: --search-drive is a fraction of the drive amplitude, above 0 and at most 1; got {f}");
            return BAD_INPUT;
        }
    }
    let loaded = match common::load(&a.file, &Overrides::default()) {
        Ok(l) => l,
        Err(f) => return common::report_failure(&file, &f),
    };
    let mut ranges: Vec<Tune> = Vec::new();
    // units written in --param ranges (for plot axes)
    let mut cli_units: BTreeMap<String, String> = BTreeMap::new();
    for p in &a.params {
        let parsed_range = p.split_once('=').and_then(|(n, r)| {
            let (lo, hi) = r.split_once(':')?;
            Some((n.trim().to_string(), lo.to_string(), hi.to_string()))
        });
        let Some((name, lo, hi)) = parsed_range else {
            eprintln!("error: --param expects NAME=FROM:TO, got '{p}'");
            return BAD_INPUT;
        };
        match (common::parse_value(&lo), common::parse_value(&hi)) {
            (Ok(from), Ok(to)) => {
                if from >= to {
                    eprintln!(
                        "error: --param {name}: the range must run from a smaller to a larger \
                         value, got {lo} to {hi}"
                    );
                    return BAD_INPUT;
                }
                if !loaded.circuit.params.contains_key(&name)
                    && loaded.circuit.element(&name).is_none()
                {
                    eprintln!(
                        "error: --param {name}: {file} has no parameter or element of that name"
                    );
                    return BAD_INPUT;
                }
                if let Some(u) = common::value_unit(&lo).or(common::value_unit(&hi)) {
                    cli_units.insert(name.clone(), assemble::units::unit_symbol(u).to_string());
                }
                ranges.push(Tune {
                    param: name,
                    from,
                    to,
                })
            }
            (Err(e), _) | (_, Err(e)) => {
                eprintln!("error: --param {name}: {e}");
                return BAD_INPUT;
            }
        }
    }
    if ranges.is_empty() {
        ranges = loaded.circuit.study.tune.clone();
    }
    if ranges.is_empty() {
        eprintln!(
            "error: {file}: nothing to tune: add `tune NAME from A to B` or --param NAME=A:B"
        );
        return BAD_INPUT;
    }
    let goal = match a.goal {
        Goal::Pout => study::TuneGoal::MaximisePout,
        Goal::Vswr => study::TuneGoal::MinimiseInputVswr,
        Goal::Efficiency => {
            let Some(p) = &a.pout_min else {
                eprintln!("error: --goal efficiency needs --pout-min");
                return BAD_INPUT;
            };
            match common::parse_value(p) {
                Ok(v) => study::TuneGoal::MaximiseEfficiencyAt { pout_min: v },
                Err(e) => {
                    eprintln!("error: --pout-min: {e}");
                    return BAD_INPUT;
                }
            }
        }
    };
    let params = study::TuneParams {
        max_iters: a.max_iters,
        search_drive: a.search_drive,
        ..Default::default()
    };
    // the tuner tells its progress by calling the objective: one tick per solve
    let pb = crate::progress::bar(
        0,
        "{spinner} {elapsed:>4} {msg}: {pos} steady states solved",
    );
    let objective = |values: &BTreeMap<String, f64>, ctx: &study::TuneContext| {
        let r = tankwave_stage::tune_figures(&loaded.source, values, ctx);
        if let Some(pb) = &pb {
            pb.inc(1);
        }
        r
    };
    if let Some(pb) = &pb {
        pb.set_message("tuning");
    }
    let tuned = study::tune(&ranges, objective, goal, &params);
    if let Some(pb) = &pb {
        pb.finish_and_clear();
    }
    let r = match tuned {
        Ok(r) => r,
        Err(e) => {
            eprintln!("error: {file}: tuning failed: {e}");
            return SOLVER;
        }
    };
    common::show(&tankwave_report::batch::heading(
        loaded.circuit.title.as_deref(),
        &file,
    ));
    let units: BTreeMap<String, String> = ranges
        .iter()
        .map(|t| {
            let u = cli_units
                .get(&t.param)
                .cloned()
                .unwrap_or_else(|| assemble::units::param_unit(&loaded.circuit, &t.param));
            (t.param.clone(), u)
        })
        .collect();
    common::show(&tankwave_report::batch::tune_text(&r, &units));
    if let Some(dir) = &a.plots {
        if let Some(pb) = &pb {
            pb.reset();
            pb.set_message("mapping the goal around the optimum");
        }
        let mapped = study::map_around(&ranges, &r.optimum, objective, &map_params);
        if let Some(pb) = &pb {
            pb.finish_and_clear();
        }
        let map = match mapped {
            Ok(m) => m,
            Err(e) => {
                eprintln!("error: {file}: mapping the goal around the optimum: {e}");
                return SOLVER;
            }
        };
        if map.failed > 0 {
            eprintln!(
                "note: {} of {} points around the optimum did not solve (first: {})",
                map.failed,
                map.evaluations,
                map.first_failure.as_deref().unwrap_or("no message")
            );
        }
        let drawn = assemble::tune_figures(&file, goal, &map, &r.optimum, &units);
        let files = visual::drawn_files(Some(dir), &drawn);
        let inputs = tankwave_report::outputs::Inputs::new(&common::input_files(&a.file));
        let paths: Vec<PathBuf> = files.iter().map(|(p, _)| p.clone()).collect();
        if let Err(code) = common::check_outputs(&paths, &[], &inputs) {
            return code;
        }
        if let Err(e) = tankwave_report::files::write_all_atomic(&files) {
            eprintln!("error: {e}");
            return BAD_INPUT;
        }
    }
    match &r.constraint {
        Some(c) if !c.met => {
            eprintln!(
                "error: {file}: the tuner could not meet the minimum output power {} under \
                 every steady-state method",
                tankwave_measure::units::si_prefixed(c.pout_min, "W", 4)
            );
            FAILED
        }
        _ => OK,
    }
}
