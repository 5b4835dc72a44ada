//! The output characteristics of a transistor with an epitaxial collector
//! (quasi-saturation, docs/models.md): the collector current leaves its
//! active value where the equations say.
//!
//! With the base driven by a fixed current I_B, while both sides of the
//! epi layer are reverse biased the layer is the plain resistance R_CO
//! (K ≈ 1; G. M. Kull et al., IEEE Trans. Electron Devices 32(6), 1985,
//! from memory) and I_C keeps its active value β·I_B down to
//! V_CE = V_BE + I_C·R_CO, where the junction side reaches zero bias. Below
//! that the junction side goes forward; once it injects (γ·e^{V/V_t} ~ 1)
//! the layer's resistance is modulated, it drops less than I_C·R_CO, and
//! the intrinsic transistor saturates. A transistor without the layer is
//! still active at those voltages.

use tankwave_circuit::Overrides;
use tankwave_devices::OpFigure;
use tankwave_stage::{solve, SolveOptions};

fn stage(epi: &str, vce: f64) -> String {
    format!(
        "part pq npn {{ transport {{ sat_current=1e-12 beta=50 beta_reverse=1 }} {epi} }}\n\
         current ib gnd base dc=20mA\n\
         voltage vc coll gnd dc={vce}V\n\
         bjt q1 c=coll b=base e=gnd part=pq\n\
         analyze bias\n"
    )
}

/// (I_C, V_BE, the junction-side collector voltage if there is one) of q1.
fn op(epi: &str, vce: f64) -> (f64, f64, Option<f64>) {
    let c = tankwave_circuit::load_str("qs.tank", &stage(epi, vce), &Overrides::default())
        .expect("the stage loads")
        .circuit;
    let r = solve(&c, &SolveOptions::default()).expect("the bias point solves");
    let op = r.op.as_ref().expect("an operating point");
    let d = op.devices.iter().find(|d| d.name == "q1").expect("q1");
    let fig = |f: OpFigure| d.figures.iter().find(|(g, _)| *g == f).expect("figure").1;
    let vcj = op
        .names
        .iter()
        .position(|n| n == "V[q1:cj']")
        .map(|i| op.x[i]);
    (
        fig(OpFigure::CollectorCurrent),
        fig(OpFigure::BaseEmitterVoltage),
        vcj,
    )
}

#[test]
fn the_quasi_saturation_knee_sits_where_the_equations_say() {
    let r_co = 1.0;
    let epi = "epi { resistance=1Ohm doping_factor=1e-11 }";
    let (ic_active, vbe, _) = op(epi, 5.0);
    // active: β I_B = 1 A (no Early effect, no knee current)
    assert!((ic_active - 1.0).abs() < 1e-3, "{ic_active}");
    // above V_BE + I_C·R_CO the layer is ohmic and the current its active value
    let knee = vbe + ic_active * r_co;
    let (ic, _, _) = op(epi, knee + 0.2);
    assert!(
        (ic / ic_active - 1.0).abs() < 0.01,
        "{ic} A at {} V",
        knee + 0.2
    );
    // at 0.8·I_C·R_CO an unmodulated layer alone would need more than V_CE:
    // the transistor is in quasi-saturation and has lost current ...
    let v = 0.8 * ic_active * r_co;
    let (ic, _, vcj) = op(epi, v);
    assert!(ic < 0.9 * ic_active, "{ic} A at {v} V");
    // ... the layer drops less than I_C·R_CO (conductivity modulation) ...
    let drop = v - vcj.expect("the junction-side node");
    assert!(drop > 0.0 && drop < ic * r_co, "drop {drop} V at {ic} A");
    // ... while without the layer the transistor is still active there
    let (ic0, _, none) = op("", v);
    let (ic0_active, _, _) = op("", 5.0);
    assert!(none.is_none());
    assert!((ic0 / ic0_active - 1.0).abs() < 0.01, "{ic0} A at {v} V");
}
