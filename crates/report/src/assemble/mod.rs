//! Assembly of figures and report inputs from solved stages, studies and
//! tuning runs: which SVGs each gets, the units and requirement limits on
//! their axes, the named figures a solved variant contributes to a study
//! record, and the inputs of the self-contained HTML reports.
//!
//! tankwave-stage solves a stage and hands its results here; these functions decide what is drawn and shown and return SVG and
//! HTML text. They read no files and consult no clock: the stage file's
//! SHA-256 and the date arrive from the caller ([`crate::provenance`]
//! computes them from bytes and seconds). A plot that cannot be drawn
//! becomes a note in [`Drawn::notes`], never a failure.
//!
//! Modules: [`stage`] (one solved stage: its plots, terminal text, JSON and
//! HTML report), [`variant`] (the named figures of a study record for
//! people: their units and requirement limits),
//! [`units`] (axis units read from the stage file), [`study`] (study figures
//! and the study report), [`tune`] (figures of a tuning run).

pub mod stage;
pub mod study;
pub mod tune;
pub mod units;
pub mod variant;

use std::path::{Path, PathBuf};

use crate::plot::PlotError;

pub use stage::{failure_plots, results_json, results_text, stage_plots, stage_report};
pub use study::{study_figures, study_report, NominalStage, StudyReport};
pub use tune::{goal_axis, tune_figures};

/// One figure of a stage, study or tuning run: the file name it is written
/// under, a caption for the HTML report, and the SVG.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct NamedFigure {
    /// File name (no directory), e.g. `hist-pout_w.svg`.
    pub name: String,
    /// Caption.
    pub caption: String,
    /// The SVG document.
    pub svg: String,
}

/// The figures that were drawn, and a note for each that could not be
/// (`NAME: not drawn: WHY`).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Drawn {
    /// Figures in the order they were drawn.
    pub figures: Vec<NamedFigure>,
    /// One line per figure that could not be drawn.
    pub notes: Vec<String>,
}

impl Drawn {
    /// Keep a drawn figure, or note why it was not drawn.
    pub(crate) fn add(&mut self, name: String, caption: String, svg: Result<String, PlotError>) {
        match svg {
            Ok(svg) => self.figures.push(NamedFigure { name, caption, svg }),
            Err(e) => self.notes.push(format!("{name}: not drawn: {e}")),
        }
    }
}

/// The figures as files in `dir`: the (path, bytes) list
/// [`crate::files::write_all_atomic`] takes.
pub fn figure_files(dir: &Path, figures: &[NamedFigure]) -> Vec<(PathBuf, Vec<u8>)> {
    figures
        .iter()
        .map(|f| {
            (
                dir.join(safe_file_name(&f.name)),
                f.svg.clone().into_bytes(),
            )
        })
        .collect()
}

/// A file name that stays in its directory: ASCII letters, digits, `-`, `_`
/// and `.` kept, everything else (a `/`, a control character) made `-`,
/// leading dots made `-` (no hidden files, no `..`); never empty.
pub fn safe_file_name(name: &str) -> String {
    let s: String = name
        .chars()
        .map(|ch| {
            if ch.is_ascii_alphanumeric() || matches!(ch, '-' | '_' | '.') {
                ch
            } else {
                '-'
            }
        })
        .collect();
    let dots = s.len() - s.trim_start_matches('.').len();
    let s = format!("{}{}", "-".repeat(dots), &s[dots..]);
    if s.is_empty() {
        "plot".to_string()
    } else {
        s
    }
}

/// A name made safe for a file name: ASCII letters and digits kept, all else `-`.
pub(crate) fn safe_name(name: &str) -> String {
    name.chars()
        .map(|ch| if ch.is_ascii_alphanumeric() { ch } else { '-' })
        .collect()
}

/// A circuit elaborated from stage-file text, for the unit tests of this
/// module's children (panics with the diagnostics on a bad test stage).
#[cfg(test)]
pub(crate) fn test_circuit(text: &str) -> tankwave_circuit::Circuit {
    match tankwave_circuit::load_str("t.tank", text, &tankwave_circuit::Overrides::default()) {
        Ok(e) => e.circuit,
        Err(e) => panic!("test stage must elaborate: {:?}", e.diagnostics),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_are_made_safe_for_files() {
        assert_eq!(safe_name("q1.tj_degc"), "q1-tj-degc");
        assert_eq!(safe_name("pout_w"), "pout-w");
        assert_eq!(safe_name("c µ/x"), "c---x");
    }

    #[test]
    fn undrawable_figures_become_notes() {
        let mut d = Drawn::default();
        d.add("a.svg".into(), "A".into(), Ok("<svg/>".into()));
        d.add(
            "b.svg".into(),
            "B".into(),
            Err(PlotError::Empty { what: "b".into() }),
        );
        assert_eq!(d.figures.len(), 1);
        assert_eq!(d.notes, vec!["b.svg: not drawn: b: nothing to plot"]);
        let files = figure_files(Path::new("out"), &d.figures);
        assert_eq!(
            files,
            vec![(Path::new("out").join("a.svg"), b"<svg/>".to_vec())]
        );
    }
}
