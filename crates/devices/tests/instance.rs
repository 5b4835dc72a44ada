//! Unknown numbering and naming by `instantiate` across element kinds, and
//! refusals that carry the numbers.

mod common;
use common::*;
use tankwave_circuit::ir::{
    BjtParams, DiodeParams, ElementKind, Model, ModelId, ModelParams, NodeId, Origin, Waveform,
};
use tankwave_devices::{instantiate, DeviceError, UnknownId, UnknownKind};

fn model(name: &str, params: ModelParams) -> Model {
    Model {
        name: name.into(),
        params,
        origin: Origin::default(),
    }
}

#[test]
fn extra_unknowns_follow_element_order() {
    let mut c = circuit(
        &["in", "b", "c"],
        vec![
            (
                "vdrv",
                ElementKind::VoltageSource {
                    p: NodeId::node(0),
                    n: NodeId::GROUND,
                    wave: Waveform::default(),
                    rs: 50.0,
                },
            ),
            (
                "d1",
                ElementKind::Diode {
                    a: NodeId::node(1),
                    k: NodeId::GROUND,
                    model: ModelId::new(0),
                    area: 1.0,
                },
            ),
            (
                "q1",
                ElementKind::Bjt {
                    c: NodeId::node(2),
                    b: NodeId::node(1),
                    e: NodeId::GROUND,
                    model: ModelId::new(1),
                    area: 1.0,
                },
            ),
            (
                "lc",
                ElementKind::Inductor {
                    a: NodeId::node(2),
                    b: NodeId::node(0),
                    l: 1e-6,
                    series_r: 0.0,
                    rating_a: None,
                },
            ),
            (
                "q2",
                ElementKind::Bjt {
                    c: NodeId::node(2),
                    b: NodeId::node(1),
                    e: NodeId::GROUND,
                    model: ModelId::new(2),
                    area: 2.0,
                },
            ),
        ],
    );
    c.models.push(model(
        "dm",
        ModelParams::Diode(DiodeParams {
            r_series: 1.0,
            ..DiodeParams::default()
        }),
    ));
    c.models.push(model(
        "qa",
        ModelParams::Bjt(BjtParams {
            r_base: 2.0,
            ..BjtParams::default()
        }),
    ));
    c.models.push(model(
        "qb",
        ModelParams::Bjt(BjtParams {
            r_base: 1.0,
            r_collector: 0.1,
            r_emitter: 0.05,
            ..BjtParams::default()
        }),
    ));
    let set = instantiate(&c).unwrap();
    let want = [
        "V[in]", "V[b]", "V[c]", "I[vdrv]", "V[d1:a']", "V[q1:b']", "I[lc]", "V[q2:c']",
        "V[q2:b']", "V[q2:e']",
    ];
    assert_eq!(set.names, want);
    assert_eq!(set.n_nodes, 3);
    assert_eq!(set.n_unknowns, want.len());
    let kinds: Vec<_> = set
        .kinds
        .iter()
        .map(|k| *k == UnknownKind::Current)
        .collect();
    assert_eq!(
        kinds,
        [false, false, false, true, false, false, true, false, false, false]
    );
    // State offsets are consecutive over the devices' state lengths.
    let mut off = 0;
    for (d, &o) in set.devices.iter().zip(&set.state_offsets) {
        assert_eq!(o, off);
        off += d.state_len();
    }
    assert_eq!(off, set.state_len);
    assert_eq!(set.initial_state().len(), set.state_len);
    // Every device knows its element; terminals are the external ones.
    let q2 = set
        .devices
        .iter()
        .find(|d| d.element().index() == 4)
        .unwrap();
    assert_eq!(q2.terminals(), &[Some(2), Some(1), None]);
    // The handles find the same unknowns the names say (the names are for
    // display only; code goes through the handles).
    let el = |n: &str| c.element(n).unwrap();
    let at = |u: Option<UnknownId>| u.map(|u| set.name(u).to_string());
    for node in ["in", "b", "c"] {
        let u = set.voltage_of(c.node(node).unwrap());
        assert_eq!(at(u), Some(format!("V[{node}]")));
        assert_eq!(set.kind(u.unwrap()), UnknownKind::Voltage);
    }
    assert_eq!(set.voltage_of(NodeId::GROUND), None);
    assert_eq!(set.voltage_of(NodeId::node(3)), None);
    assert_eq!(at(set.branch_of(el("vdrv"))), Some("I[vdrv]".into()));
    assert_eq!(at(set.branch_of(el("lc"))), Some("I[lc]".into()));
    assert_eq!(
        set.kind(set.branch_of(el("lc")).unwrap()),
        UnknownKind::Current
    );
    assert_eq!(set.branch_of(el("d1")), None);
    assert_eq!(
        at(set.internal_of(el("d1").terminal(0))),
        Some("V[d1:a']".into())
    );
    assert_eq!(set.internal_of(el("d1").terminal(1)), None);
    assert_eq!(
        at(set.internal_of(el("q1").terminal(1))),
        Some("V[q1:b']".into())
    );
    assert_eq!(set.internal_of(el("q1").terminal(0)), None);
    for (t, tag) in [(0, "c"), (1, "b"), (2, "e")] {
        let u = set.internal_of(el("q2").terminal(t));
        assert_eq!(at(u), Some(format!("V[q2:{tag}']")));
    }
    // Every unknown is reached by exactly one handle, and its name finds it back.
    let mut reached: Vec<UnknownId> = (0..c.nodes.len())
        .filter_map(|i| set.voltage_of(NodeId::node(i)))
        .collect();
    for (id, _) in c.element_ids() {
        reached.extend(set.branch_of(id));
        reached.extend((0..3).filter_map(|t| set.internal_of(id.terminal(t))));
    }
    reached.sort();
    assert_eq!(reached, set.unknowns().collect::<Vec<_>>());
    for u in set.unknowns() {
        assert_eq!(set.unknown(set.name(u)), Some(u));
    }
}

#[test]
fn model_kind_mismatch_and_temperature_are_refused() {
    let mut c = circuit(
        &["a"],
        vec![(
            "d1",
            ElementKind::Diode {
                a: NodeId::node(0),
                k: NodeId::GROUND,
                model: ModelId::new(0),
                area: 1.0,
            },
        )],
    );
    c.models
        .push(model("qa", ModelParams::Bjt(BjtParams::default())));
    assert!(matches!(
        instantiate(&c),
        Err(DeviceError::WrongKind { .. })
    ));
    c.models[0] = model("dm", ModelParams::Diode(DiodeParams::default()));
    c.temperature_k = 0.0;
    assert!(matches!(
        instantiate(&c),
        Err(DeviceError::BadParameter {
            param: "temperature",
            ..
        })
    ));
    // 1 K: IS(T) underflows to 0 (exp of about −1.3e4): refused rather than a dead junction.
    c.temperature_k = 1.0;
    match instantiate(&c) {
        Err(DeviceError::BadParameter {
            param: "temperature",
            value,
            ..
        }) => assert_eq!(value, 1.0),
        other => panic!("{other:?}"),
    }
    c.temperature_k = 300.0;
    c.elements[0].kind = ElementKind::Diode {
        a: NodeId::node(0),
        k: NodeId::GROUND,
        model: ModelId::new(5),
        area: 1.0,
    };
    assert!(matches!(
        instantiate(&c),
        Err(DeviceError::BadReference {
            what: "model",
            index: 5,
            ..
        })
    ));
}

#[test]
fn bjt_parameters_are_checked() {
    let mut c = circuit(
        &["c", "b"],
        vec![(
            "q1",
            ElementKind::Bjt {
                c: NodeId::node(0),
                b: NodeId::node(1),
                e: NodeId::GROUND,
                model: ModelId::new(0),
                area: 1.0,
            },
        )],
    );
    c.models.push(model(
        "qa",
        ModelParams::Bjt(BjtParams {
            sat_current: -1.0,
            ..BjtParams::default()
        }),
    ));
    assert!(matches!(
        instantiate(&c),
        Err(DeviceError::BadParameter { .. })
    ));
}
