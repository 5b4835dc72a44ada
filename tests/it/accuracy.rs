//! The default steady state against an independent reference: the class-C
//! stage with a sharp collector pulse of tests/data/accuracy/sharp-pulse.tank
//! solved by scipy (tests/reference/solve/sharp_pulse.py: Radau at rtol
//! 1e-12, shooting to a periodicity of 1e-12, its own error written beside
//! every value, about 1e-11 relative on power and 1e-7 dB on harmonics).
//! What each method reaches on this stage is documented in docs/analyses.md
//! ("Accuracy of the steady state"); `method=auto` does not yet refine its
//! result to a stated target (issue work left open).

use crate::harness::{data, p, run, stdout};

/// One value of the reference and its own error.
struct Ref {
    value: f64,
    own_error: f64,
}

/// The reference data file, `name value own_error` per line.
fn reference() -> std::collections::HashMap<String, Ref> {
    let path = crate::harness::root().join("tests/reference/solve/sharp_pulse.txt");
    let text = std::fs::read_to_string(path).expect("reference data");
    text.lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
        .map(|l| {
            let f: Vec<&str> = l.split_whitespace().collect();
            (
                f[0].to_string(),
                Ref {
                    value: f[1].parse().expect("value"),
                    own_error: f[2].parse().expect("own error"),
                },
            )
        })
        .collect()
}

/// The stage solved by `run --format json` with `method` written into its
/// `analyze steady` statement; the steady-state part of the JSON.
pub(crate) fn solved(method: &str) -> serde_json::Value {
    let text = std::fs::read_to_string(data("accuracy/sharp-pulse.tank")).expect("stage");
    let text = text.replace("harmonics=32", &format!("harmonics=32 method={method}"));
    let dir = tempfile::tempdir().expect("tempdir");
    let f = dir.path().join("stage.tank");
    std::fs::write(&f, text).expect("write");
    let o = run(&["run", "--format", "json", p(&f)]);
    assert!(o.status.success(), "{method}: {}", stdout(&o));
    let j: serde_json::Value = serde_json::from_str(&stdout(&o)).expect("json");
    j["steady"].clone()
}

/// The default method's output power is within 1e-5 relative of the
/// reference on this stage (measured 9.1e-7 at shooting's default 256 steps
/// per period; 1e-5 is the target proposed for `auto`; the reference's own
/// error, 1e-11, is added to the tolerance).
#[test]
fn the_default_steady_state_meets_the_power_target() {
    let r = reference();
    let p_ref = &r["p1_W"];
    let s = solved("auto");
    let p1 = s["metrics"]["output"]["p1_w"].as_f64().expect("p1_w");
    let rel = (p1 - p_ref.value).abs() / p_ref.value;
    assert!(
        rel <= 1e-5 + p_ref.own_error / p_ref.value,
        "output power {p1} W is {rel:.3e} off the reference {} W",
        p_ref.value
    );
}
