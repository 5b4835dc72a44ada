//! The `tankwave` command line: a thin shell over the library crates. It
//! parses arguments, calls tankwave-stage (and the other crates) to load,
//! solve and present, prints, writes files and picks the exit code. It is
//! the only code that prints.

mod cmd;
mod diag;
mod progress;

use clap::{Parser, Subcommand};
use std::process::ExitCode;

const EXIT_CODES: &str = "\
Exit codes:
  0  everything ran and every requirement passed
  1  a requirement or an emission mask failed
  2  bad input (unreadable file, errors in a stage file, bad options)
  3  the solver failed (the message says what failed and where)

Caution: the stages this tool models carry high RF voltages on tank capacitors
and can cause RF burns; transmit only as your licence and local rules allow.";

/// Harmonic-balance and transient analysis of tuned HF bipolar power stages.
#[derive(Parser, Debug)]
#[command(name = "tankwave", version, about, long_about = None, after_help = EXIT_CODES)]
struct Cli {
    #[command(subcommand)]
    command: Command,
    /// Also allow `include`s from under DIR (repeatable). By default an
    /// include must lie under the directory of the stage file named on the
    /// command line or its parents up to the enclosing repository root.
    #[arg(long = "include-root", value_name = "DIR", global = true)]
    include_roots: Vec<std::path::PathBuf>,
    /// Leave out the safety caution that `check`, `study`, `tune`,
    /// `design match` and `design lowpass` print on stderr (for CI logs;
    /// `run` keeps it in its report).
    #[arg(long = "no-caution", global = true)]
    no_caution: bool,
    /// No progress bars and no closing `finished in …` line on stderr
    /// (bars are drawn only when stderr is a terminal anyway).
    #[arg(long, short = 'q', global = true)]
    quiet: bool,
}

/// Whether a command prints voltages or powers of a stage, and so shows the
/// safety caution on stderr (`run` carries it in its report instead).
fn shows_caution(c: &Command) -> bool {
    use cmd::design::DesignCommand;
    match c {
        Command::Check(_) | Command::Study(_) | Command::Tune(_) => true,
        Command::Design(d) => matches!(d.what, DesignCommand::Match(_) | DesignCommand::Lowpass(_)),
        Command::Lint(_)
        | Command::Run(_)
        | Command::Merge(_)
        | Command::Upgrade(_)
        | Command::Fit(_)
        | Command::ServeEditor(_) => false,
    }
}

#[derive(Subcommand, Debug)]
enum Command {
    /// Check stage files and summarise them; list every problem with file:line:column.
    #[command(after_help = EXIT_CODES)]
    Lint(cmd::lint::LintArgs),
    /// Solve what a stage file declares (operating point, transient, AC, steady state) and report.
    #[command(after_help = EXIT_CODES)]
    Run(cmd::run::RunArgs),
    /// Solve stage files and evaluate every `require`: a verdict table, exit 1 if any fails.
    #[command(after_help = EXIT_CODES)]
    Check(cmd::check::CheckArgs),
    /// Solve every variant of a study (vary, tolerance, montecarlo) in parallel and summarise.
    #[command(after_help = EXIT_CODES)]
    Study(cmd::study::StudyArgs),
    /// Join the record files of a sharded study into the records of one run.
    #[command(after_help = EXIT_CODES)]
    Merge(cmd::study::MergeArgs),
    /// Find the values of named parameters (e.g. tuning and loading capacitors) that peak the stage.
    #[command(after_help = EXIT_CODES)]
    Tune(cmd::study::TuneArgs),
    /// Rewrite a stage file from retired spellings (vsource, pulse, model, ...) to the current ones.
    #[command(after_help = EXIT_CODES)]
    Upgrade(cmd::upgrade::UpgradeArgs),
    /// Synthesise a load line, matching network, low-pass filter or feed choke.
    #[command(after_help = EXIT_CODES)]
    Design(cmd::design::DesignArgs),
    /// Fit a bipolar transistor model to curves read off a data sheet; write it as a part.
    #[command(after_help = EXIT_CODES)]
    Fit(cmd::fit::FitArgs),
    /// Serve an editor: diagnostics, hover, completion and figures for stage files, over stdin/stdout.
    #[command(after_help = SERVE_EDITOR_HELP)]
    ServeEditor(cmd::editor::ServeEditorArgs),
}

const SERVE_EDITOR_HELP: &str = "\
The editor starts this command and speaks the Language Server Protocol (LSP
3.17) with it on stdin and stdout; see docs/editor.md for editor settings.
The safety caution is shown in the editor with the first figures.
Exit code: 0 after the editor's shutdown and exit, 1 otherwise.";

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    cmd::common::set_include_roots(cli.include_roots.clone());
    progress::set_quiet(cli.quiet);
    if !cli.no_caution && shows_caution(&cli.command) {
        // the same single text `run` prints in its report
        eprintln!("{}", tankwave_report::stage::SAFETY_NOTE);
    }
    let code = match cli.command {
        Command::Lint(a) => cmd::lint::run(&a),
        Command::Run(a) => cmd::run::run(&a),
        Command::Check(a) => cmd::check::run(&a),
        Command::Study(a) => cmd::study::run(&a),
        Command::Merge(a) => cmd::study::merge(&a),
        Command::Tune(a) => cmd::study::tune(&a),
        Command::Design(a) => cmd::design::run(a),
        Command::Upgrade(a) => cmd::upgrade::run(&a),
        Command::Fit(a) => cmd::fit::run(&a),
        Command::ServeEditor(a) => cmd::editor::run(&a),
    };
    ExitCode::from(code.clamp(0, 255) as u8)
}
