//! `tankwave fit` end to end: the bundled generic models are what the
//! command makes of the invented curves beside them, the part it writes
//! loads in a stage, and bad input gives file:line, exit 2 and no output.

use crate::harness::{bin, code, p, root, stderr};
use std::path::Path;
use std::process::Output;

const KINDS: [(&str, &str); 6] = [
    ("--gain", "gain"),
    ("--vbe", "vbe"),
    ("--cap-bc", "cap-bc"),
    ("--cap-be", "cap-be"),
    ("--ft", "ft"),
    ("--vce-sat", "vce-sat"),
];

/// Run `fit` from the workspace root with relative curve paths.
fn fit_dir(name: &str, dir: &str, out: &Path, extra: &[&str]) -> Output {
    let mut c = bin();
    c.current_dir(root()).arg("fit").arg(name);
    for (flag, kind) in KINDS {
        c.arg(flag).arg(format!("{dir}/{kind}.csv"));
    }
    c.arg("--out").arg(out).args(extra);
    c.stdin(std::process::Stdio::null())
        .output()
        .expect("binary runs")
}

#[test]
fn bundled_models_are_what_the_command_makes_of_their_curves() {
    let tmp = tempfile::tempdir().unwrap();
    for d in ["tw-gen1", "tw-gen20", "tw-gen80"] {
        let dir = format!("netlists/models/fitted/{d}");
        let out = tmp.path().join(format!("{d}.tank"));
        let o = fit_dir(&d.replace('-', "_"), &dir, &out, &[]);
        assert_eq!(code(&o), 0, "{}", stderr(&o));
        let made = std::fs::read_to_string(&out).unwrap();
        let kept = std::fs::read_to_string(root().join(&dir).join(format!("{d}.tank"))).unwrap();
        assert_eq!(
            made, kept,
            "{dir}/{d}.tank is not what `tankwave fit` makes of its curves now"
        );
        assert!(kept.contains("fitted by `tankwave fit`"));
        // every curve followed to within a few percent (1 % scatter put in)
        let text = String::from_utf8_lossy(&o.stdout).into_owned();
        assert!(text.contains("Parameters fitted:"), "{text}");
    }
}

#[test]
fn a_fitted_part_loads_in_a_stage() {
    let tmp = tempfile::tempdir().unwrap();
    let part = tmp.path().join("dev.tank");
    let o = fit_dir("dev", "netlists/models/fitted/tw-gen20", &part, &[]);
    assert_eq!(code(&o), 0, "{}", stderr(&o));
    let stage = tmp.path().join("stage.tank");
    std::fs::write(
        &stage,
        "include \"dev.tank\"\nvoltage vcc c gnd dc=12V\nvoltage vb b gnd dc=0.7V\nbjt q1 c=c b=b e=gnd part=dev\nanalyze bias\n",
    )
    .unwrap();
    for cmd in ["lint", "run"] {
        let o = bin().arg(cmd).arg(&stage).output().unwrap();
        assert_eq!(
            code(&o),
            0,
            "{cmd}: {}\n{}",
            stderr(&o),
            String::from_utf8_lossy(&o.stdout)
        );
    }
}

/// Write `text` as a curve file and run `fit --gain` on it (plus the
/// vbe curve of a bundled model when `with_vbe`).
fn fit_one(flag: &str, text: &str) -> (Output, tempfile::TempDir) {
    let tmp = tempfile::tempdir().unwrap();
    let f = tmp.path().join("curve.csv");
    std::fs::write(&f, text).unwrap();
    let out = tmp.path().join("part.tank");
    let o = bin()
        .args(["fit", "dev", flag, p(&f), "--out", p(&out), "--plots"])
        .arg(tmp.path().join("plots"))
        .stdin(std::process::Stdio::null())
        .output()
        .unwrap();
    (o, tmp)
}

fn assert_refused(o: &Output, tmp: &Path, want: &str) {
    assert_eq!(code(o), 2, "{}", stderr(o));
    let e = stderr(o);
    assert!(e.contains(want), "{e}");
    assert!(!tmp.join("part.tank").exists(), "a part was written");
    assert!(!tmp.join("plots").exists(), "plots were written");
}

#[test]
fn bad_curve_files_name_file_and_line_and_write_nothing() {
    // missing column
    let (o, t) = fit_one(
        "--gain",
        "# c\nic[A],gain\n0.1,50\n0.2,55\n0.3,56\n0.4,50\n",
    );
    assert_refused(&o, t.path(), "curve.csv:2: the column 'vce' is missing");
    // wrong unit
    let (o, t) = fit_one("--ft", "ic[A],vce[V],ft[pF]\n0.1,5,1\n");
    assert_refused(
        &o,
        t.path(),
        "curve.csv:1: the column 'ft' has the unit 'pF'",
    );
    // too few points
    let (o, t) = fit_one("--cap-bc", "reverse[V],cap[pF]\n1,100\n2,80\n");
    assert_refused(&o, t.path(), "needs at least 4");
    // not a number, on its line
    let (o, t) = fit_one("--cap-bc", "reverse[V],cap[pF]\n1,100\n2,80\n\n4,oops\n");
    assert_refused(
        &o,
        t.path(),
        "curve.csv:5: 'oops' in the column 'cap' is not a number",
    );
    // a curve the model cannot follow: a junction capacitance that grows
    // with reverse voltage (the depletion form only falls)
    let (o, t) = fit_one(
        "--cap-bc",
        "reverse[V],cap[pF]\n1,10\n3,40\n10,160\n30,640\n",
    );
    assert_refused(&o, t.path(), "cannot be fitted");
    assert!(stderr(&o).contains("curve.csv:"), "{}", stderr(&o));
}

#[test]
fn outputs_never_replace_a_curve_and_an_existing_part_needs_replace() {
    let tmp = tempfile::tempdir().unwrap();
    let src = root().join("netlists/models/fitted/tw-gen1/cap-bc.csv");
    let curve = tmp.path().join("cap.csv");
    std::fs::copy(&src, &curve).unwrap();
    let before = std::fs::read(&curve).unwrap();
    // --out onto the curve file: refused, even with --replace
    let o = bin()
        .args([
            "fit",
            "dev",
            "--cap-bc",
            p(&curve),
            "--out",
            p(&curve),
            "--replace",
        ])
        .output()
        .unwrap();
    assert_eq!(code(&o), 2, "{}", stderr(&o));
    assert_eq!(std::fs::read(&curve).unwrap(), before);
    // an existing part: refused without --replace, replaced with it
    let out = tmp.path().join("dev.tank");
    std::fs::write(&out, "# mine\n").unwrap();
    let o = bin()
        .args(["fit", "dev", "--cap-bc", p(&curve), "--out", p(&out)])
        .output()
        .unwrap();
    assert_eq!(code(&o), 2, "{}", stderr(&o));
    assert!(stderr(&o).contains("--replace"), "{}", stderr(&o));
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "# mine\n");
    let o = bin()
        .args([
            "fit",
            "dev",
            "--cap-bc",
            p(&curve),
            "--out",
            p(&out),
            "--replace",
        ])
        .output()
        .unwrap();
    assert_eq!(code(&o), 0, "{}", stderr(&o));
    assert!(std::fs::read_to_string(&out)
        .unwrap()
        .contains("part dev npn {"));
    // a bad part name
    let o = bin()
        .args([
            "fit",
            "9dev",
            "--cap-bc",
            p(&curve),
            "--out",
            p(&tmp.path().join("n.tank")),
        ])
        .output()
        .unwrap();
    assert_eq!(code(&o), 2, "{}", stderr(&o));
}
