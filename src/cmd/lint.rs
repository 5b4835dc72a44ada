//! `tankwave lint FILE...`: check stage files without solving them.
//!
//! For each file that elaborates, prints a short summary on stdout (title,
//! nodes, elements by kind, models, analyses, requirements, studies,
//! warnings); warnings are drawn on stderr. If any file has errors, every
//! diagnostic of every file is drawn on stderr and the exit code is 2.

use super::common::{self, BAD_INPUT, OK};
use clap::Args;
use std::path::PathBuf;
use tankwave_circuit::Overrides;
use tankwave_report::overview::stage_overview;
use tankwave_stage::StageError;

/// Arguments of `lint`.
#[derive(Args, Debug)]
pub struct LintArgs {
    /// Stage files.
    #[arg(required = true)]
    pub files: Vec<PathBuf>,
    /// Override a `let` parameter in every file, e.g. `--set vcc=12V` (repeatable).
    #[arg(long = "set", value_name = "NAME=VALUE")]
    pub sets: Vec<String>,
}

/// Run the command; returns the exit code (0 all files clean, 2 if any has errors).
pub fn run(a: &LintArgs) -> i32 {
    let overrides = match common::overrides(&a.sets) {
        Ok(o) => o,
        Err(e) => {
            eprintln!("error: {e}");
            return BAD_INPUT;
        }
    };
    lint_files(&a.files, &overrides)
}

/// Lint `files` with `overrides`: summaries on stdout, diagnostics on stderr; the exit code.
pub fn lint_files(files: &[PathBuf], overrides: &Overrides) -> i32 {
    let mut code = OK;
    for f in files {
        match common::load(f, overrides) {
            Ok(e) => {
                let file = f.display().to_string();
                common::show(&stage_overview(&file, &e.circuit, e.warnings.len()));
                if !e.warnings.is_empty() {
                    eprint!("{}", crate::diag::render(&e.warnings, e.sources()));
                }
            }
            Err(StageError::Input {
                diagnostics,
                sources,
            }) => {
                let errors = diagnostics.iter().filter(|d| d.is_error()).count();
                eprint!("{}", crate::diag::render(&diagnostics, &sources));
                eprintln!(
                    "{}: {errors} error(s); nothing is simulated from a file with errors\n",
                    common::esc(&f.display().to_string())
                );
                code = BAD_INPUT;
            }
            Err(e) => {
                eprintln!("error: {}: {e}", common::esc(&f.display().to_string()));
                code = BAD_INPUT;
            }
        }
    }
    code
}
