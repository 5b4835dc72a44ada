//! Test support: build elaborated `Circuit` values directly in Rust (the
//! stage-file parser is developed separately).
#![allow(dead_code)]

use tankwave_circuit::ir::*;

/// Boltzmann constant, J/K (CODATA 2018, exact).
pub const K_B: f64 = 1.380649e-23;
/// Elementary charge, C (CODATA 2018, exact).
pub const Q_E: f64 = 1.602176634e-19;

/// A small circuit builder.
pub struct B {
    pub c: Circuit,
}

impl B {
    pub fn new() -> Self {
        Self {
            c: Circuit {
                temperature_k: 298.15,
                ..Circuit::default()
            },
        }
    }
    pub fn node(&mut self, name: &str) -> NodeId {
        if name == "gnd" {
            return None;
        }
        if let Some(i) = self.c.nodes.iter().position(|n| n == name) {
            return Some(i);
        }
        self.c.nodes.push(name.to_string());
        Some(self.c.nodes.len() - 1)
    }
    fn push(&mut self, name: &str, kind: ElementKind) -> ElementId {
        self.c.elements.push(Element {
            name: name.to_string(),
            kind,
            origin: Origin::default(),
        });
        self.c.elements.len() - 1
    }
    pub fn r(&mut self, name: &str, a: &str, b: &str, r: f64) -> ElementId {
        let (a, b) = (self.node(a), self.node(b));
        self.push(
            name,
            ElementKind::Resistor {
                a,
                b,
                r,
                rating_w: None,
            },
        )
    }
    pub fn cap(&mut self, name: &str, a: &str, b: &str, c: f64) -> ElementId {
        let (a, b) = (self.node(a), self.node(b));
        self.push(
            name,
            ElementKind::Capacitor {
                a,
                b,
                c,
                rating_v: None,
            },
        )
    }
    pub fn ind(&mut self, name: &str, a: &str, b: &str, l: f64, series_r: f64) -> ElementId {
        let (a, b) = (self.node(a), self.node(b));
        self.push(
            name,
            ElementKind::Inductor {
                a,
                b,
                l,
                series_r,
                rating_a: None,
            },
        )
    }
    pub fn couple(&mut self, name: &str, inductors: Vec<ElementId>, k: f64) -> ElementId {
        self.push(name, ElementKind::Coupling { inductors, k })
    }
    pub fn vsrc(&mut self, name: &str, p: &str, n: &str, wave: Waveform, rs: f64) -> ElementId {
        let (p, n) = (self.node(p), self.node(n));
        self.push(name, ElementKind::VSource { p, n, wave, rs })
    }
    pub fn vdc(&mut self, name: &str, p: &str, n: &str, dc: f64) -> ElementId {
        self.vsrc(name, p, n, Waveform { dc, shape: None }, 0.0)
    }
    pub fn isrc(&mut self, name: &str, p: &str, n: &str, wave: Waveform) -> ElementId {
        let (p, n) = (self.node(p), self.node(n));
        self.push(name, ElementKind::ISource { p, n, wave })
    }
    pub fn diode(&mut self, name: &str, a: &str, k: &str, params: DiodeParams) -> ElementId {
        self.c.models.push(Model {
            name: format!("m_{name}"),
            params: ModelParams::Diode(params),
            origin: Origin::default(),
        });
        let model = self.c.models.len() - 1;
        let (a, k) = (self.node(a), self.node(k));
        self.push(
            name,
            ElementKind::Diode {
                a,
                k,
                model,
                area: 1.0,
            },
        )
    }
}

/// A sine shape with no delay or rise.
pub fn sine(amp: f64, freq: f64) -> Shape {
    Shape::Sine {
        amp,
        freq,
        phase: 0.0,
        offset: 0.0,
        delay: 0.0,
        rise: 0.0,
    }
}

/// Thermal voltage kT/q at `t` kelvin (CODATA 2018 constants).
pub fn vt(t: f64) -> f64 {
    K_B * t / Q_E
}

impl B {
    /// A bipolar transistor with its own model.
    pub fn bjt(&mut self, name: &str, c: &str, b: &str, e: &str, params: BjtParams) -> ElementId {
        self.c.models.push(Model {
            name: format!("m_{name}"),
            params: ModelParams::Bjt(params),
            origin: Origin::default(),
        });
        let model = self.c.models.len() - 1;
        let (c, b, e) = (self.node(c), self.node(b), self.node(e));
        self.push(
            name,
            ElementKind::Bjt {
                c,
                b,
                e,
                model,
                area: 1.0,
            },
        )
    }
}
