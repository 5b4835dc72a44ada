//! Hostile input: stage files and command-line values from strangers (CI
//! runs whatever a pull request brings). One test per case of the threat
//! model in docs/security.md: outputs never destroy inputs, includes stay
//! under their roots, nothing raw reaches the terminal, and resources stay
//! bounded. Each case failed (or hung) before the limits existed.

use crate::harness::{code, data, p, run, stderr, stdout};
use std::fs;
use std::os::unix::fs::FileTypeExt;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

/// Exit code for bad input.
const BAD_INPUT: i32 = 2;

/// A copy of the small divider stage (operating point only) in a fresh
/// directory; returns (directory guard, stage path).
fn stage_copy() -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let stage = dir.path().join("stage.tank");
    fs::copy(data("hostile/divider.tank"), &stage).unwrap();
    (dir, stage)
}

/// Every entry of a directory, by name.
fn names(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

#[test]
fn study_out_onto_the_stage_file_is_refused() {
    let (_d, stage) = stage_copy();
    let before = fs::read(&stage).unwrap();
    let o = run(&["study", p(&stage), "--out", p(&stage)]);
    assert_eq!(code(&o), BAD_INPUT, "{}", stderr(&o));
    assert!(stderr(&o).contains("input"), "{}", stderr(&o));
    assert_eq!(fs::read(&stage).unwrap(), before, "stage file untouched");
}

#[test]
fn report_onto_a_character_device_is_refused() {
    let (_d, stage) = stage_copy();
    let o = run(&["run", p(&stage), "--report", "/dev/null"]);
    assert_eq!(code(&o), BAD_INPUT, "{}", stderr(&o));
    assert!(stderr(&o).contains("not a regular file"), "{}", stderr(&o));
    let ft = fs::metadata("/dev/null").unwrap().file_type();
    assert!(ft.is_char_device(), "/dev/null is still a device");
}

#[test]
fn report_through_another_spelling_of_the_stage_file_is_refused() {
    let (d, stage) = stage_copy();
    let before = fs::read(&stage).unwrap();
    let sub = d.path().join("sub");
    fs::create_dir(&sub).unwrap();
    let spelled = sub.join("..").join(".").join("stage.tank");
    let o = run(&["run", p(&stage), "--report", p(&spelled)]);
    assert_eq!(code(&o), BAD_INPUT, "{}", stderr(&o));
    assert_eq!(fs::read(&stage).unwrap(), before);
}

#[test]
fn report_through_a_symlink_to_the_stage_file_is_refused() {
    let (d, stage) = stage_copy();
    let before = fs::read(&stage).unwrap();
    let link = d.path().join("report.html");
    std::os::unix::fs::symlink(&stage, &link).unwrap();
    let o = run(&["run", p(&stage), "--report", p(&link)]);
    assert_eq!(code(&o), BAD_INPUT, "{}", stderr(&o));
    assert!(stderr(&o).contains("symbolic link"), "{}", stderr(&o));
    assert_eq!(fs::read(&stage).unwrap(), before);
    assert!(fs::symlink_metadata(&link)
        .unwrap()
        .file_type()
        .is_symlink());
}

#[test]
fn junit_onto_a_hard_link_of_the_stage_file_is_refused() {
    let (d, stage) = stage_copy();
    let before = fs::read(&stage).unwrap();
    let hard = d.path().join("junit.xml");
    fs::hard_link(&stage, &hard).unwrap();
    let o = run(&["check", p(&stage), "--junit", p(&hard)]);
    assert_eq!(code(&o), BAD_INPUT, "{}", stderr(&o));
    assert_eq!(fs::read(&stage).unwrap(), before);
    assert!(stdout(&o).is_empty(), "nothing ran: {}", stdout(&o));
}

#[test]
fn run_out_onto_an_included_file_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let part = dir.path().join("results.json");
    fs::write(&part, "resistor r2 a gnd 50Ohm\n").unwrap();
    let stage = dir.path().join("stage.tank");
    fs::write(
        &stage,
        "voltage v1 a gnd dc=1V\ninclude \"results.json\"\nanalyze bias\n",
    )
    .unwrap();
    let o = run(&["run", p(&stage), "--out", p(dir.path())]);
    assert_eq!(code(&o), BAD_INPUT, "{}", stderr(&o));
    assert_eq!(
        fs::read_to_string(&part).unwrap(),
        "resistor r2 a gnd 50Ohm\n"
    );
    assert_eq!(names(dir.path()), vec!["results.json", "stage.tank"]);
}

#[test]
fn merge_out_onto_an_input_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let shard = dir.path().join("a.jsonl");
    fs::write(&shard, "{}\n").unwrap();
    let o = run(&["merge", p(&shard), "--out", p(&shard)]);
    assert_eq!(code(&o), BAD_INPUT, "{}", stderr(&o));
    assert_eq!(fs::read_to_string(&shard).unwrap(), "{}\n");
}

#[test]
fn merge_input_that_is_a_device_is_refused_at_once() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("m.jsonl");
    let t = Instant::now();
    let o = run(&["merge", "/dev/zero", "--out", p(&out)]);
    assert_eq!(code(&o), BAD_INPUT, "{}", stderr(&o));
    assert!(stderr(&o).contains("not a regular file"), "{}", stderr(&o));
    assert!(t.elapsed() < Duration::from_secs(20));
    assert!(!out.exists());
}

#[test]
fn a_killed_runs_temporary_file_is_removed_by_the_next_run() {
    let (d, stage) = stage_copy();
    let out = d.path().join("out");
    fs::create_dir(&out).unwrap();
    // the name a run killed between writing and renaming leaves behind;
    // 4294967 is above the kernel's largest pid (4194304), so never alive
    let stale = out.join(".tankwave-4294967-q1w2e3");
    fs::write(&stale, b"half a file").unwrap();
    let o = run(&["run", p(&stage), "--out", p(&out)]);
    assert_eq!(code(&o), 0, "{}", stderr(&o));
    assert!(!stale.exists(), "{:?}", names(&out));
    assert!(
        names(&out).iter().all(|n| !n.starts_with('.')),
        "{:?}",
        names(&out)
    );
}

#[test]
fn include_of_a_system_file_is_refused_without_its_content() {
    let o = run(&["lint", p(&data("hostile/include_system.tank"))]);
    assert_eq!(code(&o), BAD_INPUT);
    let e = stderr(&o);
    assert!(e.contains("include-outside"), "{e}");
    assert!(!e.contains("root:"), "{e}");
}

#[test]
fn include_of_a_file_that_is_not_a_stage_file_shows_none_of_it() {
    let o = run(&["lint", p(&data("hostile/include_not_stage.tank"))]);
    assert_eq!(code(&o), BAD_INPUT);
    let e = stderr(&o);
    assert!(e.contains("not a stage file"), "{e}");
    assert!(!e.contains("SECRET") && !e.contains("alpha"), "{e}");
}

#[test]
fn include_root_option_admits_a_directory() {
    let lib = tempfile::tempdir().unwrap();
    fs::write(lib.path().join("part.tank"), "resistor r2 a gnd 50Ohm\n").unwrap();
    let dir = tempfile::tempdir().unwrap();
    let stage = dir.path().join("stage.tank");
    let inc = lib.path().join("part.tank");
    fs::write(
        &stage,
        format!("voltage v1 a gnd dc=1V\ninclude \"{}\"\n", p(&inc)),
    )
    .unwrap();
    let o = run(&["lint", p(&stage)]);
    assert_eq!(code(&o), BAD_INPUT, "outside the default roots");
    let o = run(&["lint", "--include-root", p(lib.path()), p(&stage)]);
    assert_eq!(code(&o), 0, "{}", stderr(&o));
}

#[test]
fn include_fan_out_is_capped() {
    let dir = tempfile::tempdir().unwrap();
    fs::write(dir.path().join("part.tank"), "let x = 1\n").unwrap();
    let stage = dir.path().join("stage.tank");
    let text: String = "include \"part.tank\"\n".repeat(1000);
    fs::write(&stage, text).unwrap();
    let o = run(&["lint", p(&stage)]);
    assert_eq!(code(&o), BAD_INPUT);
    assert!(stderr(&o).contains("include-limit"), "{}", stderr(&o));
}

#[test]
fn an_escape_sequence_in_the_title_is_shown_escaped() {
    let o = run(&["lint", p(&data("hostile/osc_title.tank"))]);
    assert_eq!(code(&o), 0, "{}", stderr(&o));
    let out = stdout(&o);
    assert!(!out.contains('\u{1b}') && !out.contains('\u{7}'), "{out:?}");
    assert!(out.contains("\\u{1b}]0;retitled"), "{out}");
}

#[test]
fn a_byte_order_mark_does_not_shift_columns() {
    let o = run(&["lint", p(&data("hostile/bom_column.tank"))]);
    assert_eq!(code(&o), BAD_INPUT);
    // "resistor r1 a gnd " is 18 characters: the value starts in column 19
    assert!(
        stderr(&o).contains("bom_column.tank:1:19"),
        "{}",
        stderr(&o)
    );
}

#[test]
fn a_megabyte_of_nul_bytes_is_one_bounded_diagnostic() {
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("nul.tank");
    fs::write(&f, vec![0u8; 1 << 20]).unwrap();
    let t = Instant::now();
    let o = run(&["lint", p(&f)]);
    assert_eq!(code(&o), BAD_INPUT);
    // measured 0.01 s and 9 MB peak (debug build); 20 s only guards a hang
    assert!(t.elapsed() < Duration::from_secs(20));
    let e = stderr(&o);
    assert!(e.len() < 4096, "{} bytes of diagnostics", e.len());
    assert!(!e.contains('\u{0}'), "raw NUL printed");
}

#[test]
fn twenty_thousand_errors_are_capped_and_reported_fast() {
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("many.tank");
    let text: String = (0..20_000)
        .map(|i| format!("resistor r{i} a gnd 5F\n"))
        .collect();
    fs::write(&f, text).unwrap();
    let t = Instant::now();
    let o = run(&["lint", p(&f)]);
    assert_eq!(code(&o), BAD_INPUT);
    // measured 0.08 s (debug build) where it took 74 s before
    assert!(t.elapsed() < Duration::from_secs(20));
    let e = stderr(&o);
    assert!(
        e.contains("more (only the first 100 are shown)"),
        "{}",
        &e[e.len().saturating_sub(300)..]
    );
}

#[test]
fn a_netlist_too_large_for_memory_is_refused_by_lint_at_its_place() {
    // 60 000 one-line parameters: over the statement limit (50 000, docs/security.md);
    // the divider file has 5 lines, so statement 50 001 is on line 50 001
    let text: String = (0..60_000).map(|i| format!("let p{i} = 1\n")).collect();
    let (_d, f) = stage_with(&text);
    let t = Instant::now();
    let e = lint_refuses(
        &f,
        &[
            "stage.tank:50001:1",
            "more than 50000 statements in one stage file",
        ],
    );
    assert_eq!(e.matches("statements in one stage file").count(), 1, "{e}");
    // 200 000 parameters of 1.3 KB each, spread over includes, were all
    // accepted (a 58 MB file took 6.5 GB and 60 s); the term limit (500 000
    // in all expressions together) stops reading inside the first include
    let dir = tempfile::tempdir().unwrap();
    let term = format!("({})", vec!["1"; 640].join("+"));
    for k in 0..3 {
        let text: String = (0..4000)
            .map(|i| format!("let q{k}_{i} = {term}\n"))
            .collect();
        fs::write(dir.path().join(format!("part{k}.tank")), text).unwrap();
    }
    let base = fs::read_to_string(data("hostile/divider.tank")).unwrap();
    let top = dir.path().join("stage.tank");
    let incs: String = (0..3)
        .map(|k| format!("include \"part{k}.tank\"\n"))
        .collect();
    fs::write(&top, format!("{base}{incs}")).unwrap();
    let e = lint_refuses(
        &top,
        &["part0.tank:", "more than 500000 terms in its expressions"],
    );
    assert!(
        !e.contains("part1.tank"),
        "reading went on past the limit:\n{e}"
    );
    // two includes of 5 MB of comments each: over the 8 MiB read for one stage file
    let dir = tempfile::tempdir().unwrap();
    let line = format!("# {}\n", "x".repeat(1000));
    let text = line.repeat(5000);
    for k in 0..2 {
        fs::write(dir.path().join(format!("part{k}.tank")), &text).unwrap();
    }
    let top = dir.path().join("stage.tank");
    fs::write(
        &top,
        format!("{base}include \"part0.tank\"\ninclude \"part1.tank\"\n"),
    )
    .unwrap();
    lint_refuses(
        &top,
        &[
            "stage.tank:7:1",
            "cannot include 'part1.tank'",
            "more than 8388608",
        ],
    );
    // measured 1.5 s for the three together (debug build); 60 s only guards a hang
    assert!(t.elapsed() < Duration::from_secs(60));
}

#[test]
fn threads_far_beyond_the_cores_are_refused() {
    let (_d, stage) = stage_copy();
    let o = run(&["study", p(&stage), "--threads", "10000"]);
    assert_eq!(code(&o), BAD_INPUT, "{}", stderr(&o));
    assert!(stderr(&o).contains("--threads"), "{}", stderr(&o));
}

/// `check` on a stage whose `require efficiency` must fail with the cause named.
fn efficiency_fails(file: &str, cause: &str) {
    let o = run(&["check", p(&data(file))]);
    let out = stdout(&o);
    assert_eq!(code(&o), 1, "{out}{}", stderr(&o));
    assert!(out.contains("FAIL: 0 of 1"), "{out}");
    assert!(out.contains(cause), "{out}");
}

#[test]
fn efficiency_fed_through_from_the_drive_fails() {
    // the load takes 10 mW from the drive against 1 mW from the supply:
    // today's code passed this at 1000 %
    efficiency_fails("hostile/efficiency_feedthrough.tank", "feeds through");
}

#[test]
fn efficiency_with_an_idle_supply_fails() {
    // 1 pW of supply power, under the 1 uW floor (passed at 1e12 % before)
    efficiency_fails("hostile/efficiency_idle_supply.tank", "below the floor");
}

#[test]
fn two_stage_files_of_the_same_name_keep_their_own_plots() {
    let dir = tempfile::tempdir().unwrap();
    let (a, b) = (dir.path().join("a"), dir.path().join("b"));
    let plots = dir.path().join("plots");
    for d in [&a, &b, &plots] {
        fs::create_dir(d).unwrap();
    }
    fs::copy(data("check/pass.tank"), a.join("stage.tank")).unwrap();
    fs::copy(data("check/pass.tank"), b.join("stage.tank")).unwrap();
    let o = run(&[
        "check",
        p(&a.join("stage.tank")),
        p(&b.join("stage.tank")),
        "--plots",
        p(&plots),
    ]);
    assert_eq!(code(&o), 0, "{}", stderr(&o));
    let subs = names(&plots);
    assert_eq!(subs.len(), 2, "{subs:?}");
    assert!(subs.iter().all(|s| s.starts_with("stage-")), "{subs:?}");
}

/// `tune` refuses, before any solve, a `--param` range that is reversed or
/// of zero width, one that names nothing in the file, and a `--search-drive`
/// that is not a fraction in (0, 1] (NaN included): each is bad input
/// (exit 2) with the option named, never a solver failure.
#[test]
fn tune_refuses_unusable_ranges_and_search_drive() {
    let (_d, stage) = stage_copy();
    let cases: &[(&[&str], &str)] = &[
        (&["--param", "r1=100Ohm:10Ohm"], "--param r1"),
        (&["--param", "r1=50Ohm:50Ohm"], "--param r1"),
        (&["--param", "nosuch=1:2"], "no parameter or element"),
        (
            &["--param", "r1=10Ohm:100Ohm", "--search-drive", "NaN"],
            "--search-drive",
        ),
        (
            &["--param", "r1=10Ohm:100Ohm", "--search-drive", "0"],
            "--search-drive",
        ),
        (
            &["--param", "r1=10Ohm:100Ohm", "--search-drive", "1.5"],
            "--search-drive",
        ),
    ];
    for (extra, says) in cases {
        let mut args = vec!["tune", p(&stage)];
        args.extend_from_slice(extra);
        let o = run(&args);
        assert_eq!(code(&o), BAD_INPUT, "{extra:?}: {}", stderr(&o));
        assert!(stderr(&o).contains(says), "{extra:?}: {}", stderr(&o));
    }
}

/// The divider stage with `extra` appended, written to a fresh directory as
/// `stage.tank`; returns (directory guard, stage path).
fn stage_with(extra: &str) -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let stage = dir.path().join("stage.tank");
    let base = fs::read_to_string(data("hostile/divider.tank")).unwrap();
    fs::write(&stage, format!("{base}{extra}")).unwrap();
    (dir, stage)
}

/// `lint` on `stage` must exit 2 and say each of `says` on stderr.
fn lint_refuses(stage: &Path, says: &[&str]) -> String {
    let o = run(&["lint", p(stage)]);
    let e = stderr(&o);
    assert_eq!(code(&o), BAD_INPUT, "{e}");
    for s in says {
        assert!(e.contains(s), "missing {s:?} in\n{e}");
    }
    e
}

#[test]
fn an_expression_too_deep_or_too_long_is_refused_by_lint() {
    // 100 000 brackets overflowed the stack; 200 000 terms built a tree as
    // deep as it is long (the divider file has 5 lines, so the let is line 6)
    let deep = format!("let x = {}1{}\n", "(".repeat(100_000), ")".repeat(100_000));
    let (_d, f) = stage_with(&deep);
    lint_refuses(&f, &["stage.tank:6:", "nested more than 128 levels"]);
    let long = format!("let x = ({})\n", vec!["1"; 200_000].join("+"));
    let (_d, f) = stage_with(&long);
    // the 1001st '+' is at column 9 + 2·1000 = 2009 ("let x = (" is 9 characters)
    lint_refuses(&f, &["stage.tank:6:2011", "longer than 1000 terms"]);
}

#[test]
fn a_long_parameter_chain_is_refused_once_without_recursion() {
    // p1 = p0 + 1, …: evaluated recursively, 100 000 of these overflowed the
    // stack; 40 000 stay under the statement limit (50 000)
    let mut text = String::from("let p0 = 1\n");
    for i in 1..40_000 {
        text.push_str(&format!("let p{i} = (p{} + 1)\n", i - 1));
    }
    let (_d, f) = stage_with(&text);
    let e = lint_refuses(
        &f,
        &["parameter 'p1000' is defined through a chain of more than 1000"],
    );
    // p1000 is on line 6 + 1000; the parameters after it fail silently
    assert!(e.contains("stage.tank:1006:5"), "{e}");
    assert!(e.contains("1 error(s)"), "{e}");
}

#[test]
fn a_parameter_cycle_is_named_once_and_shortened() {
    let (_d, f) = stage_with("let a = b\nlet b = c\nlet c = a\nlet d = (a + 1)\n");
    let e = lint_refuses(&f, &["stage.tank:6:5", "parameter cycle: a -> b -> c -> a"]);
    assert_eq!(e.matches("parameter cycle").count(), 1, "{e}");
    let mut text = String::new();
    // 40 000 stay under the statement limit (50 000)
    for i in 0..40_000 {
        text.push_str(&format!("let q{i} = (q{} + 1)\n", (i + 1) % 40_000));
    }
    let (_d, f) = stage_with(&text);
    let e = lint_refuses(
        &f,
        &["q0 -> q1 -> q2 -> (39994 more) -> q39997 -> q39998 -> q39999 -> q0"],
    );
    assert!(e.len() < 4096, "{} bytes of diagnostics", e.len());
}

#[test]
fn counts_a_solver_cannot_use_are_refused_by_lint_at_their_place() {
    let (_d, f) = stage_with(
        "analyze steady freq=7MHz harmonics=1e9\n\
         analyze steady freq=7MHz steps=16777216\n\
         analyze ac from=1MHz to=2MHz points=1e7\n\
         analyze transient stop=1s step=1ns\n",
    );
    lint_refuses(
        &f,
        &[
            "stage.tank:6:36",
            "harmonics: 1000000000 asked, at most 256 allowed",
            "stage.tank:7:32",
            "steps per period: 16777216 asked, at most 65536 allowed",
            "stage.tank:8:37",
            "AC points: 10000000 asked, at most 100000 allowed",
            "stage.tank:9:32",
            "transient output steps (stop / step): 1000000000 asked",
        ],
    );
}

#[test]
fn a_circuit_too_large_for_memory_is_refused_by_lint() {
    // 40 diodes in a chain, balance at 256 harmonics: the dense Jacobian of
    // 120 port unknowns × 513 real coefficients needs ~60 GB (estimate in
    // tankwave_circuit::bounds); at the default 32 harmonics it fits
    let mut text = String::from("part dx diode {\n  junction { sat_current=2pA ideality=1 }\n}\n");
    for i in 0..40 {
        text.push_str(&format!("diode d{i} n{i} n{} part=dx\n", i + 1));
    }
    text.push_str("resistor rs b n0 50Ohm\nresistor rl n40 gnd 50Ohm\n");
    let (_d, f) = stage_with(&format!("{text}analyze steady freq=7MHz harmonics=256\n"));
    let line = 6 + 3 + 40 + 2;
    lint_refuses(
        &f,
        &[
            &format!("stage.tank:{line}:9"),
            "of memory for",
            "at most 2.15 GB",
        ],
    );
    let (_d, f) = stage_with(&format!("{text}analyze steady freq=7MHz\n"));
    let o = run(&["lint", p(&f)]);
    assert_eq!(code(&o), 0, "{}", stderr(&o));
}

#[test]
fn set_values_are_unit_checked_like_the_files_own() {
    let (_d, f) = stage_with("let rl = 50Ohm\nlet k = 2\n");
    for (set, says) in [
        (
            "rl=5nF",
            "override of 'rl' is in F, but the stage file gives 'rl' in Ohm",
        ),
        (
            "k=5V",
            "override of 'k' is in V, but the stage file gives 'k' as a plain number",
        ),
    ] {
        let o = run(&["lint", p(&f), "--set", set]);
        assert_eq!(code(&o), BAD_INPUT, "{set}");
        assert!(stderr(&o).contains(says), "{set}: {}", stderr(&o));
    }
    for set in ["rl=5kOhm", "rl=75"] {
        let o = run(&["lint", p(&f), "--set", set]);
        assert_eq!(code(&o), 0, "{set}: {}", stderr(&o));
    }
}

#[test]
fn huge_numbers_in_record_headers_are_refused_promptly() {
    let (dir, f) = stage_with("let r = 50Ohm\nvary r [50Ohm, 100Ohm]\n");
    let rec = dir.path().join("rec.jsonl");
    let o = run(&["study", p(&f), "--out", p(&rec), "--no-caution"]);
    assert!(rec.exists(), "{}", stderr(&o));
    let text = fs::read_to_string(&rec).unwrap();
    for (from, to, says) in [
        (
            "\"variants\":2",
            "\"variants\":1000000000000000000",
            "header variants is 1000000000000000000, expected 2",
        ),
        ("\"variants\":2", "\"variants\":1e18", "not a study header"),
        (
            "\"chain\":4",
            "\"chain\":1000000000000000000",
            "header chain is 1000000000000000000",
        ),
    ] {
        assert!(text.contains(from), "{text}");
        let bad = dir.path().join("bad.jsonl");
        fs::write(&bad, text.replacen(from, to, 1)).unwrap();
        let t = Instant::now();
        let o = run(&["study", p(&f), "--out", p(&bad), "--resume", "--no-caution"]);
        assert_eq!(code(&o), BAD_INPUT, "{to}: {}", stderr(&o));
        assert!(stderr(&o).contains(says), "{to}: {}", stderr(&o));
        // measured 0.01 s; 20 s only guards a hang
        assert!(t.elapsed() < Duration::from_secs(20));
    }
}

/// The 13.56 MHz demo with a 1 kΩ load: shooting converges to an orbit that
/// is not stable (method=settle never settles), and the stage was reported
/// at 5.23 W. Its largest Floquet multiplier (1.07+0.33j, |μ| 1.12) refuses
/// it: a solver failure (exit 3) with the reason, no figure printed.
#[test]
fn an_unstable_orbit_is_a_solver_failure_not_a_figure() {
    let o = run(&[
        "run",
        p(&data("hostile/classc_1k_load.tank")),
        "--no-caution",
    ]);
    let (out, err) = (stdout(&o), stderr(&o));
    assert_eq!(code(&o), 3, "{out}{err}");
    assert!(err.contains("Floquet multiplier"), "{err}");
    assert!(err.contains("is not stable"), "{err}");
    assert!(!out.contains("output power"), "{out}");
    // the same file with the 50 Ω load it was designed for is accepted and
    // shows its largest multiplier
    let models = crate::harness::root().join("netlists/models");
    let good = fs::read_to_string(data("hostile/classc_1k_load.tank"))
        .unwrap()
        .replace("1kOhm", "50Ohm")
        .replace("../../../netlists/models", p(&models));
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("classc_50_load.tank");
    fs::write(&f, good).unwrap();
    let o = run(&["run", p(&f), "--no-caution", "--include-root", p(&models)]);
    assert_eq!(code(&o), 0, "{}", stderr(&o));
    assert!(
        stdout(&o).contains("largest Floquet multiplier |μ| 0."),
        "{}",
        stdout(&o)
    );
}

#[test]
fn a_mask_error_is_reported_once() {
    // the mask's rule is wrong and a requirement names the mask: one error
    // (the requirement does not report the broken mask again)
    let (_d, f) =
        stage_with("mask m1 {\n  harmonics from 2 below 40V\n}\nrequire harmonics <= m1\n");
    let e = lint_refuses(
        &f,
        &["stage.tank:7:26", "below needs dB, got V", "1 error(s)"],
    );
    assert_eq!(e.matches("below needs dB").count(), 1, "{e}");
}

#[test]
fn check_json_and_junit_carry_the_diagnostics() {
    let (dir, f) = stage_with("resistor r9 b gnd 5F\n");
    let o = run(&["check", p(&f), "--format", "json", "--no-caution"]);
    assert_eq!(code(&o), BAD_INPUT);
    let doc: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    let d = &doc["files"][0]["diagnostics"][0];
    assert_eq!(d["code"], "unit-mismatch", "{doc}");
    assert_eq!(
        (d["line"].as_u64(), d["column"].as_u64()),
        (Some(6), Some(19)),
        "{doc}"
    );
    assert_eq!(d["severity"], "error");
    let junit = dir.path().join("junit.xml");
    let o = run(&["check", p(&f), "--junit", p(&junit), "--no-caution"]);
    assert_eq!(code(&o), BAD_INPUT);
    let xml = fs::read_to_string(&junit).unwrap();
    assert!(
        xml.contains(":6:19: error[unit-mismatch]: resistor value needs Ohm, got F"),
        "{xml}"
    );
}

#[test]
fn a_lone_carriage_return_ends_a_line() {
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("cr.tank");
    fs::write(
        &f,
        "voltage v1 a gnd dc=1V\rresistor r1 a gnd 5F\rresistor r2 a gnd 50Ohm\r",
    )
    .unwrap();
    let o = run(&["lint", p(&f)]);
    assert_eq!(code(&o), BAD_INPUT);
    // the bad value is on line 2, column 19, not "line 1, column 42"
    assert!(stderr(&o).contains("cr.tank:2:19"), "{}", stderr(&o));
    assert!(stderr(&o).contains("1 error(s)"), "{}", stderr(&o));
}

#[test]
fn a_tolerance_without_montecarlo_is_warned() {
    let (_d, f) = stage_with("tolerance r1 5%\n");
    let o = run(&["lint", p(&f)]);
    assert_eq!(code(&o), 0, "{}", stderr(&o));
    let all = format!("{}{}", stdout(&o), stderr(&o));
    assert!(all.contains("tolerance-unused"), "{all}");
    assert!(all.contains("stage.tank:6:1"), "{all}");
    let (_d, f) = stage_with("tolerance r1 5%\nmontecarlo runs=2\n");
    let o = run(&["lint", p(&f)]);
    assert!(!format!("{}{}", stdout(&o), stderr(&o)).contains("tolerance-unused"));
}

#[test]
fn a_record_repeated_in_a_records_file_is_counted_once_on_resume() {
    let (dir, f) = stage_with("let r = 50Ohm\nvary r [50Ohm, 100Ohm]\n");
    let rec = dir.path().join("rec.jsonl");
    run(&["study", p(&f), "--out", p(&rec), "--no-caution"]);
    let text = fs::read_to_string(&rec).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines.len(), 3, "{text}");
    // header, variant 0 twice, variant 1 missing
    fs::write(&rec, format!("{}\n{}\n{}\n", lines[0], lines[1], lines[1])).unwrap();
    let o = run(&["study", p(&f), "--out", p(&rec), "--resume", "--no-caution"]);
    let all = format!("{}{}", stdout(&o), stderr(&o));
    assert!(
        all.contains("1 variants run") && all.contains("1 already recorded"),
        "{all}"
    );
    // the summary covers the study's 2 variants, not 3 records
    assert!(all.contains("\n2 variants,"), "{all}");
}
