//! A network measured over frequency (`measured`, from a Touchstone file).
//!
//! Its admittance matrix `Y(f)` (S, one row and column per port) is known at
//! every frequency the analyses ask for
//! ([`tankwave_circuit::touchstone::MeasuredNetwork::admittance`]:
//! interpolated between the file's points, the out-of-band rule beyond
//! them). Port `i` is the pair of terminals `(p_i, n_i)`; the current into
//! `p_i` (and out of `n_i`) is `I_i = Σ_j Y_ij (v(p_j) − v(n_j))`.
//!
//! [`Device::eval`] stamps the DC part, `G₀ = Re Y(0)` (the bias point, and
//! harmonic 0 of harmonic balance); [`Device::frequency_admittance`] gives
//! `Y(f) − G₀` on the same rows and columns, which AC and harmonic balance
//! add to `G + jωC` at each frequency.
//!
//! # The time-domain model
//!
//! When elaboration fitted the network
//! ([`tankwave_circuit::rational::Fitted`]: `Y(s) ≈ Σ_m R_m/(s − p_m) + D + sE`,
//! stable and passive), the element is that model at every frequency the
//! time-domain analyses (transient, shooting, settle) reach, DC included,
//! realised in the charge-oriented contract with internal unknowns. For
//! each driving port `j` (voltage `v_j = v(p_j) − v(n_j)`) and each pole:
//!
//! * a real pole `a < 0` has one state `w` (A), with
//!   `w' = a w + g v_j`, written as the row
//!   `d(w/|a|)/dt − (a/|a|) w − (g/|a|) v_j = 0`;
//! * a complex pair `p = a + jb` (`b > 0`) has two states `w₁, w₂` (A), with
//!   `w' = [[a, b], [−b, a]] w + [2g, 0]ᵀ v_j`, rows divided by `|p|` the same way;
//! * port `i`'s current gets `(1/g) · Σ c·w`, `c = R_ij` for a real pole and
//!   `(Re R_ij, Im R_ij)` for a pair, plus `D_ij v_j` (a conductance) and
//!   the charge `E_ij v_j`.
//!
//! Eliminating the states gives back `Σ R_m/(s − p_m) + D + sE` (the
//! realisation of B. Gustavsen, A. Semlyen, IEEE Trans. Power Delivery
//! 14(3), 1999, appendix, for a pair). `g = max_i |R_ij|` (S·rad/s) only
//! scales the states: the output coefficients `c/g` are at most 1 and the
//! drive `g/|p|` is the size of the pole's conductance, so the states are
//! currents of the size of the port currents; dividing each row by `|p|`
//! keeps its terms in amperes.
//!
//! With the model, [`Device::eval`] stamps it (so the bias point is the
//! model's DC admittance, fitted to the out-of-band rule's) and
//! [`Device::frequency_admittance`] gives `Y(f) − Y_fit(f)`, so AC and
//! harmonic balance still use the file exactly. Without it the element
//! reports [`Device::frequency_domain`] and no [`Device::time_model`], and
//! the time-domain analyses refuse it.
//!
//! # Impedance form (`outside=short`)
//!
//! A short has no admittance, so a network whose ports are short-circuited
//! out of band is held as its impedance matrix `Z(f)` (Ω,
//! [`tankwave_circuit::touchstone::Form::Impedance`]) and stamped as the
//! dual of the above: each port `i` has its current `i_i` (A, into `p_i`
//! and out of `n_i`) as an internal unknown, the KCL rows of `p_i` and
//! `n_i` get `±i_i`, and the unknown's own row is the port equation
//! `v_i − Σ_j Z_ij i_j = 0` (V). [`Device::eval`] stamps `Z₀ = Re Z(0)` (zero,
//! the short, when the file does not reach 0 Hz) and
//! [`Device::frequency_admittance`] gives `−(Z(f) − Z₀)` on the port rows
//! and current columns. The fitted model of `Z(s)` is realised the same
//! way as that of `Y(s)` with the roles swapped: each state is driven by a
//! port current (the states are then voltages) and its output `(1/g)·c·w`
//! enters the port equations, as do `D_ij i_j` (a resistance) and the flux
//! `E_ij i_j` (an inductance). Every row keeps its unit (V), so the
//! equations are those above with current and voltage exchanged.

use crate::contract::{val, Device, EvalCtx, EvalInfo, Idx, Stamp, UnknownKind};
use num_complex::Complex64;
use std::sync::Arc;
use tankwave_circuit::rational::Fitted;
use tankwave_circuit::touchstone::{Form, MeasuredNetwork};
use tankwave_circuit::ElementId;

/// The states of one pole driven by one port.
#[derive(Debug, Clone)]
struct PoleStates {
    /// The driving port.
    port: usize,
    /// The pole, rad/s (`im > 0` for a pair).
    pole: Complex64,
    /// Its unknowns: one for a real pole, two for a pair.
    rows: [usize; 2],
    /// The state scale `g`, S·rad/s (Ω·rad/s in impedance form).
    g: f64,
    /// Per output port `i`: `(c₁, c₂)` (`c₂` unused for a real pole).
    out: Vec<(f64, f64)>,
}

/// The realised fitted model.
#[derive(Debug, Clone)]
struct TimeModel {
    fit: Arc<Fitted>,
    states: Vec<PoleStates>,
}

/// A measured one- or two-port.
#[derive(Debug, Clone)]
pub struct Measured {
    element: ElementId,
    /// `p_1, n_1, p_2, n_2, …`.
    terms: Vec<Idx>,
    network: Arc<MeasuredNetwork>,
    /// The real part of the matrix at 0 Hz, row order (without a
    /// time-domain model): `Re Y(0)`, or `Re Z(0)` in impedance form.
    g0: Vec<f64>,
    /// In impedance form, each port's current unknown (empty otherwise).
    currents: Vec<usize>,
    /// The time-domain model, when the network has one.
    time: Option<TimeModel>,
}

/// One unknown or row of the element with its sign.
type Signed = (Idx, f64);

impl Measured {
    /// The device; `None` if the network has no value at 0 Hz (its file
    /// does not cover DC and it names no out-of-band rule).
    pub fn new(element: ElementId, terms: Vec<Idx>, network: Arc<MeasuredNetwork>) -> Option<Self> {
        let g0 = network.value(0.0)?.iter().map(|y| y.re).collect();
        Some(Self {
            element,
            terms,
            network,
            g0,
            currents: Vec::new(),
            time: None,
        })
    }

    /// The internal unknowns the element needs, in order, as (name tag,
    /// kind): in impedance form each port's current (`i1`, `i2`), then the
    /// states of the fitted model (`fit1`, …; one per real pole and two
    /// per pair, per port: currents in the admittance form, voltages in the
    /// impedance form). Empty for the admittance form without a model.
    pub fn unknowns(network: &MeasuredNetwork) -> Vec<(String, UnknownKind)> {
        let (port_kind, state_kind) = match network.form() {
            Form::Admittance => (None, UnknownKind::Current),
            Form::Impedance => (Some(UnknownKind::Current), UnknownKind::Voltage),
        };
        let mut out: Vec<(String, UnknownKind)> = port_kind
            .map(|k| (1..=network.ports).map(|i| (format!("i{i}"), k)).collect())
            .unwrap_or_default();
        let states = network
            .fit
            .as_ref()
            .map_or(0, |f| f.model.order() * network.ports);
        out.extend((1..=states).map(|k| (format!("fit{k}"), state_kind)));
        out
    }

    /// Place the element's internal unknowns on `rows` ([`Measured::unknowns`]
    /// of them, in that order), realising the network's fitted model if it
    /// has one.
    pub fn with_unknowns(mut self, rows: &[usize]) -> Self {
        let n = self.ports();
        let mut next = rows.iter().copied();
        if self.network.form() == Form::Impedance {
            self.currents = (0..n).map(|_| next.next().unwrap_or(0)).collect();
        }
        let Some(fit) = self.network.fit.clone() else {
            return self;
        };
        let mut states = Vec::new();
        for j in 0..n {
            for t in &fit.model.terms {
                let pair = t.is_pair();
                let r0 = next.next().unwrap_or(0);
                let r1 = if pair { next.next().unwrap_or(0) } else { r0 };
                let big = (0..n)
                    .map(|i| t.residues[i * n + j].norm())
                    .fold(0.0, f64::max)
                    .max(1e-30);
                let g = big;
                let out = (0..n)
                    .map(|i| {
                        let r = t.residues[i * n + j];
                        (r.re, if pair { r.im } else { 0.0 })
                    })
                    .collect();
                states.push(PoleStates {
                    port: j,
                    pole: t.pole,
                    rows: [r0, r1],
                    g,
                    out,
                });
            }
        }
        self.time = Some(TimeModel { fit, states });
        self
    }

    fn ports(&self) -> usize {
        self.network.ports
    }

    /// What drives the matrix's column `j`: port `j`'s voltage (admittance
    /// form) or its current unknown (impedance form).
    fn input(&self, j: usize) -> [Signed; 2] {
        match self.currents.get(j) {
            Some(c) => [(Some(*c), 1.0), (None, 0.0)],
            None => [(self.terms[2 * j], 1.0), (self.terms[2 * j + 1], -1.0)],
        }
    }

    /// Where the matrix's row `i` goes: into `p_i` and out of `n_i`
    /// (admittance form), or subtracted in port `i`'s equation
    /// (impedance form).
    fn output(&self, i: usize) -> [Signed; 2] {
        match self.currents.get(i) {
            Some(c) => [(Some(*c), -1.0), (None, 0.0)],
            None => [(self.terms[2 * i], 1.0), (self.terms[2 * i + 1], -1.0)],
        }
    }

    /// The value of input `j` in `x`.
    fn input_value(&self, x: &[f64], j: usize) -> f64 {
        match self.currents.get(j) {
            Some(c) => x[*c],
            None => val(x, self.terms[2 * j]) - val(x, self.terms[2 * j + 1]),
        }
    }

    /// Every (row, column, sign) of matrix entry (i, j).
    fn entries(&self, i: usize, j: usize) -> impl Iterator<Item = (Idx, Idx, f64)> + '_ {
        let (out, inp) = (self.output(i), self.input(j));
        out.into_iter()
            .filter(|(_, s)| *s != 0.0)
            .flat_map(move |(r, sr)| {
                inp.into_iter()
                    .filter(|(_, s)| *s != 0.0)
                    .map(move |(c, sc)| (r, c, sr * sc))
            })
    }

    /// Impedance form: the port currents in the KCL rows and the port
    /// voltages in the port equations (the part of the stamp that does not
    /// depend on the network's values).
    fn stamp_ports(&self, x: &[f64], out: &mut dyn Stamp) {
        for (i, c) in self.currents.iter().enumerate() {
            let (p, n) = (self.terms[2 * i], self.terms[2 * i + 1]);
            let (c, cur) = (Some(*c), x[*c]);
            out.add_i(p, cur);
            out.add_i(n, -cur);
            out.add_g(p, c, 1.0);
            out.add_g(n, c, -1.0);
            out.add_i(c, val(x, p) - val(x, n));
            out.add_g(c, p, 1.0);
            out.add_g(c, n, -1.0);
        }
    }

    /// Add `m_ij · input_j` to output `i` (`m` row order) as a resistive
    /// term, and `e_ij · input_j` as a charge (flux) term.
    fn stamp_matrix(&self, m: &[f64], e: Option<&[f64]>, x: &[f64], out: &mut dyn Stamp) {
        let n = self.ports();
        for i in 0..n {
            for j in 0..n {
                let g = m[i * n + j];
                let ev = e.map_or(0.0, |e| e[i * n + j]);
                let v = self.input_value(x, j);
                for (r, sr) in self.output(i) {
                    if sr == 0.0 {
                        continue;
                    }
                    out.add_i(r, sr * (g * v));
                }
                if ev != 0.0 {
                    for (r, sr) in self.output(i) {
                        if sr == 0.0 {
                            continue;
                        }
                        out.add_q(r, sr * (ev * v));
                    }
                }
                for (r, c, s) in self.entries(i, j) {
                    out.add_g(r, c, s * g);
                    if ev != 0.0 {
                        out.add_c(r, c, s * ev);
                    }
                }
            }
        }
    }
}

impl Device for Measured {
    fn element(&self) -> ElementId {
        self.element
    }
    fn terminals(&self) -> &[Idx] {
        &self.terms
    }
    fn is_linear(&self) -> bool {
        true
    }
    fn eval(&self, x: &[f64], _ctx: &EvalCtx, _s: &mut [f64], out: &mut dyn Stamp) -> EvalInfo {
        self.stamp_ports(x, out);
        if let Some(tm) = &self.time {
            self.eval_model(tm, x, out);
            return EvalInfo::default();
        }
        self.stamp_matrix(&self.g0, None, x, out);
        EvalInfo::default()
    }
    fn frequency_admittance(&self, f: f64) -> Option<Vec<(usize, usize, Complex64)>> {
        let n = self.ports();
        let y = self.network.value(f)?;
        // what eval's stamp already gives at f
        let base: Vec<Complex64> = match &self.time {
            Some(tm) => tm.fit.model.admittance(f),
            None => self.g0.iter().map(|g| Complex64::new(*g, 0.0)).collect(),
        };
        let mut out = Vec::with_capacity(4 * n * n);
        for i in 0..n {
            for j in 0..n {
                let d = y[i * n + j] - base[i * n + j];
                for (r, c, s) in self.entries(i, j) {
                    if let (Some(r), Some(c)) = (r, c) {
                        out.push((r, c, d * s));
                    }
                }
            }
        }
        Some(out)
    }
    fn frequency_domain(&self) -> bool {
        true
    }
    fn time_model(&self) -> bool {
        self.time.is_some()
    }
}

impl Measured {
    /// Stamp the fitted model (module docs).
    fn eval_model(&self, tm: &TimeModel, x: &[f64], out: &mut dyn Stamp) {
        let m = &tm.fit.model;
        let e = m.e.iter().any(|v| *v != 0.0).then_some(&m.e[..]);
        self.stamp_matrix(&m.d, e, x, out);
        for st in &tm.states {
            let v = self.input_value(x, st.port);
            let k = st.pole.norm();
            let (a, b) = (st.pole.re, st.pole.im);
            let pair = b > 0.0;
            let w0 = x[st.rows[0]];
            let w1 = if pair { x[st.rows[1]] } else { 0.0 };
            let (r0, r1) = (Some(st.rows[0]), Some(st.rows[1]));
            // state rows: d(w/|p|)/dt − (A/|p|) w − (b g/|p|) v = 0
            let drive = if pair { 2.0 * st.g / k } else { st.g / k };
            if pair {
                out.add_i(r0, -(a * w0 + b * w1) / k - drive * v);
                out.add_i(r1, -(-b * w0 + a * w1) / k);
                out.add_g(r0, r0, -a / k);
                out.add_g(r0, r1, -b / k);
                out.add_g(r1, r0, b / k);
                out.add_g(r1, r1, -a / k);
                out.add_q(r1, w1 / k);
                out.add_c(r1, r1, 1.0 / k);
            } else {
                out.add_i(r0, -(a * w0) / k - drive * v);
                out.add_g(r0, r0, -a / k);
            }
            out.add_q(r0, w0 / k);
            out.add_c(r0, r0, 1.0 / k);
            for (c, sc) in self.input(st.port) {
                if sc != 0.0 {
                    out.add_g(r0, c, -drive * sc);
                }
            }
            // outputs: (1/g) Σ c·w
            for (i, (c1, c2)) in st.out.iter().enumerate() {
                let (c1, c2) = (c1 / st.g, c2 / st.g);
                let cur = c1 * w0 + if pair { c2 * w1 } else { 0.0 };
                for (r, sr) in self.output(i) {
                    if sr == 0.0 {
                        continue;
                    }
                    out.add_i(r, sr * cur);
                    out.add_g(r, r0, sr * c1);
                    if pair {
                        out.add_g(r, r1, sr * c2);
                    }
                }
            }
        }
    }
}
