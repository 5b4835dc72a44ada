//! The `tankwave` binary end to end: exit codes, outputs, files.
//! Data lives under tests/data/; demo stages under netlists/.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_tankwave"))
}

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn data(p: &str) -> PathBuf {
    root().join("tests/data").join(p)
}

fn run(args: &[&str]) -> Output {
    bin().args(args).output().expect("binary runs")
}

fn code(o: &Output) -> i32 {
    o.status.code().unwrap_or(-1)
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn p(path: &Path) -> &str {
    path.to_str().expect("utf-8 path")
}

#[test]
fn help_names_the_exit_codes() {
    let o = run(&["--help"]);
    assert_eq!(code(&o), 0);
    let s = stdout(&o);
    for needle in [
        "lint",
        "run",
        "check",
        "design",
        "Exit codes",
        "2  bad input",
        "3  the solver",
    ] {
        assert!(s.contains(needle), "--help lacks '{needle}':\n{s}");
    }
    let o = run(&["lint", "--help"]);
    assert_eq!(code(&o), 0);
    assert!(stdout(&o).contains("Exit codes"));
}

#[test]
fn lint_accepts_every_demo_stage() {
    let mut files: Vec<PathBuf> = std::fs::read_dir(root().join("netlists"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "tank"))
        .collect();
    files.sort();
    assert!(files.len() >= 3, "at least three demo stages");
    let mut args = vec!["lint"];
    args.extend(files.iter().map(|f| p(f)));
    let o = run(&args);
    assert_eq!(code(&o), 0, "stderr:\n{}", stderr(&o));
    assert!(stderr(&o).trim().is_empty() || !stderr(&o).contains("error"));
}

#[test]
fn lint_reports_file_line_column_and_exits_2() {
    let f = data("check/bad.tank");
    let o = run(&["lint", p(&f)]);
    assert_eq!(code(&o), 2);
    let e = stderr(&o);
    assert!(e.contains("bad.tank:4:"), "location in:\n{e}");
    assert!(stdout(&o).is_empty(), "nothing on stdout for a bad file");
}

#[test]
fn missing_file_and_directory_are_bad_input() {
    let o = run(&["lint", "no/such/file.tank"]);
    assert_eq!(code(&o), 2);
    let o = run(&["run", p(&root().join("netlists"))]);
    assert_eq!(code(&o), 2);
    let o = run(&["check", "no/such/file.tank"]);
    assert_eq!(code(&o), 2);
}

#[test]
fn check_exit_codes_pass_fail_bad_unsolvable() {
    // linear stage: the load receives the source's available power (maximum power transfer)
    let o = run(&["check", p(&data("check/pass.tank"))]);
    assert_eq!(code(&o), 0, "{}{}", stdout(&o), stderr(&o));
    assert!(stdout(&o).contains("pass"));
    let o = run(&["check", p(&data("check/fail.tank"))]);
    assert_eq!(code(&o), 1, "{}{}", stdout(&o), stderr(&o));
    assert!(stdout(&o).contains("FAIL"));
    let o = run(&["check", p(&data("check/bad.tank"))]);
    assert_eq!(code(&o), 2);
    let o = run(&["check", p(&data("check/unsolvable.tank"))]);
    assert_eq!(code(&o), 3, "{}{}", stdout(&o), stderr(&o));
    assert!(stderr(&o).contains("solver failed"));
    // the worst outcome decides: bad input over a failed requirement
    let o = run(&[
        "check",
        p(&data("check/fail.tank")),
        p(&data("check/bad.tank")),
    ]);
    assert_eq!(code(&o), 2);
}

#[test]
fn check_writes_junit_that_parses() {
    let dir = tempfile::tempdir().unwrap();
    let xml = dir.path().join("verdicts.xml");
    let o = run(&[
        "check",
        p(&data("check/pass.tank")),
        p(&data("check/fail.tank")),
        "--junit",
        p(&xml),
    ]);
    assert_eq!(code(&o), 1);
    let text = std::fs::read_to_string(&xml).unwrap();
    let doc = roxmltree::Document::parse(&text).expect("JUnit XML parses");
    let suites: Vec<_> = doc
        .descendants()
        .filter(|n| n.has_tag_name("testsuite"))
        .collect();
    assert_eq!(suites.len(), 2, "one suite per file");
    let cases: Vec<_> = doc
        .descendants()
        .filter(|n| n.has_tag_name("testcase"))
        .collect();
    assert_eq!(cases.len(), 4, "one case per requirement");
    let failures = doc
        .descendants()
        .filter(|n| n.has_tag_name("failure"))
        .count();
    assert_eq!(failures, 1);
    assert_eq!(doc.root_element().attribute("failures"), Some("1"));
}

#[test]
fn check_json_is_machine_readable() {
    let o = run(&["check", p(&data("check/pass.tank")), "--format", "json"]);
    assert_eq!(code(&o), 0);
    let v: serde_json::Value = serde_json::from_str(&stdout(&o)).expect("valid JSON");
    assert_eq!(v["schema"], "tankwave/1");
    assert_eq!(v["files"][0]["pass"], true);
    assert_eq!(v["files"][0]["verdicts"].as_array().unwrap().len(), 2);
}

#[test]
fn run_json_and_out_dir() {
    let dir = tempfile::tempdir().unwrap();
    let o = run(&[
        "run",
        p(&data("check/pass.tank")),
        "--format",
        "json",
        "--out",
        p(dir.path()),
    ]);
    assert_eq!(code(&o), 0, "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_str(&stdout(&o)).expect("valid JSON");
    assert_eq!(v["schema"], "tankwave/1");
    // maximum power transfer: P = amp^2 / (8 Rs) = 400/400 = 1 W (any circuit-analysis text);
    // on a linear circuit the steady state is exact up to the Newton and
    // periodicity tolerances (1e-7 relative), so 1e-6 W leaves a margin of ten
    let p1 = v["steady"]["metrics"]["output"]["p1_w"].as_f64().unwrap();
    assert!((p1 - 1.0).abs() < 1e-6, "p1 = {p1}");
    for f in ["results.json", "period.csv", "spectrum.csv"] {
        assert!(dir.path().join(f).is_file(), "{f} written");
    }
    assert!(!stdout(&o).contains("NaN"));
}

#[test]
fn run_to_missing_out_dir_writes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("missing");
    let o = run(&["run", p(&data("check/pass.tank")), "--out", p(&out)]);
    assert_eq!(code(&o), 2);
    assert!(!out.exists());
}

fn demo_stages() -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(root().join("netlists"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "tank"))
        .collect();
    files.sort();
    files
}

#[test]
fn every_demo_stage_meets_its_requirements() {
    let files = demo_stages();
    let mut args = vec!["check"];
    args.extend(files.iter().map(|f| p(f)));
    let o = run(&args);
    assert_eq!(code(&o), 0, "{}{}", stdout(&o), stderr(&o));
    // each demo carries requirements, at least one of them against a mask
    let s = stdout(&o);
    assert_eq!(s.matches("PASS:").count(), files.len(), "{s}");
    assert!(s.contains("mask "), "{s}");
}

#[test]
fn the_failing_example_fails_its_mask_and_says_which_harmonic() {
    let o = run(&[
        "check",
        p(&root().join("netlists/failing/cw-7m1-nofilter.tank")),
    ]);
    assert_eq!(code(&o), 1, "{}{}", stdout(&o), stderr(&o));
    let s = stdout(&o);
    let line = s
        .lines()
        .find(|l| l.trim_start().starts_with("harmonic 2 "))
        .expect("harmonic rows under the mask verdict");
    assert!(line.ends_with("FAIL"), "{line}");
}

fn record_lines(path: &Path) -> Vec<String> {
    let text = std::fs::read_to_string(path).unwrap();
    let mut lines: Vec<String> = text.lines().skip(1).map(|l| l.to_string()).collect();
    lines.sort();
    lines
}

#[test]
fn study_shards_merge_into_the_records_of_one_run() {
    let dir = tempfile::tempdir().unwrap();
    let file = data("study/divider.tank");
    let whole = dir.path().join("whole.jsonl");
    let o = run(&["study", p(&file), "--out", p(&whole), "--threads", "1"]);
    // 12 variants; loads near 25 and 100 ohm deliver under 0.23 W, so some fail: exit 1
    assert_eq!(code(&o), 1, "{}{}", stdout(&o), stderr(&o));
    assert!(stdout(&o).contains("12 variants"), "{}", stdout(&o));
    let mut shards = Vec::new();
    for i in 0..3 {
        let s = dir.path().join(format!("shard{i}.jsonl"));
        let o = run(&[
            "study",
            p(&file),
            "--out",
            p(&s),
            "--shard",
            &format!("{i}/3"),
            "--threads",
            "2",
        ]);
        assert!(code(&o) == 0 || code(&o) == 1, "{}", stderr(&o));
        shards.push(s);
    }
    let merged = dir.path().join("merged.jsonl");
    let mut args = vec!["merge"];
    args.extend(shards.iter().map(|s| p(s)));
    args.extend(["--out", p(&merged)]);
    let o = run(&args);
    assert_eq!(code(&o), 0, "{}", stderr(&o));
    assert_eq!(record_lines(&merged), record_lines(&whole));
    assert_eq!(record_lines(&whole).len(), 12);
}

#[test]
fn study_resume_completes_a_cut_run_with_every_variant_once() {
    let dir = tempfile::tempdir().unwrap();
    let file = data("study/divider.tank");
    let whole = dir.path().join("whole.jsonl");
    run(&["study", p(&file), "--out", p(&whole)]);
    // cut the file in the middle of a record, as a killed run would leave it
    let text = std::fs::read_to_string(&whole).unwrap();
    let cut = dir.path().join("cut.jsonl");
    std::fs::write(&cut, &text[..text.len() * 2 / 3]).unwrap();
    let o = run(&["study", p(&file), "--out", p(&cut), "--resume"]);
    assert!(code(&o) == 0 || code(&o) == 1, "{}", stderr(&o));
    let mut idx: Vec<u64> = std::fs::read_to_string(&cut)
        .unwrap()
        .lines()
        .skip(1)
        .map(|l| {
            serde_json::from_str::<serde_json::Value>(l).unwrap()["index"]
                .as_u64()
                .unwrap()
        })
        .collect();
    idx.sort();
    assert_eq!(idx, (0..12).collect::<Vec<u64>>());
    assert_eq!(record_lines(&cut), record_lines(&whole));
}

#[test]
fn run_writes_plots_and_a_self_contained_report() {
    let dir = tempfile::tempdir().unwrap();
    let report = dir.path().join("stage.html");
    let o = run(&[
        "run",
        p(&root().join("netlists/cw-7m1-classb.tank")),
        "--plots",
        p(dir.path()),
        "--report",
        p(&report),
    ]);
    assert_eq!(code(&o), 0, "{}", stderr(&o));
    for f in ["period-q1.svg", "spectrum.svg", "ac.svg"] {
        let text = std::fs::read_to_string(dir.path().join(f)).unwrap();
        roxmltree::Document::parse(&text).unwrap_or_else(|e| panic!("{f} is not XML: {e}"));
    }
    let html = std::fs::read_to_string(&report).unwrap();
    for bad in ["http://", "https://", "<script", "<link", "<img"] {
        assert!(!html.contains(bad), "report holds '{bad}'");
    }
    assert!(html.contains("<svg"), "plots inline");
    assert!(
        html.to_lowercase().contains("licen"),
        "safety caution present"
    );
}

#[test]
fn study_and_check_write_plots() {
    let dir = tempfile::tempdir().unwrap();
    let o = run(&[
        "study",
        p(&data("study/divider.tank")),
        "--plots",
        p(dir.path()),
    ]);
    assert_eq!(code(&o), 1, "{}", stderr(&o));
    assert!(dir.path().join("hist-pout-w.svg").is_file());
    let o = run(&[
        "check",
        p(&data("check/pass.tank")),
        "--plots",
        p(dir.path()),
    ]);
    assert_eq!(code(&o), 0, "{}", stderr(&o));
    assert!(dir.path().join("pass/spectrum.svg").is_file());
}

#[test]
fn tune_finds_the_resonance_of_a_simple_tank() {
    let o = run(&["tune", p(&data("tune/tank.tank"))]);
    assert_eq!(code(&o), 0, "{}{}", stdout(&o), stderr(&o));
    let s = stdout(&o);
    let line = s
        .lines()
        .find(|l| l.starts_with("ctank "))
        .expect("optimum row");
    let c: f64 = line.split_whitespace().nth(1).unwrap().parse().unwrap();
    // resonance C = 1/((2 pi f)^2 L) with f = 1 MHz, L = 10 uH (any circuit-analysis text);
    // 0.1 % is the accuracy asked of the tuner
    let c0 = 1.0 / ((2.0 * std::f64::consts::PI * 1e6_f64).powi(2) * 10e-6);
    assert!(((c - c0) / c0).abs() < 1e-3, "optimum {c:e} vs {c0:e}");
}
