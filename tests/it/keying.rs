//! `analyze keying` through `tankwave run` and `check`: the demo's table,
//! JSON, plots, HTML section and requirements; a mask the clicks break; the
//! long base leak that makes the quasi-static path wrong; input errors.

use crate::harness::{code, p, root, run, stderr, stdout};

/// A 10 V sine behind 50 Ω into a 50 Ω load, with its steady state: the
/// smallest stage a keying can key.
const DIVIDER: &str = "voltage vdrv src gnd wave=sine(amp=10V, freq=7MHz) internal=50Ohm\n\
    resistor rload src gnd 50Ohm\noutput rload\ninput vdrv\n\
    analyze steady freq=7MHz harmonics=4\n";

fn demo() -> std::path::PathBuf {
    root().join("netlists/keying/cw-7m1-keyed.tank")
}

#[test]
fn the_keyed_demo_reports_its_envelope_sidebands_and_requirements() {
    let f = demo();
    let dir = tempfile::tempdir().unwrap();
    let html = dir.path().join("r.html");
    let out = run(&[
        "run",
        p(&f),
        "--format",
        "json",
        "--plots",
        p(dir.path()),
        "--report",
        p(&html),
    ]);
    assert_eq!(code(&out), 0, "{}", stderr(&out));
    let doc: serde_json::Value = serde_json::from_str(&stdout(&out)).expect("JSON");
    let k = &doc["keying"][0];
    // 25 wpm of PARIS (50 units): 48 ms units, 20.83 baud; B·K with K = 5
    // (ITU Radio Regulations Appendix 1) is 104.2 Hz
    assert!((k["baud"].as_f64().unwrap() - 25.0 / 1.2).abs() < 1e-9);
    let dynamic = &k["envelope_following"];
    let bk = dynamic["necessary_bw_hz"].as_f64().unwrap();
    assert!((bk - 5.0 * 25.0 / 1.2).abs() < 1e-9, "{bk}");
    // key-down output is the steady state's (the AM–AM check in
    // crates/stage/tests/keying.rs holds it to 1e-4)
    let p1 = doc["steady"]["metrics"]["output"]["p1_w"].as_f64().unwrap();
    let kd = k["key_down_w"].as_f64().unwrap();
    assert!((kd - p1).abs() <= 1e-4 * p1, "{kd} vs {p1}");
    // the class-C stage sharpens the 5 ms raised-cosine edge of the drive
    // (its output against drive is steeper than linear): a shorter output rise
    let rise = dynamic["rise_s"].as_f64().unwrap();
    assert!(rise > 1e-3 && rise < 5e-3, "{rise}");
    // occupied bandwidth inside the spectrum shown and with its band
    let obw = dynamic["occupied_bw_hz"].as_f64().unwrap();
    let band = dynamic["occupied_band_hz"].as_array().unwrap();
    let width = band[1].as_f64().unwrap() - band[0].as_f64().unwrap();
    assert!((obw - width).abs() < 1e-9 * obw);
    // the short base leak: the quasi-static path is enough
    assert_eq!(k["quasi_static_enough"], true, "{}", k["departure"]);
    // levels are finite dBc, 0 dBc at the carrier line at most
    let dbc = dynamic["sideband_dbc"].as_array().unwrap();
    assert!(dbc.iter().all(|v| v.as_f64().is_some_and(|d| d <= 1e-9)));
    let reqs = doc["requirements"].as_array().unwrap();
    assert_eq!(reqs.len(), 4);
    assert!(reqs.iter().all(|r| r["pass"] == true), "{reqs:?}");
    for stem in [
        "keying-envelope",
        "keying-am-am",
        "keying-am-pm",
        "keying-sidebands",
    ] {
        assert!(dir.path().join(format!("{stem}.svg")).exists(), "{stem}");
    }
    let page = std::fs::read_to_string(&html).unwrap();
    assert!(page.contains("Keying at 25.0000 wpm"), "HTML section");
    assert!(page.contains("Caution"));
    let out = run(&["run", p(&f)]);
    let text = stdout(&out);
    assert!(text.contains("Keying: vdrv keyed at 25.0000 wpm"), "{text}");
    assert!(text.contains("necessary bandwidth 104 Hz"), "{text}");
    assert!(text.contains("Caution:"), "{text}");
}

#[test]
fn a_long_base_leak_breaks_a_strict_mask_and_the_quasi_static_path() {
    // the demo and its part in a directory of their own, as in netlists/
    let dir = tempfile::tempdir().unwrap();
    std::fs::create_dir_all(dir.path().join("models")).unwrap();
    std::fs::create_dir_all(dir.path().join("keying")).unwrap();
    std::fs::copy(
        root().join("netlists/models/tw-hf25.tank"),
        dir.path().join("models/tw-hf25.tank"),
    )
    .unwrap();
    let f = dir.path().join("keying/strict.tank");
    let text = std::fs::read_to_string(demo())
        .unwrap()
        .replace("let cbl_c = 47nF", "let cbl_c = 47uF")
        .replace(
            "offset 100Hz to 300Hz below 30dB",
            "offset 100Hz to 300Hz below 35dB",
        );
    std::fs::write(&f, text).unwrap();
    let root_dir = dir.path().to_str().unwrap();
    let out = run(&["check", p(&f), "--include-root", root_dir]);
    // a failed requirement: exit 1
    assert_eq!(code(&out), 1, "{}", stdout(&out));
    let out = run(&["run", p(&f), "--format", "json", "--include-root", root_dir]);
    let doc: serde_json::Value = serde_json::from_str(&stdout(&out)).expect("JSON");
    let k = &doc["keying"][0];
    assert_eq!(k["quasi_static_enough"], false);
    // the lagging bias overshoots the key-down level
    assert!(k["envelope_following"]["overshoot"].as_f64().unwrap() > 0.02);
    assert_eq!(k["quasi_static"]["overshoot"].as_f64().unwrap(), 0.0);
    let side = doc["requirements"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["requirement"].as_str().unwrap().contains("sidebands"))
        .unwrap()
        .clone();
    assert_eq!(side["pass"], false, "{side}");
}

#[test]
fn keying_input_errors_point_at_the_file() {
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("bad.tank");
    std::fs::write(&f, format!("{DIVIDER}analyze keying wpm=25 rise=40ms\n")).unwrap();
    let out = run(&["lint", p(&f)]);
    assert_eq!(code(&out), 2);
    let err = stderr(&out);
    assert!(err.contains("bad.tank:6:"), "{err}");
    assert!(err.contains("longer than half a unit"), "{err}");
    // a sideband requirement without a keying is not measured, so it fails
    std::fs::write(
        &f,
        format!("{DIVIDER}mask m {{ offset 1Hz to 1kHz below 20dB }}\nrequire sidebands <= m\n"),
    )
    .unwrap();
    let out = run(&["check", p(&f)]);
    assert_eq!(code(&out), 1, "{}", stdout(&out));
}

#[test]
fn a_silent_keyed_source_is_an_input_error() {
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("silent.tank");
    std::fs::write(
        &f,
        "voltage vdrv src gnd wave=sine(amp=0V, freq=7MHz) internal=50Ohm\n\
         resistor rload src gnd 50Ohm\noutput rload\ninput vdrv\n\
         analyze keying wpm=25 rise=5ms message=\"sos\"\n",
    )
    .unwrap();
    let out = run(&["run", p(&f)]);
    assert_eq!(code(&out), 2, "{}", stderr(&out));
    assert!(stderr(&out).contains("zero amplitude"), "{}", stderr(&out));
}
