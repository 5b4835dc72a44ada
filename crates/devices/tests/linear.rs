//! Linear elements: stamps against hand-derived matrices (derived from the
//! conventions in the `linear` module doc), finite-difference Jacobians,
//! unknown numbering, DC/AC consistency of the source conventions, errors.

mod common;
use common::*;
use tankwave_circuit::ir::{ElementId, ElementKind, Shape, Waveform};
use tankwave_devices::{instantiate, DeviceError, EvalCtx, OpFigure, UnknownId, UnknownKind};

fn ids(i: &[usize]) -> Vec<ElementId> {
    i.iter().map(|&i| ElementId::new(i)).collect()
}

fn dc(v: f64) -> Waveform {
    Waveform { dc: v, shape: None }
}

fn res(a: Option<usize>, b: Option<usize>, r: f64) -> ElementKind {
    ElementKind::Resistor {
        a: nid(a),
        b: nid(b),
        r,
        rating_w: None,
        ntc_b: None,
    }
}
fn cap(a: Option<usize>, b: Option<usize>, c: f64) -> ElementKind {
    ElementKind::Capacitor {
        a: nid(a),
        b: nid(b),
        c,
        rating_v: None,
        rating_a: None,
    }
}
fn ind(a: Option<usize>, b: Option<usize>, l: f64, r: f64) -> ElementKind {
    ElementKind::Inductor {
        a: nid(a),
        b: nid(b),
        l,
        series_r: r,
        rating_a: None,
    }
}
fn vsrc(p: Option<usize>, n: Option<usize>, wave: Waveform, rs: f64) -> ElementKind {
    ElementKind::VoltageSource {
        p: nid(p),
        n: nid(n),
        wave,
        rs,
    }
}
fn isrc(p: Option<usize>, n: Option<usize>, wave: Waveform) -> ElementKind {
    ElementKind::CurrentSource {
        p: nid(p),
        n: nid(n),
        wave,
    }
}

/// Compare a dense stamp matrix with the expected one (exact: the stamps are
/// sums of the same few products, so only rounding of 1/R can differ).
fn assert_mat(got: &[f64], want: &[f64], what: &str) {
    assert_eq!(got.len(), want.len());
    for (k, (g, w)) in got.iter().zip(want).enumerate() {
        assert!(
            (g - w).abs() <= 1e-15 * w.abs().max(1e-30),
            "{what}[{k}]: {g} vs {w}"
        );
    }
}

#[test]
fn resistor_and_capacitor_stamps() {
    let c = circuit(
        &["a", "b"],
        vec![
            ("r1", res(Some(0), Some(1), 100.0)),
            ("c1", cap(Some(0), None, 1e-9)),
        ],
    );
    let set = instantiate(&c).unwrap();
    assert_eq!(set.n_unknowns, 2);
    let x = [3.0, 1.0];
    let s = stamp(set.devices[0].as_ref(), 2, &x, &EvalCtx::default());
    assert_mat(&s.g, &[0.01, -0.01, -0.01, 0.01], "G");
    assert_mat(&s.i, &[0.02, -0.02], "i");
    assert_mat(&s.c, &[0.0; 4], "C");
    let s = stamp(set.devices[1].as_ref(), 2, &x, &EvalCtx::default());
    assert_mat(&s.c, &[1e-9, 0.0, 0.0, 0.0], "C");
    assert_mat(&s.q, &[3e-9, 0.0], "q");
    assert_mat(&s.g, &[0.0; 4], "G");
}

/// A thermistor (a resistor with `ntc_b=`) stamps the conductance of its
/// B-parameter law at its temperature: R25 = 10 kΩ, B = 3950 K is
/// 3.5882 kΩ at 50 °C and 33.621 kΩ at 0 °C (R(T) = R25·exp(B(1/T − 1/T25)),
/// Steinhart and Hart 1968, one-term form, from memory; the two values
/// worked from the law to 5 figures, docs/check-values.md "Thermistor"); at the ambient
/// unless a temperature is given for it.
#[test]
fn thermistor_stamps_its_law_at_its_temperature() {
    let kind = ElementKind::Resistor {
        a: nid(Some(0)),
        b: nid(None),
        r: 10e3,
        rating_w: None,
        ntc_b: Some(3950.0),
    };
    let mut c = circuit(&["a"], vec![("rt", kind)]);
    let conductance = |set: &tankwave_devices::DeviceSet| {
        stamp(set.devices[0].as_ref(), 1, &[1.0], &EvalCtx::default()).g[0]
    };
    c.temperature_k = 323.15;
    let g = conductance(&instantiate(&c).unwrap());
    // 5 significant figures
    assert!((1.0 / g - 3588.2).abs() < 0.05, "{}", 1.0 / g);
    let set = tankwave_devices::instantiate_at(&c, &[Some(273.15)]).unwrap();
    assert!(
        (1.0 / conductance(&set) - 33621.0).abs() < 0.5,
        "{}",
        1.0 / conductance(&set)
    );
    // at 25 °C exactly its written value
    c.temperature_k = 298.15;
    let g = conductance(&instantiate(&c).unwrap());
    assert!((1.0 / g - 10e3).abs() < 1e-9, "{}", 1.0 / g);
}

#[test]
fn inductor_stamp() {
    let c = circuit(&["a", "b"], vec![("l1", ind(Some(0), Some(1), 1e-6, 2.0))]);
    let set = instantiate(&c).unwrap();
    assert_eq!(set.names, vec!["V[a]", "V[b]", "I[l1]"]);
    assert_eq!(set.kinds[2], UnknownKind::Current);
    assert_eq!(set.devices[0].branch(), Some(UnknownId::new(2)));
    let x = [3.0, 1.0, 0.5];
    let s = stamp(set.devices[0].as_ref(), 3, &x, &EvalCtx::default());
    #[rustfmt::skip]
    let g = [
        0.0, 0.0, 1.0,
        0.0, 0.0, -1.0,
        1.0, -1.0, -2.0,
    ];
    assert_mat(&s.g, &g, "G");
    let mut cm = [0.0; 9];
    cm[8] = -1e-6;
    assert_mat(&s.c, &cm, "C");
    // i: rows a/b carry ±j; branch row v_a − v_b − r j = 3 − 1 − 1 = 1.
    assert_mat(&s.i, &[0.5, -0.5, 1.0], "i");
    assert_mat(&s.q, &[0.0, 0.0, -0.5e-6], "q");
}

#[test]
fn vsource_and_isource_stamps() {
    let w = Waveform {
        dc: 5.0,
        shape: Some(Shape::Table(vec![(0.0, 0.0), (1.0, 2.0)])),
    };
    let c = circuit(
        &["a", "b"],
        vec![
            ("v1", vsrc(Some(0), Some(1), w.clone(), 10.0)),
            ("i1", isrc(Some(1), None, w)),
        ],
    );
    let set = instantiate(&c).unwrap();
    assert_eq!(set.names, vec!["V[a]", "V[b]", "I[v1]"]);
    let x = [7.0, 1.0, -0.1];
    let ctx = EvalCtx {
        time: 0.5,
        dc_scale: 0.5,
        wave_scale: 2.0,
        ..EvalCtx::default()
    };
    // V = 0.5·5 + 2·1 = 4.5 V (pwl at t = 0.5 is 1).
    let s = stamp(set.devices[0].as_ref(), 3, &x, &ctx);
    #[rustfmt::skip]
    let g = [
        0.0, 0.0, 1.0,
        0.0, 0.0, -1.0,
        1.0, -1.0, -10.0,
    ];
    assert_mat(&s.g, &g, "G");
    // Branch row: 7 − 1 − 4.5 − 10·(−0.1) = 2.5.
    assert_mat(&s.i, &[-0.1, 0.1, 2.5], "i");
    let s = stamp(set.devices[1].as_ref(), 3, &x, &ctx);
    assert_mat(&s.i, &[0.0, 4.5, 0.0], "i");
    assert_mat(&s.g, &[0.0; 9], "G");
    let mut bp = Vec::new();
    set.devices[0].breakpoints(-1.0, 2.0, &mut bp);
    assert_eq!(bp, vec![0.0, 1.0]);
}

/// Solve the linear DC problem i(x) = 0 exactly: x = −G⁻¹ i(0).
fn dc_solve(set: &tankwave_devices::DeviceSet) -> Vec<f64> {
    let n = set.n_unknowns;
    let s = stamp_all(set, &vec![0.0; n], &EvalCtx::default());
    solve(s.g.clone(), s.i.iter().map(|v| -v).collect())
}

/// Solve the small-signal problem G X = b at ω = 0 for the excitation of element `src`.
fn ac0_solve(set: &tankwave_devices::DeviceSet, src: usize) -> Vec<f64> {
    let n = set.n_unknowns;
    let s = stamp_all(set, &vec![0.0; n], &EvalCtx::default());
    let mut b = vec![0.0; n];
    let d = set
        .devices
        .iter()
        .find(|d| d.element().index() == src)
        .unwrap();
    d.ac_excitation(&mut |r, v| b[r] += v);
    solve(s.g.clone(), b)
}

// Voltage divider and Ohm's law (common practice).
#[test]
fn vsource_divider_dc_and_ac_agree() {
    // Source 10 V behind 50 Ω into 50 Ω: V[out] = 5 V, source delivers power (j < 0).
    // A direct solve of two unknowns with exact decimal data: only rounding
    // (~1e-16 relative) separates the results from the hand values, and the
    // bounds below (1e-13 to 2e-12 relative) catch any wrong stamp.
    let c = circuit(
        &["out"],
        vec![
            ("v1", vsrc(Some(0), None, dc(10.0), 50.0)),
            ("rl", res(Some(0), None, 50.0)),
        ],
    );
    let set = instantiate(&c).unwrap();
    let x = dc_solve(&set);
    assert!((x[0] - 5.0).abs() < 1e-12);
    assert!((x[1] + 0.1).abs() < 1e-14, "j = {}", x[1]);
    // Unit AC amplitude: the response must be the DC response per volt.
    let xa = ac0_solve(&set, 0);
    assert!((xa[0] - 0.5).abs() < 1e-13);
    assert!((xa[1] + 0.01).abs() < 1e-15);
    // As op_info reports it: a supply feeding a load delivers a positive
    // current (0.1 A out of its + terminal, though its branch current is
    // −0.1 A) and a positive power, 5 V · 0.1 A = 0.5 W (Ohm's law).
    let info = set.devices[0].op_info(&x, &EvalCtx::default());
    let get = |f: OpFigure| info.iter().find(|(k, _)| *k == f).unwrap().1;
    let i = get(OpFigure::DeliveredCurrent);
    assert!((i - 0.1).abs() < 1e-14, "delivered current = {i}");
    let p = get(OpFigure::DeliveredPower);
    assert!((p - 0.5).abs() < 1e-12, "p = {p}");
    assert!((get(OpFigure::SetVoltage) - 10.0).abs() < 1e-15);
    assert!((p - get(OpFigure::Voltage) * i).abs() < 1e-12);
}

// Ohm's law (common practice).
#[test]
fn isource_into_resistor_dc_and_ac_agree() {
    // 1 mA flowing from gnd through the source into `out`, 100 Ω to ground: +0.1 V.
    // One unknown, exact decimal data: only rounding (~1e-16 relative)
    // separates the results from the hand values; the bounds are 1e-13 relative.
    let c = circuit(
        &["out"],
        vec![
            ("i1", isrc(None, Some(0), dc(1e-3))),
            ("rl", res(Some(0), None, 100.0)),
        ],
    );
    let set = instantiate(&c).unwrap();
    let x = dc_solve(&set);
    assert!((x[0] - 0.1).abs() < 1e-14);
    let xa = ac0_solve(&set, 0);
    assert!((xa[0] - 100.0).abs() < 1e-11);
    // It feeds the load: 1 mA into a node at 0.1 V delivers 0.1 mW; current
    // and power are both positive.
    let info = set.devices[0].op_info(&x, &EvalCtx::default());
    let get = |f: OpFigure| info.iter().find(|(k, _)| *k == f).unwrap().1;
    assert_eq!(get(OpFigure::DeliveredCurrent), 1e-3);
    assert!((get(OpFigure::DeliveredPower) - 1e-4).abs() < 1e-17);
    // Reversed: current drawn out of `out`.
    let c = circuit(
        &["out"],
        vec![
            ("i1", isrc(Some(0), None, dc(1e-3))),
            ("rl", res(Some(0), None, 100.0)),
        ],
    );
    let set = instantiate(&c).unwrap();
    assert!((dc_solve(&set)[0] + 0.1).abs() < 1e-14);
    assert!((ac0_solve(&set, 0)[0] + 100.0).abs() < 1e-11);
}

// An ideal inductor is a short at DC (common practice).
#[test]
fn inductor_is_dc_short_through_its_resistance() {
    // 1 V through an inductor with r = 1 Ω into 1 Ω: 0.5 V, branch current 0.5 A a → b.
    // Exact in binary arithmetic; 1e-14 (2e-14 relative) allows for rounding only.
    let c = circuit(
        &["in", "out"],
        vec![
            ("v1", vsrc(Some(0), None, dc(1.0), 0.0)),
            ("l1", ind(Some(0), Some(1), 1e-6, 1.0)),
            ("rl", res(Some(1), None, 1.0)),
        ],
    );
    let set = instantiate(&c).unwrap();
    assert_eq!(set.names, vec!["V[in]", "V[out]", "I[v1]", "I[l1]"]);
    let x = dc_solve(&set);
    assert!((x[1] - 0.5).abs() < 1e-14);
    assert!((x[3] - 0.5).abs() < 1e-14);
    assert!((x[2] + 0.5).abs() < 1e-14);
}

#[test]
fn coupling_adds_mutual_fluxes() {
    // Declared before its inductors on purpose. M = k √(L1 L2) for every pair.
    let c = circuit(
        &["a", "b", "c"],
        vec![
            (
                "k1",
                ElementKind::Coupling {
                    inductors: ids(&[1, 2, 3]),
                    k: 0.5,
                },
            ),
            ("l1", ind(Some(0), None, 1e-6, 0.0)),
            ("l2", ind(Some(1), None, 4e-6, 0.0)),
            ("l3", ind(Some(2), None, 9e-6, 0.0)),
        ],
    );
    let set = instantiate(&c).unwrap();
    assert_eq!(set.n_unknowns, 6);
    let k = set
        .devices
        .iter()
        .find(|d| d.element() == ElementId::new(0))
        .unwrap();
    assert!(k.terminals().is_empty());
    let x = [0.0, 0.0, 0.0, 1.0, 2.0, 3.0];
    let s = stamp(k.as_ref(), 6, &x, &EvalCtx::default());
    let m12 = 0.5 * 2e-6;
    let m13 = 0.5 * 3e-6;
    let m23 = 0.5 * 6e-6;
    let want = [
        (3, 4, m12),
        (4, 3, m12),
        (3, 5, m13),
        (5, 3, m13),
        (4, 5, m23),
        (5, 4, m23),
    ];
    for (r, cc, m) in want {
        assert!((s.c_at(r, cc) + m).abs() < 1e-21, "C[{r}][{cc}]");
    }
    for r in 3..6 {
        assert_eq!(s.c_at(r, r), 0.0, "self inductance belongs to the inductor");
    }
    // q-part of branch row 1: −(M12·2 + M13·3).
    assert!((s.q[3] + (m12 * 2.0 + m13 * 3.0)).abs() < 1e-20);
}

#[test]
fn finite_difference_jacobians_of_linear_elements() {
    let w = Waveform {
        dc: 1.0,
        shape: Some(Shape::Sine {
            amp: 1.0,
            freq: 1e6,
            phase: 0.0,
            offset: 0.0,
            delay: 0.0,
            rise: 0.0,
        }),
    };
    let c = circuit(
        &["a", "b", "c"],
        vec![
            ("r1", res(Some(0), Some(1), 47.0)),
            ("c1", cap(Some(1), Some(2), 1e-10)),
            ("l1", ind(Some(0), Some(2), 1e-6, 0.3)),
            ("l2", ind(Some(2), None, 2e-6, 0.0)),
            (
                "k1",
                ElementKind::Coupling {
                    inductors: ids(&[2, 3]),
                    k: -0.7,
                },
            ),
            ("v1", vsrc(Some(0), Some(1), w.clone(), 5.0)),
            ("i1", isrc(Some(2), Some(0), w)),
        ],
    );
    let set = instantiate(&c).unwrap();
    let x = [1.3, -0.4, 2.2, 0.01, -0.02, 0.03];
    let ctx = EvalCtx {
        time: 1.7e-7,
        ..EvalCtx::default()
    };
    for d in &set.devices {
        assert!(d.is_linear());
        // Linear in x: central differences are exact up to rounding.
        fd_check(d.as_ref(), &x, &ctx, 1e-6, 1.0, 1e-7);
    }
}

#[test]
fn bad_inputs_are_typed_errors() {
    let c = circuit(&["a"], vec![("r1", res(Some(0), None, 0.0))]);
    assert!(matches!(
        instantiate(&c),
        Err(DeviceError::BadParameter {
            param: "resistance",
            ..
        })
    ));
    let c = circuit(&["a"], vec![("r1", res(Some(3), None, 1.0))]);
    assert!(matches!(
        instantiate(&c),
        Err(DeviceError::BadReference { index: 3, .. })
    ));
    let c = circuit(
        &["a"],
        vec![
            ("l1", ind(Some(0), None, 1e-6, 0.0)),
            (
                "k1",
                ElementKind::Coupling {
                    inductors: ids(&[0, 2]),
                    k: 0.1,
                },
            ),
        ],
    );
    assert!(matches!(
        instantiate(&c),
        Err(DeviceError::BadReference {
            what: "element",
            ..
        })
    ));
    let c = circuit(
        &["a"],
        vec![
            ("l1", ind(Some(0), None, 1e-6, 0.0)),
            ("r1", res(Some(0), None, 1.0)),
            (
                "k1",
                ElementKind::Coupling {
                    inductors: ids(&[0, 1]),
                    k: 0.1,
                },
            ),
        ],
    );
    assert!(matches!(
        instantiate(&c),
        Err(DeviceError::WrongKind { .. })
    ));
    let c = circuit(
        &["a"],
        vec![
            ("l1", ind(Some(0), None, 1e-6, 0.0)),
            ("l2", ind(Some(0), None, 1e-6, 0.0)),
            (
                "k1",
                ElementKind::Coupling {
                    inductors: ids(&[0, 1]),
                    k: 1.5,
                },
            ),
        ],
    );
    assert!(matches!(
        instantiate(&c),
        Err(DeviceError::BadParameter { param: "k", .. })
    ));
    let bad_wave = Waveform {
        dc: 0.0,
        shape: Some(Shape::Table(vec![(1.0, 0.0), (0.5, 1.0)])),
    };
    let c = circuit(&["a"], vec![("v1", vsrc(Some(0), None, bad_wave, 0.0))]);
    assert!(matches!(
        instantiate(&c),
        Err(DeviceError::BadParameter { .. })
    ));
}

/// Small-signal solve at angular frequency `w` for the excitation of element
/// `src`: (G + jωC) X = b written as the real block system
/// [[G, −ωC], [ωC, G]] [Xr; Xi] = [b; 0]. Returns (Xr, Xi).
fn ac_solve(set: &tankwave_devices::DeviceSet, src: usize, w: f64) -> (Vec<f64>, Vec<f64>) {
    let n = set.n_unknowns;
    let s = stamp_all(set, &vec![0.0; n], &EvalCtx::default());
    let m = 2 * n;
    let mut a = vec![0.0; m * m];
    for r in 0..n {
        for c in 0..n {
            a[r * m + c] = s.g_at(r, c);
            a[(r + n) * m + c + n] = s.g_at(r, c);
            a[r * m + c + n] = -w * s.c_at(r, c);
            a[(r + n) * m + c] = w * s.c_at(r, c);
        }
    }
    let mut b = vec![0.0; m];
    let d = set
        .devices
        .iter()
        .find(|d| d.element().index() == src)
        .unwrap();
    d.ac_excitation(&mut |r, v| b[r] += v);
    let x = solve(a, b);
    (x[..n].to_vec(), x[n..].to_vec())
}

// Coupled coils with currents entering the first terminals:
// V1 = jωL1 I1 + jωM I2, V2 = jωM I1 + jωL2 I2 (W. H. Hayt, J. E. Kemmerly,
// Engineering Circuit Analysis, ch. "Magnetically coupled circuits"; from memory).
// Open secondary: V2/V1 = M/L1 = k √(L2/L1).
#[test]
fn coupled_coils_open_secondary_ratio() {
    let c = circuit(
        &["in", "out"],
        vec![
            ("v1", vsrc(Some(0), None, dc(0.0), 0.0)),
            ("l1", ind(Some(0), None, 1e-6, 0.0)),
            ("l2", ind(Some(1), None, 4e-6, 0.0)),
            (
                "k1",
                ElementKind::Coupling {
                    inductors: ids(&[1, 2]),
                    k: 0.9,
                },
            ),
            ("rl", res(Some(1), None, 1e9)),
        ],
    );
    let set = instantiate(&c).unwrap();
    let (xr, xi) = ac_solve(&set, 0, std::f64::consts::TAU * 1e6);
    assert!((xr[0] - 1.0).abs() < 1e-12 && xi[0].abs() < 1e-12);
    // The 1 GΩ load draws ~1.8 nA: relative loading ≈ ωL2/1e9 ≈ 2.5e-8.
    assert!(
        (xr[1] - 1.8).abs() < 1e-6,
        "V[out] = {} + j{}",
        xr[1],
        xi[1]
    );
    assert!(xi[1].abs() < 1e-6);
}

// Series connection of coupled coils: L = L1 + L2 ± 2M, aiding when the current
// enters both at their first terminal (same textbook, from memory).
#[test]
fn coupled_coils_in_series_aid_and_oppose() {
    for (k, l_eq) in [
        (0.5, 1e-6 + 4e-6 + 2.0 * 1e-6),
        (-0.5, 1e-6 + 4e-6 - 2.0 * 1e-6),
    ] {
        let c = circuit(
            &["in", "mid"],
            vec![
                ("v1", vsrc(Some(0), None, dc(0.0), 0.0)),
                ("l1", ind(Some(0), Some(1), 1e-6, 0.0)),
                ("l2", ind(Some(1), None, 4e-6, 0.0)),
                (
                    "k1",
                    ElementKind::Coupling {
                        inductors: ids(&[1, 2]),
                        k,
                    },
                ),
            ],
        );
        let set = instantiate(&c).unwrap();
        let w = std::f64::consts::TAU * 3e6;
        let (xr, xi) = ac_solve(&set, 0, w);
        // The circuit draws −j from the source: Z = 1 / (−j) = jωL_eq.
        let (jr, ji) = (-xr[2], -xi[2]);
        let den = jr * jr + ji * ji;
        let (zr, zi) = (jr / den, -ji / den);
        // One direct solve (partial pivoting) of a small real system whose
        // entries are 1 and ωL, ωM ≈ 19–75 Ω, with little cancellation (L_eq is
        // 7 or 3 µH from terms of 1–4 µH): only a few ulps of rounding separate Z
        // from jωL_eq (no element dissipates, so the real part is 0 in exact
        // arithmetic). 1e-12 relative covers that rounding.
        assert!(zr.abs() < 1e-12 * zi.abs(), "k={k}: Z = {zr} + j{zi}");
        assert!(
            (zi - w * l_eq).abs() < 1e-12 * w * l_eq,
            "k={k}: X = {zi}, want {}",
            w * l_eq
        );
    }
}
