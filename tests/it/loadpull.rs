//! `analyze loadpull` through `tankwave run`: the per-load table and the
//! optimum, the JSON document, the Smith chart with contours, the HTML
//! report, and a region outside the unit circle refused with its place.

use crate::harness::{code, data, p, run, stderr, stdout};

/// The ideal device of docs/check-values.md, "Load-pull": P_opt = ½ I1²
/// R_opt = 6.25 W at Z = R_opt = 200 Ω = Z0 (Γ = 0), to the 1.5 % of
/// crates/stage/tests/loadpull.rs.
#[test]
fn load_pull_reaches_the_table_json_chart_and_report() {
    let f = data("loadpull/ideal-class-a.tank");
    let dir = tempfile::tempdir().unwrap();
    let report = dir.path().join("r.html");
    let plots = dir.path().join("plots");
    std::fs::create_dir(&plots).unwrap();
    let out = run(&["run", p(&f), "--report", p(&report), "--plots", p(&plots)]);
    let text = stdout(&out);
    assert_eq!(code(&out), 0, "{text}{}", stderr(&out));
    assert!(text.contains("Load-pull of q1 at 1.00 MHz"), "{text}");
    assert!(text.contains("most output power: "), "{text}");
    assert!(text.contains("all 13 loads solved"), "{text}");
    assert!(text.contains("Caution:"), "the safety note is printed");

    let svg = std::fs::read_to_string(plots.join("smith-loadpull.svg")).unwrap();
    assert!(
        svg.matches("class=\"contour\"").count() >= 4,
        "contours drawn"
    );
    assert!(svg.contains("class=\"optimum\""));
    let html = std::fs::read_to_string(&report).unwrap();
    assert!(html.contains("Load-pull of q1"));
    roxmltree::Document::parse(html.trim_start_matches("<!DOCTYPE html>\n")).expect("well-formed");

    let out = run(&["run", p(&f), "--format", "json"]);
    let doc: serde_json::Value = serde_json::from_str(&stdout(&out)).expect("JSON");
    let lp = &doc["load_pull"][0];
    assert_eq!(lp["transistor"], "q1");
    assert_eq!(lp["reference_ohm"], 200.0);
    assert_eq!(lp["unsolved"], 0);
    assert_eq!(
        lp["loads"].as_array().expect("loads").len(),
        13,
        "the 5×5 grid cut to the disc"
    );
    let best = &lp["best_power"];
    let p_opt = 6.25;
    let v = best["value"].as_f64().unwrap();
    assert!((v / p_opt - 1.0).abs() <= 0.015, "{best}");
    let g = (best["gamma"]["re"].as_f64().unwrap()).hypot(best["gamma"]["im"].as_f64().unwrap());
    assert!(g <= 0.3, "within one grid step of Γ = 0: {best}");
}

/// |center| + radius beyond 0.98: exit 2 with file:line:column.
#[test]
fn a_region_outside_the_chart_is_refused_at_its_place() {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(data("loadpull/ideal-class-a.tank"))
        .unwrap()
        .replace("radius=0.6 points=5", "center=[0.5, 0] radius=0.6 points=5");
    let f = dir.path().join("out.tank");
    std::fs::write(&f, &text).unwrap();
    let out = run(&["run", p(&f)]);
    assert_eq!(code(&out), 2);
    let err = stderr(&out);
    let line = text
        .lines()
        .position(|l| l.starts_with("analyze loadpull"))
        .unwrap()
        + 1;
    assert!(err.contains(&format!("out.tank:{line}:")), "{err}");
    assert!(err.contains("|Γ| = 1.1"), "{err}");
}
