//! Diode model: finite-difference Jacobians over the whole bias range,
//! limiting, breakdown, temperature scaling and area, internal node.

mod common;
use common::*;
use tankwave_circuit::ir::{DiodeParams, ElementKind, Model, ModelId, ModelParams, NodeId, Origin};
use tankwave_devices::diode::Diode;
use tankwave_devices::junction::{critical_voltage, thermal_voltage};
use tankwave_devices::{instantiate, DenseStamp, Device, DeviceError, EvalCtx};

fn model(p: DiodeParams) -> Model {
    Model {
        name: "dm".into(),
        params: ModelParams::Diode(p),
        origin: Origin::default(),
    }
}

fn full_params() -> DiodeParams {
    DiodeParams {
        sat_current: 2e-14,
        emission: 1.3,
        r_series: 0.5,
        cj0: 3e-12,
        v_junction: 0.75,
        grading: 0.4,
        linear_from: 0.5,
        transit: 5e-9,
        breakdown: 8.0,
        breakdown_current: 1e-9,
        t_measured: 300.15,
        ..DiodeParams::default()
    }
}

fn diode_circuit(p: DiodeParams, area: f64) -> tankwave_circuit::ir::Circuit {
    let mut c = circuit(
        &["a", "k"],
        vec![(
            "d1",
            ElementKind::Diode {
                a: NodeId::node(0),
                k: NodeId::node(1),
                model: ModelId::new(0),
                area,
            },
        )],
    );
    c.models.push(model(p));
    c
}

#[test]
fn internal_node_is_allocated_and_named() {
    let set = instantiate(&diode_circuit(full_params(), 1.0)).unwrap();
    assert_eq!(set.names, vec!["V[a]", "V[k]", "V[d1:a']"]);
    assert_eq!(set.state_len, 1);
    let set = instantiate(&diode_circuit(DiodeParams::default(), 1.0)).unwrap();
    assert_eq!(set.n_unknowns, 2);
    assert!(!set.devices[0].is_linear());
}

#[test]
fn finite_difference_jacobian_over_bias_range() {
    let set = instantiate(&diode_circuit(full_params(), 2.0)).unwrap();
    let d = set.devices[0].as_ref();
    let ctx = EvalCtx::default();
    // Junction voltages from deep breakdown through the depletion corner to
    // strong forward bias (beyond 80·nVt the exponential is continued linearly).
    let vj = [
        -9.0, -8.1, -8.0, -7.5, -3.0, -0.5, 0.0, 0.2, 0.37, 0.376, 0.5, 0.65, 0.8, 0.95, 3.0,
    ];
    for v in vj {
        // External anode 0.3 V above the internal one, cathode at 1 V.
        let x = [1.0 + v + 0.3, 1.0, 1.0 + v];
        // Central differences, h = 1e-7 V: truncation ~ h²/(6 (nVt)²) ≈ 1.5e-12
        // relative, rounding ~ 1e-16·I/(h·G) ≤ 1e-9·nVt: tolerance 1e-6.
        fd_check(d, &x, &ctx, 1e-7, 1.0, 1e-6);
    }
}

// Shockley diode equation I = IS (exp(V/(n Vt)) - 1) (W. Shockley, Bell Syst. Tech. J. 28, 1949; from memory).
#[test]
fn stamp_structure_without_series_resistance() {
    let p = DiodeParams {
        cj0: 1e-12,
        transit: 1e-9,
        ..DiodeParams::default()
    };
    let set = instantiate(&diode_circuit(p, 1.0)).unwrap();
    let d = set.devices[0].as_ref();
    let ctx = EvalCtx {
        junction_leak: 0.0,
        ..EvalCtx::default()
    };
    let x = [0.6, 0.0];
    let s = stamp(d, 2, &x, &ctx);
    // Row a carries +I, row k −I; G is [[g, −g], [−g, g]].
    assert!(s.i[0] > 0.0);
    assert_eq!(s.i[0], -s.i[1]);
    assert_eq!(s.q[0], -s.q[1]);
    assert_eq!(s.g_at(0, 0), -s.g_at(0, 1));
    assert_eq!(s.g_at(0, 0), s.g_at(1, 1));
    assert_eq!(s.c_at(0, 0), -s.c_at(1, 0));
    // Value: IS(T)·(exp(0.6/Vt) − 1) at the circuit's 300.15 K (the default model is
    // measured at 298.15 K, so IS is the temperature-scaled one).
    let dd = Diode::new(
        tankwave_circuit::ElementId::new(0),
        Some(0),
        Some(1),
        Some(0),
        &DiodeParams::default(),
        1.0,
        300.15,
    );
    let want = dd.sat_current() * ((0.6 / thermal_voltage(300.15)).exp() - 1.0);
    assert!((s.i[0] - want).abs() < 1e-12 * want);
}

#[test]
fn limiting_uses_state_and_stays_consistent() {
    // IS 1e-14, n = 1, measured at the circuit temperature: the check-values
    // vector (5.0, 0.6) → 0.733006066 V (Nagel 1975, memory; docs/check-values.md).
    let p = DiodeParams {
        t_measured: 300.15,
        ..DiodeParams::default()
    };
    let d = Diode::new(
        tankwave_circuit::ElementId::new(0),
        Some(0),
        None,
        Some(0),
        &p,
        1.0,
        300.15,
    );
    let ctx = EvalCtx {
        limit: true,
        junction_leak: 0.0,
        ..EvalCtx::default()
    };
    let mut st = [0.6];
    let mut s = DenseStamp::new(1);
    let info = d.eval(&[5.0], &ctx, &mut st, &mut s);
    assert!(info.limited);
    assert!((st[0] - 0.733006066).abs() < 1e-9, "{}", st[0]);
    let j = d.junction(st[0], 0.0);
    // The stamp is the linearisation about the limited voltage.
    assert!((s.i[0] - (j.i + j.g * (5.0 - st[0]))).abs() < 1e-12 * s.i[0].abs());
    assert_eq!(s.g_at(0, 0), j.g);
    // A small step is not limited and evaluates exactly.
    let mut s = DenseStamp::new(1);
    let info = d.eval(&[0.74], &ctx, &mut st, &mut s);
    assert!(!info.limited);
    assert_eq!(s.i[0], d.junction(0.74, 0.0).i);
    // Without ctx.limit nothing is limited and the state is left alone.
    let mut st2 = [0.0];
    let mut s = DenseStamp::new(1);
    let info = d.eval(
        &[5.0],
        &EvalCtx {
            junction_leak: 0.0,
            ..EvalCtx::default()
        },
        &mut st2,
        &mut s,
    );
    assert!(!info.limited);
    assert_eq!(st2[0], 0.0);
    assert_eq!(s.i[0], d.junction(5.0, 0.0).i);
    // Vcrit of the instance is the junction module's.
    assert!((critical_voltage(d.n_vt(), d.sat_current()) - 0.730289720).abs() < 1e-9);
}

// Exponential reverse breakdown scaled to IBV at -BV: common practice; the mirrored
// limiter applies the junction limiting of L. W. Nagel, ERL M520, 1975 (from memory).
#[test]
fn breakdown_current_and_reverse_limiting() {
    let p = DiodeParams {
        breakdown: 6.0,
        breakdown_current: 1e-6,
        t_measured: 300.15,
        ..DiodeParams::default()
    };
    let d = Diode::new(
        tankwave_circuit::ElementId::new(0),
        Some(0),
        None,
        Some(0),
        &p,
        1.0,
        300.15,
    );
    // At V = −BV the breakdown term is exactly −IBV; the forward term adds −IS
    // (1 − e^{−BV/nVt} ≈ 1). junction_leak = 0 here.
    let i = d.junction(-6.0, 0.0).i;
    assert!((i - (-1e-6 - 1e-14)).abs() < 1e-15, "{i:e}");
    // One nVt further in reverse the breakdown term has grown by e.
    let vt = thermal_voltage(300.15);
    let i2 = d.junction(-6.0 - vt, 0.0).i;
    assert!(((i2 + 1e-14) / (i + 1e-14) - std::f64::consts::E).abs() < 1e-12);
    // Area scales the breakdown current.
    let d2 = Diode::new(
        tankwave_circuit::ElementId::new(0),
        Some(0),
        None,
        Some(0),
        &p,
        3.0,
        300.15,
    );
    assert!((d2.junction(-6.0, 0.0).i - 3.0 * i).abs() < 1e-15);
    // A large reverse step into breakdown is limited by the mirrored limiter.
    let (vl, lim) = d.limit(-20.0, -6.0);
    assert!(lim);
    assert!(vl > -20.0 && vl < -6.0, "{vl}");
    // Mirrored: −(vl + BV) = nVt ln(1 + 14/nVt) from −(vold + BV) = 0 (vold branch ≤ 0).
    let want = -6.0 - vt * (14.0 / vt).ln();
    assert!((vl - want).abs() < 1e-12, "{vl} vs {want}");
    // Moderate reverse bias away from breakdown is not touched.
    assert_eq!(d.limit(-3.0, 0.5), (-3.0, false));
}

#[test]
fn temperature_and_area_scaling() {
    // IS(T) = IS (T/Tm)^(XTI/n) exp((Eg q/(n k))(1/Tm − 1/T)) — Getreu 1976, from
    // memory; written out here with the CODATA constants directly.
    let p = DiodeParams {
        emission: 1.1,
        ..DiodeParams::default()
    };
    let (k, q) = (1.380649e-23, 1.602176634e-19);
    for t in [260.0, 298.15, 330.0, 380.0] {
        let d = Diode::new(
            tankwave_circuit::ElementId::new(0),
            Some(0),
            None,
            Some(0),
            &p,
            2.5,
            t,
        );
        let is_t = 1e-14
            * (t / 298.15f64).powf(3.0 / 1.1)
            * ((1.11 * q / (1.1 * k)) * (1.0 / 298.15 - 1.0 / t)).exp();
        let want = 2.5 * is_t * ((0.55 / (1.1 * k * t / q)).exp() - 1.0);
        let got = d.junction(0.55, 0.0).i;
        // Same closed form evaluated in another order: rounding of exp of ~20, 1e-12.
        assert!(
            (got - want).abs() < 1e-12 * want,
            "T={t}: {got:e} vs {want:e}"
        );
    }
}

#[test]
fn op_info_reports_junction_figures() {
    let set = instantiate(&diode_circuit(full_params(), 1.0)).unwrap();
    let d = set.devices[0].as_ref();
    let x = [0.75, 0.0, 0.7];
    let info = d.op_info(&x, &EvalCtx::default());
    let get = |k: &str| info.iter().find(|(n, _)| n.key() == k).unwrap().1;
    assert!((get("forward_voltage") - 0.7).abs() < 1e-15);
    let s = stamp(d, 3, &x, &EvalCtx::default());
    assert_eq!(get("junction_current"), -s.i[1]);
    // g_series = 1/0.5 = 2 S shares the entry; subtracting it rounds at 1 ulp of 2 S.
    assert!((get("junction_conductance") - (s.g_at(2, 2) - 2.0)).abs() < 1e-15);
    assert_eq!(get("junction_capacitance"), s.c_at(2, 2));
}

#[test]
fn bad_parameters_are_refused() {
    for (p, name) in [
        (
            DiodeParams {
                sat_current: 0.0,
                ..DiodeParams::default()
            },
            "sat_current",
        ),
        (
            DiodeParams {
                emission: f64::NAN,
                ..DiodeParams::default()
            },
            "emission",
        ),
        (
            DiodeParams {
                linear_from: 1.0,
                ..DiodeParams::default()
            },
            "linear_from",
        ),
        (
            DiodeParams {
                breakdown: -1.0,
                ..DiodeParams::default()
            },
            "breakdown",
        ),
        (
            DiodeParams {
                r_series: -1.0,
                ..DiodeParams::default()
            },
            "r_series",
        ),
    ] {
        match instantiate(&diode_circuit(p, 1.0)) {
            Err(DeviceError::BadParameter { param, .. }) => assert_eq!(param, name),
            other => panic!("expected BadParameter {name}, got {other:?}"),
        }
    }
    assert!(matches!(
        instantiate(&diode_circuit(DiodeParams::default(), 0.0)),
        Err(DeviceError::BadParameter { param: "area", .. })
    ));
}
