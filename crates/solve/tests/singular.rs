//! A singular matrix is reported with the cause the numbers point to
//! (tankwave_solve::singular), not always a floating node. The circuits are
//! built directly (elaboration's topology checks would refuse them first).

mod support;
use support::*;
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
