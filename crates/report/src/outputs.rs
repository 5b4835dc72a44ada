//! Output paths that can never destroy an input.
//!
//! Every file tankwave writes (`--out`, `--report`, `--junit`, `--plots`,
//! `merge --out`) is first checked against the files it read: the stage
//! file, each included file and each input record file. A target that is,
//! by any spelling, symbolic link or hard link, one of them is refused, and
//! so is an existing target that is not a regular file (a device, a FIFO, a
//! directory). Identity is the (device, inode) pair of the file, so `./a`,
//! `a`, `../d/a` and a hard link all compare equal. Only metadata is read,
//! never content. docs/security.md says what each option will and will not
//! overwrite.

use std::os::unix::fs::MetadataExt;
use std::path::{Path, PathBuf};

use crate::files::ReportError;

/// The files a run read, by (device, inode), with the path each was named by.
#[derive(Debug, Clone, Default)]
pub struct Inputs {
    ids: Vec<(u64, u64, PathBuf)>,
}

impl Inputs {
    /// The inputs at `paths` (paths that cannot be examined are skipped:
    /// a file that does not exist cannot be overwritten by mistake).
    pub fn new<P: AsRef<Path>>(paths: &[P]) -> Inputs {
        let mut ids = Vec::new();
        for p in paths {
            let p = p.as_ref();
            if let Ok(md) = std::fs::metadata(p) {
                ids.push((md.dev(), md.ino(), p.to_path_buf()));
            }
        }
        Inputs { ids }
    }

    /// Add more inputs.
    pub fn add<P: AsRef<Path>>(&mut self, paths: &[P]) {
        self.ids.extend(Inputs::new(paths).ids);
    }

    /// The input that `md` is, if any.
    fn find(&self, md: &std::fs::Metadata) -> Option<&Path> {
        self.ids
            .iter()
            .find(|(d, i, _)| *d == md.dev() && *i == md.ino())
            .map(|(_, _, p)| p.as_path())
    }
}

/// Why an output path is refused.
fn refused(path: &Path, why: String) -> ReportError {
    ReportError::Refused {
        path: path.to_path_buf(),
        why,
    }
}

/// Check that writing `path` can destroy no input and replaces nothing but
/// a regular file: it must not be (or link to) any of `inputs`, nor an
/// existing directory, device, FIFO or socket; its directory must exist and
/// take new files. Nothing is written.
pub fn check_output_file(path: &Path, inputs: &Inputs) -> Result<(), ReportError> {
    if let Ok(lmd) = std::fs::symlink_metadata(path) {
        if lmd.file_type().is_symlink() {
            if let Ok(md) = std::fs::metadata(path) {
                if let Some(input) = inputs.find(&md) {
                    return Err(refused(
                        path,
                        format!(
                            "it is a symbolic link to the input '{}'",
                            crate::escape_path(input)
                        ),
                    ));
                }
            }
        }
    }
    if let Ok(md) = std::fs::metadata(path) {
        if md.is_dir() {
            return Err(ReportError::IsDirectory {
                path: path.to_path_buf(),
            });
        }
        if !md.is_file() {
            return Err(refused(
                path,
                "it exists and is not a regular file (a device, FIFO or socket is never replaced)"
                    .into(),
            ));
        }
        if let Some(input) = inputs.find(&md) {
            return Err(refused(
                path,
                format!(
                    "it is the input '{}' (same file); outputs never replace inputs",
                    crate::escape_path(input)
                ),
            ));
        }
    }
    crate::files::check_writable_file(path)
}

/// Check each of `paths` with [`check_output_file`]; the first refusal.
pub fn check_output_files(paths: &[PathBuf], inputs: &Inputs) -> Result<(), ReportError> {
    paths.iter().try_for_each(|p| check_output_file(p, inputs))
}

/// The name of the plot subdirectory of one stage file among several
/// (`check --plots DIR`): the file's stem made safe, then the first eight
/// hex digits of the SHA-256 of its canonical path, so two stage files of
/// the same name in different directories never share plots.
pub fn plot_subdir(stem: &str, canonical_path: &str) -> String {
    let hash = crate::provenance::sha256_hex(canonical_path.as_bytes());
    format!(
        "{}-{}",
        crate::assemble::safe_file_name(stem),
        &hash[..8.min(hash.len())]
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refuses_inputs_by_any_spelling_and_links() {
        let dir = tempfile::tempdir().unwrap();
        let input = dir.path().join("stage.tank");
        std::fs::write(&input, b"title \"x\"\n").unwrap();
        let inputs = Inputs::new(&[&input]);
        let spelled = dir.path().join(".").join("stage.tank");
        assert!(check_output_file(&spelled, &inputs).is_err());
        let hard = dir.path().join("hard.tank");
        std::fs::hard_link(&input, &hard).unwrap();
        assert!(check_output_file(&hard, &inputs).is_err());
        let soft = dir.path().join("soft.html");
        std::os::unix::fs::symlink(&input, &soft).unwrap();
        let e = check_output_file(&soft, &inputs).unwrap_err().to_string();
        assert!(e.contains("symbolic link"), "{e}");
        assert!(check_output_file(&dir.path().join("new.html"), &inputs).is_ok());
        assert!(check_output_file(Path::new("/dev/null"), &inputs).is_err());
        assert_eq!(std::fs::read(&input).unwrap(), b"title \"x\"\n");
    }

    #[test]
    fn plot_subdirs_differ_by_path() {
        let a = plot_subdir("stage", "/a/stage.tank");
        let b = plot_subdir("stage", "/b/stage.tank");
        assert_ne!(a, b);
        assert!(
            a.starts_with("stage-") && a.len() == "stage-".len() + 8,
            "{a}"
        );
        assert!(plot_subdir("../x", "/p").starts_with("---x-"));
    }
}
