//! What the plots and HTML reports of `run`, `check`, `study` and `tune`
//! need from outside the libraries: the bytes of the stage file (for its
//! SHA-256), today's date from the system clock, the tool's name and
//! version, and the writing of drawn figures with their notes on stderr.
//! What is drawn and shown is decided in `tankwave_report::assemble`.

use std::path::{Path, PathBuf};
use tankwave_report::assemble::{figure_files, Drawn};
use tankwave_report::html::Provenance;

/// The tool's name and version, as reports and JSON documents show it.
pub fn tool() -> String {
    format!("tankwave {}", env!("CARGO_PKG_VERSION"))
}

/// SHA-256 of the file's bytes, in hex (empty if unreadable).
pub fn file_sha256(path: &Path) -> String {
    std::fs::read(path)
        .map(|b| tankwave_report::provenance::sha256_hex(&b))
        .unwrap_or_default()
}

/// Today's date (UTC) as YYYY-MM-DD, from the system clock.
pub fn today_utc() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs())
        .unwrap_or(0);
    tankwave_report::provenance::date_utc(secs)
}

/// Provenance of a report made now with `options`.
pub fn provenance(options: Vec<(String, String)>) -> Provenance {
    Provenance {
        tool: tool(),
        date: today_utc(),
        options,
    }
}

/// Print the notes of figures that could not be drawn, and return the drawn
/// ones as files in `dir` (nothing without a directory).
pub fn drawn_files(dir: Option<&Path>, drawn: &Drawn) -> Vec<(PathBuf, Vec<u8>)> {
    for n in &drawn.notes {
        eprintln!("note: {n}");
    }
    dir.map(|d| figure_files(d, &drawn.figures))
        .unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn date_is_well_formed() {
        let d = today_utc();
        assert_eq!(d.len(), 10);
        assert!(d.starts_with("20"));
    }
}
