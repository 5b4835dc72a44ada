//! A measured network (Touchstone file) through `tankwave run`: the fitted
//! time-domain model's figures in the text and the HTML report.

use crate::harness::{code, p, root, run, stderr, stdout};

/// A measured network fitted for the time domain shows its fit in the HTML
/// report as in the text (docs/analyses.md, "The fitted rational model"):
/// the antenna demo with a short transient added, so that elaboration fits
/// the antenna's Touchstone data.
#[test]
fn a_fitted_measured_network_is_in_the_html_report() {
    let dir = tempfile::tempdir().unwrap();
    for sub in ["models", "measured"] {
        std::fs::create_dir_all(dir.path().join(sub)).unwrap();
    }
    for f in [
        "models/tw-hf25.tank",
        "models/tw-drv.tank",
        "measured/tw-antenna.s1p",
    ] {
        std::fs::copy(root().join("netlists").join(f), dir.path().join(f)).unwrap();
    }
    let stage = dir.path().join("measured/antenna-fit.tank");
    let text = std::fs::read_to_string(root().join("netlists/measured/antenna-7m1.tank"))
        .unwrap()
        .replace(
            "analyze ac from=1MHz to=40MHz points=200 scale=log",
            "analyze transient stop=1us step=10ns",
        );
    std::fs::write(&stage, text).unwrap();
    let html = dir.path().join("r.html");
    let root_dir = dir.path().to_str().unwrap();
    let out = run(&[
        "run",
        p(&stage),
        "--include-root",
        root_dir,
        "--report",
        p(&html),
    ]);
    let text = stdout(&out);
    assert!(
        text.contains("Measured networks in the time domain"),
        "{text}{}",
        stderr(&out)
    );
    let page = std::fs::read_to_string(&html).unwrap();
    assert!(page.contains("Measured networks in the time domain"));
    assert!(page.contains("worst error"));
}

/// Write `stage` (a stage file's text) and the Touchstone files `files`
/// (name, text) into a fresh directory and lint the stage: (exit code,
/// stderr).
fn lint_with(stage: &str, files: &[(&str, &str)]) -> (i32, String) {
    let dir = tempfile::tempdir().unwrap();
    for (name, text) in files {
        std::fs::write(dir.path().join(name), text).unwrap();
    }
    let path = dir.path().join("short.tank");
    std::fs::write(&path, stage).unwrap();
    let out = run(&["lint", p(&path)]);
    (code(&out), stderr(&out))
}

/// `outside=short` with `outside_r=` names two out-of-band rules: an input
/// error (exit 2) at the second one's file:line:column.
#[test]
fn outside_short_with_outside_r_is_an_input_error() {
    let choke =
        std::fs::read_to_string(root().join("tests/reference/touchstone/rls1_ri_v1.s1p")).unwrap();
    let stage = "voltage vs in gnd dc=1V internal=10Ohm\n\
                 measured ant in gnd \"rls1_ri_v1.s1p\" outside=short outside_r=5Ohm\n\
                 input vs\n";
    let (code, err) = lint_with(stage, &[("rls1_ri_v1.s1p", &choke)]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("short.tank:2:52"), "{err}");
    assert!(err.contains("not both"), "{err}");
}

/// With `outside=short` the network is held as its impedance matrix, so a
/// point that is an open circuit (S = +1 against the reference: Z = R(1 +
/// S)/(1 − S) has no value; definition of S, common practice) is an input
/// error naming that point (exit 2, at the file's name).
#[test]
fn an_open_point_in_band_with_outside_short_is_an_input_error() {
    let open =
        "! hand-written: an open circuit at 2 MHz\n# MHz S RI R 50\n1 0.2 0\n2 1 0\n3 0.2 0\n";
    let stage = "voltage vs in gnd dc=1V internal=10Ohm\n\
                 measured ant in gnd \"open.s1p\" outside=short\n\
                 input vs\n";
    let (code, err) = lint_with(stage, &[("open.s1p", open)]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("short.tank:2:21"), "{err}");
    assert!(err.contains("2.00000 MHz has no impedance"), "{err}");
    // The same file with outside=open (the admittance form) is accepted:
    // an open has an admittance (zero).
    let (code, err) = lint_with(
        &stage.replace("outside=short", "outside=open"),
        &[("open.s1p", open)],
    );
    assert_eq!(code, 0, "{err}");
}
