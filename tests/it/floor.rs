//! The numerical floor end to end (docs/measurements.md, "Numerical
//! floor"): on the class-B demo the fifth harmonic lies under what the
//! solver resolves, and every output says so instead of printing a number.

use crate::harness::{p, root, run, stdout};

/// The demo solved by the default method: the JSON carries `floor_dbc` and a
/// null level for every unresolved harmonic, the table says "below floor".
/// The floor must lie below the resolved harmonics and above the −199 dBc of
/// rounding noise (common practice: a second-order method on N = 2^k steps
/// resolves no better than its tolerance, 1e-7 of the peak, −140 dBc).
#[test]
fn high_harmonics_of_the_class_b_demo_are_below_the_floor() {
    let f = root().join("netlists/cw-7m1-classb.tank");
    let o = run(&["run", "--format", "json", p(&f)]);
    let j: serde_json::Value = serde_json::from_str(&stdout(&o)).expect("json");
    let out = &j["steady"]["metrics"]["output"];
    let floor = out["floor_dbc"].as_f64().expect("a floor_dbc field");
    assert!(floor > -140.5 && floor < -80.0, "{floor}");
    let hs = out["harmonics"].as_array().expect("harmonics");
    let mut below = 0;
    for h in hs {
        let resolved = h["resolved"].as_bool().expect("resolved");
        if resolved {
            let d = h["dbc"].as_f64().expect("a level");
            assert!(
                d > floor,
                "resolved harmonic at {d} dBc under the floor {floor}"
            );
        } else {
            assert!(h["dbc"].is_null(), "unresolved harmonic with a level: {h}");
            below += 1;
        }
    }
    assert!(below > 0, "no harmonic below the floor");
    let text = stdout(&run(&["run", p(&f)]));
    assert!(text.contains("below floor ("), "{text}");
    assert!(!text.contains("-199"), "{text}");
}
