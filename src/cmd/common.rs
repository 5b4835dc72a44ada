//! Pieces shared by the subcommands: parameter overrides from `--set`, the
//! `--include-root` directories, loading a stage through tankwave-stage,
//! reporting its failures with the right exit code.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::sync::OnceLock;
use tankwave_circuit::Overrides;
use tankwave_stage::{Stage, StageError};

/// Exit code: all good.
pub const OK: i32 = 0;
/// Exit code: a requirement failed.
pub const FAILED: i32 = 1;
/// Exit code: bad input.
pub const BAD_INPUT: i32 = 2;
/// Exit code: the solver failed.
pub const SOLVER: i32 = 3;

/// Parse `name=value` pairs (value in the stage-file syntax: `12V`, `2.2nF`, `(1/3)`).
pub fn overrides(sets: &[String]) -> Result<Overrides, String> {
    let mut params = BTreeMap::new();
    let mut param_units = BTreeMap::new();
    for s in sets {
        let Some((k, v)) = s.split_once('=') else {
            return Err(format!("--set expects name=value, got '{s}'"));
        };
        let k = k.trim();
        let value = parse_value(v.trim()).map_err(|e| format!("--set {k}: {e}"))?;
        params.insert(k.to_string(), value);
        if let Some(u) = value_unit(v) {
            let symbol = tankwave_circuit::param_units::si_symbol(u);
            param_units.insert(k.to_string(), symbol.to_string());
        }
    }
    Ok(Overrides {
        params,
        param_units,
        ..Overrides::default()
    })
}

/// The include roots given with `--include-root`.
static INCLUDE_ROOTS: OnceLock<Vec<PathBuf>> = OnceLock::new();

/// Record the `--include-root` directories (once, at start-up).
pub fn set_include_roots(roots: Vec<PathBuf>) {
    let _ = INCLUDE_ROOTS.set(roots);
}

/// The `--include-root` directories.
pub fn include_roots() -> &'static [PathBuf] {
    INCLUDE_ROOTS.get().map(Vec::as_slice).unwrap_or(&[])
}

/// Load the stage file at `path` with `overrides` (includes confined to
/// its default roots and the `--include-root` directories).
pub fn load(path: &Path, overrides: &Overrides) -> Result<Stage, StageError> {
    tankwave_stage::load(path, include_roots(), overrides)
}

/// Every file the stage at `path` reads (itself and its includes).
pub fn input_files(path: &Path) -> Vec<PathBuf> {
    tankwave_stage::input_files(path, include_roots())
}

/// The diagnostics of a bad-input failure as the check outputs carry them.
pub fn problems(fail: &StageError) -> Vec<tankwave_report::check::Problem> {
    let StageError::Input { diagnostics, .. } = fail else {
        return Vec::new();
    };
    diagnostics
        .iter()
        .map(|d| tankwave_report::check::Problem {
            file: d.file.clone(),
            line: d.line,
            column: d.column,
            severity: if d.is_error() { "error" } else { "warning" }.into(),
            code: d.code.into(),
            message: d.message.clone(),
        })
        .collect()
}

/// Print text for a person on stdout, with control characters from the
/// input (a title, a name) escaped.
pub fn show(text: &str) {
    print!("{}", tankwave_netlist::escape::escape(text));
}

/// Print a JSON document on stdout (one line feed after it), with the
/// control characters serde leaves raw escaped.
pub fn show_json(doc: &str) {
    println!("{}", tankwave_netlist::escape::escape_json(doc));
}

/// Refuse, before any work, output paths that could destroy an input or
/// replace something that is not a regular file; the message on stderr.
pub fn check_outputs(
    files: &[std::path::PathBuf],
    dirs: &[&std::path::Path],
    inputs: &tankwave_report::outputs::Inputs,
) -> Result<(), i32> {
    for d in dirs {
        if let Err(e) = tankwave_report::files::ensure_output_dir(d) {
            eprintln!("error: output directory: {e}");
            return Err(BAD_INPUT);
        }
    }
    if let Err(e) = tankwave_report::outputs::check_output_files(files, inputs) {
        eprintln!("error: {e}");
        return Err(BAD_INPUT);
    }
    Ok(())
}

/// The exit code of a failure: 2 when the input is at fault, 3 when the
/// solver (or the measurement of its result) failed.
pub fn exit_code(f: &StageError) -> i32 {
    if f.is_input() {
        BAD_INPUT
    } else {
        SOLVER
    }
}

/// Print a failure to stderr (diagnostics drawn with their source lines)
/// and return its exit code.
pub fn report_failure(file: &str, f: &StageError) -> i32 {
    match f {
        StageError::Input {
            diagnostics,
            sources,
        } => eprint!("{}", crate::diag::render(diagnostics, sources)),
        e if e.is_input() => eprintln!("error: {}: {}", esc(file), esc(&e.to_string())),
        e => eprintln!(
            "error: {}: solver failed: {}",
            esc(file),
            esc(&e.to_string())
        ),
    }
    // a runaway names a temperature and a power: the caution goes with it
    if matches!(f, StageError::Runaway { .. }) {
        eprintln!("{}", tankwave_report::stage::SAFETY_NOTE);
    }
    exit_code(f)
}

/// Text made safe for the terminal.
pub fn esc(s: &str) -> std::borrow::Cow<'_, str> {
    tankwave_netlist::escape::escape(s)
}

/// Parse one value as written on the command line: a number, an optional SI
/// prefix and an optional unit (`12V`, `2.2nF`, `13.56MHz`, `65%`), into a
/// plain SI number. Uses the stage-file language's own prefix and unit table.
pub fn parse_value(s: &str) -> Result<f64, String> {
    let s = s.trim();
    let end = number_prefix_len(s);
    if end == 0 {
        return Err(format!("'{s}' does not start with a number"));
    }
    let num: f64 = s[..end]
        .parse()
        .map_err(|_| format!("'{}' is not a number", &s[..end]))?;
    let (exp, unit) = tankwave_netlist::units::split_suffix(s[end..].trim())?;
    let v = tankwave_netlist::units::to_si(num * 10f64.powi(exp), unit);
    if v.is_finite() {
        Ok(v)
    } else {
        Err(format!("'{s}' is out of range"))
    }
}

/// The unit symbol written after a command-line value (`100pF` → farad), if any.
pub fn value_unit(s: &str) -> Option<tankwave_netlist::units::Unit> {
    let s = s.trim();
    let end = number_prefix_len(s);
    tankwave_netlist::units::split_suffix(s.get(end..)?.trim())
        .ok()
        .and_then(|(_, u)| u)
}

/// Length of the longest prefix of `s` that reads as a decimal number
/// (optional sign, digits and points, optional exponent); 0 if none.
pub fn number_prefix_len(s: &str) -> usize {
    let b = s.as_bytes();
    let mut i = 0;
    if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
        i += 1;
    }
    let digits_start = i;
    while i < b.len() && (b[i].is_ascii_digit() || b[i] == b'.') {
        i += 1;
    }
    if i == digits_start {
        return 0;
    }
    // exponent: e or E followed by optional sign and at least one digit
    if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        let mut j = i + 1;
        if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
            j += 1;
        }
        if j < b.len() && b[j].is_ascii_digit() {
            while j < b.len() && b[j].is_ascii_digit() {
                j += 1;
            }
            i = j;
        }
    }
    i
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn values_with_prefixes_and_units() {
        // SI prefixes: BIPM SI Brochure, 9th ed. (2019), table 7
        assert!((parse_value("2.2nF").unwrap() - 2.2e-9).abs() < 1e-21);
        assert!((parse_value("13.56MHz").unwrap() - 13.56e6).abs() < 1e-6);
        assert!((parse_value("65%").unwrap() - 0.65).abs() < 1e-15);
        assert!((parse_value("1e3").unwrap() - 1000.0).abs() < 1e-12);
        assert!((parse_value("10m").unwrap() - 0.01).abs() < 1e-15);
        assert!(parse_value("abc").is_err());
        assert!(parse_value("5 parsecs").is_err());
    }
}
