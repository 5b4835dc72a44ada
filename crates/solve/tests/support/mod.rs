//! Test support: build elaborated `Circuit` values directly in Rust (the
//! stage-file parser is developed separately).
#![allow(dead_code)]

use tankwave_circuit::ir::*;

/// Boltzmann constant, J/K (CODATA 2018, exact).
pub const K_B: f64 = 1.380649e-23;
/// Elementary charge, C (CODATA 2018, exact).
pub const Q_E: f64 = 1.602176634e-19;

/// Two-sided Fourier coefficient c_k of one period of samples (the
/// amplitude of harmonic k is 2|c_k|): the DFT sum, written out.
pub fn coef(x: &[f64], k: usize) -> num_complex::Complex64 {
    let n = x.len() as f64;
    x.iter()
        .enumerate()
        .map(|(i, v)| {
            v * num_complex::Complex64::from_polar(
                1.0,
                -2.0 * std::f64::consts::PI * (k * i) as f64 / n,
            )
        })
        .sum::<num_complex::Complex64>()
        / n
}

/// Peak amplitude 2|c_k| of harmonic k of one period of samples.
pub fn amp(x: &[f64], k: usize) -> f64 {
    2.0 * coef(x, k).norm()
}

/// Half-wave peak rectifier driven at `freq`: 5 V sine, diode (1e-14 A,
/// 2 pF, 1 ns), 1 kΩ ‖ 10 nF load.
pub fn rectifier(freq: f64) -> B {
    let mut b = B::new();
    b.vsrc(
        "vs",
        "in",
        "gnd",
        Waveform {
            dc: 0.0,
            shape: Some(sine(5.0, freq)),
        },
        0.0,
    );
    b.diode(
        "d1",
        "in",
        "out",
        DiodeParams {
            sat_current: 1e-14,
            cj0: 2e-12,
            transit: 1e-9,
            ..DiodeParams::default()
        },
    );
    b.r("rl", "out", "gnd", 1e3);
    b.cap("cl", "out", "gnd", 10e-9);
    b
}

/// Largest |a_i − b_i| over two equally long sample series.
pub fn max_diff(a: &[f64], b: &[f64]) -> f64 {
    a.iter()
        .zip(b)
        .map(|(x, y)| (x - y).abs())
        .fold(0.0, f64::max)
}

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
        if let Some(n) = self.c.node(name) {
            return n;
        }
        self.c.nodes.push(name.to_string());
        NodeId::node(self.c.nodes.len() - 1)
    }
    fn push(&mut self, name: &str, kind: ElementKind) -> ElementId {
        self.c.elements.push(Element {
            name: name.to_string(),
            kind,
            origin: Origin::default(),
        });
        ElementId::new(self.c.elements.len() - 1)
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
                ntc_b: None,
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
                rating_a: None,
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
        self.push(name, ElementKind::VoltageSource { p, n, wave, rs })
    }
    pub fn vdc(&mut self, name: &str, p: &str, n: &str, dc: f64) -> ElementId {
        self.vsrc(name, p, n, Waveform { dc, shape: None }, 0.0)
    }
    pub fn isrc(&mut self, name: &str, p: &str, n: &str, wave: Waveform) -> ElementId {
        let (p, n) = (self.node(p), self.node(n));
        self.push(name, ElementKind::CurrentSource { p, n, wave })
    }
    pub fn diode(&mut self, name: &str, a: &str, k: &str, params: DiodeParams) -> ElementId {
        self.c.models.push(Model {
            name: format!("m_{name}"),
            params: ModelParams::Diode(params),
            origin: Origin::default(),
        });
        let model = ModelId::new(self.c.models.len() - 1);
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
        let model = ModelId::new(self.c.models.len() - 1);
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

/// Frequency of the class-C demo stage, Hz.
pub const CLASS_C_F0: f64 = 13.56e6;

/// Invented 25 W-class npn (values of netlists/models/tw-hf25.tank).
pub fn tw_hf25() -> BjtParams {
    BjtParams {
        sat_current: 5e-12,
        gain_fwd: 50.0,
        gain_rev: 3.0,
        early_fwd: 100.0,
        early_rev: 8.0,
        knee_fwd: 3.0,
        knee_rev: 0.3,
        leak_be: 20e-12,
        leak_be_emission: 1.8,
        leak_bc: 5e-12,
        leak_bc_emission: 2.0,
        r_base: 0.6,
        r_collector: 0.08,
        r_emitter: 0.04,
        cj_be: 1.5e-9,
        vj_be: 0.75,
        grading_be: 0.35,
        cj_bc: 220e-12,
        vj_bc: 0.6,
        grading_bc: 0.4,
        transit_fwd: 0.5e-9,
        transit_rev: 50e-9,
        ..BjtParams::default()
    }
}

/// Series loss of an inductor of quality `q` at the class-C stage's 13.56 MHz.
pub fn r_of_q(l: f64, q: f64) -> f64 {
    2.0 * std::f64::consts::PI * CLASS_C_F0 * l / q
}

/// The class-C stage of netlists/ism-13m56-classc.tank (a demo scenario of
/// our own, with its invented transistor model) built in Rust, driven by a
/// sine of `drive` volts from 50 Ω: self-biased base, RF choke, output pi
/// network into 50 Ω.
pub fn class_c(drive: f64) -> B {
    let mut b = B::new();
    b.vdc("vsup", "vcc", "gnd", 13.8);
    let vd = b.vsrc(
        "vdrv",
        "src",
        "gnd",
        Waveform {
            dc: 0.0,
            shape: Some(sine(drive, CLASS_C_F0)),
        },
        50.0,
    );
    b.cap("cmin", "src", "gnd", 704e-12);
    b.ind("lmin", "src", "bin", 176e-9, r_of_q(176e-9, 150.0));
    b.cap("cin", "bin", "base", 100e-9);
    b.r("rbias", "base", "gnd", 10.0);
    b.c.models.push(Model {
        name: "tw_hf25".into(),
        params: ModelParams::Bjt(tw_hf25()),
        origin: Origin::default(),
    });
    let model = ModelId::new(b.c.models.len() - 1);
    let (c, bb) = (b.node("coll"), b.node("base"));
    b.c.elements.push(Element {
        name: "q1".into(),
        kind: ElementKind::Bjt {
            c,
            b: bb,
            e: NodeId::GROUND,
            model,
            area: 1.0,
        },
        origin: Origin::default(),
    });
    b.ind("rfc", "vcc", "coll", 4.7e-6, 0.05);
    b.cap("cblk", "coll", "p1", 100e-9);
    b.cap("c1", "p1", "gnd", 7.81e-9);
    b.ind("lpi", "p1", "out", 73.6e-9, r_of_q(73.6e-9, 200.0));
    b.cap("c2", "out", "gnd", 2.35e-9);
    b.r("rload", "out", "gnd", 50.0);
    b.c.input = Some(vd);
    b
}
