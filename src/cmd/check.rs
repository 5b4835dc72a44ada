//! `tankwave check FILE...`: solve each file, evaluate every requirement,
//! print a verdict table; JUnit XML and JSON for CI.

use super::common::{self, BAD_INPUT, FAILED, OK, SOLVER};
use crate::pipeline::{self, Failure, Scope};
use clap::{Args, ValueEnum};
use serde_json::json;
use std::path::PathBuf;
use tankwave_measure::Verdict;

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
    /// mask) to DIR/STEM/, STEM being the file name without extension.
    #[arg(long, value_name = "DIR")]
    pub plots: Option<PathBuf>,
    /// Override a `let` parameter in every file, e.g. `--set vcc=12V` (repeatable).
    #[arg(long = "set", value_name = "NAME=VALUE")]
    pub sets: Vec<String>,
}

enum Outcome {
    Verdicts(Vec<Verdict>),
    Error { code: i32, message: String },
}

/// Run the command; returns the exit code (the worst over all files:
/// 2 bad input, then 3 solver failure, then 1 a requirement failed, else 0).
pub fn run(a: &CheckArgs) -> i32 {
    let overrides = match common::overrides(&a.sets) {
        Ok(o) => o,
        Err(m) => {
            eprintln!("error: {m}");
            return BAD_INPUT;
        }
    };
    if let Some(dir) = &a.plots {
        if !dir.is_dir() {
            eprintln!(
                "error: plot directory '{}' does not exist or is not a directory",
                dir.display()
            );
            return BAD_INPUT;
        }
    }
    let mut plot_files: Vec<(PathBuf, Vec<u8>)> = Vec::new();
    let mut outcomes = Vec::new();
    for f in &a.files {
        let name = f.display().to_string();
        let outcome = match pipeline::load(f, &overrides) {
            Err(fail) => {
                let code = common::report_failure(&name, &fail);
                Outcome::Error {
                    code,
                    message: "bad input".into(),
                }
            }
            Ok(l) => match pipeline::solve(&l.circuit, Scope::Requirements) {
                Ok(r) => {
                    if let Some(dir) = &a.plots {
                        let stem = f
                            .file_stem()
                            .map(|s| s.to_string_lossy().to_string())
                            .unwrap_or_else(|| "stage".into());
                        let sub = dir.join(stem);
                        let (files, notes) =
                            super::visual::stage_plots(&sub, &name, &l.circuit, &r);
                        for n in notes {
                            eprintln!("note: {n}");
                        }
                        if !files.is_empty() {
                            if let Err(e) = std::fs::create_dir_all(&sub) {
                                eprintln!("error: cannot create '{}': {e}", sub.display());
                            }
                        }
                        plot_files.extend(files);
                    }
                    Outcome::Verdicts(r.verdicts)
                }
                Err(fail) => {
                    let code = common::report_failure(&name, &fail);
                    let message = match fail {
                        Failure::Solve(m) | Failure::Setup(m) => m,
                        Failure::Input { .. } => "bad input".into(),
                    };
                    Outcome::Error { code, message }
                }
            },
        };
        outcomes.push((name, outcome));
    }
    match a.format {
        Format::Table => {
            for (name, o) in &outcomes {
                match o {
                    Outcome::Verdicts(v) => {
                        println!("{name}");
                        print!("{}", tankwave_report::stage::verdict_text(v));
                        let failed = v.iter().filter(|x| !x.pass).count();
                        println!(
                            "{}: {} of {} requirements pass\n",
                            if failed == 0 { "PASS" } else { "FAIL" },
                            v.len() - failed,
                            v.len()
                        );
                    }
                    Outcome::Error { code, message } => {
                        println!("{name}\nERROR (exit {code}): {message}\n");
                    }
                }
            }
        }
        Format::Json => {
            let files: Vec<_> = outcomes
                .iter()
                .map(|(name, o)| match o {
                    Outcome::Verdicts(v) => json!({
                        "file": name,
                        "pass": v.iter().all(|x| x.pass),
                        "verdicts": serde_json::to_value(v).unwrap_or(serde_json::Value::Null),
                    }),
                    Outcome::Error { code, message } => json!({
                        "file": name, "pass": false, "error": message, "exit_code": code,
                    }),
                })
                .collect();
            let doc = json!({
                "schema": tankwave_report::SCHEMA_VERSION,
                "tool": format!("tankwave {}", env!("CARGO_PKG_VERSION")),
                "files": files,
            });
            println!(
                "{}",
                serde_json::to_string_pretty(&doc).unwrap_or_else(|_| "{}".into())
            );
        }
    }
    if !plot_files.is_empty() {
        if let Err(e) = tankwave_report::files::write_all_atomic(&plot_files) {
            eprintln!("error: {e}");
            return BAD_INPUT;
        }
    }
    if let Some(path) = &a.junit {
        let xml = junit(&outcomes);
        if let Err(e) = tankwave_report::write_atomic(path, xml.as_bytes()) {
            eprintln!("error: {e}");
            return BAD_INPUT;
        }
    }
    let mut code = OK;
    for (_, o) in &outcomes {
        let c = match o {
            Outcome::Verdicts(v) if v.iter().any(|x| !x.pass) => FAILED,
            Outcome::Verdicts(_) => OK,
            Outcome::Error { code, .. } => *code,
        };
        code = worst(code, c);
    }
    code
}

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

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
        .replace('\'', "&apos;")
}

fn junit(outcomes: &[(String, Outcome)]) -> String {
    let mut s = String::from("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    let total: usize = outcomes
        .iter()
        .map(|(_, o)| match o {
            Outcome::Verdicts(v) => v.len(),
            Outcome::Error { .. } => 1,
        })
        .sum();
    let failures: usize = outcomes
        .iter()
        .map(|(_, o)| match o {
            Outcome::Verdicts(v) => v.iter().filter(|x| !x.pass).count(),
            Outcome::Error { .. } => 0,
        })
        .sum();
    let errors = outcomes
        .iter()
        .filter(|(_, o)| matches!(o, Outcome::Error { .. }))
        .count();
    s.push_str(&format!(
        "<testsuites name=\"tankwave check\" tests=\"{total}\" failures=\"{failures}\" errors=\"{errors}\">\n"
    ));
    for (name, o) in outcomes {
        match o {
            Outcome::Verdicts(v) => {
                let f = v.iter().filter(|x| !x.pass).count();
                s.push_str(&format!(
                    "  <testsuite name=\"{}\" tests=\"{}\" failures=\"{f}\" errors=\"0\">\n",
                    esc(name),
                    v.len()
                ));
                for x in v {
                    s.push_str(&format!(
                        "    <testcase classname=\"{}\" name=\"{}\">\n",
                        esc(name),
                        esc(&x.requirement)
                    ));
                    let detail = format!(
                        "limit {}, value {}, margin {}",
                        x.limit_text, x.value_text, x.margin_text
                    );
                    if x.pass {
                        s.push_str(&format!(
                            "      <system-out>{}</system-out>\n",
                            esc(&detail)
                        ));
                    } else {
                        let msg = match &x.not_measured {
                            Some(r) => format!("not measured: {r}"),
                            None => detail.clone(),
                        };
                        s.push_str(&format!(
                            "      <failure message=\"{}\">{}</failure>\n",
                            esc(&msg),
                            esc(&detail)
                        ));
                    }
                    s.push_str("    </testcase>\n");
                }
                s.push_str("  </testsuite>\n");
            }
            Outcome::Error { code, message } => {
                s.push_str(&format!(
                    "  <testsuite name=\"{}\" tests=\"1\" failures=\"0\" errors=\"1\">\n    <testcase classname=\"{}\" name=\"solve\">\n      <error message=\"{}\">exit code {code}</error>\n    </testcase>\n  </testsuite>\n",
                    esc(name), esc(name), esc(message)
                ));
            }
        }
    }
    s.push_str("</testsuites>\n");
    s
}
