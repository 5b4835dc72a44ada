//! `tankwave upgrade FILE [--out NEW]`: rewrite a stage file from the
//! retired spellings to the current ones (the rewriting itself is
//! `tankwave_circuit::upgrade`).
//!
//! Prints the upgraded text on stdout, or writes it whole to `--out`, which
//! must not be the input file (by any spelling of its path) and must be a
//! regular file if it exists. A file that cannot be read or upgraded gives
//! its diagnostics with file:line:column and exit code 2.

use super::common::{BAD_INPUT, OK};
use clap::Args;
use std::io::Write;
use std::path::{Path, PathBuf};

/// Arguments of `upgrade`.
#[derive(Args, Debug)]
pub struct UpgradeArgs {
    /// The stage file to upgrade (it is not changed).
    pub file: PathBuf,
    /// Write the upgraded file here instead of printing it (never onto FILE itself).
    #[arg(long, value_name = "NEW")]
    pub out: Option<PathBuf>,
}

/// Run the command; returns the exit code.
pub fn run(a: &UpgradeArgs) -> i32 {
    let name = a.file.display().to_string();
    let bytes = match read_regular(&a.file) {
        Ok(b) => b,
        Err(e) => {
            eprintln!("error: cannot read {name}: {e}");
            return BAD_INPUT;
        }
    };
    let Ok(text) = String::from_utf8(bytes) else {
        eprintln!("error: {name} is not UTF-8 text");
        return BAD_INPUT;
    };
    if let Some(out) = &a.out {
        if let Err(e) = check_out(&a.file, out) {
            eprintln!("error: --out {}: {e}", out.display());
            return BAD_INPUT;
        }
    }
    let new = match tankwave_circuit::upgrade::upgrade(&name, &text) {
        Ok(t) => t,
        Err(e) => {
            eprint!("{}", crate::diag::render(&e.diagnostics, &e.sources));
            eprintln!("{name}: not upgraded");
            return BAD_INPUT;
        }
    };
    match &a.out {
        None => {
            let mut so = std::io::stdout().lock();
            if so.write_all(new.as_bytes()).is_err() {
                return BAD_INPUT;
            }
            OK
        }
        Some(out) => match tankwave_report::files::write_atomic(out, new.as_bytes()) {
            Ok(()) => {
                eprintln!("wrote {}", out.display());
                OK
            }
            Err(e) => {
                eprintln!("error: {e}");
                BAD_INPUT
            }
        },
    }
}

fn read_regular(p: &Path) -> Result<Vec<u8>, String> {
    let md = std::fs::metadata(p).map_err(|e| e.to_string())?;
    if !md.is_file() {
        return Err("not a regular file".into());
    }
    if md.len() > tankwave_netlist::MAX_FILE_BYTES {
        return Err(format!(
            "more than the {} byte limit",
            tankwave_netlist::MAX_FILE_BYTES
        ));
    }
    std::fs::read(p).map_err(|e| e.to_string())
}

/// `out` must not be `input` (compared after resolving links and `..`), and
/// must be a regular file if it exists.
fn check_out(input: &Path, out: &Path) -> Result<(), String> {
    let inp = std::fs::canonicalize(input).map_err(|e| e.to_string())?;
    let target = match std::fs::symlink_metadata(out) {
        Ok(_) => {
            let md = std::fs::metadata(out).map_err(|e| e.to_string())?;
            if !md.is_file() {
                return Err("exists and is not a regular file".into());
            }
            std::fs::canonicalize(out).map_err(|e| e.to_string())?
        }
        Err(_) => {
            let parent = match out.parent() {
                Some(p) if !p.as_os_str().is_empty() => p,
                _ => Path::new("."),
            };
            let dir = std::fs::canonicalize(parent).map_err(|e| e.to_string())?;
            match out.file_name() {
                Some(f) => dir.join(f),
                None => return Err("names no file".into()),
            }
        }
    };
    if target == inp {
        return Err(format!(
            "is the input file {}; write the upgrade to a new file, then replace the old one yourself",
            input.display()
        ));
    }
    Ok(())
}
