//! Unknown numbering and naming by `instantiate` across element kinds, and
//! refusals that carry the numbers.

mod common;
use common::*;
use tankwave_circuit::ir::{
    BjtParams, DiodeParams, ElementKind, Model, ModelParams, Origin, Waveform,
};
use tankwave_devices::{instantiate, DeviceError, UnknownKind};

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
                    p: Some(0),
                    n: None,
                    wave: Waveform::default(),
                    rs: 50.0,
                },
            ),
            (
                "d1",
                ElementKind::Diode {
                    a: Some(1),
                    k: None,
                    model: 0,
                    area: 1.0,
                },
            ),
            (
                "q1",
                ElementKind::Bjt {
                    c: Some(2),
                    b: Some(1),
                    e: None,
                    model: 1,
                    area: 1.0,
                },
            ),
            (
                "lc",
                ElementKind::Inductor {
                    a: Some(2),
                    b: Some(0),
                    l: 1e-6,
                    series_r: 0.0,
                    rating_a: None,
                },
            ),
            (
                "q2",
                ElementKind::Bjt {
                    c: Some(2),
                    b: Some(1),
                    e: None,
                    model: 2,
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
    let q2 = set.devices.iter().find(|d| d.element() == 4).unwrap();
    assert_eq!(q2.terminals(), &[Some(2), Some(1), None]);
}

#[test]
fn model_kind_mismatch_and_temperature_are_refused() {
    let mut c = circuit(
        &["a"],
        vec![(
            "d1",
            ElementKind::Diode {
                a: Some(0),
                k: None,
                model: 0,
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
        a: Some(0),
        k: None,
        model: 5,
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
                c: Some(0),
                b: Some(1),
                e: None,
                model: 0,
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
