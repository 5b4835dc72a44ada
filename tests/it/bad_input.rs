//! Bad input through every command-line path: a missing file, a directory, an
//! unreadable file, non-UTF-8 text, an empty file, a file over the size limit,
//! and output paths in a missing or read-only directory. Each must give a
//! message on stderr, exit code 2 (bad input, as `--help` documents) and leave
//! no partial output behind.

use crate::harness::{code, data, p, run, stderr, stdout};
use std::fs;
use std::os::unix::fs::PermissionsExt;
use std::path::{Path, PathBuf};

/// Exit code for bad input (documented in `tankwave --help`).
const BAD_INPUT: i32 = 2;

/// One kind of bad input file.
struct BadFile {
    /// What it is, for failure messages.
    what: &'static str,
    path: PathBuf,
    /// stderr must contain one of these (case-insensitive) for the stage commands.
    stage_words: &'static [&'static str],
}

/// True if this process can read a file with mode 000 (running as root, where
/// permissions do not block reads): the unreadable cases are then skipped.
fn permissions_ignored(dir: &Path) -> bool {
    let probe = dir.join("probe");
    fs::write(&probe, b"x").unwrap();
    fs::set_permissions(&probe, fs::Permissions::from_mode(0o000)).unwrap();
    let readable = fs::read(&probe).is_ok();
    fs::set_permissions(&probe, fs::Permissions::from_mode(0o644)).unwrap();
    fs::remove_file(&probe).unwrap();
    readable
}

/// The bad files, made in `dir` (the unreadable one only when permissions hold).
fn bad_files(dir: &Path) -> Vec<BadFile> {
    let mut v = Vec::new();
    v.push(BadFile {
        what: "missing file",
        path: dir.join("no-such-stage.tank"),
        stage_words: &["cannot read", "no such file"],
    });
    let sub = dir.join("a-directory.tank");
    fs::create_dir(&sub).unwrap();
    v.push(BadFile {
        what: "directory",
        path: sub,
        stage_words: &["not a regular file", "directory"],
    });
    if !permissions_ignored(dir) {
        let f = dir.join("unreadable.tank");
        fs::write(&f, "title \"locked\"\nresistor r1 a gnd 50Ohm\n").unwrap();
        fs::set_permissions(&f, fs::Permissions::from_mode(0o000)).unwrap();
        v.push(BadFile {
            what: "unreadable file",
            path: f,
            stage_words: &["cannot read", "permission denied"],
        });
    }
    // (running as root: chmod 000 does not block reads, so that case is skipped)
    let f = dir.join("latin1.tank");
    fs::write(&f, b"title \"Tankkreis f\xfcr 7 MHz\"\n").unwrap();
    v.push(BadFile {
        what: "non-UTF-8 text",
        path: f,
        stage_words: &["utf-8"],
    });
    let f = dir.join("empty.tank");
    fs::write(&f, b"").unwrap();
    v.push(BadFile {
        what: "empty file",
        path: f,
        stage_words: &["no statements"],
    });
    // 80 MB, over the parser's limit; sparse, so it costs no disk or time.
    let f = dir.join("huge.tank");
    let huge = 80u64 << 20;
    assert!(huge > tankwave_netlist::MAX_FILE_BYTES);
    fs::File::create(&f).unwrap().set_len(huge).unwrap();
    v.push(BadFile {
        what: "80 MB file",
        path: f,
        stage_words: &["limit"],
    });
    v
}

fn entries(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

fn assert_bad_input(o: &std::process::Output, words: &[&str], ctx: &str) {
    assert_eq!(
        code(o),
        BAD_INPUT,
        "{ctx}: exit code\nstdout:\n{}\nstderr:\n{}",
        stdout(o),
        stderr(o)
    );
    let err = stderr(o).to_lowercase();
    assert!(
        words.iter().any(|w| err.contains(&w.to_lowercase())),
        "{ctx}: stderr names none of {words:?}:\n{err}"
    );
    assert!(!err.contains("panicked"), "{ctx}: panic:\n{err}");
}

#[test]
fn every_stage_command_rejects_every_bad_file() {
    let dir = tempfile::tempdir().unwrap();
    let files = bad_files(dir.path());
    for f in &files {
        let out = tempfile::tempdir().unwrap();
        let o = out.path();
        let file = p(&f.path);
        let commands: Vec<(&str, Vec<String>)> = vec![
            ("lint", vec!["lint".into(), file.into()]),
            (
                "run --out",
                vec!["run".into(), file.into(), "--out".into(), p(o).into()],
            ),
            (
                "check --junit",
                vec![
                    "check".into(),
                    file.into(),
                    "--junit".into(),
                    p(&o.join("verdicts.xml")).into(),
                ],
            ),
            (
                "study --out",
                vec![
                    "study".into(),
                    file.into(),
                    "--out".into(),
                    p(&o.join("records.jsonl")).into(),
                ],
            ),
            ("tune", vec!["tune".into(), file.into()]),
        ];
        for (name, args) in commands {
            let args: Vec<&str> = args.iter().map(String::as_str).collect();
            let r = run(&args);
            let ctx = format!("{name} with a {}", f.what);
            assert_bad_input(&r, f.stage_words, &ctx);
            assert!(
                stderr(&r).contains(file) || stderr(&r).contains(&*f.path.to_string_lossy()),
                "{ctx}: stderr does not name the file:\n{}",
                stderr(&r)
            );
            if name == "check --junit" {
                // check writes its report whole even for a file it could not
                // read: one error test case naming the file.
                let xml = fs::read_to_string(o.join("verdicts.xml")).unwrap();
                let doc = roxmltree::Document::parse(&xml).unwrap();
                let root = doc.root_element();
                assert_eq!(root.attribute("errors"), Some("1"), "{ctx}: {xml}");
                fs::remove_file(o.join("verdicts.xml")).unwrap();
            }
            assert!(
                entries(o).is_empty(),
                "{ctx}: left output behind: {:?}",
                entries(o)
            );
        }
    }
    // let the temporary directory be removed
    for f in &files {
        let _ = fs::set_permissions(&f.path, fs::Permissions::from_mode(0o755));
    }
}

#[test]
fn merge_rejects_every_bad_record_file() {
    let dir = tempfile::tempdir().unwrap();
    let files = bad_files(dir.path());
    for f in &files {
        let out = tempfile::tempdir().unwrap();
        let target = out.path().join("merged.jsonl");
        let r = run(&["merge", p(&f.path), "--out", p(&target)]);
        let ctx = format!("merge with a {}", f.what);
        assert_bad_input(
            &r,
            &[
                "cannot read",
                "directory",
                "not a study header",
                "no study records",
            ],
            &ctx,
        );
        assert!(
            stderr(&r).contains(p(&f.path)),
            "{ctx}: stderr does not name the file:\n{}",
            stderr(&r)
        );
        assert!(entries(out.path()).is_empty(), "{ctx}: left output behind");
    }
    for f in &files {
        let _ = fs::set_permissions(&f.path, fs::Permissions::from_mode(0o755));
    }
}

/// True if a file can be created in a directory of mode 555 (root).
fn read_only_ignored(dir: &Path) -> bool {
    let probe = dir.join("probe");
    let created = fs::write(&probe, b"x").is_ok();
    let _ = fs::remove_file(&probe);
    created
}

/// The output places that must be refused: a missing directory (for output
/// files; an output directory is created) and (unless permissions are
/// ignored) a read-only one. Returns (what, directory).
fn bad_output_dirs(base: &Path) -> Vec<(&'static str, PathBuf)> {
    let mut v = vec![("missing directory", base.join("not/made/yet"))];
    let ro = base.join("read-only");
    fs::create_dir(&ro).unwrap();
    fs::set_permissions(&ro, fs::Permissions::from_mode(0o555)).unwrap();
    if read_only_ignored(&ro) {
        // running as root: a read-only mode does not stop writes; skip that case
        fs::set_permissions(&ro, fs::Permissions::from_mode(0o755)).unwrap();
    } else {
        v.push(("read-only directory", ro));
    }
    v
}

fn restore(base: &Path) {
    let _ = fs::set_permissions(base.join("read-only"), fs::Permissions::from_mode(0o755));
}

fn assert_nothing_written(base: &Path, ctx: &str) {
    assert!(
        !base.join("not").exists(),
        "{ctx}: the missing directory was created"
    );
    let ro = base.join("read-only");
    if ro.exists() {
        assert!(entries(&ro).is_empty(), "{ctx}: wrote {:?}", entries(&ro));
    }
}

#[test]
fn outputs_into_missing_or_read_only_directories_are_refused() {
    let base = tempfile::tempdir().unwrap();
    let b = base.path();
    let pass = data("check/pass.tank");
    let study = data("study/divider.tank");
    let tune = data("tune/tank.tank");
    // A good record file for merge, made by a study.
    let records = b.join("records.jsonl");
    let o = run(&["study", p(&study), "--out", p(&records)]);
    assert!(
        code(&o) == 0 || code(&o) == 1,
        "the study runs: {}",
        stderr(&o)
    );
    assert!(records.is_file());
    for (what, dir) in bad_output_dirs(b) {
        let cases: Vec<(&str, Vec<String>)> = vec![
            (
                "run --out",
                vec![
                    "run".into(),
                    p(&pass).into(),
                    "--out".into(),
                    p(&dir).into(),
                ],
            ),
            (
                "check --junit",
                vec![
                    "check".into(),
                    p(&pass).into(),
                    "--junit".into(),
                    p(&dir.join("verdicts.xml")).into(),
                ],
            ),
            (
                "study --out",
                vec![
                    "study".into(),
                    p(&study).into(),
                    "--out".into(),
                    p(&dir.join("records.jsonl")).into(),
                ],
            ),
            (
                "merge --out",
                vec![
                    "merge".into(),
                    p(&records).into(),
                    "--out".into(),
                    p(&dir.join("merged.jsonl")).into(),
                ],
            ),
            (
                "study --report",
                vec![
                    "study".into(),
                    p(&study).into(),
                    "--report".into(),
                    p(&dir.join("study.html")).into(),
                ],
            ),
            (
                "study --plots",
                vec![
                    "study".into(),
                    p(&study).into(),
                    "--plots".into(),
                    p(&dir).into(),
                ],
            ),
            (
                "tune --plots",
                vec![
                    "tune".into(),
                    p(&tune).into(),
                    "--plots".into(),
                    p(&dir).into(),
                ],
            ),
        ];
        for (name, args) in cases {
            // A missing directory named as an output directory (`--out DIR`,
            // `--plots DIR`) is created, not refused (docs/security.md);
            // files into a missing directory are still refused.
            if what == "missing directory" && args.last().map(String::as_str) == Some(p(&dir)) {
                continue;
            }
            let args: Vec<&str> = args.iter().map(String::as_str).collect();
            let r = run(&args);
            let ctx = format!("{name} into a {what}");
            assert_bad_input(
                &r,
                &[
                    "does not exist",
                    "no such file",
                    "permission denied",
                    "cannot write",
                ],
                &ctx,
            );
            assert!(
                stderr(&r).contains(p(&dir)),
                "{ctx}: stderr does not name the place:\n{}",
                stderr(&r)
            );
            assert_nothing_written(b, &ctx);
        }
    }
    restore(b);
}

#[test]
fn run_out_naming_a_file_is_refused() {
    let base = tempfile::tempdir().unwrap();
    let f = base.path().join("plain-file");
    fs::write(&f, b"keep me").unwrap();
    let r = run(&["run", p(&data("check/pass.tank")), "--out", p(&f)]);
    assert_bad_input(&r, &["not a directory"], "run --out FILE");
    assert_eq!(fs::read(&f).unwrap(), b"keep me", "the file is untouched");
}

#[test]
fn design_rejects_values_it_cannot_read() {
    // `design` reads no files; its inputs are values, so bad values stand in for bad files.
    let cases: [&[&str]; 4] = [
        &[
            "design", "loadline", "--supply", "twelve", "--power", "10W", "--vsat", "1V",
        ],
        &[
            "design", "loadline", "--supply", "1e999V", "--power", "10W", "--vsat", "1V",
        ],
        &[
            "design", "match", "--from", "50Ohm", "--to", "", "--freq", "7MHz",
        ],
        &[
            "design",
            "choke",
            "--freq",
            "7MHz",
            "--load",
            "12\u{fffd}Ohm",
        ],
    ];
    for args in cases {
        let r = run(args);
        assert_eq!(
            code(&r),
            BAD_INPUT,
            "{args:?}\nstdout:\n{}\nstderr:\n{}",
            stdout(&r),
            stderr(&r)
        );
        assert!(!stderr(&r).trim().is_empty(), "{args:?}: no message");
        assert!(!stderr(&r).contains("panicked"), "{args:?}: panic");
        assert!(stdout(&r).is_empty(), "{args:?}: printed a result");
    }
}
