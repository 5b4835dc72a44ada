//! `analyze twotone` through `tankwave run` and `check`: the tones' powers
//! and PEP on a linear divider against the closed form, the demo's table,
//! JSON, plot and requirements, and the input errors of the analysis.

use crate::harness::{code, p, root, run, stdout};

const DIVIDER: &str = "title \"two tones into a divider\"\n\
    voltage vdrv src gnd wave=sine(amp=10V, freq=7MHz) internal=50Ohm\n\
    resistor rload src gnd 50Ohm\noutput rload\ninput vdrv\n\
    analyze steady freq=7MHz harmonics=4\n";

/// Two tones of 5 V each (half the 10 V sine) from 50 Ω into 50 Ω: 2.5 V
/// peak per tone in the load, P = (2.5 V)²/(2·50 Ω) = 62.5 mW, and
/// PEP = (2.5 V + 2.5 V)²/(2·50 Ω) = 250 mW, four times one tone (voltage
/// divider and PEP: common practice). A linear stage makes no mixing
/// products, so IM3 is below the numerical floor and a requirement on it
/// reads the floor. Harmonic balance solves the divider to its Newton
/// tolerance, 1e-6 relative.
#[test]
fn tones_into_a_divider_give_the_closed_form_powers() {
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("divider.tank");
    let text = format!(
        "{DIVIDER}analyze twotone spacing=1kHz order=3\nrequire imd3 <= -60dBc\nrequire pep >= 0.2W\n"
    );
    std::fs::write(&f, text).unwrap();
    let out = run(&["run", p(&f), "--format", "json"]);
    assert_eq!(code(&out), 0, "{}", stdout(&out));
    let doc: serde_json::Value = serde_json::from_str(&stdout(&out)).expect("JSON");
    let t = &doc["two_tone"][0];
    let full = &t["full"];
    for k in 0..2 {
        let pw = full["tone_w"][k].as_f64().unwrap();
        assert!((pw - 0.0625).abs() <= 1e-6 * 0.0625, "{full}");
    }
    let pep = full["pep_w"].as_f64().unwrap();
    assert!((pep - 0.25).abs() <= 1e-6 * 0.25, "{full}");
    assert_eq!(full["tones_hz"][0].as_f64().unwrap(), 7e6 - 500.0);
    assert_eq!(full["tones_hz"][1].as_f64().unwrap(), 7e6 + 500.0);
    for r in full["products"].as_array().unwrap() {
        assert!(r["dbc"].is_null(), "a linear stage makes no products: {r}");
    }
    let floor = full["floor_dbc"].as_f64().unwrap();
    let v = &doc["requirements"][0];
    assert_eq!(v["pass"], true, "{v}");
    assert_eq!(v["value"].as_f64().unwrap(), floor);
}

#[test]
fn the_linear_demo_passes_its_imd_requirements_and_draws_its_sweep() {
    let f = root().join("netlists/linear/ssb-7m1-classb.tank");
    let out = run(&["run", p(&f)]);
    let text = stdout(&out);
    assert_eq!(code(&out), 0, "{text}");
    assert!(
        text.contains("Two-tone test: tones 7.099500 MHz and 7.100500 MHz"),
        "{text}"
    );
    assert!(text.contains("require imd3 <= -25dBc"), "{text}");
    assert!(text.contains("Caution:"), "{text}");
    let dir = tempfile::tempdir().unwrap();
    let out = run(&["run", p(&f), "--format", "json", "--plots", p(dir.path())]);
    assert_eq!(code(&out), 0);
    let doc: serde_json::Value = serde_json::from_str(&stdout(&out)).expect("JSON");
    let t = &doc["two_tone"][0];
    let sweep = t["sweep"].as_array().unwrap();
    assert_eq!(sweep.len(), 6);
    // PEP is 6.02 dB above the mean tone (the tones differ by far less than
    // 0.1 dB, which moves the ratio by less than 1e-3 dB)
    let full = &t["full"];
    let mean = 0.5 * (full["tone_w"][0].as_f64().unwrap() + full["tone_w"][1].as_f64().unwrap());
    let ratio_db = 10.0 * (full["pep_w"].as_f64().unwrap() / mean).log10();
    assert!((ratio_db - 6.0206).abs() < 1e-3, "{ratio_db}");
    // IM3 rises with the drive over the sweep
    let im3: Vec<f64> = sweep
        .iter()
        .map(|l| {
            l["metrics"]["products"]
                .as_array()
                .unwrap()
                .iter()
                .filter(|r| r["order"] == 3)
                .filter_map(|r| r["power_w"].as_f64())
                .fold(0.0, f64::max)
        })
        .collect();
    assert!(im3.windows(2).all(|w| w[1] > w[0]), "{im3:?}");
    assert!(dir.path().join("twotone.svg").exists());
    // IMD against spacing: the base feed choke (2.2 uH) and the bias bypass
    // (1 uF) resonate at 1/(2π√(LC)) ≈ 107 kHz, so the envelope's bias
    // modulation is largest near a 100 kHz spacing; at 1 kHz and 10 kHz,
    // far below it, the bias network follows the envelope alike.
    let im3_at = |k: usize| -> f64 {
        t["by_spacing"][k]["metrics"]["products"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|r| r["order"] == 3)
            .filter_map(|r| r["dbc"].as_f64())
            .fold(f64::MIN, f64::max)
    };
    assert_eq!(t["by_spacing"].as_array().unwrap().len(), 3);
    assert_eq!(t["by_spacing"][2]["spacing_hz"], 100e3);
    assert!(
        (im3_at(0) - im3_at(1)).abs() < 0.5,
        "{} {}",
        im3_at(0),
        im3_at(1)
    );
    assert!(im3_at(2) > im3_at(0) + 1.0, "{} {}", im3_at(2), im3_at(0));
    let html = dir.path().join("r.html");
    let out = run(&["run", p(&f), "--report", p(&html)]);
    assert_eq!(code(&out), 0);
    let page = std::fs::read_to_string(&html).unwrap();
    assert!(page.contains("Two-tone test, spacing 1.00 kHz"));
    assert!(page.contains("Caution"));
    let out = run(&["check", p(&f)]);
    assert_eq!(code(&out), 0, "{}", stdout(&out));
}

#[test]
fn a_two_tone_test_needs_a_sine_input_and_a_bounded_order() {
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("bad.tank");
    let no_sine = DIVIDER.replace("wave=sine(amp=10V, freq=7MHz)", "dc=1V")
        + "analyze twotone spacing=1kHz\n";
    std::fs::write(&f, no_sine).unwrap();
    let out = run(&["run", p(&f)]);
    assert_eq!(code(&out), 2);
    assert!(
        crate::harness::stderr(&out).contains("splits the input's sine"),
        "{}",
        crate::harness::stderr(&out)
    );
    std::fs::write(
        &f,
        format!("{DIVIDER}analyze twotone spacing=1kHz order=30\n"),
    )
    .unwrap();
    let out = run(&["run", p(&f)]);
    assert_eq!(code(&out), 2);
    assert!(crate::harness::stderr(&out).contains("at most 20"));
    std::fs::write(&f, format!("{DIVIDER}analyze twotone spacing=9MHz\n")).unwrap();
    let out = run(&["run", p(&f)]);
    assert_eq!(code(&out), 2);
    assert!(crate::harness::stderr(&out).contains("not below the input's frequency"));
}
