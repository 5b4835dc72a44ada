//! Helpers shared by the command-line tests of `bad_input` and `fuzz_smoke`:
//! running the built binary, paths to test data, reading its output.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The `tankwave` binary built for this test run.
pub fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_tankwave"))
}

/// The workspace root.
pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// A file under tests/data/.
pub fn data(p: &str) -> PathBuf {
    root().join("tests/data").join(p)
}

/// Run the binary with `args`, stdin closed.
pub fn run(args: &[&str]) -> Output {
    bin()
        .args(args)
        .stdin(std::process::Stdio::null())
        .output()
        .expect("binary runs")
}

/// The exit code (-1 when killed by a signal).
pub fn code(o: &Output) -> i32 {
    o.status.code().unwrap_or(-1)
}

/// Standard output as text.
pub fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

/// Standard error as text.
pub fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// A path as `&str` (test paths are UTF-8).
pub fn p(path: &Path) -> &str {
    path.to_str().expect("utf-8 path")
}
