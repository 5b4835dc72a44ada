//! Heat flow through a linear thermal network: steady temperature rises,
//! the thermal impedance Z_th(t), transients under piecewise-constant
//! power, and Foster and Cauer ladders.
//!
//! A [`ThermalNetwork`] has nodes (a junction, a case, a heatsink, …), each
//! with a heat capacity C (J/K), and links, each a thermal resistance R
//! (K/W) between two nodes or from a node to the ambient. Temperatures are
//! rises above the ambient (K). With the conductance matrix `G` (symmetric,
//! positive definite when every node has a path to the ambient) and the
//! diagonal capacity matrix `C`, the network obeys
//!
//! ```text
//! C dT/dt = −G T + P
//! ```
//!
//! for the power `P` (W) put into each node. The steady rise is `G⁻¹ P`
//! ([`ThermalNetwork::steady_rise`]). For the transient the network is
//! brought to symmetric form `M = C^−½ G C^−½ = Q Λ Qᵀ` (eigenvalues λ > 0,
//! 1/s) and, with `A = C^−½ Q`, solved exactly for a power held constant
//! over a step `h` ([`Modes::advance`]):
//!
//! ```text
//! T(t+h) = T∞ + A e^{−Λh} Aᵀ C (T(t) − T∞),    T∞ = G⁻¹ P
//! ```
//!
//! so there is no step-size error: a keying cycle of milliseconds and a
//! heatsink of minutes are stepped segment by segment, each exactly. The
//! same modes give the step response of node i to power at node j,
//! `Z_ij(t) = Σ_k A_ik A_jk (1 − e^{−λ_k t})/λ_k`: every node's own
//! impedance is a Foster sum ([`Modes::foster`]).
//!
//! A [`FosterLadder`] (`Z(t) = Σ R_i (1 − e^{−t/τ_i})`, the form data sheets
//! and measurements give) describes the heat path only between its two
//! ends: its inner nodes are not physical, so it cannot be chained to a
//! case or a heatsink. [`FosterLadder::to_cauer`] turns it into the
//! [`CauerLadder`] with the same Z(s) (shunt capacities to the reference,
//! series resistances), whose far end can be tied to another node. The
//! Cauer ladder is the continued-fraction expansion of Z(s) about s = ∞
//! (W. Cauer, 1926; the thermal use is e.g. in M. März, P. Nance,
//! "Thermal modeling of power-electronic systems", Infineon application
//! note, 2000 — from memory). It is computed here without the badly
//! conditioned polynomial long division: the continued fraction of
//! `Σ w_i²/(s + λ_i)` is the Jacobi (tridiagonal) matrix that the Lanczos
//! process builds from `diag(λ)` and the start vector `w` (G. H. Golub,
//! G. Meurant, *Matrices, Moments and Quadrature with Applications*, 2010,
//! ch. 4 — from memory); the ladder's elements are read off that matrix.
//! The test `cauer_keeps_the_thermal_impedance` checks that Z_th(t) is
//! preserved.

use nalgebra::{DMatrix, DVector, SymmetricEigen};

/// Largest node count a thermal network may have (a stage has a few
/// transistors, each with a few nodes; the eigen-decomposition is O(n³)).
pub const MAX_THERMAL_NODES: usize = 256;

/// What is wrong with a thermal network or a request to it.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ThermalError {
    /// A heat capacity that is negative or not finite.
    #[error("thermal node `{node}`: heat capacity {value} J/K must be finite and ≥ 0")]
    BadCapacity {
        /// Node name.
        node: String,
        /// The value.
        value: f64,
    },
    /// A thermal resistance that is not finite and positive.
    #[error("thermal link {from} – {to}: resistance {value} K/W must be finite and > 0")]
    BadResistance {
        /// First end.
        from: String,
        /// Second end (`ambient` for the reference).
        to: String,
        /// The value.
        value: f64,
    },
    /// A link names a node the network does not have.
    #[error("thermal link names node #{index}; the network has {count} nodes")]
    BadNode {
        /// The index.
        index: usize,
        /// Nodes in the network.
        count: usize,
    },
    /// A node with no path to the ambient: its steady temperature is unbounded.
    #[error("thermal node `{node}` has no path of thermal resistances to the ambient")]
    Floating {
        /// Node name.
        node: String,
    },
    /// Too many nodes.
    #[error("thermal network has {count} nodes; at most {max} are allowed")]
    TooLarge {
        /// Nodes asked for.
        count: usize,
        /// The limit.
        max: usize,
    },
    /// A transient needs every node to store heat.
    #[error("thermal node `{node}` has no heat capacity; a transient needs one on every node")]
    NoCapacity {
        /// Node name.
        node: String,
    },
    /// A power vector of the wrong length or with a non-finite entry.
    #[error("thermal power: {reason}")]
    BadPower {
        /// What is wrong.
        reason: String,
    },
    /// A Foster ladder with bad terms.
    #[error("Foster ladder term {index}: R = {r} K/W, τ = {tau} s; both must be finite and > 0")]
    BadFoster {
        /// 0-based term.
        index: usize,
        /// Its resistance.
        r: f64,
        /// Its time constant.
        tau: f64,
    },
    /// The conversion to a Cauer ladder lost positivity (rounding with
    /// nearly equal time constants).
    #[error(
        "Foster → Cauer: element {index} came out as {value:e}; the time constants are too \
         close together to separate (merge them)"
    )]
    Conversion {
        /// 0-based ladder element.
        index: usize,
        /// The value that came out.
        value: f64,
    },
}

/// One thermal resistance.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ThermalLink {
    /// One end (node index).
    pub a: usize,
    /// The other end, or `None` for the ambient.
    pub b: Option<usize>,
    /// Thermal resistance, K/W.
    pub resistance: f64,
}

/// A linear thermal network (see the module docs).
#[derive(Debug, Clone, PartialEq)]
pub struct ThermalNetwork {
    names: Vec<String>,
    heat: Vec<f64>,
    links: Vec<ThermalLink>,
}

impl ThermalNetwork {
    /// A network of nodes named `names` with heat capacities `heat` (J/K,
    /// 0 for a node that stores none) joined by `links`. Every node must
    /// reach the ambient through resistances.
    pub fn new(
        names: Vec<String>,
        heat: Vec<f64>,
        links: Vec<ThermalLink>,
    ) -> Result<Self, ThermalError> {
        let n = names.len();
        if n > MAX_THERMAL_NODES {
            return Err(ThermalError::TooLarge {
                count: n,
                max: MAX_THERMAL_NODES,
            });
        }
        if heat.len() != n {
            return Err(ThermalError::BadPower {
                reason: format!("{} heat capacities for {n} nodes", heat.len()),
            });
        }
        for (name, &c) in names.iter().zip(&heat) {
            if !(c.is_finite() && c >= 0.0) {
                return Err(ThermalError::BadCapacity {
                    node: name.clone(),
                    value: c,
                });
            }
        }
        let end = |i: Option<usize>| match i {
            None => Ok("ambient".to_string()),
            Some(i) if i < n => Ok(names[i].clone()),
            Some(i) => Err(ThermalError::BadNode { index: i, count: n }),
        };
        for l in &links {
            let (a, b) = (end(Some(l.a))?, end(l.b)?);
            if !(l.resistance.is_finite() && l.resistance > 0.0) {
                return Err(ThermalError::BadResistance {
                    from: a,
                    to: b,
                    value: l.resistance,
                });
            }
        }
        // Every node must reach the ambient (else G is singular).
        let mut grounded = vec![false; n];
        let mut changed = true;
        while changed {
            changed = false;
            for l in &links {
                let ga = grounded[l.a];
                let gb = l.b.map(|b| grounded[b]).unwrap_or(true);
                if ga != gb {
                    grounded[l.a] = true;
                    if let Some(b) = l.b {
                        grounded[b] = true;
                    }
                    changed = true;
                }
            }
        }
        if let Some(i) = grounded.iter().position(|g| !g) {
            return Err(ThermalError::Floating {
                node: names[i].clone(),
            });
        }
        Ok(ThermalNetwork { names, heat, links })
    }

    /// Number of nodes.
    pub fn len(&self) -> usize {
        self.names.len()
    }

    /// Whether the network has no nodes.
    pub fn is_empty(&self) -> bool {
        self.names.is_empty()
    }

    /// Node names.
    pub fn names(&self) -> &[String] {
        &self.names
    }

    /// Heat capacities, J/K.
    pub fn heat(&self) -> &[f64] {
        &self.heat
    }

    /// The links.
    pub fn links(&self) -> &[ThermalLink] {
        &self.links
    }

    /// The conductance matrix G, W/K.
    pub fn conductance(&self) -> DMatrix<f64> {
        let n = self.len();
        let mut g = DMatrix::zeros(n, n);
        for l in &self.links {
            let y = 1.0 / l.resistance;
            g[(l.a, l.a)] += y;
            if let Some(b) = l.b {
                g[(b, b)] += y;
                g[(l.a, b)] -= y;
                g[(b, l.a)] -= y;
            }
        }
        g
    }

    fn check_power(&self, power: &[f64]) -> Result<DVector<f64>, ThermalError> {
        if power.len() != self.len() {
            return Err(ThermalError::BadPower {
                reason: format!("{} values for {} nodes", power.len(), self.len()),
            });
        }
        if let Some(i) = power.iter().position(|p| !p.is_finite()) {
            return Err(ThermalError::BadPower {
                reason: format!("{} W into `{}` is not finite", power[i], self.names[i]),
            });
        }
        Ok(DVector::from_column_slice(power))
    }

    /// The steady rise above the ambient of every node (K) for `power` (W)
    /// into each node: `G⁻¹ P`.
    pub fn steady_rise(&self, power: &[f64]) -> Result<Vec<f64>, ThermalError> {
        let p = self.check_power(power)?;
        let g = self.conductance();
        // G is symmetric positive definite once every node is grounded.
        let chol = g.cholesky().ok_or_else(|| ThermalError::Floating {
            node: self.names.first().cloned().unwrap_or_default(),
        })?;
        Ok(chol.solve(&p).iter().copied().collect())
    }

    /// The thermal modes, for transients and Z_th(t). Every node needs a
    /// heat capacity.
    pub fn modes(&self) -> Result<Modes, ThermalError> {
        if let Some(i) = self.heat.iter().position(|&c| c <= 0.0) {
            return Err(ThermalError::NoCapacity {
                node: self.names[i].clone(),
            });
        }
        let n = self.len();
        let s: Vec<f64> = self.heat.iter().map(|c| 1.0 / c.sqrt()).collect();
        let g = self.conductance();
        let m = DMatrix::from_fn(n, n, |i, j| s[i] * g[(i, j)] * s[j]);
        let eig = SymmetricEigen::new(m);
        let a = DMatrix::from_fn(n, n, |i, k| s[i] * eig.eigenvectors[(i, k)]);
        let rates: Vec<f64> = eig.eigenvalues.iter().copied().collect();
        if let Some(&bad) = rates.iter().find(|l| !(l.is_finite() && **l > 0.0)) {
            // Cannot happen for a grounded network; kept as an error, not a NaN.
            return Err(ThermalError::BadPower {
                reason: format!("a thermal mode has rate {bad:e} 1/s"),
            });
        }
        Ok(Modes {
            rates,
            a,
            heat: self.heat.clone(),
            g,
        })
    }
}

/// The modes of a thermal network with heat capacity on every node.
#[derive(Debug, Clone)]
pub struct Modes {
    /// λ_k, 1/s (the time constants are 1/λ_k).
    pub rates: Vec<f64>,
    /// A = C^−½ Q.
    a: DMatrix<f64>,
    heat: Vec<f64>,
    g: DMatrix<f64>,
}

impl Modes {
    /// The time constants 1/λ_k, s.
    pub fn time_constants(&self) -> Vec<f64> {
        self.rates.iter().map(|l| 1.0 / l).collect()
    }

    /// The rise at `node` at time `t` after a unit power step into `from`
    /// (K/W): the transfer thermal impedance `Z_node,from(t)`.
    pub fn zth(&self, node: usize, from: usize, t: f64) -> f64 {
        self.rates
            .iter()
            .enumerate()
            .map(|(k, &l)| self.a[(node, k)] * self.a[(from, k)] * (-(-l * t).exp_m1()) / l)
            .sum()
    }

    /// The Foster ladder of the impedance of `node` to its own power:
    /// `R_k = A_ik²/λ_k`, `τ_k = 1/λ_k` (terms with zero weight dropped).
    pub fn foster(&self, node: usize) -> FosterLadder {
        let mut r = Vec::new();
        let mut tau = Vec::new();
        for (k, &l) in self.rates.iter().enumerate() {
            let w = self.a[(node, k)].powi(2) / l;
            if w > 0.0 {
                r.push(w);
                tau.push(1.0 / l);
            }
        }
        FosterLadder { r, tau }
    }

    /// The rises after `h` seconds with `power` (W) held constant, from
    /// the rises `rise` (K) now.
    pub fn advance(&self, rise: &[f64], power: &[f64], h: f64) -> Vec<f64> {
        self.relax(rise, &self.settled(power), &self.decay(h))
    }

    /// The rises `power` (W) settles to, `G⁻¹P`, K.
    pub fn settled(&self, power: &[f64]) -> Vec<f64> {
        let p = DVector::from_column_slice(power);
        match self.g.clone().cholesky() {
            Some(c) => c.solve(&p).iter().copied().collect(),
            None => vec![0.0; power.len()],
        }
    }

    /// The decay of each mode over `h` seconds, `e^{−λ_k h}`.
    pub fn decay(&self, h: f64) -> Vec<f64> {
        self.rates.iter().map(|l| (-l * h).exp()).collect()
    }

    /// One exact step: from `rise` towards `settled` ([`Modes::settled`])
    /// with the mode decays `decay` ([`Modes::decay`]) of the step.
    pub fn relax(&self, rise: &[f64], settled: &[f64], decay: &[f64]) -> Vec<f64> {
        let n = self.rates.len();
        // y = Aᵀ C (T − T∞), decayed, mapped back.
        let d: Vec<f64> = (0..n)
            .map(|i| self.heat[i] * (rise[i] - settled[i]))
            .collect();
        let mut out = settled.to_vec();
        for k in 0..n {
            let y: f64 = (0..n).map(|i| self.a[(i, k)] * d[i]).sum::<f64>() * decay[k];
            for i in 0..n {
                out[i] += self.a[(i, k)] * y;
            }
        }
        out
    }
}

/// A Foster ladder: `Z(t) = Σ R_i (1 − e^{−t/τ_i})`, `Z(s) = Σ R_i/(1 + s τ_i)`.
#[derive(Debug, Clone, PartialEq)]
pub struct FosterLadder {
    /// Resistances R_i, K/W.
    pub r: Vec<f64>,
    /// Time constants τ_i, s.
    pub tau: Vec<f64>,
}

/// A Cauer ladder: node k has capacity `c[k]` to the reference and a
/// resistance `r[k]` to node k+1; the last resistance goes to the far end
/// (the ambient, or the node the ladder is tied to). Node 0 is where the
/// heat goes in.
#[derive(Debug, Clone, PartialEq)]
pub struct CauerLadder {
    /// Series resistances, K/W.
    pub r: Vec<f64>,
    /// Shunt heat capacities, J/K.
    pub c: Vec<f64>,
}

impl FosterLadder {
    /// Check the terms.
    pub fn new(r: Vec<f64>, tau: Vec<f64>) -> Result<Self, ThermalError> {
        if r.len() != tau.len() || r.is_empty() {
            return Err(ThermalError::BadFoster {
                index: r.len().min(tau.len()),
                r: f64::NAN,
                tau: f64::NAN,
            });
        }
        for (i, (&ri, &ti)) in r.iter().zip(&tau).enumerate() {
            if !(ri.is_finite() && ri > 0.0 && ti.is_finite() && ti > 0.0) {
                return Err(ThermalError::BadFoster {
                    index: i,
                    r: ri,
                    tau: ti,
                });
            }
        }
        Ok(FosterLadder { r, tau })
    }

    /// The step response Z(t), K/W.
    pub fn zth(&self, t: f64) -> f64 {
        self.r
            .iter()
            .zip(&self.tau)
            .map(|(r, tau)| -r * (-t / tau).exp_m1())
            .sum()
    }

    /// The steady resistance Σ R_i, K/W.
    pub fn total(&self) -> f64 {
        self.r.iter().sum()
    }

    /// The Cauer ladder with the same Z(s) (see the module docs). Terms
    /// whose time constants agree to 1e−9 are merged first (they are one
    /// term).
    pub fn to_cauer(&self) -> Result<CauerLadder, ThermalError> {
        let mut terms: Vec<(f64, f64)> = self.r.iter().copied().zip(self.tau.clone()).collect();
        terms.sort_by(|x, y| x.1.total_cmp(&y.1));
        let mut merged: Vec<(f64, f64)> = Vec::new();
        for (r, tau) in terms {
            match merged.last_mut() {
                Some(last) if (tau - last.1).abs() <= 1e-9 * tau => last.0 += r,
                _ => merged.push((r, tau)),
            }
        }
        let n = merged.len();
        let lambda: Vec<f64> = merged.iter().map(|t| 1.0 / t.1).collect();
        let w: Vec<f64> = merged.iter().map(|t| (t.0 / t.1).sqrt()).collect();
        let w2: f64 = w.iter().map(|x| x * x).sum();
        // Lanczos on diag(λ) from w/|w|, with full re-orthogonalisation (n is small).
        let mut q: Vec<Vec<f64>> = vec![w.iter().map(|x| x / w2.sqrt()).collect()];
        let mut alpha = Vec::with_capacity(n);
        let mut beta: Vec<f64> = Vec::with_capacity(n);
        for k in 0..n {
            let mut v: Vec<f64> = q[k].iter().zip(&lambda).map(|(x, l)| x * l).collect();
            if k > 0 {
                for (vi, qi) in v.iter_mut().zip(&q[k - 1]) {
                    *vi -= beta[k - 1] * qi;
                }
            }
            let a: f64 = v.iter().zip(&q[k]).map(|(x, y)| x * y).sum();
            alpha.push(a);
            for _ in 0..2 {
                for qj in &q {
                    let dot: f64 = v.iter().zip(qj).map(|(x, y)| x * y).sum();
                    for (vi, qi) in v.iter_mut().zip(qj) {
                        *vi -= dot * qi;
                    }
                }
            }
            if k + 1 < n {
                let b = v.iter().map(|x| x * x).sum::<f64>().sqrt();
                beta.push(b);
                q.push(v.iter().map(|x| x / b).collect());
            }
        }
        // Read the ladder off the Jacobi matrix: T_kk = (1/R_{k−1} + 1/R_k)/C_k,
        // |T_k,k+1| = 1/(R_k √(C_k C_{k+1})), C_0 = 1/|w|².
        let mut c = vec![0.0f64; n];
        let mut r = vec![0.0f64; n];
        c[0] = 1.0 / w2;
        let mut y_prev = 0.0; // 1/R_{k−1}
        for k in 0..n {
            if k > 0 {
                c[k] = 1.0 / (r[k - 1].powi(2) * c[k - 1] * beta[k - 1].powi(2));
            }
            let y = alpha[k] * c[k] - y_prev;
            if !(y.is_finite() && y > 0.0 && c[k].is_finite() && c[k] > 0.0) {
                return Err(ThermalError::Conversion {
                    index: k,
                    value: if y > 0.0 { c[k] } else { y },
                });
            }
            r[k] = 1.0 / y;
            y_prev = y;
        }
        Ok(CauerLadder { r, c })
    }
}

impl CauerLadder {
    /// The steady resistance Σ R_k, K/W.
    pub fn total(&self) -> f64 {
        self.r.iter().sum()
    }

    /// The ladder as a network of its own, its far end at the ambient;
    /// nodes named `prefix.0`, `prefix.1`, ….
    pub fn network(&self, prefix: &str) -> Result<ThermalNetwork, ThermalError> {
        let n = self.r.len();
        let names = (0..n).map(|k| format!("{prefix}.{k}")).collect();
        let links = (0..n)
            .map(|k| ThermalLink {
                a: k,
                b: (k + 1 < n).then_some(k + 1),
                resistance: self.r[k],
            })
            .collect();
        ThermalNetwork::new(names, self.c.clone(), links)
    }
}

/// A power schedule: key down (`on` W) for `mark` s, then `off` W for
/// `space` s, repeated for `length` s in all.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Keying {
    /// Power per node while keyed is given separately; this is the time
    /// keyed in each cycle, s.
    pub mark: f64,
    /// Time unkeyed in each cycle, s (0: one continuous key-down).
    pub space: f64,
    /// Length of the whole transmission, s.
    pub length: f64,
}

/// Most keying cycles a heating run steps through (the stage file's limit).
pub use tankwave_circuit::bounds::MAX_KEYING_CYCLES;

/// Rises over a keyed transmission: a sample per point of `times`, the
/// peak rise of every node and when it happened.
#[derive(Debug, Clone, PartialEq)]
pub struct Heating {
    /// Sample times, s.
    pub times: Vec<f64>,
    /// Rise of every node at each sample time, K (`rises[sample][node]`).
    pub rises: Vec<Vec<f64>>,
    /// Largest rise of each node over the run, K.
    pub peak: Vec<f64>,
    /// When each node's peak happened, s.
    pub peak_at: Vec<f64>,
}

/// Step the network through a keyed transmission from the ambient (all
/// rises 0): `on` (W per node) during each mark, `off` during each space.
/// The solution is exact per segment; each segment is sampled at
/// `per_segment` evenly spaced points (the peak of a node under constant
/// power in a segment is at one of its ends or, in a network, close to one;
/// the samples bound it), and at most about `max_samples` samples are kept
/// (whole cycles are skipped between kept ones, the peaks still come from
/// every cycle).
pub fn heat_run(
    modes: &Modes,
    on: &[f64],
    off: &[f64],
    keying: Keying,
    per_segment: usize,
    max_samples: usize,
) -> Result<Heating, ThermalError> {
    let n = modes.rates.len();
    if on.len() != n || off.len() != n {
        return Err(ThermalError::BadPower {
            reason: format!("{} / {} values for {n} nodes", on.len(), off.len()),
        });
    }
    let Keying {
        mark,
        space,
        length,
    } = keying;
    let ok = |v: f64| v.is_finite() && v >= 0.0;
    if !(ok(mark) && ok(space) && ok(length) && length > 0.0) {
        return Err(ThermalError::BadPower {
            reason: format!("keying mark {mark} s, space {space} s, length {length} s"),
        });
    }
    let period = if space > 0.0 && mark > 0.0 {
        mark + space
    } else {
        length
    };
    let cycles = (length / period).ceil();
    if cycles > MAX_KEYING_CYCLES {
        return Err(ThermalError::BadPower {
            reason: format!(
                "{cycles} keying cycles in the transmission; at most {MAX_KEYING_CYCLES} are stepped"
            ),
        });
    }
    let cycles = cycles as usize;
    let per_segment = per_segment.max(1);
    let keep_every = (cycles * 2 * per_segment / max_samples.max(1)).max(1);
    let mut rise = vec![0.0; n];
    let mut out = Heating {
        times: vec![0.0],
        rises: vec![rise.clone()],
        peak: vec![0.0; n],
        peak_at: vec![0.0; n],
    };
    let settled_on = modes.settled(on);
    let settled_off = modes.settled(off);
    // the decays of the two usual step lengths, kept (a cut-short last
    // segment computes its own)
    let mut decays: Vec<(f64, Vec<f64>)> = Vec::new();
    let mut t = 0.0;
    let mut seg_count = 0usize;
    'outer: for cycle in 0..cycles {
        let start = cycle as f64 * period;
        let mark_end = start + mark.min(period);
        for (end, p) in [(mark_end, &settled_on), (start + period, &settled_off)] {
            let dur = end.min(length) - t;
            if dur <= 0.0 {
                continue;
            }
            let h = dur / per_segment as f64;
            let keep = seg_count.is_multiple_of(keep_every);
            seg_count += 1;
            let decay = match decays.iter().find(|(hh, _)| *hh == h) {
                Some((_, d)) => d.clone(),
                None => {
                    let d = modes.decay(h);
                    if decays.len() < 2 {
                        decays.push((h, d.clone()));
                    }
                    d
                }
            };
            for _ in 0..per_segment {
                rise = modes.relax(&rise, p, &decay);
                t += h;
                for i in 0..n {
                    if rise[i] > out.peak[i] {
                        out.peak[i] = rise[i];
                        out.peak_at[i] = t;
                    }
                }
                if keep {
                    out.times.push(t);
                    out.rises.push(rise.clone());
                }
            }
            if t >= length {
                break 'outer;
            }
        }
    }
    if out.times.last() != Some(&t) {
        out.times.push(t);
        out.rises.push(rise);
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ladder(r: &[f64], c: &[f64]) -> ThermalNetwork {
        CauerLadder {
            r: r.to_vec(),
            c: c.to_vec(),
        }
        .network("n")
        .expect("ladder")
    }

    #[test]
    fn steady_rise_of_a_ladder_is_the_series_sum() {
        // Series thermal resistances add: rise = P Σ R (thermal Ohm's law,
        // F. P. Incropera, D. P. DeWitt, Fundamentals of Heat and Mass
        // Transfer, ch. 3, "thermal resistance" — from memory; docs/check-values.md).
        let r = [0.4, 1.1, 0.25, 2.0];
        let net = ladder(&r, &[1e-3, 0.1, 5.0, 300.0]);
        let p = [12.5, 0.0, 0.0, 0.0];
        let rise = net.steady_rise(&p).unwrap();
        let mut left = r.iter().sum::<f64>();
        for (k, v) in rise.iter().enumerate() {
            // A 4×4 Cholesky solve: rounding only, far below 1e−12 relative.
            assert!((v - 12.5 * left).abs() <= 1e-12 * 12.5 * 3.75, "{k}: {v}");
            left -= r[k];
        }
    }

    #[test]
    fn first_order_heating_follows_one_minus_exp() {
        // A single lumped capacity: ΔT(t) = P R (1 − e^{−t/RC}) (lumped-capacitance
        // heating, Incropera & DeWitt ch. 5 — from memory; docs/check-values.md).
        let (r, c, p) = (2.5, 40.0, 8.0);
        let net = ladder(&[r], &[c]);
        let m = net.modes().unwrap();
        let tau = r * c;
        assert!((m.time_constants()[0] - tau).abs() <= 1e-12 * tau);
        let run = heat_run(
            &m,
            &[p],
            &[p],
            Keying {
                mark: 5.0 * tau,
                space: 0.0,
                length: 5.0 * tau,
            },
            50,
            10_000,
        )
        .unwrap();
        for (t, rise) in run.times.iter().zip(&run.rises) {
            let want = p * r * (1.0 - (-t / tau).exp());
            // The stepping is exact per segment; only rounding is left.
            assert!((rise[0] - want).abs() <= 1e-10 * p * r, "t = {t}");
        }
        assert!((run.peak[0] - p * r * (1.0 - (-5.0f64).exp())).abs() < 1e-10 * p * r);
    }

    fn foster() -> FosterLadder {
        // A die, solder, case and heatsink spread over five decades of time.
        FosterLadder::new(vec![0.12, 0.35, 0.8, 1.6], vec![2e-4, 8e-3, 0.9, 120.0]).unwrap()
    }

    #[test]
    fn cauer_keeps_the_thermal_impedance() {
        let f = foster();
        let c = f.to_cauer().unwrap();
        assert!(c.r.iter().chain(&c.c).all(|v| *v > 0.0), "{c:?}");
        // The steady resistance is kept (Z(s=0) = Σ R both ways).
        assert!((c.total() - f.total()).abs() <= 1e-9 * f.total());
        let m = c.network("j").unwrap().modes().unwrap();
        // The Cauer network's own modes have the Foster time constants.
        let mut taus = m.time_constants();
        taus.sort_by(f64::total_cmp);
        for (a, b) in taus.iter().zip(&f.tau) {
            assert!((a - b).abs() <= 1e-7 * b, "{a} vs {b}");
        }
        // Z_th(t) on a log grid from 10 µs to 1 h: the conversion and the
        // eigen-solution are both exact in exact arithmetic; over a 6-decade
        // spread of time constants rounding leaves < 1e−7 relative.
        for k in 0..=60 {
            let t = 1e-5 * 10f64.powf(k as f64 * 8.5 / 60.0);
            let (a, b) = (f.zth(t), m.zth(0, 0, t));
            assert!((a - b).abs() <= 1e-7 * f.total(), "t = {t}: {a} vs {b}");
        }
        // And back: the Foster ladder read from the network's modes.
        let back = m.foster(0);
        for t in [1e-4, 1e-2, 1.0, 100.0] {
            assert!((back.zth(t) - f.zth(t)).abs() <= 1e-7 * f.total());
        }
    }

    #[test]
    fn two_term_foster_to_cauer_by_hand() {
        // Z(s) = R1/(1+sτ1) + R2/(1+sτ2) with R = 1, τ = 1 and 2 → the
        // continued fraction 1/(s C1 + 1/(R1 + 1/(s C2 + 1/R2))) worked by hand
        // (polynomial long division): Z = (3s + 2)/(2s² + 3s + 1), so
        // Y = (2s² + 3s + 1)/(3s + 2) = (2/3) s + (5/3 s + 1)/(3s + 2) → C1 = 2/3;
        // (3s + 2)/(5/3 s + 1) = 9/5 + (1/5)/(5/3 s + 1) → R1 = 9/5;
        // (5/3 s + 1)/(1/5) = 25/3 s + 5 → C2 = 25/3, R2 = 1/5.
        let c = FosterLadder::new(vec![1.0, 1.0], vec![1.0, 2.0])
            .unwrap()
            .to_cauer()
            .unwrap();
        let want_c = [2.0 / 3.0, 25.0 / 3.0];
        let want_r = [9.0 / 5.0, 1.0 / 5.0];
        for k in 0..2 {
            assert!((c.c[k] - want_c[k]).abs() < 1e-12 * want_c[k], "{c:?}");
            assert!((c.r[k] - want_r[k]).abs() < 1e-12 * want_r[k], "{c:?}");
        }
    }

    #[test]
    fn equal_time_constants_merge() {
        let c = FosterLadder::new(vec![1.0, 2.0], vec![3.0, 3.0])
            .unwrap()
            .to_cauer()
            .unwrap();
        assert_eq!(c.r.len(), 1);
        assert!((c.r[0] - 3.0).abs() < 1e-12 && (c.c[0] - 1.0).abs() < 1e-12);
    }

    #[test]
    fn a_shared_heatsink_adds_both_powers() {
        // Two junctions (0, 1) on their cases to one sink (2) to ambient:
        // T_j,i = P_i (R_jc,i + R_cs,i) + (P_0 + P_1) R_sa (superposition in a linear
        // network, common practice).
        let links = vec![
            ThermalLink {
                a: 0,
                b: Some(2),
                resistance: 1.5,
            },
            ThermalLink {
                a: 1,
                b: Some(2),
                resistance: 0.9,
            },
            ThermalLink {
                a: 2,
                b: None,
                resistance: 0.7,
            },
        ];
        let net = ThermalNetwork::new(
            vec!["q1".into(), "q2".into(), "sink".into()],
            vec![0.5, 0.5, 200.0],
            links,
        )
        .unwrap();
        let rise = net.steady_rise(&[10.0, 4.0, 0.0]).unwrap();
        assert!((rise[2] - 14.0 * 0.7).abs() < 1e-12);
        assert!((rise[0] - (15.0 + 9.8)).abs() < 1e-12);
        assert!((rise[1] - (3.6 + 9.8)).abs() < 1e-12);
        // The transfer impedance is symmetric (reciprocity of a passive network).
        let m = net.modes().unwrap();
        for t in [0.1, 10.0, 1e3] {
            let (a, b) = (m.zth(0, 1, t), m.zth(1, 0, t));
            assert!((a - b).abs() < 1e-12 * a.abs().max(1e-9));
        }
    }

    #[test]
    fn keying_ripple_and_average() {
        // 50 % keying of a fast die node on a slow sink: the sink settles to
        // half the key-down rise (the average power), the die ripples about it.
        let net = ladder(&[1.0, 2.0], &[1e-3, 50.0]);
        let m = net.modes().unwrap();
        let run = heat_run(
            &m,
            &[10.0, 0.0],
            &[0.0, 0.0],
            Keying {
                mark: 0.05,
                space: 0.05,
                length: 2000.0,
            },
            4,
            5000,
        )
        .unwrap();
        let last = run.rises.last().unwrap();
        // 20 time constants of the sink (τ ≈ 150 s): settled to e^−13.
        assert!((last[1] - 0.5 * 10.0 * 2.0).abs() < 1e-3 * 10.0, "{last:?}");
        // The die peaks near sink + P R_jc (its τ of 0.67 ms ≪ the 50 ms mark).
        assert!(
            (run.peak[0] - (10.0 + 10.0)).abs() < 0.05 * 10.0,
            "{:?}",
            run.peak
        );
        assert!(run.times.len() <= 5000 + 20);
    }

    #[test]
    fn a_floating_node_is_refused() {
        let e = ThermalNetwork::new(
            vec!["a".into(), "b".into()],
            vec![1.0, 1.0],
            vec![ThermalLink {
                a: 0,
                b: None,
                resistance: 1.0,
            }],
        )
        .unwrap_err();
        assert!(matches!(e, ThermalError::Floating { .. }));
    }
}
