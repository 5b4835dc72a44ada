//! Load line of a tuned collector stage: the resistance the collector must
//! see to deliver a given power from a given supply, and the voltage and
//! current stress that follow.
//!
//! Formulas and their sources:
//! - Swing `Vm = Vcc − Vsat`, output power `Po = Vm²/(2R)`, hence
//!   `R = (Vcc − Vsat)²/(2 Po)` (common practice).
//! - Peak collector voltage `Vce,pk = Vcc + Vm ≈ 2 Vcc` (the tank swings the
//!   collector symmetrically about the supply; common practice).
//! - Collector current as a train of truncated-cosine pulses of full
//!   conduction angle `2θ` and peak `Ic,pk`: the fundamental is `α1 Ic,pk`
//!   and the mean `α0 Ic,pk` with
//!   `α0 = (sin θ − θ cos θ)/(π(1 − cos θ))`,
//!   `α1 = (θ − sin θ cos θ)/(π(1 − cos θ))`
//!   (S. C. Cripps, RF Power Amplifiers for Wireless Communications, 2nd ed.,
//!   2006, ch. 3; closed forms from memory, confirmed by quadrature). The
//!   fundamental collector current needed is `I1 = Vm/R`, so
//!   `Ic,pk = (Vm/R)/α1`; for class B (half-sine pulses, 2θ = 180°,
//!   α1 = ½) that is `Ic,pk = 2 Vm/R`.
//! - DC input `Pdc = Vcc α0 Ic,pk`, collector efficiency `Po/Pdc`
//!   (= π/4 · Vm/Vcc in class B).

use serde::Serialize;
use std::f64::consts::PI;

use crate::error::{finite, non_negative, positive, DesignError};

/// Options of [`load_line`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LoadLineParams {
    /// Full conduction angle 2θ in degrees, in (0, 360]. Default 180 (class B,
    /// half-sine collector current pulses).
    pub conduction_deg: f64,
}

impl Default for LoadLineParams {
    fn default() -> Self {
        Self {
            conduction_deg: 180.0,
        }
    }
}

/// Result of [`load_line`].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LoadLine {
    /// Supply voltage Vcc, V.
    pub supply_v: f64,
    /// Output power Po at the fundamental, W.
    pub power_w: f64,
    /// Saturation voltage Vsat, V.
    pub vsat_v: f64,
    /// Peak fundamental collector swing Vm = Vcc − Vsat, V.
    pub swing_v: f64,
    /// Load-line resistance R = Vm²/(2 Po), Ω.
    pub resistance_ohm: f64,
    /// Peak collector voltage Vcc + Vm (≈ 2 Vcc), V.
    pub vce_peak_v: f64,
    /// Full conduction angle assumed, degrees.
    pub conduction_deg: f64,
    /// Mean-current coefficient α0 of the truncated-cosine pulse.
    pub alpha0: f64,
    /// Fundamental-current coefficient α1 of the truncated-cosine pulse.
    pub alpha1: f64,
    /// Peak of the fundamental collector current Vm/R, A.
    pub ic_fundamental_a: f64,
    /// Peak collector current (Vm/R)/α1, A.
    pub ic_peak_a: f64,
    /// Mean (DC) collector current α0·Ic,pk, A.
    pub ic_dc_a: f64,
    /// DC input power Vcc·Idc, W.
    pub dc_power_w: f64,
    /// Ideal collector efficiency Po/Pdc (fraction).
    pub efficiency: f64,
    /// Where each formula comes from.
    pub sources: Vec<String>,
}

/// Truncated-cosine pulse coefficients (α0, α1) for full conduction angle
/// `conduction_deg` in (0, 360] degrees (Cripps, 2006, ch. 3; from memory).
pub fn pulse_coefficients(conduction_deg: f64) -> Result<(f64, f64), DesignError> {
    if !(conduction_deg.is_finite() && conduction_deg > 0.0 && conduction_deg <= 360.0) {
        return Err(DesignError::ConductionAngle {
            degrees: conduction_deg,
        });
    }
    let th = conduction_deg.to_radians() / 2.0;
    let (s, c) = th.sin_cos();
    let den = PI * (1.0 - c);
    let a0 = (s - th * c) / den;
    let a1 = (th - s * c) / den;
    Ok((finite("alpha0", a0)?, finite("alpha1", a1)?))
}

/// Load line for supply `supply_v` (V), fundamental output power `power_w`
/// (W) and saturation voltage `vsat_v` (V, ≥ 0 and below the supply).
pub fn load_line(
    supply_v: f64,
    power_w: f64,
    vsat_v: f64,
    params: &LoadLineParams,
) -> Result<LoadLine, DesignError> {
    positive("supply voltage", supply_v)?;
    positive("output power", power_w)?;
    non_negative("saturation voltage", vsat_v)?;
    if vsat_v >= supply_v {
        return Err(DesignError::NoSwing {
            supply: supply_v,
            vsat: vsat_v,
        });
    }
    let (a0, a1) = pulse_coefficients(params.conduction_deg)?;
    let vm = supply_v - vsat_v;
    let r = finite("load-line resistance", vm * vm / (2.0 * power_w))?;
    let i1 = vm / r;
    let ipk = finite("peak collector current", i1 / a1)?;
    let idc = a0 * ipk;
    let pdc = supply_v * idc;
    let eff = finite("efficiency", power_w / pdc)?;
    Ok(LoadLine {
        supply_v,
        power_w,
        vsat_v,
        swing_v: vm,
        resistance_ohm: r,
        vce_peak_v: supply_v + vm,
        conduction_deg: params.conduction_deg,
        alpha0: a0,
        alpha1: a1,
        ic_fundamental_a: i1,
        ic_peak_a: ipk,
        ic_dc_a: idc,
        dc_power_w: pdc,
        efficiency: eff,
        sources: vec![
            "R = (Vcc - Vsat)^2 / (2 Po), Po = Vm^2/(2R): common practice".into(),
            "Vce,pk = Vcc + Vm (about 2 Vcc): common practice".into(),
            "Ic,pk = (Vm/R)/alpha1, Idc = alpha0 Ic,pk, truncated-cosine pulses (class B: Ic,pk = 2 Vm/R): S. C. Cripps, RF Power Amplifiers for Wireless Communications, 2nd ed., 2006, ch. 3 (closed forms from memory)".into(),
        ],
    })
}
