//! Loading a stage: the file (or text) read and parsed with its includes,
//! then elaborated with the `--set` overrides into a checked
//! [`Circuit`], keeping the warnings and the sources to render them with.

use std::path::{Path, PathBuf};
use std::sync::Arc;

use tankwave_circuit::{Circuit, Diagnostic, Overrides, SourceMap, StageSource};

use crate::StageError;

/// A stage file that read, parsed and elaborated.
#[derive(Debug, Clone)]
pub struct Stage {
    /// The checked circuit.
    pub circuit: Circuit,
    /// Warnings found on the way (the file still loads).
    pub warnings: Vec<Diagnostic>,
    /// The parsed file, for elaborating variants of it.
    pub source: StageSource,
}

impl Stage {
    /// The texts of the files read, for rendering [`Stage::warnings`].
    pub fn sources(&self) -> &Arc<SourceMap> {
        self.source.sources()
    }
}

/// Read the stage file at `path` (includes confined to its default roots and
/// to `include_roots`) and elaborate it with `overrides`.
pub fn load(
    path: &Path,
    include_roots: &[PathBuf],
    overrides: &Overrides,
) -> Result<Stage, StageError> {
    load_source(StageSource::read(path, include_roots), overrides)
}

/// Elaborate an already read stage with `overrides`. A file with no
/// statement at all is [`StageError::Blank`]; errors are
/// [`StageError::Input`] with every diagnostic.
pub fn load_source(source: StageSource, overrides: &Overrides) -> Result<Stage, StageError> {
    if source.is_blank() {
        return Err(StageError::Blank);
    }
    match source.elaborate(overrides) {
        Ok(e) => Ok(Stage {
            circuit: e.circuit,
            warnings: e.warnings,
            source,
        }),
        Err(diagnostics) => Err(StageError::Input {
            diagnostics,
            sources: source.sources().clone(),
        }),
    }
}

/// Every file the stage at `path` reads (its includes and itself), for the
/// checks that an output never replaces an input.
pub fn input_files(path: &Path, include_roots: &[PathBuf]) -> Vec<PathBuf> {
    let mut files = StageSource::read(path, include_roots).files_read().to_vec();
    files.push(path.to_path_buf());
    files
}
