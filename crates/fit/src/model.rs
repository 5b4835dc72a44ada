//! The model's value of each curve at one point, from the transistor
//! equations of `tankwave_devices::bjt` (no copy of them here).
//!
//! Every curve is evaluated at the temperature the parameters are measured
//! at (`measured_at`, 25 °C unless set), in the npn sense (a pnp's curves are
//! given as magnitudes). The ohmic resistances are taken into account as
//! drops: V_CE inside the device is `vce − ic·r_C − (ic + ib)·r_E`, and the
//! base–emitter voltage seen outside is `vbe + ib·r_B + (ic + ib)·r_E`.
//!
//! - gain, vbe and f_T: the intrinsic V_BE that carries `ic` at the given
//!   V_CE is found by bisection (I_C rises with V_BE at fixed V_CE in the
//!   forward region), then `gain = I_C/I_B`;
//! - f_T = g_m / (2π (C_π + C_μ)) with g_m = ∂I_C/∂V_BE, C_π = ∂Q_BE/∂V_BE
//!   and C_μ = ∂Q_BC/∂V_BC at that bias (the hybrid-π transition frequency,
//!   P. R. Gray, P. J. Hurst, S. H. Lewis, R. G. Meyer, *Analysis and Design
//!   of Analog Integrated Circuits*, 5th ed., §1.4.8, from memory); with the
//!   diffusion charge τ_F·I_F/q_b, C_π holds τ_F·g_m, so
//!   1/(2π f_T) = τ_F + (C_je + C_jc)/g_m: f_T rises toward 1/(2π τ_F) and
//!   never falls with current (the constant transit time cannot follow a
//!   falling f_T);
//! - capacitances: C_j0 (1 + V_R/φ)^(−m) at the reverse voltage V_R (the
//!   depletion capacitance of docs/models.md at V = −V_R);
//! - saturation voltage: the intrinsic (V_BE, V_BC) that carry `ic` and `ib`
//!   together, by Newton on the two currents with steps limited to 50 mV;
//!   with an epitaxial collector, V_BC is the junction side's and the
//!   layer's drop at `ic` (the contact-side V_BC its current needs, by
//!   bisection: the layer's current falls as that voltage rises) is added;
//! - output characteristics (I_C at V_CE and a fixed I_B): the junction
//!   voltages (V_BE, junction-side V_BC) that carry `ib` into the base and
//!   pass the collector current through the epitaxial layer at the given
//!   V_CE, by Newton on the two equations; avalanche multiplication is in
//!   the currents. Beyond the open-base breakdown no base current of that
//!   size exists and the point has no value;
//! - with an epitaxial collector, the gain, V_BE and f_T curves count the
//!   layer as its low-current resistance R_CO in the ohmic drop (exact
//!   while its junction side is reverse biased, where those curves are
//!   taken).

use crate::curve::{CurveKind, Point};
use tankwave_circuit::BjtParams;
use tankwave_devices::bjt::{epi, intrinsic, BjtConstants, Intrinsic};

/// Model value at one point, or why there is none.
pub fn value(p: &BjtParams, kind: CurveKind, pt: &Point) -> Result<f64, String> {
    let k = BjtConstants::new(p, 1.0, p.t_measured);
    let v = match kind {
        CurveKind::OutputCap => depletion(p.cj_bc, p.vj_bc, p.grading_bc, pt.a),
        CurveKind::InputCap => depletion(p.cj_be, p.vj_be, p.grading_be, pt.a),
        CurveKind::Gain => {
            let (_, i) = forward_bias(&k, p, pt.a, pt.b)?;
            i.ic / i.ib
        }
        CurveKind::BaseVoltage => {
            let (vbe, i) = forward_bias(&k, p, pt.a, pt.b)?;
            vbe + i.ib * p.r_base + (i.ic + i.ib) * p.r_emitter
        }
        CurveKind::Transition => {
            let (_, i) = forward_bias(&k, p, pt.a, pt.b)?;
            transition(&i)
        }
        CurveKind::Saturation => {
            let (vbe, vbc) = saturation_bias(&k, pt.a, pt.b)?;
            vbe - contact_side(&k, vbc, pt.a)? + pt.a * p.r_collector + (pt.a + pt.b) * p.r_emitter
        }
        CurveKind::Output => output_current(&k, p, pt.a, pt.b)?,
        CurveKind::Power => {
            return Err(
                "a power curve is a check of a whole stage, not of the transistor alone".into(),
            )
        }
    };
    if v.is_finite() {
        Ok(v)
    } else {
        Err("the model gives no finite value".into())
    }
}

/// f_T = g_m / (2π (C_π + C_μ)) from the intrinsic derivatives.
pub fn transition(i: &Intrinsic) -> f64 {
    i.dic_dvbe / (2.0 * std::f64::consts::PI * (i.dqbe_dvbe + i.dqbc_dvbc))
}

/// Depletion capacitance at reverse voltage `vr` ≥ 0.
fn depletion(cj0: f64, phi: f64, m: f64, vr: f64) -> f64 {
    cj0 * (1.0 + vr / phi).powf(-m)
}

/// The intrinsic V_BE that carries `ic` at the external `vce`, and the
/// currents there. The intrinsic V_CE is corrected for the ohmic drops
/// with the base current of the previous pass (three passes settle it far
/// below the bisection's resolution for any sensible resistance).
pub fn forward_bias(
    k: &BjtConstants,
    p: &BjtParams,
    ic: f64,
    vce: f64,
) -> Result<(f64, Intrinsic), String> {
    let mut ib = 0.0;
    let mut out = None;
    for _ in 0..3 {
        let vce_i = vce - ic * (p.r_collector + p.r_epi) - (ic + ib) * p.r_emitter;
        if vce_i <= 0.0 {
            return Err(format!(
                "the ohmic drops take all of V_CE = {vce} V at I_C = {ic} A"
            ));
        }
        let r = vbe_for(k, ic, vce_i)?;
        ib = r.1.ib;
        out = Some(r);
    }
    out.ok_or_else(|| "no bias".into())
}

/// Bisection for V_BE with I_C(V_BE, V_BE − vce) = ic, V_BE in [−0.5, 3] V.
fn vbe_for(k: &BjtConstants, ic: f64, vce: f64) -> Result<(f64, Intrinsic), String> {
    let f = |v: f64| intrinsic(k, v, v - vce, 0.0);
    let (mut lo, mut hi) = (-0.5_f64, 3.0_f64);
    let top = f(hi);
    if top.ic.is_nan() || top.ic < ic {
        return Err(format!(
            "I_C reaches only {:.3e} A at V_BE = {hi} V, V_CE = {vce:.3} V",
            top.ic
        ));
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if f(mid).ic < ic {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let i = f(hi);
    if i.ib <= 0.0 || !i.ib.is_finite() {
        return Err(format!("no positive base current at V_BE = {hi:.4} V"));
    }
    Ok((hi, i))
}

/// The contact-side V_BC at which the epitaxial layer carries `ic` with its
/// junction side at `vbci` (`vbci` itself without a layer): bisection, the
/// layer's current falling as the contact-side voltage rises.
pub fn contact_side(k: &BjtConstants, vbci: f64, ic: f64) -> Result<f64, String> {
    if k.g_epi == 0.0 {
        return Ok(vbci);
    }
    let f = |v: f64| epi(k, vbci, v).i - ic;
    // the ohmic bound: the drop is at most ic·R_CO, and it is positive
    let (mut lo, mut hi) = (vbci - ic / k.g_epi - 1.0, vbci);
    if !(f(lo) > 0.0 && f(hi) < 0.0) {
        return Err(format!(
            "the epitaxial layer cannot carry I_C = {ic:.3e} A at V_BC = {vbci:.3} V"
        ));
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if f(mid) > 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Ok(0.5 * (lo + hi))
}

/// The collector current at the external `vce` with `ib` into the base:
/// Newton on (V_BE, junction-side V_BC) for I_B = `ib` and, with an
/// epitaxial layer, I_epi(V_BCI, V_BCX) = I_C, without one V_BCI = V_BCX,
/// where the contact side V_BCX = V_BE − V_CE + I_C r_C + (I_C + I_B) r_E
/// carries the ohmic drops of the current being solved for.
pub fn output_current(k: &BjtConstants, p: &BjtParams, vce: f64, ib: f64) -> Result<f64, String> {
    let (rc, re) = (p.r_collector, p.r_emitter);
    // start: the forward-active V_BE of the base current alone
    let mut vbe = k.nf * k.vt * (ib * k.gain_fwd / k.is).max(1.0).ln();
    let mut vbj = vbe - vce;
    let beyond = || format!("beyond breakdown: no base current of {ib:.3e} A at V_CE = {vce} V");
    for _ in 0..400 {
        let t = intrinsic(k, vbe, vbj, 0.0);
        let vbx = vbe - vce + t.ic * (rc + re) + t.ib * re;
        let dx_dvbe = 1.0 + (rc + re) * t.dic_dvbe + re * t.dib_dvbe;
        let dx_dvbj = (rc + re) * t.dic_dvbc + re * t.dib_dvbc;
        let f1 = (t.ib - ib) / ib;
        let (a, b) = (t.dib_dvbe / ib, t.dib_dvbc / ib);
        let (f2, c, d) = if k.g_epi == 0.0 {
            (vbj - vbx, -dx_dvbe, 1.0 - dx_dvbj)
        } else {
            let e = epi(k, vbj, vbx);
            let scale = t.ic.abs().max(ib);
            (
                (e.i - t.ic) / scale,
                (e.di_dvbcx * dx_dvbe - t.dic_dvbe) / scale,
                (e.di_dvbci + e.di_dvbcx * dx_dvbj - t.dic_dvbc) / scale,
            )
        };
        let det = a * d - b * c;
        if !(det.is_finite() && det != 0.0) {
            return Err(beyond());
        }
        let dx = -(d * f1 - b * f2) / det;
        let dy = -(-c * f1 + a * f2) / det;
        let big = dx.abs().max(dy.abs());
        let s = if big > 0.05 { 0.05 / big } else { 1.0 };
        vbe += s * dx;
        vbj += s * dy;
        if !(vbe.is_finite() && vbj.is_finite()) || vbe > 3.0 {
            return Err(beyond());
        }
        if big < 1e-13 {
            let ic = intrinsic(k, vbe, vbj, 0.0).ic;
            return if ic > 0.0 {
                Ok(ic)
            } else {
                Err(format!("no forward collector current at V_CE = {vce} V"))
            };
        }
    }
    Err(format!(
        "no junction voltages carry I_B = {ib:.3e} A at V_CE = {vce} V"
    ))
}

/// Intrinsic (V_BE, V_BC) carrying `ic` into the collector and `ib` into
/// the base (Newton, steps limited to 50 mV, residuals relative).
pub fn saturation_bias(k: &BjtConstants, ic: f64, ib: f64) -> Result<(f64, f64), String> {
    // start: the forward V_BE of the base current alone, a little forward on BC
    let mut vbe = k.nf * k.vt * (ic / k.is).max(1.0).ln();
    let mut vbc = vbe - 0.1;
    for _ in 0..200 {
        let i = intrinsic(k, vbe, vbc, 0.0);
        let f1 = (i.ic - ic) / ic;
        let f2 = (i.ib - ib) / ib;
        let (a, b, c, d) = (
            i.dic_dvbe / ic,
            i.dic_dvbc / ic,
            i.dib_dvbe / ib,
            i.dib_dvbc / ib,
        );
        let det = a * d - b * c;
        if !(det.is_finite() && det != 0.0) {
            return Err("singular junction equations".into());
        }
        let mut dx = -(d * f1 - b * f2) / det;
        let mut dy = -(-c * f1 + a * f2) / det;
        let big = dx.abs().max(dy.abs());
        if big > 0.05 {
            dx *= 0.05 / big;
            dy *= 0.05 / big;
        }
        vbe += dx;
        vbc += dy;
        if !(vbe.is_finite() && vbc.is_finite()) {
            return Err("the junction voltages diverge".into());
        }
        if dx.abs().max(dy.abs()) < 1e-13 && f1.abs().max(f2.abs()) < 1e-9 {
            return Ok((vbe, vbc));
        }
    }
    Err(format!(
        "no junction voltages carry I_C = {ic:.3e} A with I_B = {ib:.3e} A"
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn forward_bias_hits_the_current_and_gain_is_beta_at_low_injection() {
        // Ideal transistor (no leakage, knee, Early): gain = β_F exactly
        // (docs/models.md: I_B = I_F/β_F, I_C = I_F).
        let p = BjtParams::default();
        let pt = Point {
            a: 1e-3,
            b: 5.0,
            y: 1.0,
            w: 1.0,
            line: 1,
        };
        let g = value(&p, CurveKind::Gain, &pt).unwrap();
        assert!((g - p.gain_fwd).abs() < 1e-6 * p.gain_fwd, "{g}");
        let k = BjtConstants::new(&p, 1.0, p.t_measured);
        let (vbe, i) = forward_bias(&k, &p, 1e-3, 5.0).unwrap();
        assert!((i.ic - 1e-3).abs() < 1e-12, "{}", i.ic);
        // I_C = I_S e^{V_BE/V_t}: V_BE = V_t ln(I_C/I_S) (Shockley, n = 1)
        let want = k.vt * (1e-3 / p.sat_current + 1.0).ln();
        assert!((vbe - want).abs() < 1e-9, "{vbe} {want}");
    }

    #[test]
    fn saturation_matches_the_ebers_moll_closed_form() {
        // V_CE,sat = V_t ln[(1 + (ic/ib + 1)/β_R) / (1 − ic/(β_F ib))]
        // (J. J. Ebers, J. L. Moll, Proc. IRE 42(12), 1954, from memory) for
        // the ideal transistor with n_F = n_R = 1 and no leakage.
        let p = BjtParams {
            gain_fwd: 80.0,
            gain_rev: 2.0,
            ..BjtParams::default()
        };
        let (ic, ib) = (0.1, 0.01);
        let pt = Point {
            a: ic,
            b: ib,
            y: 1.0,
            w: 1.0,
            line: 1,
        };
        let v = value(&p, CurveKind::Saturation, &pt).unwrap();
        let vt = BjtConstants::new(&p, 1.0, p.t_measured).vt;
        let f = ic / ib;
        let want = vt * ((1.0 + (f + 1.0) / p.gain_rev) / (1.0 - f / p.gain_fwd)).ln();
        assert!((v - want).abs() < 1e-9, "{v} {want}");
    }
}
