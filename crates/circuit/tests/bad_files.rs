//! Every file in tests/data/bad/ holds one mistake and records the diagnostic
//! it must produce on its first line: `# expect: CODE [FILE:]LINE:COLUMN`.
//! This test elaborates each one and checks that diagnostic is among the
//! errors, that every code is a documented one, and that nothing panics.

use std::path::{Path, PathBuf};
use tankwave_circuit::{elaborate, parse_file, Overrides};
use tankwave_netlist::diag::is_known_code;

fn bad_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../tests/data/bad")
}

struct Expect {
    code: String,
    file: Option<String>,
    line: u32,
    column: u32,
}

fn expectation(path: &Path) -> Expect {
    let bytes = std::fs::read(path).expect("read bad file");
    let first = bytes.split(|b| *b == b'\n').next().unwrap_or_default();
    let first = String::from_utf8_lossy(first);
    let rest = first.strip_prefix("# expect: ").unwrap_or_else(|| {
        panic!(
            "{}: first line must be '# expect: CODE LINE:COL'",
            path.display()
        )
    });
    let parts: Vec<&str> = rest.split_whitespace().collect();
    let (code, file, loc) = match parts.as_slice() {
        [c, f, l] => (c.to_string(), Some(f.to_string()), *l),
        [c, l] => (c.to_string(), None, *l),
        _ => panic!("{}: bad expect line", path.display()),
    };
    let (line, col) = loc
        .split_once(':')
        .unwrap_or_else(|| panic!("bad location {loc}"));
    Expect {
        code,
        file,
        line: line.parse().expect("line"),
        column: col.parse().expect("column"),
    }
}

#[test]
fn every_bad_file_reports_its_mistake() {
    let mut files: Vec<PathBuf> = std::fs::read_dir(bad_dir())
        .expect("tests/data/bad exists")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "tank"))
        .collect();
    files.sort();
    assert!(
        files.len() >= 30,
        "at least 30 bad files, found {}",
        files.len()
    );
    let mut codes = std::collections::BTreeSet::new();
    let mut failures = Vec::new();
    for f in &files {
        let exp = expectation(f);
        codes.insert(exp.code.clone());
        let parsed = parse_file(f);
        let diags = match elaborate(&parsed, &Overrides::default()) {
            Ok(_) => {
                failures.push(format!("{}: elaborated without errors", f.display()));
                continue;
            }
            Err(d) => d,
        };
        for d in &diags {
            assert!(
                is_known_code(d.code),
                "{}: undocumented code {}",
                f.display(),
                d.code
            );
            assert!(!d.message.is_empty());
        }
        let hit = diags.iter().any(|d| {
            d.is_error()
                && d.code == exp.code
                && d.line == exp.line
                && d.column == exp.column
                && exp
                    .file
                    .as_ref()
                    .is_none_or(|ef| d.file.replace('\\', "/").ends_with(ef.as_str()))
        });
        if !hit {
            let got: Vec<String> = diags.iter().map(|d| d.to_string()).collect();
            failures.push(format!(
                "{}: expected {} at {}:{}, got:\n  {}",
                f.display(),
                exp.code,
                exp.line,
                exp.column,
                got.join("\n  ")
            ));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
    assert!(
        codes.len() >= 30,
        "at least 30 distinct mistakes by code, found {}",
        codes.len()
    );
}

#[test]
fn included_file_errors_say_where_they_were_included() {
    let parsed = parse_file(bad_dir().join("include_error_in_part.tank"));
    let diags = elaborate(&parsed, &Overrides::default()).expect_err("has an error");
    let d = diags
        .iter()
        .find(|d| d.code == "unit-mismatch")
        .expect("unit mismatch in the part");
    assert!(d.file.ends_with("part_with_error.tank"));
    assert_eq!(d.included_from.len(), 1);
    let (f, l, c) = &d.included_from[0];
    assert!(f.ends_with("include_error_in_part.tank"));
    assert_eq!((*l, *c), (4, 1));
}

#[test]
fn suggestions_name_the_nearest_name() {
    let parsed = parse_file(bad_dir().join("near_name_output.tank"));
    let diags = elaborate(&parsed, &Overrides::default()).expect_err("has an error");
    let d = diags
        .iter()
        .find(|d| d.code == "unknown-element")
        .expect("unknown element");
    assert_eq!(d.help.as_deref(), Some("did you mean 'rload'?"));
    let parsed = parse_file(bad_dir().join("unknown_part_param.tank"));
    let diags = elaborate(&parsed, &Overrides::default()).expect_err("has an error");
    let d = diags
        .iter()
        .find(|d| d.code == "unknown-part-param")
        .expect("unknown param");
    assert_eq!(d.help.as_deref(), Some("did you mean 'beta_reverse'?"));
}

#[test]
fn param_cycle_names_the_cycle() {
    let parsed = parse_file(bad_dir().join("param_cycle.tank"));
    let diags = elaborate(&parsed, &Overrides::default()).expect_err("has an error");
    let d = diags
        .iter()
        .find(|d| d.code == "param-cycle")
        .expect("cycle");
    assert_eq!(d.message, "parameter cycle: a -> b -> a");
    assert_eq!(
        diags.iter().filter(|d| d.code == "param-cycle").count(),
        1,
        "reported once"
    );
}
