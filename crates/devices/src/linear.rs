//! Linear elements: resistor, capacitor, inductor, coupling, independent sources.
//!
//! Conventions (shared with every device, see [`crate::contract`]):
//! each node row of `F(x,t) = i(x,t) + dq/dt = 0` is the sum of currents
//! *leaving* the node through the devices.
//!
//! | element | stamps |
//! | --- | --- |
//! | resistor a–b, R | `i_a = (v_a − v_b)/R`, `i_b = −i_a` |
//! | capacitor a–b, C | `q_a = C (v_a − v_b)`, `q_b = −q_a` |
//! | inductor a–b, L, r, branch j (a → b through it) | rows a/b: `±j`; branch row: i-part `v_a − v_b − r j`, q-part `−φ`, `φ = L j` |
//! | coupling of inductors k, l | adds `−M j_l` to the q-part of branch row k and `−M j_k` to row l, `M = k √(L_k L_l)`, every pair |
//! | voltage source p–n, branch j | rows p/n: `±j` (j flows into p from the circuit, through the source, out of n); branch row: `v_p − v_n − V(t) − rs j` |
//! | current source p–n | rows p/n: `±I(t)` (I flows from p through the source to n) |
//!
//! with `V(t) = dc_scale·dc + wave_scale·shape(t)` (see [`crate::waveform`]).
//! A source delivering power has `j < 0`.
//!
//! Small-signal excitation ([`Device::ac_excitation`]), for `(G + jωC) X = b`:
//! a voltage source puts `b = +1` on its branch row (so the linearised branch row
//! reads `v_p − v_n − rs j = 1`: node voltages are the response to a 1 V source
//! amplitude); an current source puts `b_p = −1`, `b_n = +1` (the response to 1 A
//! flowing from p through the source to n).

use crate::contract::{
    stamp_capacitance, stamp_conductance, val, Device, EvalCtx, EvalInfo, Idx, Stamp, UnknownId,
};
use crate::figure::OpFigure;
use crate::waveform::{breakpoints, Waveform as _};
use tankwave_circuit::ir::{ElementId, Waveform};

/// Linear resistor between `a` and `b`.
#[derive(Debug, Clone)]
pub struct Resistor {
    element: ElementId,
    nodes: [Idx; 2],
    g: f64,
}

impl Resistor {
    /// Resistor of `r` Ω (must be > 0 and finite; checked by [`crate::instantiate`]).
    pub fn new(element: ElementId, a: Idx, b: Idx, r: f64) -> Self {
        Self {
            element,
            nodes: [a, b],
            g: 1.0 / r,
        }
    }
}

impl Device for Resistor {
    fn element(&self) -> ElementId {
        self.element
    }
    fn terminals(&self) -> &[Idx] {
        &self.nodes
    }
    fn is_linear(&self) -> bool {
        true
    }
    fn eval(&self, x: &[f64], _ctx: &EvalCtx, _s: &mut [f64], out: &mut dyn Stamp) -> EvalInfo {
        let [a, b] = self.nodes;
        stamp_conductance(out, x, a, b, self.g);
        EvalInfo::default()
    }
    fn op_info(&self, x: &[f64], _ctx: &EvalCtx) -> Vec<(OpFigure, f64)> {
        let v = val(x, self.nodes[0]) - val(x, self.nodes[1]);
        vec![
            (OpFigure::Voltage, v),
            (OpFigure::Current, self.g * v),
            (OpFigure::Power, self.g * v * v),
        ]
    }
}

/// Linear capacitor between `a` and `b`.
#[derive(Debug, Clone)]
pub struct Capacitor {
    element: ElementId,
    nodes: [Idx; 2],
    c: f64,
}

impl Capacitor {
    /// Capacitor of `c` F.
    pub fn new(element: ElementId, a: Idx, b: Idx, c: f64) -> Self {
        Self {
            element,
            nodes: [a, b],
            c,
        }
    }
}

impl Device for Capacitor {
    fn element(&self) -> ElementId {
        self.element
    }
    fn terminals(&self) -> &[Idx] {
        &self.nodes
    }
    fn is_linear(&self) -> bool {
        true
    }
    fn eval(&self, x: &[f64], _ctx: &EvalCtx, _s: &mut [f64], out: &mut dyn Stamp) -> EvalInfo {
        let [a, b] = self.nodes;
        stamp_capacitance(out, x, a, b, self.c);
        EvalInfo::default()
    }
    fn op_info(&self, x: &[f64], _ctx: &EvalCtx) -> Vec<(OpFigure, f64)> {
        let v = val(x, self.nodes[0]) - val(x, self.nodes[1]);
        vec![(OpFigure::Voltage, v), (OpFigure::Charge, self.c * v)]
    }
}

/// Inductor between `a` and `b` with series loss `r`; owns branch unknown `j`.
#[derive(Debug, Clone)]
pub struct Inductor {
    element: ElementId,
    nodes: [Idx; 2],
    branch: usize,
    l: f64,
    r: f64,
}

impl Inductor {
    /// Inductor of `l` H with series resistance `r` Ω and branch current unknown `branch`.
    pub fn new(element: ElementId, a: Idx, b: Idx, branch: usize, l: f64, r: f64) -> Self {
        Self {
            element,
            nodes: [a, b],
            branch,
            l,
            r,
        }
    }
    /// Inductance, H.
    pub fn inductance(&self) -> f64 {
        self.l
    }
}

impl Device for Inductor {
    fn element(&self) -> ElementId {
        self.element
    }
    fn terminals(&self) -> &[Idx] {
        &self.nodes
    }
    fn is_linear(&self) -> bool {
        true
    }
    fn eval(&self, x: &[f64], _ctx: &EvalCtx, _s: &mut [f64], out: &mut dyn Stamp) -> EvalInfo {
        let [a, b] = self.nodes;
        let jr = Some(self.branch);
        let j = x[self.branch];
        out.add_i(a, j);
        out.add_i(b, -j);
        out.add_g(a, jr, 1.0);
        out.add_g(b, jr, -1.0);
        out.add_i(jr, val(x, a) - val(x, b) - self.r * j);
        out.add_g(jr, a, 1.0);
        out.add_g(jr, b, -1.0);
        out.add_g(jr, jr, -self.r);
        out.add_q(jr, -self.l * j);
        out.add_c(jr, jr, -self.l);
        EvalInfo::default()
    }
    fn branch(&self) -> Option<UnknownId> {
        Some(UnknownId::new(self.branch))
    }
    fn op_info(&self, x: &[f64], _ctx: &EvalCtx) -> Vec<(OpFigure, f64)> {
        let j = x[self.branch];
        vec![(OpFigure::Current, j), (OpFigure::Flux, self.l * j)]
    }
}

/// Magnetic coupling between two or more inductors (mutual fluxes only).
#[derive(Debug, Clone)]
pub struct Coupling {
    element: ElementId,
    /// (branch unknown, inductance) of every coupled inductor.
    coils: Vec<(usize, f64)>,
    k: f64,
}

impl Coupling {
    /// Couple the inductors given as (branch unknown, inductance H) with coefficient `k`.
    pub fn new(element: ElementId, coils: Vec<(usize, f64)>, k: f64) -> Self {
        Self { element, coils, k }
    }
    /// Mutual inductance of the coupled pair (m, n), H.
    fn mutual(&self, lm: f64, ln: f64) -> f64 {
        self.k * (lm * ln).sqrt()
    }
}

impl Device for Coupling {
    fn element(&self) -> ElementId {
        self.element
    }
    fn terminals(&self) -> &[Idx] {
        &[]
    }
    fn is_linear(&self) -> bool {
        true
    }
    fn eval(&self, x: &[f64], _ctx: &EvalCtx, _s: &mut [f64], out: &mut dyn Stamp) -> EvalInfo {
        for (m, &(jm, lm)) in self.coils.iter().enumerate() {
            for (n, &(jn, ln)) in self.coils.iter().enumerate() {
                if m == n {
                    continue;
                }
                let mu = self.mutual(lm, ln);
                out.add_q(Some(jm), -mu * x[jn]);
                out.add_c(Some(jm), Some(jn), -mu);
            }
        }
        EvalInfo::default()
    }
}

/// Independent voltage source with series resistance; owns branch unknown `j`.
#[derive(Debug, Clone)]
pub struct VoltageSource {
    element: ElementId,
    nodes: [Idx; 2],
    branch: usize,
    wave: Waveform,
    rs: f64,
}

impl VoltageSource {
    /// Source between `p` and `n` with branch current unknown `branch`.
    pub fn new(element: ElementId, p: Idx, n: Idx, branch: usize, wave: Waveform, rs: f64) -> Self {
        Self {
            element,
            nodes: [p, n],
            branch,
            wave,
            rs,
        }
    }
    /// Source value `V(t)` under the scales of `ctx`.
    pub fn value(&self, ctx: &EvalCtx) -> f64 {
        self.wave.value(ctx.time, ctx.dc_scale, ctx.wave_scale)
    }
}

impl Device for VoltageSource {
    fn element(&self) -> ElementId {
        self.element
    }
    fn terminals(&self) -> &[Idx] {
        &self.nodes
    }
    fn is_linear(&self) -> bool {
        true
    }
    fn eval(&self, x: &[f64], ctx: &EvalCtx, _s: &mut [f64], out: &mut dyn Stamp) -> EvalInfo {
        let [p, n] = self.nodes;
        let jr = Some(self.branch);
        let j = x[self.branch];
        out.add_i(p, j);
        out.add_i(n, -j);
        out.add_g(p, jr, 1.0);
        out.add_g(n, jr, -1.0);
        out.add_i(jr, val(x, p) - val(x, n) - self.value(ctx) - self.rs * j);
        out.add_g(jr, p, 1.0);
        out.add_g(jr, n, -1.0);
        if self.rs != 0.0 {
            out.add_g(jr, jr, -self.rs);
        }
        EvalInfo::default()
    }
    fn ac_excitation(&self, out: &mut dyn FnMut(usize, f64)) {
        out(self.branch, 1.0);
    }
    fn breakpoints(&self, t0: f64, t1: f64, out: &mut Vec<f64>) {
        if let Some(s) = &self.wave.shape {
            breakpoints(s, t0, t1, out);
        }
    }
    fn branch(&self) -> Option<UnknownId> {
        Some(UnknownId::new(self.branch))
    }
    fn op_info(&self, x: &[f64], ctx: &EvalCtx) -> Vec<(OpFigure, f64)> {
        let j = x[self.branch];
        let v = val(x, self.nodes[0]) - val(x, self.nodes[1]);
        // The current leaves p into the circuit as −j; it delivers v·(−j).
        vec![
            (OpFigure::SetVoltage, self.value(ctx)),
            (OpFigure::Voltage, v),
            (OpFigure::DeliveredCurrent, -j),
            (OpFigure::DeliveredPower, -v * j),
        ]
    }
}

/// Independent current source: I(t) flows from `p` through the source to `n`.
#[derive(Debug, Clone)]
pub struct CurrentSource {
    element: ElementId,
    nodes: [Idx; 2],
    wave: Waveform,
}

impl CurrentSource {
    /// Source between `p` and `n`.
    pub fn new(element: ElementId, p: Idx, n: Idx, wave: Waveform) -> Self {
        Self {
            element,
            nodes: [p, n],
            wave,
        }
    }
    /// Source value `I(t)` under the scales of `ctx`.
    pub fn value(&self, ctx: &EvalCtx) -> f64 {
        self.wave.value(ctx.time, ctx.dc_scale, ctx.wave_scale)
    }
}

impl Device for CurrentSource {
    fn element(&self) -> ElementId {
        self.element
    }
    fn terminals(&self) -> &[Idx] {
        &self.nodes
    }
    fn is_linear(&self) -> bool {
        true
    }
    fn eval(&self, _x: &[f64], ctx: &EvalCtx, _s: &mut [f64], out: &mut dyn Stamp) -> EvalInfo {
        let [p, n] = self.nodes;
        let i = self.value(ctx);
        out.add_i(p, i);
        out.add_i(n, -i);
        EvalInfo::default()
    }
    fn ac_excitation(&self, out: &mut dyn FnMut(usize, f64)) {
        if let Some(p) = self.nodes[0] {
            out(p, -1.0);
        }
        if let Some(n) = self.nodes[1] {
            out(n, 1.0);
        }
    }
    fn breakpoints(&self, t0: f64, t1: f64, out: &mut Vec<f64>) {
        if let Some(s) = &self.wave.shape {
            breakpoints(s, t0, t1, out);
        }
    }
    fn op_info(&self, x: &[f64], ctx: &EvalCtx) -> Vec<(OpFigure, f64)> {
        let i = self.value(ctx);
        let v = val(x, self.nodes[0]) - val(x, self.nodes[1]);
        // I enters the source at p and leaves it at n into the circuit: it
        // absorbs v·I, so it delivers −v·I to the circuit.
        vec![
            (OpFigure::Voltage, v),
            (OpFigure::Current, i),
            (OpFigure::DeliveredCurrent, i),
            (OpFigure::DeliveredPower, -v * i),
        ]
    }
}
