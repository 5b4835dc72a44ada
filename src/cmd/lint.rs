//! `tankwave lint FILE...`: check stage files without solving them.
//!
//! For each file that elaborates, prints a short summary on stdout (title,
//! nodes, elements by kind, models, analyses, requirements, studies,
//! warnings); warnings are drawn on stderr. If any file has errors, every
//! diagnostic of every file is drawn on stderr and the exit code is 2.

use super::common::{self, BAD_INPUT, OK};
use clap::Args;
use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use tankwave_circuit::{Analysis, Circuit, ModelKind, Overrides};

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
        let parsed = tankwave_netlist::parse_file(f);
        if let Some(m) = crate::pipeline::empty_file(&parsed) {
            eprintln!("error: {}: {m}", f.display());
            code = BAD_INPUT;
            continue;
        }
        match tankwave_circuit::elaborate(&parsed, overrides) {
            Ok(e) => {
                print!("{}", summary(f, &e.circuit, e.warnings.len()));
                if !e.warnings.is_empty() {
                    eprint!("{}", crate::diag::render(&e.warnings, &parsed.sources));
                }
            }
            Err(diags) => {
                let errors = diags.iter().filter(|d| d.is_error()).count();
                eprint!("{}", crate::diag::render(&diags, &parsed.sources));
                eprintln!(
                    "{}: {errors} error(s); nothing is simulated from a file with errors\n",
                    f.display()
                );
                code = BAD_INPUT;
            }
        }
    }
    code
}

/// The short summary of one good file.
pub fn summary(path: &Path, c: &Circuit, warnings: usize) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "{}: ok", path.display());
    if let Some(t) = &c.title {
        let _ = writeln!(s, "  title:        {t}");
    }
    let _ = writeln!(s, "  temperature:  {:.2} degC", c.temperature_k - 273.15);
    let _ = writeln!(s, "  nodes:        {} (plus gnd)", c.nodes.len());
    let mut kinds: BTreeMap<&str, usize> = BTreeMap::new();
    for e in &c.elements {
        *kinds.entry(e.kind.keyword()).or_default() += 1;
    }
    let by_kind: Vec<String> = kinds.iter().map(|(k, n)| format!("{n} {k}")).collect();
    let _ = writeln!(
        s,
        "  elements:     {} ({})",
        c.elements.len(),
        by_kind.join(", ")
    );
    if !c.models.is_empty() {
        let models: Vec<String> = c
            .models
            .iter()
            .map(|m| {
                let k = match m.kind() {
                    ModelKind::Npn => "npn",
                    ModelKind::Pnp => "pnp",
                    ModelKind::Diode => "diode",
                };
                format!("{} ({k})", m.name)
            })
            .collect();
        let _ = writeln!(s, "  models:       {}", models.join(", "));
    }
    let name = |id: Option<usize>| {
        id.and_then(|i| c.elements.get(i))
            .map(|e| e.name.as_str())
            .unwrap_or("-")
    };
    let _ = writeln!(s, "  input/output: {} / {}", name(c.input), name(c.output));
    let analyses: Vec<String> = c
        .analyses
        .iter()
        .map(|a| match a {
            Analysis::Op => "op".to_string(),
            Analysis::Transient { stop, .. } => format!("transient to {stop:e} s"),
            Analysis::Ac {
                from, to, points, ..
            } => format!("ac {from:e}..{to:e} Hz, {points} points"),
            Analysis::Steady {
                freq, harmonics, ..
            } => format!("steady at {freq:e} Hz, {harmonics} harmonics"),
        })
        .collect();
    let _ = writeln!(
        s,
        "  analyses:     {}",
        if analyses.is_empty() {
            "none".to_string()
        } else {
            analyses.join("; ")
        }
    );
    let _ = writeln!(s, "  masks:        {}", c.masks.len());
    let _ = writeln!(s, "  requirements: {}", c.requirements.len());
    let st = &c.study;
    if !st.vary.is_empty()
        || !st.tolerances.is_empty()
        || st.montecarlo.is_some()
        || !st.tune.is_empty()
    {
        let mut parts = Vec::new();
        if !st.vary.is_empty() {
            parts.push(format!("{} vary", st.vary.len()));
        }
        if !st.tolerances.is_empty() {
            parts.push(format!("{} tolerance", st.tolerances.len()));
        }
        if let Some(m) = st.montecarlo {
            parts.push(format!("montecarlo {} runs", m.runs));
        }
        if !st.tune.is_empty() {
            parts.push(format!("{} tune", st.tune.len()));
        }
        let _ = writeln!(s, "  study:        {}", parts.join(", "));
    }
    let _ = writeln!(s, "  warnings:     {warnings}");
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn summary_counts_elements_by_kind() {
        let text = "title \"t\"\nvsource v1 a gnd dc=1V\nresistor r1 a b 1Ohm\nresistor r2 b gnd 1Ohm\nanalyze op\n";
        let e = tankwave_circuit::load_str("t.tank", text, &Overrides::default()).expect("valid");
        let s = summary(Path::new("t.tank"), &e.circuit, 0);
        assert!(s.contains("elements:     3 (2 resistor, 1 vsource)"), "{s}");
        assert!(s.contains("nodes:        2"), "{s}");
        assert!(s.contains("analyses:     op"), "{s}");
    }
}
