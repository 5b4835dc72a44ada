//! Bipolar power transistor: a Gummel–Poon type charge-control model.
//!
//! Sources: H. K. Gummel, H. C. Poon, Bell Syst. Tech. J. 49(5), 1970 (transport
//! current over the normalised base charge); L. W. Nagel, ERL M520, 1975 (the
//! reciprocal Early factor used here, and junction limiting); I. Getreu,
//! *Modeling the Bipolar Transistor*, 1976 (base-current components, charges,
//! temperature scaling). Forms are written from memory and checked against an
//! independent numpy evaluation (tests/reference/bjt/gen.py). The full
//! parameter table is in docs/models.md, section "Bipolar transistor".
//!
//! # Equations (npn; a pnp is the mirror: every junction voltage, current and
//! charge negated)
//!
//! With `Vt = kT/q`, forward and reverse diffusion currents
//! `I_F = IS (exp(VBE/(NF Vt)) − 1)`, `I_R = IS (exp(VBC/(NR Vt)) − 1)`:
//!
//! ```text
//! q1  = 1 / (1 − VBC/VAF − VBE/VAR)          (reciprocal form, Nagel 1975)
//! q2  = I_F/IKF + I_R/IKR
//! qb  = (q1/2) (1 + √(1 + 4 q2))
//! I_CT = (I_F − I_R) / qb
//! I_B = I_F/BF + ISE (exp(VBE/(NE Vt)) − 1) + I_R/BR + ISC (exp(VBC/(NC Vt)) − 1)
//!       + junction_leak (VBE + VBC)
//! I_C = I_CT − I_R/BR − ISC (exp(VBC/(NC Vt)) − 1) − junction_leak VBC
//! I_E = −(I_C + I_B)
//! Q_BE = Q_dep(VBE; CJE, VJE, MJE, FC) + TF · I_F / qb
//! Q_BC = Q_dep(VBC; CJC, VJC, MJC, FC) + TR · I_R
//! ```
//!
//! Currents are those flowing *into* the terminals, which is also what the
//! device stamps in each node row (current leaving the node into the device).
//!
//! The q1 denominator `d = 1 − VBC/VAF − VBE/VAR` is used as is while
//! `d ≥ Q1_FLOOR` (= 0.1, i.e. q1 ≤ 10, far outside any sensible bias); below
//! it is replaced by the C¹ hyperbolic floor `d_f = F²/(2F − d)`, which equals
//! F with unit slope at `d = F` and stays positive for every `d`, so q1 grows
//! at most linearly instead of changing sign.
//!
//! The ohmic base resistance is `r_base`, lowered by current crowding when
//! the part asks for it (below). All of the base–collector depletion
//! capacitance sits at the internal base.
//!
//! # Temperature and area
//! `IS(T) = IS (T/Tm)^XTI exp(Eg q/k (1/Tm − 1/T))`,
//! `BF(T) = BF (T/Tm)^XTB`, `BR(T) = BR (T/Tm)^XTB`,
//! `ISE(T) = ISE (T/Tm)^−XTB (IS(T)/IS)^(1/NE)`, likewise `ISC` with NC (Getreu
//! 1976): the low-current base components follow the same band-gap law while
//! the gain change is divided out. Depletion parameters are not temperature
//! scaled. The area factor multiplies IS, ISE, ISC, IKF, IKR, CJE, CJC and
//! divides the three resistances.
//!
//! # Avalanche multiplication (effect off unless `avalanche { cb_voltage= }`)
//!
//! ```text
//! M − 1 = u/(1 − u),  u = (V_CB/BV_CBO(T))^n_av  for V_CB = −VBC > 0, else 0
//! I_AV  = (M − 1) · I_CT,   I_C += I_AV,   I_B −= I_AV
//! BV_CBO(T) = BV_CBO (1 + α_BV (T − T_0))
//! ```
//!
//! (S. L. Miller, Phys. Rev. 99, 1955, from memory.) Above M =
//! [`AVALANCHE_M_MAX`] M − 1 continues as its tangent line, so the current
//! through breakdown is steep but finite. With the base open, I_B = 0 gives
//! M − 1 = 1/β, so the collector current runs away at
//! BV_CEO = BV_CBO (1 + β)^(−1/n_av) ≈ BV_CBO/β^(1/n_av).
//!
//! # Quasi-saturation (effect off unless `epi { resistance= }`)
//!
//! A power transistor's collector is a lightly doped epitaxial layer between
//! the metallurgical base–collector junction (internal node `cj`) and the
//! collector contact (`ci`, behind `r_collector`). At high current and low
//! collector voltage the junction side goes into forward bias, carriers
//! flood the layer and modulate its resistance. With
//! `K(V) = √(1 + γ exp(V/V_t))` at V_BCI (junction side) and V_BCX (contact
//! side) (G. M. Kull, L. W. Nagel, S.-W. Lee, P. Lloyd, E. J. Prendergast,
//! H. Dirks, IEEE Trans. Electron Devices 32(6), 1985, from memory):
//!
//! ```text
//! I_epi = [V_BCI − V_BCX + V_t (K_i − K_x − ln((1 + K_i)/(1 + K_x)))] / R_CO    (ci → cj)
//! Q_i = Q_CO (K_i − 1) between bi and cj,   Q_x = Q_CO (K_x − 1) between bi and ci
//! R_CO(T) = R_CO (T/T_0)^ξ_RC,   γ(T) = γ (T/T_0)³ exp((E_g q/k)(1/T_0 − 1/T))
//! ```
//!
//! (the charge split as in the quasi-saturation part of C. C. McAndrew et
//! al., IEEE JSSC 31(10), 1996, from memory). With both sides reverse
//! biased K ≈ 1 and the layer is the plain resistance R_CO; as V_BCI goes
//! forward the K_i term lowers it. The intrinsic transistor's VBC is the
//! junction side's. Above V/V_t = [`EPI_EXP_MAX`] K continues along its
//! tangent. Not modelled: velocity saturation in the layer (Kull's V_O)
//! and the layer's own temperature rise.
//!
//! # Current crowding (effect off unless `resistance { base_half_current= }`)
//!
//! ```text
//! r_bb = r_BM + 3 (r_B − r_BM) (tan z − z)/(z tan² z)
//! z    = (−1 + √(1 + 144 I_B/(π² I_RB))) / ((24/π²) √(I_B/I_RB))
//! ```
//!
//! (J. R. Hauser, IEEE Trans. Electron Devices 11(5), 1964, in Getreu's
//! 1976 form, from memory), I_B the intrinsic base current smoothed by
//! [`CROWDING_SMOOTHING`]; the base resistor's current then depends on the
//! junction voltages too, and the stamp carries those partials.
//!
//! # Excess phase (effect off unless `charge { excess_phase= }`)
//!
//! The forward transport current I_CC = I_F/qb reaches the collector through
//! the second-order Bessel approximation of a delay t_d = φ_F τ_F
//! (P. B. Weil, L. P. McNamee, IEEE Trans. Circuits and Systems 25(2), 1978,
//! from memory): `t_d² y₁'' + 3 t_d y₁' + 3 y₁ = 3 I_CC`, two current-valued
//! internal states; `I_CT = y₁ − I_R/qb`.
//!
//! Not modelled: self-heating feedback inside one solve (the junction
//! temperature is an input; `analyze heat` iterates it), noise.

use crate::contract::{stamp_conductance, val, Device, EvalCtx, EvalInfo, Idx, Stamp};
use crate::error::DeviceError;
use crate::figure::OpFigure;
use crate::junction::{self, Depletion};
use tankwave_circuit::{BjtParams, ElementId};

/// Smallest q1 denominator used as is; below it the hyperbolic floor applies.
pub const Q1_FLOOR: f64 = 0.1;

/// Unknown indices of a transistor: external terminals and internal nodes.
/// An internal node equals its external node when that resistance is zero.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct BjtNodes {
    /// External collector.
    pub c: Idx,
    /// External base.
    pub b: Idx,
    /// External emitter.
    pub e: Idx,
    /// Internal collector (behind `r_collector`).
    pub ci: Idx,
    /// The collector at the metallurgical base–collector junction, behind
    /// the epitaxial layer (equals `ci` without an `epi` block).
    pub cj: Idx,
    /// Internal base (behind `r_base`).
    pub bi: Idx,
    /// Internal emitter (behind `r_emitter`).
    pub ei: Idx,
    /// The two excess-phase states (A; `None` without excess phase).
    pub phase: [Idx; 2],
}

/// A current (or charge) and its derivative with respect to its junction voltage.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Branch {
    /// Value (A, or C for a charge).
    pub v: f64,
    /// Derivative with respect to the junction voltage (S, or F).
    pub d: f64,
}

/// Temperature- and area-scaled constants of one transistor (npn sense).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BjtConstants {
    /// Thermal voltage kT/q at the device temperature, V.
    pub vt: f64,
    /// Transport saturation current IS(T)·area, A.
    pub is: f64,
    /// Forward current gain BF(T).
    pub gain_fwd: f64,
    /// Reverse current gain BR(T).
    pub gain_rev: f64,
    /// Forward emission coefficient NF.
    pub nf: f64,
    /// Reverse emission coefficient NR.
    pub nr: f64,
    /// 1/VAF, 1/V (0 when VAF is infinite).
    pub inv_vaf: f64,
    /// 1/VAR, 1/V.
    pub inv_var: f64,
    /// 1/(IKF·area), 1/A.
    pub inv_ikf: f64,
    /// 1/(IKR·area), 1/A.
    pub inv_ikr: f64,
    /// ISE(T)·area, A.
    pub ise: f64,
    /// NE.
    pub ne: f64,
    /// ISC(T)·area, A.
    pub isc: f64,
    /// NC.
    pub nc: f64,
    /// CJE·area, F.
    pub cj_be: f64,
    /// VJE, V.
    pub vj_be: f64,
    /// MJE.
    pub m_be: f64,
    /// CJC·area, F.
    pub cj_bc: f64,
    /// VJC, V.
    pub vj_bc: f64,
    /// MJC.
    pub m_bc: f64,
    /// FC.
    pub fc: f64,
    /// Forward transit time TF, s.
    pub tf: f64,
    /// Excess-phase delay t_d = φ_F·τ_F (φ_F in radians), s (0: none).
    pub t_delay: f64,
    /// Reverse transit time TR, s.
    pub tr: f64,
    /// Base conductance area/RB, S (0: no resistor).
    pub g_base: f64,
    /// Collector conductance area/RC, S (0: no resistor).
    pub g_collector: f64,
    /// Emitter conductance area/RE, S (0: no resistor).
    pub g_emitter: f64,
    /// High-current base resistance r_BM/area, Ω.
    pub r_base_min: f64,
    /// Crowding half current I_RB·area, A (∞: no current crowding).
    pub base_half_current: f64,
    /// Epitaxial collector conductance area/R_CO(T), S (0: no epi layer).
    pub g_epi: f64,
    /// Doping factor γ(T) of the epitaxial collector.
    pub epi_gamma: f64,
    /// Epi charge factor Q_CO·area, C.
    pub epi_charge: f64,
    /// 1/BV_CBO(T), 1/V (0: no avalanche multiplication).
    pub inv_bv: f64,
    /// Exponent n_av of the multiplication law.
    pub n_av: f64,
}

fn recip(x: f64) -> f64 {
    if x.is_finite() && x != 0.0 {
        1.0 / x
    } else {
        0.0
    }
}

fn cond(r: f64, area: f64) -> f64 {
    if r > 0.0 && r.is_finite() {
        area / r
    } else {
        0.0
    }
}

impl BjtConstants {
    /// Scale the model parameters to `temp_k` and the area factor.
    pub fn new(p: &BjtParams, area: f64, temp_k: f64) -> Self {
        let area = if area > 0.0 && area.is_finite() {
            area
        } else {
            1.0
        };
        let vt = junction::thermal_voltage(temp_k);
        // n = 1: the transport saturation current follows the band-gap law directly.
        let is_t = junction::sat_current_at(
            p.sat_current,
            1.0,
            p.sat_temp_exp,
            p.gap,
            p.t_measured,
            temp_k,
        );
        let ratio = temp_k / p.t_measured;
        let gain_scale = ratio.powf(p.gain_temp_exp);
        let is_ratio = if p.sat_current > 0.0 {
            is_t / p.sat_current
        } else {
            1.0
        };
        let leak = |is0: f64, n: f64| is0 / gain_scale * is_ratio.powf(1.0 / n);
        BjtConstants {
            vt,
            is: is_t * area,
            gain_fwd: p.gain_fwd * gain_scale,
            gain_rev: p.gain_rev * gain_scale,
            nf: p.emission_fwd,
            nr: p.emission_rev,
            inv_vaf: recip(p.early_fwd),
            inv_var: recip(p.early_rev),
            inv_ikf: recip(p.knee_fwd * area),
            inv_ikr: recip(p.knee_rev * area),
            ise: leak(p.leak_be, p.leak_be_emission) * area,
            ne: p.leak_be_emission,
            isc: leak(p.leak_bc, p.leak_bc_emission) * area,
            nc: p.leak_bc_emission,
            cj_be: p.cj_be * area,
            vj_be: p.vj_be,
            m_be: p.grading_be,
            cj_bc: p.cj_bc * area,
            vj_bc: p.vj_bc,
            m_bc: p.grading_bc,
            fc: p.linear_from,
            tf: p.transit_fwd,
            t_delay: p.excess_phase.to_radians() * p.transit_fwd,
            tr: p.transit_rev,
            g_base: cond(p.r_base * ratio.powf(p.base_temp_exp), area),
            g_collector: cond(p.r_collector, area),
            g_emitter: cond(p.r_emitter, area),
            r_base_min: p.r_base_min * ratio.powf(p.base_temp_exp) / area,
            base_half_current: if p.r_base > 0.0 {
                p.base_half_current * area
            } else {
                f64::INFINITY
            },
            g_epi: if p.r_epi > 0.0 && p.r_epi.is_finite() {
                area / (p.r_epi * ratio.powf(p.epi_temp_exp))
            } else {
                0.0
            },
            // γ ∝ n_i² ∝ T³ exp(−E_g/kT): the saturation-current law with ξ = 3
            epi_gamma: junction::sat_current_at(p.epi_gamma, 1.0, 3.0, p.gap, p.t_measured, temp_k),
            epi_charge: p.epi_charge * area,
            inv_bv: recip(breakdown_at(p, temp_k)),
            n_av: p.avalanche_exp,
        }
    }
}

/// The base current is smoothed as `√(I_B² + ε²) − ε` with
/// ε = this × I_RB, so that the base resistance is a smooth function of a
/// base current that changes sign (a class-C base does every cycle).
pub const CROWDING_SMOOTHING: f64 = 1e-3;

/// `f(w) = (tan z − z)/(z tan² z)` at `w = z²`, with df/dw. Below z = 0.01
/// its series `1/3 − 4w/45 − 4w²/315` (worked from the Taylor series of tan,
/// error O(z⁶) < 1e-12), above it the closed form.
fn crowding_f(w: f64) -> (f64, f64) {
    if w < 1e-4 {
        (
            1.0 / 3.0 - 4.0 * w / 45.0 - 4.0 * w * w / 315.0,
            -4.0 / 45.0 - 8.0 * w / 315.0,
        )
    } else {
        let z = w.sqrt();
        let t = z.tan();
        let f = (t - z) / (z * t * t);
        // df/dz = [(t' − 1) z t² − (t − z)(t² + 2 z t t')]/(z t²)², t' = 1 + t²
        let tp = 1.0 + t * t;
        let den = z * t * t;
        let dfdz = ((tp - 1.0) * z * t * t - (t - z) * (t * t + 2.0 * z * t * tp)) / (den * den);
        (f, dfdz / (2.0 * z))
    }
}

/// The base resistance with current crowding at an intrinsic base current
/// `ib` (npn sense), with dr/dI_B: `r = r_BM + 3 (r_B − r_BM) f(z)`,
/// `f = (tan z − z)/(z tan² z)`,
/// `z = (−1 + √(1 + 144 I_B/(π² I_RB))) / ((24/π²) √(I_B/I_RB))`
/// (J. R. Hauser, IEEE Trans. Electron Devices 11(5), 1964, in the form of
/// I. Getreu, *Modeling the Bipolar Transistor*, 1976; from memory), with
/// I_B smoothed by [`CROWDING_SMOOTHING`]. `None` without crowding.
pub fn base_resistance(k: &BjtConstants, ib: f64) -> Option<Branch> {
    if !k.base_half_current.is_finite() || k.g_base == 0.0 {
        return None;
    }
    let irb = k.base_half_current;
    let rb = 1.0 / k.g_base;
    let eps = CROWDING_SMOOTHING * irb;
    let root = (ib * ib + eps * eps).sqrt();
    let ieff = root - eps;
    let dieff = ib / root;
    let x = ieff / irb;
    // z = 6√x/(1 + s), s = √(1 + a x), a = 144/π² (the form without the
    // cancellation of −1 + s); w = z² and dw/dx, finite at x = 0:
    // dw/dx = 36/(1 + s)² − 36 a x/(s (1 + s)³)
    let a = 144.0 / (std::f64::consts::PI * std::f64::consts::PI);
    let s = (1.0 + a * x).sqrt();
    let w = 36.0 * x / ((1.0 + s) * (1.0 + s));
    let dw_dx = 36.0 / ((1.0 + s) * (1.0 + s)) - 36.0 * a * x / (s * (1.0 + s).powi(3));
    let (f, df_dw) = crowding_f(w);
    let span = 3.0 * (rb - k.r_base_min);
    Some(Branch {
        v: k.r_base_min + span * f,
        d: span * df_dw * dw_dx * dieff / irb,
    })
}

/// Above this V/V_t the epi's K(V) continues along its tangent, so that
/// exp never overflows (V_t·80 ≈ 2 V of forward bias across the epi's
/// junction side, far beyond any real operating point).
pub const EPI_EXP_MAX: f64 = 80.0;

/// `K(V) − 1 = √(1 + γ·exp(V/V_t)) − 1` of the epitaxial collector at a
/// base–collector voltage `v` (forward positive), with dK/dV. K − 1 rather
/// than K, written `e/(K + 1)` with `e = γ exp(V/V_t)`, keeps its digits
/// when the layer is barely injected (K − 1 ~ 1e-15).
pub fn epi_k(k: &BjtConstants, v: f64) -> Branch {
    let x = v / k.vt;
    let at = |x: f64| {
        let e = k.epi_gamma * x.exp();
        let kk = (1.0 + e).sqrt();
        // dK/dx = γ e^x / (2K)
        (e / (kk + 1.0), e / (2.0 * kk))
    };
    let (km1, dk_dx) = if x <= EPI_EXP_MAX {
        at(x)
    } else {
        let (k0, d0) = at(EPI_EXP_MAX);
        (k0 + d0 * (x - EPI_EXP_MAX), d0)
    };
    Branch {
        v: km1,
        d: dk_dx / k.vt,
    }
}

/// The epitaxial collector at (V_BCI, V_BCX), the base–collector voltages at
/// the metallurgical junction and at the collector contact (npn sense).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Epi {
    /// Current through the epi layer from the collector contact to the
    /// junction, A, with its partials ∂/∂V_BCI and ∂/∂V_BCX.
    pub i: f64,
    /// ∂I_epi/∂V_BCI.
    pub di_dvbci: f64,
    /// ∂I_epi/∂V_BCX.
    pub di_dvbcx: f64,
    /// Charge stored on the junction side, Q_CO (K_i − 1), C.
    pub qi: f64,
    /// dQ_i/dV_BCI.
    pub dqi: f64,
    /// Charge stored on the contact side, Q_CO (K_x − 1), C.
    pub qx: f64,
    /// dQ_x/dV_BCX.
    pub dqx: f64,
}

/// The quasi-saturation current and charges of the epitaxial collector
/// (Kull et al. 1985; the charge split of McAndrew et al. 1996; both from
/// memory; see the module overview).
pub fn epi(k: &BjtConstants, vbci: f64, vbcx: f64) -> Epi {
    // K − 1 on each side
    let ki = epi_k(k, vbci);
    let kx = epi_k(k, vbcx);
    let vt = k.vt;
    let g = k.g_epi;
    // ln((1 + K_i)/(1 + K_x)) = ln(1 + (K_i − K_x)/(2 + (K_x − 1)))
    let log = ((ki.v - kx.v) / (2.0 + kx.v)).ln_1p();
    let i = g * (vbci - vbcx + vt * (ki.v - kx.v - log));
    // d/dV [V + V_t (K − ln(1 + K))] = 1 + V_t K' K/(1 + K)
    let side = |b: Branch| 1.0 + vt * b.d * (1.0 + b.v) / (2.0 + b.v);
    Epi {
        i,
        di_dvbci: g * side(ki),
        di_dvbcx: -g * side(kx),
        qi: k.epi_charge * ki.v,
        dqi: k.epi_charge * ki.d,
        qx: k.epi_charge * kx.v,
        dqx: k.epi_charge * kx.d,
    }
}

/// BV_CBO at `temp_k`: `BV_CBO (1 + α_BV (T − T_0))` (∞ when not given).
/// Avalanche breakdown rises with temperature because phonon scattering
/// shortens the carriers' free path between ionising collisions (S. M. Sze,
/// K. K. Ng, *Physics of Semiconductor Devices*, 3rd ed., 2007, ch. 2,
/// from memory); the linear law is common practice.
pub fn breakdown_at(p: &BjtParams, temp_k: f64) -> f64 {
    p.bv_cbo * (1.0 + p.bv_tempco * (temp_k - p.t_measured))
}

/// Largest multiplication M the law is used to as written; beyond it
/// M − 1 continues as the straight line tangent there (C¹), so the
/// current rises steeply but stays finite through breakdown.
pub const AVALANCHE_M_MAX: f64 = 100.0;

/// `M − 1` of the avalanche multiplication at a collector–base reverse
/// voltage `vcb` (> 0 reverse), with its derivative d(M−1)/dV_CB:
/// `M = 1/(1 − (V_CB/BV_CBO)^n)` (S. L. Miller, "Avalanche breakdown in
/// germanium", Phys. Rev. 99, 1955, from memory), 0 for V_CB ≤ 0, the
/// straight-line continuation above M = [`AVALANCHE_M_MAX`].
pub fn multiplication(k: &BjtConstants, vcb: f64) -> Branch {
    if k.inv_bv == 0.0 || vcb <= 0.0 {
        return Branch { v: 0.0, d: 0.0 };
    }
    let n = k.n_av;
    let x = vcb * k.inv_bv;
    // u0 where M = M_MAX: 1/(1 − u0) = M_MAX
    let u0 = 1.0 - 1.0 / AVALANCHE_M_MAX;
    let x0 = u0.powf(1.0 / n);
    let at = |x: f64| {
        let u = x.powf(n);
        let g = u / (1.0 - u);
        // dg/dx = n u / (x (1 − u)²)
        let dg = n * u / (x * (1.0 - u) * (1.0 - u));
        (g, dg)
    };
    let (g, dg) = if x <= x0 {
        at(x)
    } else {
        let (g0, dg0) = at(x0);
        (g0 + dg0 * (x - x0), dg0)
    };
    Branch {
        v: g,
        d: dg * k.inv_bv,
    }
}

/// Check bipolar model parameters, and that they scale to finite, positive
/// values at the area factor `area` and device temperature `temp_k`.
/// `element` names the element in the error. Infinite values are accepted
/// where they mean "absent" (Early voltages, knee currents, ratings, thermal
/// resistances).
pub fn check_params(
    p: &BjtParams,
    element: &str,
    area: f64,
    temp_k: f64,
) -> Result<(), DeviceError> {
    let bad = |param: &'static str, value: f64, reason: &'static str| {
        Err(DeviceError::BadParameter {
            element: element.to_string(),
            param,
            value,
            reason,
        })
    };
    let pos = |v: f64| v.is_finite() && v > 0.0;
    let nonneg = |v: f64| v.is_finite() && v >= 0.0;
    let pos_or_inf = |v: f64| v > 0.0; // false for NaN
    for (name, v) in [
        ("sat_current", p.sat_current),
        ("gain_fwd", p.gain_fwd),
        ("gain_rev", p.gain_rev),
        ("emission_fwd", p.emission_fwd),
        ("emission_rev", p.emission_rev),
        ("leak_be_emission", p.leak_be_emission),
        ("leak_bc_emission", p.leak_bc_emission),
        ("vj_be", p.vj_be),
        ("vj_bc", p.vj_bc),
        ("t_measured", p.t_measured),
    ] {
        if !pos(v) {
            return bad(name, v, "must be finite and > 0");
        }
    }
    for (name, v) in [
        ("leak_be", p.leak_be),
        ("leak_bc", p.leak_bc),
        ("r_base", p.r_base),
        ("r_collector", p.r_collector),
        ("r_emitter", p.r_emitter),
        ("r_epi", p.r_epi),
        ("r_base_min", p.r_base_min),
        ("epi_charge", p.epi_charge),
        ("cj_be", p.cj_be),
        ("cj_bc", p.cj_bc),
        ("grading_be", p.grading_be),
        ("grading_bc", p.grading_bc),
        ("transit_fwd", p.transit_fwd),
        ("transit_rev", p.transit_rev),
        ("excess_phase", p.excess_phase),
        ("gap", p.gap),
        ("heat_junction", p.heat_junction),
        ("heat_case", p.heat_case),
        ("foster_r1", p.foster_r1),
        ("foster_tau1", p.foster_tau1),
        ("foster_r2", p.foster_r2),
        ("foster_tau2", p.foster_tau2),
        ("foster_r3", p.foster_r3),
        ("foster_tau3", p.foster_tau3),
    ] {
        if !nonneg(v) {
            return bad(name, v, "must be finite and ≥ 0");
        }
    }
    for (name, v) in [
        ("early_fwd", p.early_fwd),
        ("early_rev", p.early_rev),
        ("knee_fwd", p.knee_fwd),
        ("knee_rev", p.knee_rev),
        ("max_vce", p.max_vce),
        ("max_ic", p.max_ic),
        ("max_power", p.max_power),
        ("max_tj", p.max_tj),
        ("max_vbe_reverse", p.max_vbe_reverse),
        ("max_vce_resistor", p.max_vce_resistor),
        ("vce_resistor_ohm", p.vce_resistor_ohm),
        ("max_vce_short", p.max_vce_short),
        ("max_vcb", p.max_vcb),
        ("rth_ja", p.rth_ja),
        ("rth_jc", p.rth_jc),
        ("rth_sink", p.rth_sink),
        ("rth_cs", p.rth_cs),
        ("bv_cbo", p.bv_cbo),
        ("base_half_current", p.base_half_current),
    ] {
        if !pos_or_inf(v) {
            return bad(name, v, "must be > 0 (∞ = not given)");
        }
    }
    if !(p.linear_from.is_finite() && (0.0..1.0).contains(&p.linear_from)) {
        return bad("linear_from", p.linear_from, "must satisfy 0 ≤ F_C < 1");
    }
    for (name, v) in [
        ("sat_temp_exp", p.sat_temp_exp),
        ("gain_temp_exp", p.gain_temp_exp),
        ("bv_tempco", p.bv_tempco),
        ("epi_temp_exp", p.epi_temp_exp),
        ("base_temp_exp", p.base_temp_exp),
    ] {
        if !v.is_finite() {
            return bad(name, v, "must be finite");
        }
    }
    if p.excess_phase > 180.0 {
        return bad(
            "excess_phase",
            p.excess_phase,
            "must be at most 180 degrees (a second-order delay approximation)",
        );
    }
    if p.base_half_current.is_finite() && p.r_base > 0.0 && !pos(p.r_base_min) {
        return bad(
            "r_base_min",
            p.r_base_min,
            "must be > 0 with current crowding (the base resistance never vanishes)",
        );
    }
    if p.base_half_current.is_finite() && p.r_base_min > p.r_base {
        return bad(
            "r_base_min",
            p.r_base_min,
            "must not exceed the base resistance r_B (crowding only lowers it)",
        );
    }
    if p.r_epi > 0.0 && !pos(p.epi_gamma) {
        return bad("epi_gamma", p.epi_gamma, "must be finite and > 0");
    }
    if p.bv_cbo.is_finite() {
        // n ≤ 1 would give M − 1 a kink (or a pole in its slope) at V_CB = 0
        if !(p.avalanche_exp.is_finite() && p.avalanche_exp > 1.0 && p.avalanche_exp <= 20.0) {
            return bad(
                "avalanche_exp",
                p.avalanche_exp,
                "must satisfy 1 < n_av ≤ 20",
            );
        }
        let bv = breakdown_at(p, temp_k);
        if !pos(bv) {
            return bad(
                "bv_cbo",
                bv,
                "scales to 0 or below at this temperature (voltage_tempco)",
            );
        }
    }
    if !pos(area) {
        return bad("area", area, "must be finite and > 0");
    }
    if !pos(temp_k) {
        return bad("temperature", temp_k, "must be finite and > 0 K");
    }
    let k = BjtConstants::new(p, area, temp_k);
    for (name, v) in [
        ("sat_current", k.is),
        ("gain_fwd", k.gain_fwd),
        ("gain_rev", k.gain_rev),
    ] {
        if !pos(v) {
            return bad(
                name,
                v,
                "scales to 0 or overflows at this temperature and area",
            );
        }
    }
    if p.r_epi > 0.0 {
        for (name, v) in [("r_epi", k.g_epi), ("epi_gamma", k.epi_gamma)] {
            if !pos(v) {
                return bad(
                    name,
                    v,
                    "scales to 0 or overflows at this temperature and area",
                );
            }
        }
    }
    for (name, v) in [("leak_be", k.ise), ("leak_bc", k.isc)] {
        if !nonneg(v) {
            return bad(name, v, "overflows at this temperature and area");
        }
    }
    Ok(())
}

/// Normalised base charge and its factors, with derivatives.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct BaseCharge {
    /// Early factor q1.
    pub q1: f64,
    /// ∂q1/∂VBE.
    pub dq1_dvbe: f64,
    /// ∂q1/∂VBC.
    pub dq1_dvbc: f64,
    /// High-injection term q2.
    pub q2: f64,
    /// Normalised base charge qb.
    pub qb: f64,
    /// ∂qb/∂VBE.
    pub dqb_dvbe: f64,
    /// ∂qb/∂VBC.
    pub dqb_dvbc: f64,
}

/// q1, q2, qb at (VBE, VBC) given the forward and reverse diffusion currents
/// `I_F`, `I_R` with their derivatives (Gummel–Poon 1970, q1 after Nagel 1975).
pub fn base_charge(k: &BjtConstants, vbe: f64, vbc: f64, fwd: Branch, rev: Branch) -> BaseCharge {
    let d = 1.0 - vbc * k.inv_vaf - vbe * k.inv_var;
    let (df, ddf) = if d >= Q1_FLOOR {
        (d, 1.0)
    } else {
        let den = 2.0 * Q1_FLOOR - d;
        (Q1_FLOOR * Q1_FLOOR / den, Q1_FLOOR * Q1_FLOOR / (den * den))
    };
    let q1 = 1.0 / df;
    // ∂q1/∂v = −(1/df²)·ddf·∂d/∂v with ∂d/∂VBE = −1/VAR, ∂d/∂VBC = −1/VAF.
    let dq1_dvbe = q1 * q1 * ddf * k.inv_var;
    let dq1_dvbc = q1 * q1 * ddf * k.inv_vaf;
    let q2 = fwd.v * k.inv_ikf + rev.v * k.inv_ikr;
    let dq2_dvbe = fwd.d * k.inv_ikf;
    let dq2_dvbc = rev.d * k.inv_ikr;
    // 1 + 4 q2 ≥ 1 − 4 IS (1/IKF + 1/IKR); kept ≥ a small positive number so
    // that absurd knee currents below IS cannot produce a NaN.
    let arg = 1.0 + 4.0 * q2;
    let (s, ds_dq2) = if arg > 1e-12 {
        let s = arg.sqrt();
        (s, 2.0 / s)
    } else {
        (1e-6, 0.0)
    };
    let qb = 0.5 * q1 * (1.0 + s);
    let dqb_dvbe = 0.5 * dq1_dvbe * (1.0 + s) + 0.5 * q1 * ds_dq2 * dq2_dvbe;
    let dqb_dvbc = 0.5 * dq1_dvbc * (1.0 + s) + 0.5 * q1 * ds_dq2 * dq2_dvbc;
    BaseCharge {
        q1,
        dq1_dvbe,
        dq1_dvbc,
        q2,
        qb,
        dqb_dvbe,
        dqb_dvbc,
    }
}

/// The exponential and depletion components the intrinsic equations combine.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Components {
    /// `I_F = IS (exp(VBE/(NF Vt)) − 1)`.
    pub fwd: Branch,
    /// `I_R = IS (exp(VBC/(NR Vt)) − 1)`.
    pub rev: Branch,
    /// `ISE (exp(VBE/(NE Vt)) − 1)`.
    pub leak_be: Branch,
    /// `ISC (exp(VBC/(NC Vt)) − 1)`.
    pub leak_bc: Branch,
    /// Base–emitter depletion charge and capacitance.
    pub dep_be: Branch,
    /// Base–collector depletion charge and capacitance.
    pub dep_bc: Branch,
}

/// Intrinsic currents and charges at one bias, with their derivatives.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Intrinsic {
    /// Collector current into the internal collector, A.
    pub ic: f64,
    /// Transport current `I_CT = (I_F − I_R)/qb`, A: the collector current
    /// without the base–collector recombination and leakage parts.
    pub ict: f64,
    /// Forward part of the transport current `I_F/qb`, A, with its partials.
    pub icc: f64,
    /// ∂I_CC/∂VBE.
    pub dicc_dvbe: f64,
    /// ∂I_CC/∂VBC.
    pub dicc_dvbc: f64,
    /// Avalanche `M − 1` and d(M − 1)/dVBC.
    pub mult: Branch,
    /// Avalanche current `(M − 1)·I_CT`, A: generated in the
    /// collector–base junction, part of `ic` and taken out of `ib`.
    pub iav: f64,
    /// Base current into the internal base, A.
    pub ib: f64,
    /// ∂IC/∂VBE.
    pub dic_dvbe: f64,
    /// ∂IC/∂VBC.
    pub dic_dvbc: f64,
    /// ∂IB/∂VBE.
    pub dib_dvbe: f64,
    /// ∂IB/∂VBC.
    pub dib_dvbc: f64,
    /// Base–emitter charge (depletion + forward diffusion), C.
    pub qbe: f64,
    /// ∂Q_BE/∂VBE.
    pub dqbe_dvbe: f64,
    /// ∂Q_BE/∂VBC (through qb).
    pub dqbe_dvbc: f64,
    /// Base–collector charge (depletion + reverse diffusion), C.
    pub qbc: f64,
    /// ∂Q_BC/∂VBC.
    pub dqbc_dvbc: f64,
    /// The base-charge factors.
    pub base: BaseCharge,
}

/// Combine the components into terminal currents and charges (the Gummel–Poon
/// equations in the module overview). `junction_leak` is put across both junctions.
pub fn combine(
    k: &BjtConstants,
    vbe: f64,
    vbc: f64,
    c: &Components,
    junction_leak: f64,
) -> Intrinsic {
    let bq = base_charge(k, vbe, vbc, c.fwd, c.rev);
    let qb = bq.qb;
    let ict = (c.fwd.v - c.rev.v) / qb;
    let dict_dvbe = c.fwd.d / qb - ict * bq.dqb_dvbe / qb;
    let dict_dvbc = -c.rev.d / qb - ict * bq.dqb_dvbc / qb;
    let ib = c.fwd.v / k.gain_fwd
        + c.leak_be.v
        + c.rev.v / k.gain_rev
        + c.leak_bc.v
        + junction_leak * (vbe + vbc);
    let dib_dvbe = c.fwd.d / k.gain_fwd + c.leak_be.d + junction_leak;
    let dib_dvbc = c.rev.d / k.gain_rev + c.leak_bc.d + junction_leak;
    // Avalanche: M − 1 of the transport current is generated in the
    // collector–base junction, into the collector and out of the base.
    // V_CB = −VBC, so d/dVBC = −d/dV_CB.
    let m = multiplication(k, -vbc);
    let iav = m.v * ict;
    let diav_dvbe = m.v * dict_dvbe;
    let diav_dvbc = m.v * dict_dvbc - m.d * ict;
    let ib = ib - iav;
    let dib_dvbe = dib_dvbe - diav_dvbe;
    let dib_dvbc = dib_dvbc - diav_dvbc;
    let ic = ict - c.rev.v / k.gain_rev - c.leak_bc.v - junction_leak * vbc + iav;
    let dic_dvbe = dict_dvbe + diav_dvbe;
    let dic_dvbc = dict_dvbc - c.rev.d / k.gain_rev - c.leak_bc.d - junction_leak + diav_dvbc;
    let qde = k.tf * c.fwd.v / qb;
    let dqde_dvbe = k.tf * (c.fwd.d / qb - c.fwd.v * bq.dqb_dvbe / (qb * qb));
    let dqde_dvbc = -k.tf * c.fwd.v * bq.dqb_dvbc / (qb * qb);
    Intrinsic {
        ic,
        ict,
        icc: c.fwd.v / qb,
        dicc_dvbe: c.fwd.d / qb - c.fwd.v * bq.dqb_dvbe / (qb * qb),
        dicc_dvbc: -c.fwd.v * bq.dqb_dvbc / (qb * qb),
        mult: Branch { v: m.v, d: -m.d },
        iav,
        ib,
        dic_dvbe,
        dic_dvbc,
        dib_dvbe,
        dib_dvbc,
        qbe: c.dep_be.v + qde,
        dqbe_dvbe: c.dep_be.d + dqde_dvbe,
        dqbe_dvbc: dqde_dvbc,
        qbc: c.dep_bc.v + k.tr * c.rev.v,
        dqbc_dvbc: c.dep_bc.d + k.tr * c.rev.d,
        base: bq,
    }
}

/// Evaluate the exponential and depletion components at (VBE, VBC).
pub fn components(k: &BjtConstants, vbe: f64, vbc: f64) -> Components {
    let br = |(v, d): (f64, f64)| Branch { v, d };
    let dep = |cj0, vj, m, v| {
        Depletion {
            cj0,
            vj,
            m,
            fc: k.fc,
        }
        .eval(v)
    };
    Components {
        fwd: br(junction::junction_current(vbe, k.is, k.nf * k.vt)),
        rev: br(junction::junction_current(vbc, k.is, k.nr * k.vt)),
        leak_be: br(junction::junction_current(vbe, k.ise, k.ne * k.vt)),
        leak_bc: br(junction::junction_current(vbc, k.isc, k.nc * k.vt)),
        dep_be: br(dep(k.cj_be, k.vj_be, k.m_be, vbe)),
        dep_bc: br(dep(k.cj_bc, k.vj_bc, k.m_bc, vbc)),
    }
}

/// Intrinsic currents and charges at (VBE, VBC) in the npn sense.
pub fn intrinsic(k: &BjtConstants, vbe: f64, vbc: f64, junction_leak: f64) -> Intrinsic {
    combine(k, vbe, vbc, &components(k, vbe, vbc), junction_leak)
}

/// Ratings of a transistor model (the `max_*` and thermal fields of
/// [`BjtParams`]); an unset rating is `f64::INFINITY`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BjtRatings {
    /// Collector–emitter voltage rating (magnitude), V.
    pub max_vce: f64,
    /// Collector current rating (magnitude), A.
    pub max_ic: f64,
    /// Dissipation rating, W.
    pub max_power: f64,
    /// Junction temperature rating, K.
    pub max_tj: f64,
    /// Reverse base–emitter voltage rating (magnitude), V.
    pub max_vbe_reverse: f64,
    /// Junction-to-ambient thermal resistance, K/W, from
    /// [`BjtParams::thermal_resistance`] (`None` when not given).
    pub rth: Option<f64>,
}

impl BjtRatings {
    /// Steady junction temperature `T_amb + Rth·P` for an average dissipation
    /// `power_w` (no self-heating feedback into the model), or `None` without a
    /// thermal resistance.
    pub fn junction_temperature(&self, ambient_k: f64, power_w: f64) -> Option<f64> {
        self.rth.map(|r| ambient_k + r * power_w)
    }
}

/// The ratings of a model.
pub fn ratings(p: &BjtParams) -> BjtRatings {
    BjtRatings {
        max_vce: p.max_vce,
        max_ic: p.max_ic,
        max_power: p.max_power,
        max_tj: p.max_tj,
        max_vbe_reverse: p.max_vbe_reverse,
        rth: p.thermal_resistance(),
    }
}

/// An instantiated bipolar transistor.
#[derive(Debug, Clone)]
pub struct Bjt {
    element: ElementId,
    nodes: BjtNodes,
    terminals: [Idx; 3],
    k: BjtConstants,
    /// +1 npn, −1 pnp.
    sign: f64,
    vcrit_be: f64,
    vcrit_bc: f64,
}

impl Bjt {
    /// Which internal unknowns this model needs: (collector, base, emitter,
    /// epi junction, excess-phase states), true where the corresponding
    /// ohmic resistance (or the epi layer's) is positive, and where the
    /// excess phase and the transit time are.
    pub fn internal_nodes_needed(p: &BjtParams) -> [bool; 5] {
        [
            p.r_collector > 0.0,
            p.r_base > 0.0,
            p.r_emitter > 0.0,
            p.r_epi > 0.0,
            p.excess_phase > 0.0 && p.transit_fwd > 0.0,
        ]
    }

    /// Build from model parameters, an area factor and the device temperature (K).
    pub fn new(element: ElementId, nodes: BjtNodes, p: &BjtParams, area: f64, temp_k: f64) -> Bjt {
        let k = BjtConstants::new(p, area, temp_k);
        Bjt {
            element,
            nodes,
            terminals: [nodes.c, nodes.b, nodes.e],
            vcrit_be: junction::critical_voltage(k.nf * k.vt, k.is),
            vcrit_bc: junction::critical_voltage(k.nr * k.vt, k.is),
            k,
            sign: if p.pnp { -1.0 } else { 1.0 },
        }
    }

    /// The scaled constants this instance evaluates with.
    pub fn constants(&self) -> &BjtConstants {
        &self.k
    }

    /// Junction voltages (VBE, VBC) of the intrinsic transistor in the npn
    /// sense (VBC at the metallurgical junction, behind the epi layer).
    fn junction_voltages(&self, x: &[f64]) -> (f64, f64) {
        let n = &self.nodes;
        let vb = val(x, n.bi);
        (
            self.sign * (vb - val(x, n.ei)),
            self.sign * (vb - val(x, n.cj)),
        )
    }
}

impl Bjt {
    /// Excess phase (Weil and McNamee 1978): the collector takes the
    /// delayed forward transport current y₁ in place of I_CC,
    /// `t_d² y₁'' + 3 t_d y₁' + 3 y₁ = 3 I_CC`, written as two first-order
    /// rows over y₁ and y₂ = t_d y₁': `t_d y₁' − y₂ = 0`,
    /// `t_d y₂' + 3 y₂ + 3 y₁ − 3 I_CC = 0`. The terminal currents change by
    /// Δ = y₁ − I_CC: the collector by M·Δ, the base by −(M − 1)·Δ (the
    /// avalanche of the delayed current), the emitter by −Δ.
    #[allow(clippy::too_many_arguments)]
    fn stamp_phase(
        &self,
        x: &[f64],
        t: &Intrinsic,
        dbe: f64,
        dbc: f64,
        y1: usize,
        y2: usize,
        out: &mut dyn Stamp,
    ) {
        let n = self.nodes;
        let s = self.sign;
        let td = self.k.t_delay;
        let (v1, v2) = (x[y1], x[y2]);
        // the linearised I_CC (exact when nothing was limited)
        let icc = t.icc + t.dicc_dvbe * dbe + t.dicc_dvbc * dbc;
        let (a, b) = (t.dicc_dvbe, t.dicc_dvbc);
        let d = v1 - icc;
        let m = 1.0 + t.mult.v;
        // f(VBE, VBC, y1) entering `row` with factor r; partials (fa, fb)
        // in the junction voltages (npn sense) and fy in y1.
        let mut put = |row: Idx, r: f64, f: f64, fa: f64, fb: f64, fy: f64| {
            out.add_i(row, r * s * f);
            out.add_g(row, n.bi, r * (fa + fb));
            out.add_g(row, n.ei, -r * fa);
            out.add_g(row, n.cj, -r * fb);
            out.add_g(row, Some(y1), r * s * fy);
        };
        // collector: M·Δ, ∂/∂VBE = −M a, ∂/∂VBC = −M b + M'·Δ
        put(n.cj, 1.0, m * d, -m * a, -m * b + t.mult.d * d, m);
        // base: −(M − 1)·Δ
        put(
            n.bi,
            1.0,
            -(m - 1.0) * d,
            (m - 1.0) * a,
            (m - 1.0) * b - t.mult.d * d,
            -(m - 1.0),
        );
        // emitter: −Δ
        put(n.ei, 1.0, -d, a, b, -1.0);
        // the two state rows (npn sense, no sign)
        out.add_q(Some(y1), td * v1);
        out.add_c(Some(y1), Some(y1), td);
        out.add_i(Some(y1), -v2);
        out.add_g(Some(y1), Some(y2), -1.0);
        out.add_q(Some(y2), td * v2);
        out.add_c(Some(y2), Some(y2), td);
        out.add_i(Some(y2), 3.0 * v2 + 3.0 * v1 - 3.0 * icc);
        out.add_g(Some(y2), Some(y2), 3.0);
        out.add_g(Some(y2), Some(y1), 3.0);
        // −3 I_CC(VBE, VBC), VBE = s(x_bi − x_ei), VBC = s(x_bi − x_cj)
        out.add_g(Some(y2), n.bi, -3.0 * s * (a + b));
        out.add_g(Some(y2), n.ei, 3.0 * s * a);
        out.add_g(Some(y2), n.cj, 3.0 * s * b);
    }

    /// The epitaxial collector between the collector contact `ci` and the
    /// junction `cj`: its current (ci → cj) and its two charges (base to
    /// cj, base to ci), at the unlimited voltages.
    fn stamp_epi(&self, x: &[f64], out: &mut dyn Stamp) {
        let n = self.nodes;
        let s = self.sign;
        let vb = val(x, n.bi);
        let vbci = s * (vb - val(x, n.cj));
        let vbcx = s * (vb - val(x, n.ci));
        let e = epi(&self.k, vbci, vbcx);
        // f(V_BCI, V_BCX) with partials (a, b) entering `row` with factor r:
        // V_BCI = s(x_bi − x_cj), V_BCX = s(x_bi − x_ci).
        let mut put = |row: Idx, r: f64, f: f64, a: f64, b: f64, charge: bool| {
            let value = r * s * f;
            let cols = [(n.bi, r * (a + b)), (n.cj, -r * a), (n.ci, -r * b)];
            if charge {
                out.add_q(row, value);
                for (c, d) in cols {
                    out.add_c(row, c, d);
                }
            } else {
                out.add_i(row, value);
                for (c, d) in cols {
                    out.add_g(row, c, d);
                }
            }
        };
        put(n.ci, 1.0, e.i, e.di_dvbci, e.di_dvbcx, false);
        put(n.cj, -1.0, e.i, e.di_dvbci, e.di_dvbcx, false);
        put(n.bi, 1.0, e.qi, e.dqi, 0.0, true);
        put(n.cj, -1.0, e.qi, e.dqi, 0.0, true);
        put(n.bi, 1.0, e.qx, 0.0, e.dqx, true);
        put(n.ci, -1.0, e.qx, 0.0, e.dqx, true);
    }
}

impl Device for Bjt {
    fn element(&self) -> ElementId {
        self.element
    }
    fn terminals(&self) -> &[Idx] {
        &self.terminals
    }
    fn is_linear(&self) -> bool {
        false
    }
    /// Slots: the last (limited) VBE and VBC, npn sense.
    fn state_len(&self) -> usize {
        2
    }
    fn init_state(&self, state: &mut [f64]) {
        state.iter_mut().for_each(|s| *s = 0.0);
    }
    fn eval(&self, x: &[f64], ctx: &EvalCtx, state: &mut [f64], out: &mut dyn Stamp) -> EvalInfo {
        let n = self.nodes;
        let k = &self.k;
        stamp_conductance(out, x, n.c, n.ci, k.g_collector);
        let crowding = k.base_half_current.is_finite() && k.g_base > 0.0;
        if !crowding {
            stamp_conductance(out, x, n.b, n.bi, k.g_base);
        }
        stamp_conductance(out, x, n.e, n.ei, k.g_emitter);

        let (vbe, vbc) = self.junction_voltages(x);
        let mut info = EvalInfo::default();
        let (mut vbe_l, mut vbc_l) = (vbe, vbc);
        if ctx.limit && state.len() >= 2 {
            let (a, la) = junction::limit_junction(vbe, state[0], k.nf * k.vt, self.vcrit_be);
            let (b, lb) = junction::limit_junction(vbc, state[1], k.nr * k.vt, self.vcrit_bc);
            vbe_l = a;
            vbc_l = b;
            info.limited = la || lb;
        }
        if let Some(s) = state.get_mut(0..2) {
            s[0] = vbe_l;
            s[1] = vbc_l;
        }
        let t = intrinsic(k, vbe_l, vbc_l, ctx.junction_leak);
        // Linearise about the limited point: f(v_l) + ∂f/∂v (v − v_l).
        let (dbe, dbc) = (vbe - vbe_l, vbc - vbc_l);
        let s = self.sign;
        // A quantity f(VBE, VBC) with partials (a, b) entering `row` with factor r:
        // VBE = s(x_bi − x_ei), VBC = s(x_bi − x_ci), the row gets r·s·f, so
        // its Jacobian row is r·(a + b) at bi, −r·a at ei, −r·b at ci.
        let (bi, ei, ci) = (n.bi, n.ei, n.cj);
        let mut put = |row: Idx, r: f64, f: f64, a: f64, b: f64, charge: bool| {
            let value = r * s * (f + a * dbe + b * dbc);
            if charge {
                out.add_q(row, value);
                out.add_c(row, bi, r * (a + b));
                out.add_c(row, ei, -r * a);
                out.add_c(row, ci, -r * b);
            } else {
                out.add_i(row, value);
                out.add_g(row, bi, r * (a + b));
                out.add_g(row, ei, -r * a);
                out.add_g(row, ci, -r * b);
            }
        };
        put(ci, 1.0, t.ic, t.dic_dvbe, t.dic_dvbc, false);
        put(bi, 1.0, t.ib, t.dib_dvbe, t.dib_dvbc, false);
        put(ei, -1.0, t.ic, t.dic_dvbe, t.dic_dvbc, false);
        put(ei, -1.0, t.ib, t.dib_dvbe, t.dib_dvbc, false);
        put(bi, 1.0, t.qbe, t.dqbe_dvbe, t.dqbe_dvbc, true);
        put(ei, -1.0, t.qbe, t.dqbe_dvbe, t.dqbe_dvbc, true);
        put(bi, 1.0, t.qbc, 0.0, t.dqbc_dvbc, true);
        put(ci, -1.0, t.qbc, 0.0, t.dqbc_dvbc, true);
        if k.g_epi > 0.0 {
            self.stamp_epi(x, out);
        }
        if let [Some(y1), Some(y2)] = n.phase {
            self.stamp_phase(x, &t, dbe, dbc, y1, y2, out);
        }
        if crowding {
            // the base current the resistance follows: the linearised
            // intrinsic one (exact when nothing was limited)
            let ib = t.ib + t.dib_dvbe * dbe + t.dib_dvbc * dbc;
            if let Some(r) = base_resistance(k, ib) {
                let vrb = val(x, n.b) - val(x, n.bi);
                let g = 1.0 / r.v;
                let i = g * vrb;
                // ∂i/∂I_B = −vrb r'/r²; I_B = f(VBE, VBC) in the npn sense,
                // VBE = s(x_bi − x_ei), VBC = s(x_bi − x_cj)
                let di_dib = -vrb * r.d * g * g;
                let (a, b) = (t.dib_dvbe * s, t.dib_dvbc * s);
                for (row, sign) in [(n.b, 1.0), (n.bi, -1.0)] {
                    out.add_i(row, sign * i);
                    out.add_g(row, n.b, sign * g);
                    out.add_g(row, n.bi, sign * (-g + di_dib * (a + b)));
                    out.add_g(row, n.ei, sign * (-di_dib * a));
                    out.add_g(row, n.cj, sign * (-di_dib * b));
                }
            }
        }
        info
    }

    /// The transport current `I_CT` of the intrinsic transistor (physical
    /// sign, into the collector for an npn), A; no junction charging current.
    fn transport_current(&self, x: &[f64], ctx: &EvalCtx) -> Option<f64> {
        let (vbe, vbc) = self.junction_voltages(x);
        let t = intrinsic(&self.k, vbe, vbc, ctx.junction_leak);
        // with excess phase, the delayed forward part
        let ict = match self.nodes.phase {
            [Some(y1), _] => t.ict - t.icc + x[y1],
            _ => t.ict,
        };
        Some(self.sign * ict).filter(|v| v.is_finite())
    }

    /// Terminal voltages V_BE, V_BC, V_CE (external, physical sign), intrinsic
    /// currents into the terminals I_C, I_B, I_E (physical sign; equal to the
    /// terminal currents at a solution), small-signal figures of the intrinsic
    /// transistor g_m = ∂I_C/∂V_BE and g_π = ∂I_B/∂V_BE (V_CE fixed),
    /// g_o = ∂I_C/∂V_CE (V_BE fixed), C_π = ∂Q_BE/∂V_BE,
    /// C_μ = ∂Q_BC/∂V_BC, and the dissipation V_CE·I_C + V_BE·I_B, W.
    fn op_info(&self, x: &[f64], ctx: &EvalCtx) -> Vec<(OpFigure, f64)> {
        let n = self.nodes;
        let (vbe, vbc) = self.junction_voltages(x);
        let t = intrinsic(&self.k, vbe, vbc, ctx.junction_leak);
        let s = self.sign;
        let vb = val(x, n.b);
        let (ext_vbe, ext_vbc) = (vb - val(x, n.e), vb - val(x, n.c));
        let ext_vce = ext_vbe - ext_vbc;
        let (ic, ib) = (s * t.ic, s * t.ib);
        let power = ext_vce * ic + ext_vbe * ib;
        let out = vec![
            (OpFigure::BaseEmitterVoltage, ext_vbe),
            (OpFigure::BaseCollectorVoltage, ext_vbc),
            (OpFigure::CollectorEmitterVoltage, ext_vce),
            (OpFigure::CollectorCurrent, ic),
            (OpFigure::BaseCurrent, ib),
            (OpFigure::EmitterCurrent, -(ic + ib)),
            (OpFigure::Transconductance, t.dic_dvbe + t.dic_dvbc),
            (OpFigure::InputConductance, t.dib_dvbe + t.dib_dvbc),
            (OpFigure::OutputConductance, -t.dic_dvbc),
            (OpFigure::BaseEmitterCapacitance, t.dqbe_dvbe),
            (OpFigure::BaseCollectorCapacitance, t.dqbc_dvbc),
            (OpFigure::Dissipation, power),
        ];
        let mut out = out;
        if self.k.inv_bv > 0.0 {
            out.push((OpFigure::Multiplication, t.mult.v));
        }
        // A non-finite figure (only possible with absurd parameters) is left out
        // rather than reported.
        out.into_iter().filter(|(_, v)| v.is_finite()).collect()
    }
}
