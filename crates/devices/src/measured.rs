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
//! add to `G + jωC` at each frequency. In the time domain the element needs
//! a fitted rational model that this build does not have, so it reports
//! [`Device::frequency_domain`] and the time-domain analyses refuse it.

use crate::contract::{val, Device, EvalCtx, EvalInfo, Idx, Stamp};
use num_complex::Complex64;
use std::sync::Arc;
use tankwave_circuit::touchstone::MeasuredNetwork;
use tankwave_circuit::ElementId;

/// A measured one- or two-port.
#[derive(Debug, Clone)]
pub struct Measured {
    element: ElementId,
    /// `p_1, n_1, p_2, n_2, …`.
    terms: Vec<Idx>,
    network: Arc<MeasuredNetwork>,
    /// `Re Y(0)`, row order.
    g0: Vec<f64>,
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
        })
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
        let mut out = Vec::with_capacity(4 * n * n);
        for i in 0..n {
            for j in 0..n {
                let d = y[i * n + j] - self.g0[i * n + j];
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
}
