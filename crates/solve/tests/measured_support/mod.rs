//! What the tests of measured networks (measured.rs, measured_short.rs)
//! share: a diode clipper driving a load given as stage-file lines, the
//! unknown of a node, and the load's AC voltage at chosen frequencies.

use num_complex::Complex64;
use tankwave_circuit::{load_str, Circuit, NodeId, Overrides};
use tankwave_devices::{instantiate, DeviceSet, UnknownId};
use tankwave_solve::{ac, AcParams};

/// The clipper: the drive `source` (a voltage-source line from `in` to
/// ground), a diode part `dm`, then `extra` and `load` (lines naming node
/// `load`), read as if from the Touchstone reference directory (so that a
/// `measured` line finds its file).
pub fn stage(source: &str, load: &str, extra: &str) -> (Circuit, DeviceSet) {
    let dir = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../tests/reference/touchstone"
    );
    let text = format!(
        "{source}\n\
         part dm diode {{\n  junction {{ sat_current=1e-14A ideality=1 }}\n  resistance {{ series=2Ohm }}\n}}\n\
         {extra}{load}input vs\n"
    );
    let e = load_str(&format!("{dir}/check.tank"), &text, &Overrides::default())
        .unwrap_or_else(|e| panic!("{:?}", e.diagnostics));
    let d = instantiate(&e.circuit).unwrap();
    (e.circuit, d)
}

/// The unknown of node `name`'s voltage.
pub fn node(c: &Circuit, name: &str) -> usize {
    let i = c.nodes.iter().position(|n| n == name).unwrap();
    UnknownId::voltage(NodeId::node(i)).unwrap().index()
}

/// The AC voltage of node `load` at each of `freqs`, the load fed through
/// 1 Ω from the drive of [`stage`].
pub fn ac_at(source: &str, load: &str, freqs: &[f64]) -> Vec<Complex64> {
    let (c, d) = stage(source, load, "resistor rin in load 1Ohm\n");
    let k = node(&c, "load");
    freqs
        .iter()
        .map(|&f| {
            let p = AcParams {
                from: f,
                to: f,
                points: 1,
                ..AcParams::default()
            };
            ac(&c, &d, &p).unwrap().x[0][k]
        })
        .collect()
}
