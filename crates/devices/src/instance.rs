//! Building the devices of a circuit and numbering its unknowns.
//!
//! Unknown order:
//! 1. the node voltages, in [`Circuit::nodes`] order (`V[node]`), `n_nodes` of them;
//! 2. then, walking the elements in file order, the extra unknowns each one owns:
//!    * voltage source, inductor: its branch current `I[name]`;
//!    * diode with `r_series > 0`: its internal anode `V[name:a']`;
//!    * bipolar transistor: its internal collector, base and emitter nodes
//!      `V[name:c']`, `V[name:b']`, `V[name:e']`, each only when that ohmic
//!      resistance is nonzero (the order is c', b', e').
//!
//! The names are written by [`crate::names`], for display and files; the
//! [`DeviceSet`] maps the circuit's handles to the unknowns
//! ([`DeviceSet::voltage_of`] a node, [`DeviceSet::branch_of`] an element,
//! [`DeviceSet::internal_of`] the terminal an internal node sits behind).
//!
//! Couplings own no unknowns; they are built after every inductor branch is
//! known, so a coupling may name inductors declared after it, and they come
//! last in [`DeviceSet::devices`] (every other device is in element order;
//! [`Device::element`] gives each one's element).
//!
//! Every parameter that would make an equation undefined (a zero resistance,
//! a non-finite value, |k| > 1, …) is refused with a [`DeviceError`] carrying
//! the number.

use crate::bjt::{Bjt, BjtNodes};
use crate::contract::{Device, DeviceSet, Idx, UnknownId, UnknownKind};
use crate::diode::Diode;
use crate::error::DeviceError;
use crate::linear::{Capacitor, Coupling, CurrentSource, Inductor, Resistor, VoltageSource};
use crate::names;
use crate::waveform;
use tankwave_circuit::ir::{Circuit, ElementId, ElementKind, ModelParams, NodeId, Terminal};

fn bad(element: &str, param: &'static str, value: f64, reason: &'static str) -> DeviceError {
    DeviceError::BadParameter {
        element: element.to_string(),
        param,
        value,
        reason,
    }
}

fn positive(element: &str, param: &'static str, v: f64) -> Result<f64, DeviceError> {
    if v.is_finite() && v > 0.0 {
        Ok(v)
    } else {
        Err(bad(element, param, v, "must be finite and > 0"))
    }
}

fn nonneg(element: &str, param: &'static str, v: f64) -> Result<f64, DeviceError> {
    if v.is_finite() && v >= 0.0 {
        Ok(v)
    } else {
        Err(bad(element, param, v, "must be finite and ≥ 0"))
    }
}

struct Builder<'c> {
    circuit: &'c Circuit,
    names: Vec<String>,
    kinds: Vec<UnknownKind>,
    branches: Vec<Option<UnknownId>>,
    internals: Vec<(Terminal, UnknownId)>,
    states: Vec<(ElementId, UnknownId)>,
}

impl Builder<'_> {
    fn node(&self, element: &str, n: NodeId) -> Result<Idx, DeviceError> {
        match n.index() {
            None => Ok(None),
            Some(i) if i < self.circuit.nodes.len() => Ok(Some(i)),
            Some(i) => Err(DeviceError::BadReference {
                element: element.to_string(),
                what: "node",
                index: i,
                available: self.circuit.nodes.len(),
            }),
        }
    }
    fn alloc(&mut self, name: String, kind: UnknownKind) -> usize {
        self.names.push(name);
        self.kinds.push(kind);
        self.names.len() - 1
    }
    /// Allocate the branch current of element `id`.
    fn branch(&mut self, id: ElementId, name: &str) -> usize {
        let j = self.alloc(names::branch_current(name), UnknownKind::Current);
        self.branches[id.index()] = Some(UnknownId::new(j));
        j
    }
    /// Allocate an internal unknown of element `id` behind no one terminal.
    fn state(&mut self, id: ElementId, name: String, kind: UnknownKind) -> usize {
        let j = self.alloc(name, kind);
        self.states.push((id, UnknownId::new(j)));
        j
    }
    /// Allocate the internal node behind terminal `t`, named `tag'`.
    fn internal(&mut self, t: Terminal, name: &str, tag: &str) -> usize {
        let j = self.alloc(names::internal_node(name, tag), UnknownKind::Voltage);
        self.internals.push((t, UnknownId::new(j)));
        j
    }
}

/// Build every device of `circuit`, allocating the extra unknowns and naming all of them.
pub fn instantiate(circuit: &Circuit) -> Result<DeviceSet, DeviceError> {
    instantiate_at(circuit, &[])
}

/// Like [`instantiate`], with the temperature (K) of each element given
/// by `temps[element index]` where it is `Some` (a junction heated by its
/// own dissipation); every other element, and every element past the end
/// of `temps`, is at the circuit's ambient temperature. The temperature
/// laws of the models are applied at these temperatures.
pub fn instantiate_at(circuit: &Circuit, temps: &[Option<f64>]) -> Result<DeviceSet, DeviceError> {
    let ambient = circuit.temperature_k;
    let temp_of = |id: ElementId| temps.get(id.index()).copied().flatten().unwrap_or(ambient);
    let mut b = Builder {
        circuit,
        names: circuit
            .nodes
            .iter()
            .map(|n| names::node_voltage(n))
            .collect(),
        kinds: vec![UnknownKind::Voltage; circuit.nodes.len()],
        branches: vec![None; circuit.elements.len()],
        internals: Vec::new(),
        states: Vec::new(),
    };
    let mut devices: Vec<Box<dyn Device>> = Vec::with_capacity(circuit.elements.len());
    // (branch, inductance) of each inductor element, for couplings.
    let mut coils: Vec<Option<(usize, f64)>> = vec![None; circuit.elements.len()];
    let mut couplings = Vec::new();

    for (id, el) in circuit.element_ids() {
        let name = el.name.as_str();
        match &el.kind {
            ElementKind::Resistor {
                a, b: bn, r, ntc_b, ..
            } => {
                let r = positive(name, "resistance", *r)?;
                // a thermistor follows its B-parameter law at its temperature
                let r = match ntc_b {
                    Some(b) => positive(
                        name,
                        "resistance at its temperature",
                        tankwave_circuit::thermistor_resistance(r, *b, temp_of(id)),
                    )?,
                    None => r,
                };
                devices.push(Box::new(Resistor::new(
                    id,
                    b.node(name, *a)?,
                    b.node(name, *bn)?,
                    r,
                )));
            }
            ElementKind::Capacitor { a, b: bn, c, .. } => {
                let c = nonneg(name, "capacitance", *c)?;
                devices.push(Box::new(Capacitor::new(
                    id,
                    b.node(name, *a)?,
                    b.node(name, *bn)?,
                    c,
                )));
            }
            ElementKind::Inductor {
                a,
                b: bn,
                l,
                series_r,
                ..
            } => {
                let l = positive(name, "inductance", *l)?;
                let r = nonneg(name, "r", *series_r)?;
                let (na, nb) = (b.node(name, *a)?, b.node(name, *bn)?);
                let j = b.branch(id, name);
                coils[id.index()] = Some((j, l));
                devices.push(Box::new(Inductor::new(id, na, nb, j, l, r)));
            }
            ElementKind::Coupling { inductors, k } => {
                if !(k.is_finite() && k.abs() <= 1.0) {
                    return Err(bad(
                        name,
                        "k",
                        *k,
                        "coupling coefficient must satisfy |k| ≤ 1",
                    ));
                }
                if inductors.len() < 2 {
                    return Err(DeviceError::WrongKind {
                        element: name.to_string(),
                        reason: format!(
                            "a coupling needs at least 2 inductors, got {}",
                            inductors.len()
                        ),
                    });
                }
                couplings.push((id, inductors.clone(), *k));
            }
            ElementKind::VoltageSource { p, n, wave, rs } => {
                waveform::check(wave, name)?;
                let rs = nonneg(name, "rs", *rs)?;
                let (np, nn) = (b.node(name, *p)?, b.node(name, *n)?);
                let j = b.branch(id, name);
                devices.push(Box::new(VoltageSource::new(
                    id,
                    np,
                    nn,
                    j,
                    wave.clone(),
                    rs,
                )));
            }
            ElementKind::CurrentSource { p, n, wave } => {
                waveform::check(wave, name)?;
                devices.push(Box::new(CurrentSource::new(
                    id,
                    b.node(name, *p)?,
                    b.node(name, *n)?,
                    wave.clone(),
                )));
            }
            ElementKind::Measured { ports, network } => {
                let mut terms = Vec::with_capacity(2 * ports.len());
                for (p, n) in ports {
                    terms.push(b.node(name, *p)?);
                    terms.push(b.node(name, *n)?);
                }
                if ports.len() != network.ports {
                    return Err(DeviceError::WrongKind {
                        element: name.to_string(),
                        reason: format!(
                            "{} ports wired for a {}-port network",
                            ports.len(),
                            network.ports
                        ),
                    });
                }
                let d = crate::measured::Measured::new(id, terms, network.clone()).ok_or_else(|| {
                    DeviceError::WrongKind {
                        element: name.to_string(),
                        reason: "the measured network has no value at 0 Hz (the bias point): its file does not cover it and it names no out-of-band rule".into(),
                    }
                })?;
                let rows: Vec<usize> = crate::measured::Measured::unknowns(network)
                    .into_iter()
                    .map(|(tag, kind)| {
                        let full = match kind {
                            UnknownKind::Voltage => names::internal_voltage_state(name, &tag),
                            _ => names::internal_state(name, &tag),
                        };
                        b.state(id, full, kind)
                    })
                    .collect();
                devices.push(Box::new(d.with_unknowns(&rows)));
            }
            ElementKind::Diode { a, k, model, area } => {
                let p = match circuit.models.get(model.index()).map(|m| &m.params) {
                    Some(ModelParams::Diode(p)) => p,
                    Some(_) => {
                        return Err(DeviceError::WrongKind {
                            element: name.to_string(),
                            reason: format!(
                                "model `{}` is not a diode model",
                                circuit.models[*model].name
                            ),
                        })
                    }
                    None => {
                        return Err(DeviceError::BadReference {
                            element: name.to_string(),
                            what: "model",
                            index: model.index(),
                            available: circuit.models.len(),
                        })
                    }
                };
                let area = positive(name, "area", *area)?;
                let temp = temp_of(id);
                positive(name, "temperature", temp)?;
                crate::diode::check_params(p, name)?;
                let (na, nk) = (b.node(name, *a)?, b.node(name, *k)?);
                let ai = if p.r_series > 0.0 {
                    Some(b.internal(id.terminal(0), name, "a"))
                } else {
                    na
                };
                let d = Diode::new(id, na, nk, ai, p, area, temp);
                let is_t = d.sat_current();
                if !(is_t.is_finite() && is_t > 0.0) {
                    return Err(bad(
                        name,
                        "temperature",
                        temp,
                        "scaled saturation current is 0 or overflows at this temperature",
                    ));
                }
                devices.push(Box::new(d));
            }
            ElementKind::Bjt {
                c,
                b: bb,
                e,
                model,
                area,
            } => {
                let p = match circuit.models.get(model.index()).map(|m| &m.params) {
                    Some(ModelParams::Bjt(p)) => p,
                    Some(_) => {
                        return Err(DeviceError::WrongKind {
                            element: name.to_string(),
                            reason: format!(
                                "model `{}` is not a bipolar model",
                                circuit.models[*model].name
                            ),
                        })
                    }
                    None => {
                        return Err(DeviceError::BadReference {
                            element: name.to_string(),
                            what: "model",
                            index: model.index(),
                            available: circuit.models.len(),
                        })
                    }
                };
                let area = positive(name, "area", *area)?;
                let temp = temp_of(id);
                positive(name, "temperature", temp)?;
                crate::bjt::check_params(p, name, area, temp)?;
                let (nc, nb, ne) = (b.node(name, *c)?, b.node(name, *bb)?, b.node(name, *e)?);
                let need = Bjt::internal_nodes_needed(p);
                let mut internal = |need: bool, ext: Idx, terminal: usize, tag: &str| {
                    if need {
                        Some(b.internal(id.terminal(terminal), name, tag))
                    } else {
                        ext
                    }
                };
                let ci = internal(need[0], nc, 0, "c");
                let bi = internal(need[1], nb, 1, "b");
                let ei = internal(need[2], ne, 2, "e");
                // the junction side of the epi layer, behind the collector's
                // own internal node
                let cj = if need[3] {
                    Some(b.state(id, names::internal_node(name, "cj"), UnknownKind::Voltage))
                } else {
                    ci
                };
                let phase = if need[4] {
                    [
                        Some(b.state(
                            id,
                            names::internal_state(name, "phase1"),
                            UnknownKind::Current,
                        )),
                        Some(b.state(
                            id,
                            names::internal_state(name, "phase2"),
                            UnknownKind::Current,
                        )),
                    ]
                } else {
                    [None, None]
                };
                let nodes = BjtNodes {
                    c: nc,
                    b: nb,
                    e: ne,
                    ci,
                    cj,
                    bi,
                    ei,
                    phase,
                };
                devices.push(Box::new(Bjt::new(id, nodes, p, area, temp)));
            }
        }
    }

    for (id, members, k) in couplings {
        let name = &circuit.elements[id].name;
        let mut list = Vec::with_capacity(members.len());
        for m in members {
            match coils.get(m.index()) {
                Some(Some(c)) => {
                    if list.iter().any(|&(j, _)| j == c.0) {
                        return Err(DeviceError::WrongKind {
                            element: name.clone(),
                            reason: format!(
                                "inductor `{}` is listed twice",
                                circuit.elements[m].name
                            ),
                        });
                    }
                    list.push(*c);
                }
                Some(None) => {
                    return Err(DeviceError::WrongKind {
                        element: name.clone(),
                        reason: format!(
                            "`{}` is a {}, not an inductor",
                            circuit.elements[m].name,
                            circuit.elements[m].kind.keyword()
                        ),
                    })
                }
                None => {
                    return Err(DeviceError::BadReference {
                        element: name.clone(),
                        what: "element",
                        index: m.index(),
                        available: circuit.elements.len(),
                    })
                }
            }
        }
        devices.push(Box::new(Coupling::new(id, list, k)));
    }

    let mut state_offsets = Vec::with_capacity(devices.len());
    let mut state_len = 0;
    for d in &devices {
        state_offsets.push(state_len);
        state_len += d.state_len();
    }
    Ok(DeviceSet {
        devices,
        n_unknowns: b.names.len(),
        n_nodes: circuit.nodes.len(),
        names: b.names,
        kinds: b.kinds,
        branches: b.branches,
        internals: b.internals,
        states: b.states,
        state_offsets,
        state_len,
    })
}
