//! A singular matrix is reported with the cause the numbers point to
//! (tankwave_solve::singular), not always a floating node. The circuits are
//! built directly (elaboration's topology checks would refuse them first).

mod support;
use support::*;
use tankwave_circuit::ir::Waveform;
use tankwave_devices::instantiate;
use tankwave_solve::*;

fn op_error(b: &B) -> String {
    let d = instantiate(&b.c).unwrap();
    let e = operating_point(&b.c, &d, &OpParams::default()).unwrap_err();
    assert!(matches!(e, SolveError::Singular { .. }), "{e:?}");
    e.to_string()
}

#[test]
fn a_floating_node_is_named_as_one() {
    let mut b = B::new();
    b.vdc("vs", "a", "gnd", 1.0);
    b.r("r1", "a", "gnd", 1e3);
    b.cap("c1", "a", "float", 1e-9);
    b.cap("c2", "float", "gnd", 1e-9);
    let msg = op_error(&b);
    assert!(
        msg.contains("floating node: nothing conducts to V[float]"),
        "{msg}"
    );
}

#[test]
fn two_nodes_tied_only_to_each_other_are_named_together() {
    let mut b = B::new();
    b.vdc("vs", "a", "gnd", 1.0);
    b.r("r1", "a", "gnd", 1e3);
    b.cap("c1", "a", "x", 1e-9);
    b.r("rxy", "x", "y", 1e3);
    b.cap("c2", "y", "gnd", 1e-9);
    let msg = op_error(&b);
    assert!(
        msg.contains("V[x], V[y] are tied only to each other"),
        "{msg}"
    );
    assert!(!msg.contains("loop"), "{msg}");
}

#[test]
fn a_loop_of_voltage_sources_is_named_as_one() {
    let mut b = B::new();
    b.vdc("v1", "a", "gnd", 1.0);
    b.vdc("v2", "a", "gnd", 1.0);
    b.r("r1", "a", "gnd", 1e3);
    let msg = op_error(&b);
    assert!(
        msg.contains("a loop of voltage sources and inductors"),
        "{msg}"
    );
    assert!(msg.contains("I[v1]") && msg.contains("I[v2]"), "{msg}");
    assert!(!msg.contains("floating"), "{msg}");
}

/// A source across a lossless series LC, with a resistor across the source so
/// that the operating point exists: at ω = 1/√(LC) the LC branch has zero
/// impedance, so its current is not fixed (the AC matrix is singular there).
/// L = C = 1 puts the resonance at ω = 1 rad/s, f = 1/(2π) Hz (common practice).
fn series_lc(wave: Waveform) -> (B, tankwave_circuit::ElementId) {
    let mut b = B::new();
    let vs = b.vsrc("vs", "a", "gnd", wave, 0.0);
    b.r("r1", "a", "gnd", 1e3);
    b.ind("l1", "a", "b", 1.0, 0.0);
    b.cap("c1", "b", "gnd", 1.0);
    b.c.input = Some(vs);
    (b, vs)
}

const F_RES: f64 = 1.0 / (2.0 * std::f64::consts::PI);

#[test]
fn ac_at_a_lossless_resonance_names_the_resonance() {
    let (b, vs) = series_lc(Waveform::default());
    let d = instantiate(&b.c).unwrap();
    let p = AcParams {
        from: F_RES,
        to: F_RES,
        points: 1,
        source: Some(vs),
        ..AcParams::default()
    };
    let e = ac(&b.c, &d, &p).unwrap_err();
    assert!(matches!(e, SolveError::Singular { .. }), "{e:?}");
    let msg = e.to_string();
    assert!(msg.contains("a resonance with nothing to damp it"), "{msg}");
    assert!(msg.contains("V[b]") && msg.contains("I[l1]"), "{msg}");
    assert!(!msg.contains("floating"), "{msg}");
    // Off the resonance the same circuit solves.
    let p = AcParams {
        from: 2.0 * F_RES,
        to: 2.0 * F_RES,
        ..p
    };
    assert!(ac(&b.c, &d, &p).is_ok());
}

#[test]
fn harmonic_balance_at_a_lossless_resonance_reads_its_newton_matrix() {
    let (b, _) = series_lc(Waveform {
        dc: 0.0,
        shape: Some(sine(1.0, F_RES)),
    });
    let d = instantiate(&b.c).unwrap();
    let params = SteadyParams {
        freq: F_RES,
        harmonics: 3,
        method: tankwave_circuit::SteadyMethod::Balance,
        ..SteadyParams::default()
    };
    let e = steady(&b.c, &d, &params).unwrap_err();
    let msg = e.to_string();
    eprintln!("{msg}");
    assert!(matches!(e, SolveError::Singular { .. }), "{e:?}");
    // The null space of the Newton matrix holds the inductor current and the
    // node behind it, together: not a floating node.
    assert!(msg.contains("I[l1]") && msg.contains("V[b]"), "{msg}");
    assert!(!msg.contains("floating"), "{msg}");
}
