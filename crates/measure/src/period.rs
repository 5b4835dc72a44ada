//! The input of every measurement: one period of a steady state, checked.

use tankwave_circuit::{Circuit, ElementId, NodeId};

use crate::error::MeasureError;

/// One period of a periodic steady state, as the solver hands it over.
///
/// The voltage across an element is the difference of its terminal node
/// voltages (ground = 0).
#[derive(Debug, Clone, Copy)]
pub struct PeriodData<'a> {
    /// The elaborated circuit the samples belong to.
    pub circuit: &'a Circuit,
    /// Fundamental frequency, Hz.
    pub freq: f64,
    /// `[node index as circuit.nodes][n]`: one period, uniform, N samples
    /// (N a power of two, N > 2K), V.
    pub node_voltages: &'a [Vec<f64>],
    /// `[element index][terminal][n]`: current INTO the element at that
    /// terminal (ground terminal included), A. Terminals in the order of
    /// `ElementKind::terminals()`; a coupling has none.
    pub terminal_currents: &'a [Vec<Vec<f64>>],
    /// `[element index][n]`: the intrinsic transport current of an element
    /// that has one (a bipolar transistor's collector transport current, A,
    /// physical sign), `None` for the others. The conduction angle is measured
    /// on it when given; an empty slice means none is known and the terminal
    /// current is used.
    pub transport_currents: &'a [Option<Vec<f64>>],
    /// Number of harmonics K to measure.
    pub harmonics: usize,
    /// `[node index]`: the solver's numerical floor of each node voltage, V
    /// (a peak harmonic amplitude below which the method does not resolve a
    /// harmonic of that node; docs/measurements.md, "Numerical floor").
    /// Empty when the solver did not estimate one: every harmonic then
    /// counts as resolved.
    pub node_floors: &'a [f64],
}

/// The average power each element absorbs over the period, W, indexed as
/// `circuit.elements` (mean of Σ v_k i_k over its terminals): the heat a
/// transistor or diode puts into its thermal network.
pub fn average_absorbed(data: &PeriodData<'_>) -> Result<Vec<f64>, MeasureError> {
    let p = Period::new(*data)?;
    let n = p.samples.max(1) as f64;
    Ok(data
        .circuit
        .element_ids()
        .map(|(id, _)| p.absorbed(id).iter().sum::<f64>() / n)
        .collect())
}

/// A validated view of [`PeriodData`] with helpers for element voltages.
#[derive(Debug)]
pub(crate) struct Period<'a> {
    pub data: PeriodData<'a>,
    pub samples: usize,
    zeros: Vec<f64>,
}

/// One sampled series: `samples` long and finite everywhere.
fn check_series(what: impl Fn() -> String, x: &[f64], samples: usize) -> Result<(), MeasureError> {
    if x.len() != samples {
        return Err(MeasureError::Length {
            what: what(),
            expected: samples,
            got: x.len(),
        });
    }
    check_finite(what, x)
}

fn check_finite(what: impl Fn() -> String, x: &[f64]) -> Result<(), MeasureError> {
    match x.iter().enumerate().find(|(_, v)| !v.is_finite()) {
        Some((index, &value)) => Err(MeasureError::NotFinite {
            what: what(),
            index,
            value,
        }),
        None => Ok(()),
    }
}

impl<'a> Period<'a> {
    /// Check every shape, length and value of `data`.
    pub fn new(data: PeriodData<'a>) -> Result<Self, MeasureError> {
        let c = data.circuit;
        if !(data.freq.is_finite() && data.freq > 0.0) {
            return Err(MeasureError::BadFrequency { freq: data.freq });
        }
        if data.node_voltages.len() != c.nodes.len() {
            return Err(MeasureError::NodeCount {
                expected: c.nodes.len(),
                got: data.node_voltages.len(),
            });
        }
        if data.terminal_currents.len() != c.elements.len() {
            return Err(MeasureError::ElementCount {
                expected: c.elements.len(),
                got: data.terminal_currents.len(),
            });
        }
        let samples = data
            .node_voltages
            .first()
            .map(|v| v.len())
            .or_else(|| {
                data.terminal_currents
                    .iter()
                    .flat_map(|t| t.iter())
                    .map(|v| v.len())
                    .next()
            })
            .ok_or(MeasureError::Empty)?;
        crate::spectrum::check_samples(samples, data.harmonics)?;
        for (k, v) in data.node_voltages.iter().enumerate() {
            check_series(
                || format!("voltage of node {}", c.node_name(NodeId::node(k))),
                v,
                samples,
            )?;
        }
        for (e, (el, cur)) in c.elements.iter().zip(data.terminal_currents).enumerate() {
            let terms = el.kind.terminals();
            if cur.len() != terms.len() {
                return Err(MeasureError::TerminalCount {
                    element: el.name.clone(),
                    expected: terms.len(),
                    got: cur.len(),
                });
            }
            for node in terms.iter().filter_map(|n| n.index()) {
                if node >= c.nodes.len() {
                    return Err(MeasureError::NodeIndex {
                        element: el.name.clone(),
                        node,
                        nodes: c.nodes.len(),
                    });
                }
            }
            for (t, i) in cur.iter().enumerate() {
                check_series(
                    || format!("current of element {} (#{e}) terminal {t}", el.name),
                    i,
                    samples,
                )?;
            }
        }
        if !data.transport_currents.is_empty() && data.transport_currents.len() != c.elements.len()
        {
            return Err(MeasureError::ElementCount {
                expected: c.elements.len(),
                got: data.transport_currents.len(),
            });
        }
        for (e, i) in data.transport_currents.iter().enumerate() {
            let Some(i) = i else { continue };
            let el = c.elements.get(e).map(|el| el.name.as_str()).unwrap_or("?");
            check_series(
                || format!("transport current of element {el} (#{e})"),
                i,
                samples,
            )?;
        }
        Ok(Self {
            data,
            samples,
            zeros: vec![0.0; samples],
        })
    }

    /// Voltage of a node over the period (ground gives zeros).
    pub fn node(&self, n: NodeId) -> &[f64] {
        match n.index() {
            None => &self.zeros,
            Some(i) => self
                .data
                .node_voltages
                .get(i)
                .map(|v| v.as_slice())
                .unwrap_or(&self.zeros),
        }
    }

    /// V_a − V_b over the period.
    pub fn across(&self, a: NodeId, b: NodeId) -> Vec<f64> {
        self.node(a)
            .iter()
            .zip(self.node(b))
            .map(|(x, y)| x - y)
            .collect()
    }

    /// The numerical floor of the voltage between two nodes, V: the sum of
    /// the nodes' floors (ground has none); `None` when no floor is known.
    pub fn floor_across(&self, a: NodeId, b: NodeId) -> Option<f64> {
        let f = self.data.node_floors;
        if f.is_empty() {
            return None;
        }
        let of = |n: NodeId| n.index().map_or(Some(0.0), |i| f.get(i).copied());
        let v = of(a)? + of(b)?;
        v.is_finite().then_some(v.max(0.0))
    }

    /// Current into element `e` at terminal `t` (zeros if absent).
    pub fn current(&self, e: ElementId, t: usize) -> &[f64] {
        self.data
            .terminal_currents
            .get(e.index())
            .and_then(|c| c.get(t))
            .map(|v| v.as_slice())
            .unwrap_or(&self.zeros)
    }

    /// Transport current of element `e`, if the solver gave one.
    pub fn transport(&self, e: ElementId) -> Option<&[f64]> {
        self.data
            .transport_currents
            .get(e.index())
            .and_then(|c| c.as_deref())
    }

    /// Instantaneous power absorbed by element `e`: Σ_k v_k·i_k over its
    /// terminals, voltages from ground.
    pub fn absorbed(&self, e: ElementId) -> Vec<f64> {
        let mut p = vec![0.0; self.samples];
        if let Some(el) = self.data.circuit.elements.get(e.index()) {
            for (t, node) in el.kind.terminals().into_iter().enumerate() {
                let v = self.node(node);
                let i = self.current(e, t);
                for ((pk, vk), ik) in p.iter_mut().zip(v).zip(i) {
                    *pk += vk * ik;
                }
            }
        }
        p
    }
}
