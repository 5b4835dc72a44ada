//! The crate graph and the syntax-tree boundary, checked from `cargo
//! metadata` and the sources. A failure of the dependency tool is a test
//! failure, never a silent pass.
//!
//! Invariants (docs/architecture.md):
//! - each workspace crate depends (normal dependencies) only on crates that
//!   come before it in [`ORDER`];
//! - only the elaboration layer (`tankwave-circuit`) and the parser itself
//!   read the syntax tree: no later library crate depends on
//!   `tankwave-netlist` or names it in its sources;
//! - library crates never print (only the binary writes to the terminal).

use std::path::Path;
use std::process::Command;

/// The one-way order of the library crates: each may depend only on crates
/// listed before it.
const ORDER: &[&str] = &[
    "tankwave-netlist",
    "tankwave-circuit",
    "tankwave-devices",
    "tankwave-solve",
    "tankwave-measure",
    "tankwave-study",
    "tankwave-stage",
    "tankwave-report",
    "tankwave-design",
    "tankwave-fit",
    "tankwave-editor",
];

/// Crates allowed to read the syntax tree: the parser and elaboration.
const SYNTAX_READERS: &[&str] = &["tankwave-netlist", "tankwave-circuit"];

fn metadata() -> serde_json::Value {
    let root = env!("CARGO_MANIFEST_DIR");
    let cargo = std::env::var("CARGO").unwrap_or_else(|_| "cargo".into());
    let out = Command::new(cargo)
        .args([
            "metadata",
            "--format-version",
            "1",
            "--no-deps",
            "--offline",
        ])
        .current_dir(root)
        .output()
        .expect("cargo metadata could not be started");
    assert!(
        out.status.success(),
        "cargo metadata failed: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).expect("cargo metadata printed invalid JSON")
}

/// (crate, its normal dependencies on workspace crates, its src directory).
fn workspace_crates() -> Vec<(String, Vec<String>, std::path::PathBuf)> {
    let m = metadata();
    let pkgs = m["packages"].as_array().expect("metadata has packages");
    let mut out = Vec::new();
    for p in pkgs {
        let name = p["name"].as_str().expect("package name").to_string();
        let deps = p["dependencies"]
            .as_array()
            .expect("package dependencies")
            .iter()
            .filter(|d| d["kind"].is_null())
            .filter_map(|d| d["name"].as_str())
            .filter(|n| n.starts_with("tankwave-"))
            .map(str::to_string)
            .collect();
        let manifest = Path::new(p["manifest_path"].as_str().expect("manifest path"));
        out.push((name, deps, manifest.parent().unwrap().join("src")));
    }
    out
}

fn rust_files(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    for e in std::fs::read_dir(dir).expect("readable source directory") {
        let p = e.expect("directory entry").path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

#[test]
fn every_library_crate_is_in_the_order_and_depends_only_on_earlier_ones() {
    let crates = workspace_crates();
    let libs: Vec<_> = crates.iter().filter(|(n, _, _)| n != "tankwave").collect();
    assert_eq!(
        libs.len(),
        ORDER.len(),
        "a crate is missing from ORDER: {libs:?}"
    );
    for (name, deps, _) in libs {
        let rank = ORDER
            .iter()
            .position(|o| o == name)
            .unwrap_or_else(|| panic!("{name} is not in the layering order"));
        for d in deps {
            let dr = ORDER
                .iter()
                .position(|o| o == d)
                .unwrap_or_else(|| panic!("{name} depends on {d}, which is not a library crate"));
            assert!(
                dr < rank,
                "layering: {name} depends on {d}, which comes after it"
            );
        }
    }
}

#[test]
fn nothing_after_elaboration_reads_the_syntax_tree() {
    for (name, deps, src) in workspace_crates() {
        if name == "tankwave" || SYNTAX_READERS.contains(&name.as_str()) {
            continue;
        }
        assert!(
            !deps.iter().any(|d| d == "tankwave-netlist"),
            "{name} depends on tankwave-netlist: only elaboration may read the syntax tree"
        );
        let mut files = Vec::new();
        rust_files(&src, &mut files);
        assert!(
            !files.is_empty(),
            "{name}: no sources under {}",
            src.display()
        );
        for f in files {
            let text = std::fs::read_to_string(&f).expect("readable source");
            assert!(
                !text.contains("tankwave_netlist") && !text.contains("Parsed"),
                "{} names the syntax tree (tankwave_netlist or Parsed)",
                f.display()
            );
        }
    }
}

#[test]
fn library_crates_never_print() {
    for (name, _, src) in workspace_crates() {
        if name == "tankwave" {
            continue;
        }
        let mut files = Vec::new();
        rust_files(&src, &mut files);
        for f in files {
            let text = std::fs::read_to_string(&f).expect("readable source");
            for (i, line) in text.lines().enumerate() {
                let code = line.split("//").next().unwrap_or("");
                for mac in ["println!", "eprintln!", "print!", "eprint!", "dbg!"] {
                    let hit = code
                        .match_indices(mac)
                        .any(|(at, _)| at == 0 || !code.as_bytes()[at - 1].is_ascii_alphanumeric());
                    assert!(
                        !hit,
                        "{}:{}: a library crate prints ({mac})",
                        f.display(),
                        i + 1
                    );
                }
            }
        }
    }
}
