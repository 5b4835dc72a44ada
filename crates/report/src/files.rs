//! Whole-file writes: the content goes to a temporary file in the target
//! directory, which is then renamed into place, so a reader never sees half a
//! file and a failure leaves nothing behind.

use std::io::Write;
use std::path::{Path, PathBuf};

/// Errors from writing output files.
#[derive(Debug, thiserror::Error)]
pub enum ReportError {
    /// The output directory or file could not be written.
    #[error("cannot write '{}': {source}", crate::escape_path(path))]
    Write {
        /// The path being written.
        path: PathBuf,
        /// The operating-system error.
        #[source]
        source: std::io::Error,
    },
    /// A file was to be written where a directory is.
    #[error("'{}' is a directory", crate::escape_path(path))]
    IsDirectory {
        /// The path given for the file.
        path: PathBuf,
    },
    /// An output path that would destroy an input or replace something
    /// that is not a regular file.
    #[error("refusing to write '{}': {why}", crate::escape_path(path))]
    Refused {
        /// The path given for the output.
        path: PathBuf,
        /// Why it is refused.
        why: String,
    },
    /// Serialising to JSON or CSV failed.
    #[error("cannot serialise {what}: {message}")]
    Serialise {
        /// What was being serialised.
        what: String,
        /// The serialiser's message.
        message: String,
    },
}

/// Write `bytes` to `path` whole: a temporary file beside it, then a rename.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), ReportError> {
    write_all_atomic(&[(path.to_path_buf(), bytes.to_vec())])
}

/// A temporary file in `dir` created with the permissions an ordinary new
/// file gets (read-write for all, less the process umask), not the owner-only
/// mode temporary files default to: the renamed output must be as readable as
/// any file the user writes.
fn staging_file(dir: &Path) -> std::io::Result<tempfile::NamedTempFile> {
    remove_stale_staging(dir);
    let prefix = format!("{STAGING_PREFIX}{}-", std::process::id());
    let mut b = tempfile::Builder::new();
    b.prefix(&prefix);
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        b.permissions(std::fs::Permissions::from_mode(0o666));
    }
    b.tempfile_in(dir)
}

/// Name prefix of our temporary files: `.tankwave-PID-XXXXXX`, PID being
/// the process that made it.
pub const STAGING_PREFIX: &str = ".tankwave-";

/// Remove temporary files of our own naming pattern left in `dir` by a
/// process that no longer runs (a run killed between writing and renaming):
/// only regular files named `.tankwave-PID-…` whose PID has no entry under
/// /proc. Failures are ignored (the files are merely left).
pub fn remove_stale_staging(dir: &Path) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    if !Path::new("/proc/self").exists() {
        return;
    }
    for e in entries.flatten() {
        let name = e.file_name();
        let Some(rest) = name.to_str().and_then(|n| n.strip_prefix(STAGING_PREFIX)) else {
            continue;
        };
        let Some(pid) = rest.split('-').next().and_then(|p| p.parse::<u32>().ok()) else {
            continue;
        };
        if pid == std::process::id() || Path::new(&format!("/proc/{pid}")).exists() {
            continue;
        }
        if e.file_type().is_ok_and(|t| t.is_file()) {
            let _ = std::fs::remove_file(e.path());
        }
    }
}

/// Check, before any work is done, that files can be created in `dir`:
/// it must be an existing directory in which a temporary file can be made
/// (the file is removed again at once).
pub fn check_writable_dir(dir: &Path) -> Result<(), ReportError> {
    let err = |source| ReportError::Write {
        path: dir.to_path_buf(),
        source,
    };
    if !dir.is_dir() {
        let why = if dir.exists() {
            "not a directory"
        } else {
            "the directory does not exist"
        };
        return Err(err(std::io::Error::new(std::io::ErrorKind::NotFound, why)));
    }
    staging_file(dir).map_err(err)?;
    Ok(())
}

/// Make sure `dir` can take output files, creating it (and missing parents)
/// when nothing exists at that path; then check it as
/// [`check_writable_dir`] does. Something that exists and is not a
/// directory is refused, never replaced.
pub fn ensure_output_dir(dir: &Path) -> Result<(), ReportError> {
    if std::fs::symlink_metadata(dir).is_err() {
        std::fs::create_dir_all(dir).map_err(|source| ReportError::Write {
            path: dir.to_path_buf(),
            source,
        })?;
    }
    check_writable_dir(dir)
}

/// Check, before any work is done, that a file can be written at `path`:
/// it must not be a directory, and its directory (the current one for a
/// bare file name) must pass [`check_writable_dir`].
pub fn check_writable_file(path: &Path) -> Result<(), ReportError> {
    if path.is_dir() {
        return Err(ReportError::IsDirectory {
            path: path.to_path_buf(),
        });
    }
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    };
    check_writable_dir(dir)
}

/// Write several files whole, all or nothing: every file is first written to a
/// temporary file; only when all succeeded are they renamed into place. If a
/// rename fails midway, the files already renamed are removed again.
pub fn write_all_atomic(files: &[(PathBuf, Vec<u8>)]) -> Result<(), ReportError> {
    for (path, _) in files {
        if let Ok(md) = std::fs::metadata(path) {
            if md.is_dir() {
                return Err(ReportError::IsDirectory { path: path.clone() });
            }
            if !md.is_file() {
                return Err(ReportError::Refused {
                    path: path.clone(),
                    why: "it exists and is not a regular file".into(),
                });
            }
        }
    }
    let mut staged = Vec::with_capacity(files.len());
    for (path, bytes) in files {
        let err = |source| ReportError::Write {
            path: path.clone(),
            source,
        };
        let dir = match path.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
            _ => PathBuf::from("."),
        };
        let mut tmp = staging_file(&dir).map_err(err)?;
        tmp.write_all(bytes).map_err(err)?;
        tmp.flush().map_err(err)?;
        staged.push((path.clone(), tmp));
    }
    let mut done: Vec<PathBuf> = Vec::new();
    for (path, tmp) in staged {
        if let Err(e) = tmp.persist(&path) {
            for p in &done {
                let _ = std::fs::remove_file(p);
            }
            return Err(ReportError::Write {
                path,
                source: e.error,
            });
        }
        done.push(path);
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn writes_whole_file() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("a.txt");
        write_atomic(&p, b"hello").unwrap();
        assert_eq!(std::fs::read(&p).unwrap(), b"hello");
        // nothing else left in the directory
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
    }

    /// The output gets the mode any new file of the user's gets (0o666 less
    /// the umask), not a temporary file's owner-only 0o600.
    #[cfg(unix)]
    #[test]
    fn output_has_the_mode_of_an_ordinary_new_file() {
        use std::os::unix::fs::PermissionsExt;
        let dir = tempfile::tempdir().unwrap();
        let reference = dir.path().join("plain.txt");
        std::fs::write(&reference, b"x").unwrap();
        let want = std::fs::metadata(&reference).unwrap().permissions().mode() & 0o777;
        let p = dir.path().join("a.svg");
        write_atomic(&p, b"<svg/>").unwrap();
        let got = std::fs::metadata(&p).unwrap().permissions().mode() & 0o777;
        assert_eq!(got, want, "{got:o} vs {want:o}");
    }

    #[test]
    fn missing_directory_is_an_error_and_writes_nothing() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("no/such/dir/a.txt");
        assert!(write_atomic(&p, b"x").is_err());
        assert!(!p.exists());
    }

    #[test]
    fn writable_directory_check() {
        let dir = tempfile::tempdir().unwrap();
        assert!(check_writable_dir(dir.path()).is_ok());
        assert_eq!(
            std::fs::read_dir(dir.path()).unwrap().count(),
            0,
            "probe removed"
        );
        let missing = dir.path().join("missing");
        let e = check_writable_dir(&missing).unwrap_err().to_string();
        assert!(e.contains("does not exist") && e.contains("missing"), "{e}");
        let file = dir.path().join("plain");
        std::fs::write(&file, b"x").unwrap();
        let e = check_writable_dir(&file).unwrap_err().to_string();
        assert!(e.contains("not a directory"), "{e}");
    }

    #[test]
    fn output_directories_are_created_but_nothing_is_replaced() {
        let dir = tempfile::tempdir().unwrap();
        let nested = dir.path().join("a/b");
        ensure_output_dir(&nested).unwrap();
        assert!(nested.is_dir());
        ensure_output_dir(&nested).unwrap();
        let file = dir.path().join("plain");
        std::fs::write(&file, b"x").unwrap();
        let e = ensure_output_dir(&file).unwrap_err().to_string();
        assert!(e.contains("not a directory"), "{e}");
        assert_eq!(std::fs::read(&file).unwrap(), b"x");
    }

    #[test]
    fn writable_file_check() {
        let dir = tempfile::tempdir().unwrap();
        assert!(check_writable_file(&dir.path().join("report.html")).is_ok());
        assert!(matches!(
            check_writable_file(dir.path()),
            Err(ReportError::IsDirectory { .. })
        ));
        let e = check_writable_file(&dir.path().join("missing/report.html"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("does not exist") && e.contains("missing"), "{e}");
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
    }

    #[test]
    fn stale_temporaries_of_dead_processes_are_removed() {
        let dir = tempfile::tempdir().unwrap();
        // a pid above the kernel's pid_max (4194304) never runs
        let stale = dir.path().join(".tankwave-4294967-abc123");
        std::fs::write(&stale, b"half").unwrap();
        let mine = dir
            .path()
            .join(format!(".tankwave-{}-keep", std::process::id()));
        std::fs::write(&mine, b"x").unwrap();
        let other = dir.path().join(".tankwave-notapid");
        std::fs::write(&other, b"x").unwrap();
        write_atomic(&dir.path().join("a.txt"), b"1").unwrap();
        assert!(!stale.exists(), "stale temporary removed");
        assert!(mine.exists() && other.exists(), "others kept");
    }

    #[test]
    fn never_replaces_a_device() {
        let e = write_atomic(Path::new("/dev/null"), b"x")
            .unwrap_err()
            .to_string();
        assert!(e.contains("not a regular file"), "{e}");
    }

    #[test]
    fn all_or_nothing() {
        let dir = tempfile::tempdir().unwrap();
        let good = dir.path().join("good.csv");
        let bad = dir.path().join("missing/bad.csv");
        let r = write_all_atomic(&[(good.clone(), b"1".to_vec()), (bad, b"2".to_vec())]);
        assert!(r.is_err());
        assert!(!good.exists(), "no partial output when one file fails");
    }
}
