//! A measured network (Touchstone file) through `tankwave run`: the fitted
//! time-domain model's figures in the text and the HTML report.

use crate::harness::{p, root, run, stderr, stdout};

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
