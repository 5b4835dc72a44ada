//! Shared helpers for the measurement tests: synthetic waveforms and
//! hand-built circuits.
#![allow(dead_code)]

use std::f64::consts::PI;

use tankwave_circuit::{
    BjtParams, Circuit, Element, ElementKind, Model, ModelId, ModelParams, NodeId, Origin, Waveform,
};

/// Truncated cosine of peak 1 and full conduction angle `full_deg`, N samples,
/// pulse centred on sample 0: i = (cos x − cos θ)/(1 − cos θ) for |x| < θ.
pub fn truncated_cosine(full_deg: f64, n: usize) -> Vec<f64> {
    let th = (full_deg / 2.0).to_radians();
    (0..n)
        .map(|k| {
            let x = 2.0 * PI * k as f64 / n as f64;
            let c = x.cos();
            if c > th.cos() {
                (c - th.cos()) / (1.0 - th.cos())
            } else {
                0.0
            }
        })
        .collect()
}

/// Closed forms of the truncated-cosine coefficients (S. C. Cripps, RF Power
/// Amplifiers for Wireless Communications, 2nd ed., 2006, ch. 3; H. L. Krauss,
/// C. W. Bostian, F. H. Raab, Solid State Radio Engineering, 1980 — recalled
/// from memory in check-values.md, confirmed there by quadrature).
pub fn alpha_closed(n: usize, full_deg: f64) -> f64 {
    let th = (full_deg / 2.0).to_radians();
    let (s, c) = (th.sin(), th.cos());
    match n {
        0 => (s - th * c) / (PI * (1.0 - c)),
        1 => (th - s * c) / (PI * (1.0 - c)),
        _ => {
            let nf = n as f64;
            2.0 * ((nf * th).sin() * c - nf * (nf * th).cos() * s)
                / (PI * nf * (nf * nf - 1.0) * (1.0 - c))
        }
    }
}

/// Samples of `f(x)` at x = 2πk/N.
pub fn sample(n: usize, f: impl Fn(f64) -> f64) -> Vec<f64> {
    (0..n).map(|k| f(2.0 * PI * k as f64 / n as f64)).collect()
}

pub fn el(name: &str, kind: ElementKind) -> Element {
    Element {
        name: name.to_string(),
        kind,
        origin: Origin::default(),
    }
}

/// The node handle of node index `i` (`None` is ground).
pub fn nid(i: Option<usize>) -> NodeId {
    i.map(NodeId::node).unwrap_or(NodeId::GROUND)
}

pub fn resistor(
    name: &str,
    a: Option<usize>,
    b: Option<usize>,
    r: f64,
    rating_w: Option<f64>,
) -> Element {
    el(
        name,
        ElementKind::Resistor {
            a: nid(a),
            b: nid(b),
            r,
            rating_w,
            ntc_b: None,
        },
    )
}

pub fn vsource(name: &str, p: Option<usize>, n: Option<usize>, dc: f64, rs: f64) -> Element {
    el(
        name,
        ElementKind::VoltageSource {
            p: nid(p),
            n: nid(n),
            wave: Waveform { dc, shape: None },
            rs,
        },
    )
}

pub fn bjt(
    name: &str,
    c: Option<usize>,
    b: Option<usize>,
    e: Option<usize>,
    model: usize,
) -> Element {
    el(
        name,
        ElementKind::Bjt {
            c: nid(c),
            b: nid(b),
            e: nid(e),
            model: ModelId::new(model),
            area: 1.0,
        },
    )
}

pub fn bjt_model(params: BjtParams) -> Model {
    Model {
        name: "m".to_string(),
        params: ModelParams::Bjt(params),
        origin: Origin::default(),
    }
}

/// A circuit with these nodes and elements at 25 °C.
pub fn circuit(nodes: &[&str], elements: Vec<Element>) -> Circuit {
    Circuit {
        temperature_k: 298.15,
        nodes: nodes.iter().map(|s| s.to_string()).collect(),
        elements,
        ..Default::default()
    }
}
