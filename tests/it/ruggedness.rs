//! `analyze ruggedness` through `tankwave run`: the per-load table, the
//! worst case of each requirement named by its load, the JSON document, the
//! HTML report and the exit code (1 when a requirement fails at any load).

use crate::harness::{code, data, p, run, stdout};

/// A 10 V source behind Z0 = 50 Ω delivers P_avs (1 − |Γ|²) to a load of
/// reflection Γ, P_avs = (10 V)²/(8 · 50 Ω) = 0.25 W (D. M. Pozar,
/// Microwave Engineering, 4th ed., §2.3; docs/check-values.md, "Mismatch").
/// The circuit is linear and harmonic balance solves it to its Newton
/// tolerance, 1e-6 relative.
#[test]
fn worst_case_names_its_load_and_fails_the_run() {
    let f = data("ruggedness/source-into-circles.tank");
    let out = run(&["run", p(&f)]);
    let text = stdout(&out);
    assert_eq!(code(&out), 1, "pout fails on the VSWR 3 circle:\n{text}");
    assert!(text.contains("Ruggedness: output load on circles of VSWR 1.5, 2, 3"));
    assert!(
        text.contains("Requirements at every load (worst case)"),
        "{text}"
    );
    let row = text
        .lines()
        .find(|l| l.starts_with("require pout >= 0.2W") && l.contains("VSWR 3 at"))
        .unwrap_or_else(|| panic!("worst-case row:\n{text}"));
    assert!(row.contains("187.5 mW") && row.ends_with("FAIL"), "{row}");
    assert!(text.contains("0 of 1 requirements hold at every load"));

    let out = run(&["run", p(&f), "--format", "json"]);
    let doc: serde_json::Value = serde_json::from_str(&stdout(&out)).expect("JSON");
    let sweep = &doc["ruggedness"][0];
    assert_eq!(sweep["reference_ohm"], 50.0);
    assert_eq!(sweep["unsolved"], 0);
    let loads = sweep["loads"].as_array().expect("loads");
    assert_eq!(loads.len(), 24, "3 circles × 8 phases, every load kept");
    for l in loads {
        let s = l["vswr"].as_f64().unwrap();
        let g = (s - 1.0) / (s + 1.0);
        let expect = 0.25 * (1.0 - g * g);
        let pout = l["pout_w"].as_f64().unwrap();
        assert!((pout - expect).abs() <= 1e-6 * expect, "{l}");
        // the source sees the load itself: its input VSWR is the circle's
        let vswr = l["input_vswr"].as_f64().unwrap();
        assert!((vswr - s).abs() <= 1e-6 * s, "{l}");
        // a linear circuit driven by a sine: every multiplier decays
        assert!(l["floquet_largest"].as_f64().unwrap() < 1.0);
    }
    let w = &sweep["worst"][0];
    assert_eq!(w["pass"], false);
    assert_eq!(w["at"]["vswr"], 3.0);
    assert!((w["verdict"]["value"].as_f64().unwrap() - 0.1875).abs() < 1e-6);
}

#[test]
fn circles_within_the_requirement_pass_and_reach_the_report() {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(data("ruggedness/source-into-circles.tank"))
        .unwrap()
        .replace("vswr=[1.5, 2, 3]", "vswr=[1.5, 2]");
    let f = dir.path().join("two.tank");
    std::fs::write(&f, text).unwrap();
    let report = dir.path().join("r.html");
    let plots = dir.path().join("plots");
    std::fs::create_dir(&plots).unwrap();
    let out = run(&["run", p(&f), "--report", p(&report), "--plots", p(&plots)]);
    assert_eq!(code(&out), 0, "{}", stdout(&out));
    let svg = std::fs::read_to_string(plots.join("smith-ruggedness.svg")).unwrap();
    // 2 circles × 8 phases, each load one marker on the chart
    assert_eq!(svg.matches("class=\"load\"").count(), 16);
    let html = std::fs::read_to_string(&report).unwrap();
    assert!(html.contains("id=\"load-sweeps\""));
    assert!(html.contains("tw-smith"), "the chart is in the report");
    assert!(html.contains("1 of 1 requirements hold at every load"));
    roxmltree::Document::parse(html.trim_start_matches("<!DOCTYPE html>\n")).expect("well-formed");
}
