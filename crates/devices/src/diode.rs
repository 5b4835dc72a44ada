//! Junction diode: exponential current, reverse breakdown, depletion and
//! diffusion charge, optional ohmic series resistance.
//!
//! With `V` the junction voltage from the internal anode `a'` to the cathode
//! `k`, `n V_t` the emission coefficient times the thermal voltage at the
//! circuit temperature, and `A` the area factor:
//!
//! ```text
//! I_f(V) = A·IS(T)·(exp(V/(nV_t)) − 1)                       forward (ideal) current
//! I_b(V) = −A·IBV·exp(−(V + BV)/(nV_t))                      reverse breakdown (BV finite)
//! I(V)   = I_f + I_b + junction_leak·V                                 current a' → k
//! Q(V)   = A·Q_dep(V) + τ·I_f                                 charge on a' (−Q on k)
//! ```
//!
//! * `IS(T)` is scaled from `t_measured` with [`crate::junction::sat_current_at`].
//! * `I_b` equals `−A·IBV` exactly at `V = −BV` and grows by e every `nV_t`
//!   further in reverse. At zero bias it is `A·IBV·exp(−BV/(nV_t))`, negligible
//!   for any breakdown above a few tenths of a volt.
//! * `Q_dep` is the graded-junction depletion charge of [`crate::junction::Depletion`]
//!   (C_j0 scaled by `A`); the diffusion charge uses the ideal forward current
//!   only (not the breakdown or junction_leak parts).
//! * With `r_series > 0` the diode owns an internal anode node `a'` and puts a
//!   conductance `A / r_series` between `a` and `a'` (the series resistance
//!   scales inversely with area).
//! * Exponentials go through [`crate::junction::exp_guarded`].
//!
//! Limiting (when [`EvalCtx::limit`]): the junction voltage is limited against
//! the previous one (kept in the device's single state slot) with
//! [`crate::junction::limit_junction`] in forward bias; with a finite breakdown and a
//! negative new voltage the same limiter is applied to the mirrored voltage
//! `−(V + BV)` with the breakdown critical voltage `nV_t ln(nV_t/(√2 A·IBV))`.
//! The stamp is then the linearisation about the limited voltage
//! (`I(V_lim) + G·(V − V_lim)`, same for `Q`), as the contract asks.
//!
//! Not modelled: temperature dependence of C_j0, V_j, BV and IBV; high-level
//! injection; recombination current; noise.

use crate::contract::{stamp_conductance, val, Device, EvalCtx, EvalInfo, Idx, Stamp};
use crate::error::DeviceError;
use crate::figure::OpFigure;
use crate::junction::{
    critical_voltage, exp_guarded, exp_m1_guarded, limit_junction, sat_current_at, thermal_voltage,
    Depletion,
};
use tankwave_circuit::ir::{DiodeParams, ElementId};

/// Check diode model parameters (and the area/temperature separately in
/// [`crate::instantiate`]). `element` names the element in the error.
pub fn check_params(p: &DiodeParams, element: &str) -> Result<(), DeviceError> {
    let bad = |param, value, reason| {
        Err(DeviceError::BadParameter {
            element: element.to_string(),
            param,
            value,
            reason,
        })
    };
    let pos = |v: f64| v.is_finite() && v > 0.0;
    let nonneg = |v: f64| v.is_finite() && v >= 0.0;
    if !pos(p.sat_current) {
        return bad("sat_current", p.sat_current, "must be finite and > 0");
    }
    if !pos(p.emission) {
        return bad("emission", p.emission, "must be finite and > 0");
    }
    if !nonneg(p.r_series) {
        return bad("r_series", p.r_series, "must be finite and ≥ 0");
    }
    if let Err(e) = depletion_of(p, 1.0).validate() {
        return bad(e.param, e.value, e.reason);
    }
    if !nonneg(p.transit) {
        return bad("transit", p.transit, "must be finite and ≥ 0");
    }
    if p.breakdown.is_nan() || p.breakdown <= 0.0 {
        return bad("breakdown", p.breakdown, "must be > 0 (∞ = none)");
    }
    if !pos(p.breakdown_current) {
        return bad(
            "breakdown_current",
            p.breakdown_current,
            "must be finite and > 0",
        );
    }
    if !nonneg(p.gap) {
        return bad("gap", p.gap, "must be finite and ≥ 0");
    }
    if !p.sat_temp_exp.is_finite() {
        return bad("sat_temp_exp", p.sat_temp_exp, "must be finite");
    }
    if !pos(p.t_measured) {
        return bad("t_measured", p.t_measured, "must be finite and > 0");
    }
    Ok(())
}

fn depletion_of(p: &DiodeParams, area: f64) -> Depletion {
    Depletion {
        cj0: p.cj0 * area,
        vj: p.v_junction,
        m: p.grading,
        fc: p.linear_from,
    }
}

/// Junction quantities at one voltage.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct JunctionEval {
    /// Current a' → k, A (including junction_leak·V).
    pub i: f64,
    /// dI/dV, S.
    pub g: f64,
    /// Charge on a', C.
    pub q: f64,
    /// dQ/dV, F.
    pub c: f64,
}

/// A junction diode instance (see the module doc).
#[derive(Debug, Clone)]
pub struct Diode {
    element: ElementId,
    nodes: [Idx; 2],
    ai: Idx,
    g_series: f64,
    is_t: f64,
    n_vt: f64,
    vcrit: f64,
    dep: Depletion,
    transit: f64,
    bv: f64,
    ibv: f64,
    vcrit_bv: f64,
}

impl Diode {
    /// Build a diode between anode `a` and cathode `k`; `ai` is the internal
    /// anode (equal to `a` when `p.r_series == 0`). Parameters must pass
    /// [`check_params`]; `area > 0`, `temp_k > 0`.
    pub fn new(
        element: ElementId,
        a: Idx,
        k: Idx,
        ai: Idx,
        p: &DiodeParams,
        area: f64,
        temp_k: f64,
    ) -> Self {
        let n_vt = p.emission * thermal_voltage(temp_k);
        let is_t = area
            * sat_current_at(
                p.sat_current,
                p.emission,
                p.sat_temp_exp,
                p.gap,
                p.t_measured,
                temp_k,
            );
        let ibv = area * p.breakdown_current;
        Self {
            element,
            nodes: [a, k],
            ai,
            g_series: if p.r_series > 0.0 {
                area / p.r_series
            } else {
                0.0
            },
            is_t,
            n_vt,
            vcrit: critical_voltage(n_vt, is_t),
            dep: depletion_of(p, area),
            transit: p.transit,
            bv: p.breakdown,
            ibv,
            vcrit_bv: critical_voltage(n_vt, ibv),
        }
    }

    /// Saturation current at the instance temperature, times area, A.
    pub fn sat_current(&self) -> f64 {
        self.is_t
    }

    /// n·V_t at the instance temperature, V.
    pub fn n_vt(&self) -> f64 {
        self.n_vt
    }

    /// Current, conductance, charge and capacitance of the junction at `v`
    /// (exact, no limiting), with `junction_leak` across it.
    pub fn junction(&self, v: f64, junction_leak: f64) -> JunctionEval {
        let (em1, de) = exp_m1_guarded(v / self.n_vt);
        let i_f = self.is_t * em1;
        let g_f = self.is_t * de / self.n_vt;
        let (i_b, g_b) = if self.bv.is_finite() {
            let (eb, deb) = exp_guarded(-(v + self.bv) / self.n_vt);
            (-self.ibv * eb, self.ibv * deb / self.n_vt)
        } else {
            (0.0, 0.0)
        };
        let (qd, cd) = self.dep.eval(v);
        JunctionEval {
            i: i_f + i_b + junction_leak * v,
            g: g_f + g_b + junction_leak,
            q: qd + self.transit * i_f,
            c: cd + self.transit * g_f,
        }
    }

    /// The junction voltage to use for `vnew` after `vold` (see the module doc).
    pub fn limit(&self, vnew: f64, vold: f64) -> (f64, bool) {
        if self.bv.is_finite() && vnew < 0.0 {
            let (m, l) = limit_junction(
                -(vnew + self.bv),
                -(vold + self.bv),
                self.n_vt,
                self.vcrit_bv,
            );
            // Unlimited: return the voltage itself (the mirror round trip could round).
            if l {
                (-m - self.bv, true)
            } else {
                (vnew, false)
            }
        } else {
            limit_junction(vnew, vold, self.n_vt, self.vcrit)
        }
    }

    fn vd(&self, x: &[f64]) -> f64 {
        val(x, self.ai) - val(x, self.nodes[1])
    }
}

impl Device for Diode {
    fn element(&self) -> ElementId {
        self.element
    }
    fn terminals(&self) -> &[Idx] {
        &self.nodes
    }
    fn is_linear(&self) -> bool {
        false
    }
    fn state_len(&self) -> usize {
        1
    }
    fn init_state(&self, state: &mut [f64]) {
        if let Some(s) = state.first_mut() {
            *s = 0.0;
        }
    }
    fn eval(&self, x: &[f64], ctx: &EvalCtx, state: &mut [f64], out: &mut dyn Stamp) -> EvalInfo {
        let [a, k] = self.nodes;
        let ai = self.ai;
        if self.g_series > 0.0 {
            stamp_conductance(out, x, a, ai, self.g_series);
        }
        let v = self.vd(x);
        let mut info = EvalInfo::default();
        let vl = match (ctx.limit, state.first_mut()) {
            (true, Some(s)) => {
                let (vl, limited) = self.limit(v, *s);
                *s = vl;
                info.limited = limited;
                vl
            }
            _ => v,
        };
        let j = self.junction(vl, ctx.junction_leak);
        let dv = v - vl;
        let i = j.i + j.g * dv;
        let q = j.q + j.c * dv;
        out.add_i(ai, i);
        out.add_i(k, -i);
        out.add_q(ai, q);
        out.add_q(k, -q);
        for (r, s) in [(ai, 1.0), (k, -1.0)] {
            out.add_g(r, ai, s * j.g);
            out.add_g(r, k, -s * j.g);
            out.add_c(r, ai, s * j.c);
            out.add_c(r, k, -s * j.c);
        }
        info
    }
    fn op_info(&self, x: &[f64], ctx: &EvalCtx) -> Vec<(OpFigure, f64)> {
        let v = self.vd(x);
        let j = self.junction(v, ctx.junction_leak);
        vec![
            (OpFigure::ForwardVoltage, v),
            (OpFigure::JunctionCurrent, j.i),
            (OpFigure::JunctionConductance, j.g),
            (OpFigure::JunctionCapacitance, j.c),
        ]
    }
}
