//! README.md works as written: every `cargo run --release -- …` line in it
//! is run with the built binary, in a fresh directory holding a copy of the
//! bundled stage files (as on an unpacked copy, no repository around it),
//! and must exit as the README says (0, or 1 where its comment says so)
//! and leave the files it names behind.

use crate::harness::{code, root, stderr};
use std::path::Path;
use std::process::Command;

/// The command prefix the README uses for a release run of the binary.
const PREFIX: &str = "cargo run --release -- ";

/// The command lines of README.md that run tankwave, without the prefix,
/// each with the exit code the README promises: 1 when the comment just
/// above the line says "(exit 1: why)", else 0.
fn readme_commands() -> Vec<(String, i32)> {
    let text = std::fs::read_to_string(root().join("README.md")).expect("README.md");
    let lines: Vec<&str> = text.lines().collect();
    let mut out = Vec::new();
    for (i, l) in lines.iter().enumerate() {
        if let Some(cmd) = l.trim().strip_prefix(PREFIX) {
            let comment = lines[..i]
                .iter()
                .rev()
                .take_while(|c| c.trim_start().starts_with('#'))
                .any(|c| c.contains("(exit 1:"));
            out.push((cmd.to_string(), if comment { 1 } else { 0 }));
        }
    }
    out
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        let target = to.join(e.file_name());
        if e.file_type().unwrap().is_dir() {
            copy_dir(&e.path(), &target);
        } else {
            std::fs::copy(e.path(), &target).unwrap();
        }
    }
}

/// The paths a command line says it writes (`--out`, `--plots`,
/// `--report`, `--junit`).
fn written_paths(line: &str) -> Vec<String> {
    let words: Vec<&str> = line.split_whitespace().collect();
    words
        .windows(2)
        .filter(|w| matches!(w[0], "--out" | "--plots" | "--report" | "--junit"))
        .map(|w| w[1].to_string())
        .collect()
}

#[test]
fn every_readme_command_runs_as_written() {
    let lines = readme_commands();
    // The tour has a dozen commands; finding none means the prefix changed
    // and this test would check nothing.
    assert!(lines.len() >= 10, "README commands found: {lines:?}");
    let dir = tempfile::tempdir().unwrap();
    copy_dir(&root().join("netlists"), &dir.path().join("netlists"));
    // the power-device curves of the fit tour line
    let power = "tests/reference/fit/power";
    copy_dir(&root().join(power), &dir.path().join(power));
    let bin = env!("CARGO_BIN_EXE_tankwave");
    for (line, expected) in &lines {
        // Through the shell, so that globs such as netlists/*.tank expand
        // as they do for a reader who pastes the line.
        let out = Command::new("sh")
            .arg("-c")
            .arg(format!("'{bin}' {line}"))
            .current_dir(dir.path())
            .stdin(std::process::Stdio::null())
            .output()
            .expect("sh runs");
        assert_eq!(
            code(&out),
            *expected,
            "README command `{line}` did not exit as the README says:\n{}",
            stderr(&out)
        );
        for p in written_paths(line) {
            let path = dir.path().join(&p);
            assert!(path.exists(), "`{line}` did not write {p}");
            if path.is_dir() {
                assert!(
                    std::fs::read_dir(&path).unwrap().next().is_some(),
                    "`{line}` left {p} empty"
                );
            }
        }
    }
}
