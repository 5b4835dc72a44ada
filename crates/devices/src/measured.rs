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

use crate::contract::{val, Device, EvalCtx, EvalInfo, Idx, Stamp};
use num_complex::Complex64;
use std::sync::Arc;
use tankwave_circuit::rational::Fitted;
use tankwave_circuit::touchstone::MeasuredNetwork;
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
    /// The state scale `g`, S·rad/s.
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
    /// `Re Y(0)`, row order (without a time-domain model).
    g0: Vec<f64>,
    /// The time-domain model, when the network has one.
    time: Option<TimeModel>,
}

impl Measured {
    /// The device; `None` if the network has no admittance at 0 Hz (its
    /// file does not cover DC and it names no out-of-band rule).
    pub fn new(element: ElementId, terms: Vec<Idx>, network: Arc<MeasuredNetwork>) -> Option<Self> {
        let g0 = network.admittance(0.0)?.iter().map(|y| y.re).collect();
        Some(Self {
            element,
            terms,
            network,
            g0,
            time: None,
        })
    }

    /// The number of internal unknowns the network's fitted model needs
    /// (0 without one): one per real pole and two per pair, per port.
    pub fn state_count(network: &MeasuredNetwork) -> usize {
        network
            .fit
            .as_ref()
            .map_or(0, |f| f.model.order() * network.ports)
    }

    /// Realise the network's fitted model on the internal unknowns `rows`
    /// ([`Measured::state_count`] of them, in port-then-pole order).
    pub fn with_time_model(mut self, rows: &[usize]) -> Self {
        let Some(fit) = self.network.fit.clone() else {
            return self;
        };
        let n = self.ports();
        let mut states = Vec::new();
        let mut next = rows.iter().copied();
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

    /// Every (row, column, sign) of port entry (i, j).
    fn entries(&self, i: usize, j: usize) -> [(Idx, Idx, f64); 4] {
        let (pi, ni) = (self.terms[2 * i], self.terms[2 * i + 1]);
        let (pj, nj) = (self.terms[2 * j], self.terms[2 * j + 1]);
        [(pi, pj, 1.0), (pi, nj, -1.0), (ni, pj, -1.0), (ni, nj, 1.0)]
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
        if let Some(tm) = &self.time {
            self.eval_model(tm, x, out);
            return EvalInfo::default();
        }
        let n = self.ports();
        for i in 0..n {
            for j in 0..n {
                let g = self.g0[i * n + j];
                let v = val(x, self.terms[2 * j]) - val(x, self.terms[2 * j + 1]);
                out.add_i(self.terms[2 * i], g * v);
                out.add_i(self.terms[2 * i + 1], -g * v);
                for (r, c, s) in self.entries(i, j) {
                    out.add_g(r, c, s * g);
                }
            }
        }
        EvalInfo::default()
    }
    fn frequency_admittance(&self, f: f64) -> Option<Vec<(usize, usize, Complex64)>> {
        let n = self.ports();
        let y = self.network.admittance(f)?;
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
        let n = self.ports();
        let m = &tm.fit.model;
        let port_v = |j: usize| val(x, self.terms[2 * j]) - val(x, self.terms[2 * j + 1]);
        for i in 0..n {
            for j in 0..n {
                let (d, e) = (m.d[i * n + j], m.e[i * n + j]);
                let v = port_v(j);
                out.add_i(self.terms[2 * i], d * v);
                out.add_i(self.terms[2 * i + 1], -d * v);
                if e != 0.0 {
                    out.add_q(self.terms[2 * i], e * v);
                    out.add_q(self.terms[2 * i + 1], -e * v);
                }
                for (r, c, s) in self.entries(i, j) {
                    out.add_g(r, c, s * d);
                    if e != 0.0 {
                        out.add_c(r, c, s * e);
                    }
                }
            }
        }
        for st in &tm.states {
            let (pj, nj) = (self.terms[2 * st.port], self.terms[2 * st.port + 1]);
            let v = port_v(st.port);
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
            out.add_g(r0, pj, -drive);
            out.add_g(r0, nj, drive);
            // port currents: (1/g) Σ c·w
            for (i, (c1, c2)) in st.out.iter().enumerate() {
                let (pi, ni) = (self.terms[2 * i], self.terms[2 * i + 1]);
                let (c1, c2) = (c1 / st.g, c2 / st.g);
                let cur = c1 * w0 + if pair { c2 * w1 } else { 0.0 };
                out.add_i(pi, cur);
                out.add_i(ni, -cur);
                out.add_g(pi, r0, c1);
                out.add_g(ni, r0, -c1);
                if pair {
                    out.add_g(pi, r1, c2);
                    out.add_g(ni, r1, -c2);
                }
            }
        }
    }
}
