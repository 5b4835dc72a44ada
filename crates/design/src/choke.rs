//! Feed choke and DC blocking capacitor for a collector feed.
//!
//! Sizing rules (common practice): the choke's reactance at the operating
//! frequency f is at least ten times the resistance it shunts,
//! `X_L = 2π f L ≥ 10·R`, and the blocking capacitor's reactance is at most a
//! tenth of the resistance it is in series with, `X_C = 1/(2π f C) ≤ R/10`.
//! The factor is a parameter.
//!
//! A real choke has self-capacitance and so a self-resonant frequency (SRF)
//! above which it is capacitive. The SRF must be checked on the part
//! (measured or from its maker's figures): this module always says so. It
//! also gives an *estimate* from an assumed self-capacitance (default 2 pF, a
//! round figure assumed for a small winding, not taken from a source), the
//! reactance the choke would then present at f,
//! `X_eff = X_L / (1 − (f/f_SRF)²)`, and warns when the estimated SRF falls
//! below a margin (default 2) times f, where the reactance at f is already
//! off by a third, or below the highest harmonic of interest, where the
//! choke turns capacitive.

use serde::Serialize;
use std::f64::consts::PI;

use crate::error::{finite, non_negative, positive, DesignError};

/// Options of [`design_choke`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ChokeParams {
    /// Reactance ratio: X_L ≥ factor·R and X_C ≤ R/factor. Default 10.
    pub factor: f64,
    /// Assumed self-capacitance of the choke for the SRF estimate, F.
    /// Default 2 pF (an assumption; measure the part).
    pub self_capacitance: f64,
    /// Warn if the estimated SRF is below this multiple of f. Default 2.
    pub srf_margin: f64,
    /// Highest harmonic of interest; warn if the estimated SRF lies below it. Default 5.
    pub harmonics: u32,
}

impl Default for ChokeParams {
    fn default() -> Self {
        Self {
            factor: 10.0,
            self_capacitance: 2e-12,
            srf_margin: 2.0,
            harmonics: 5,
        }
    }
}

/// Result of [`design_choke`].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ChokeDesign {
    /// Operating frequency f, Hz.
    pub freq: f64,
    /// Resistance the feed sits across / in series with, Ω.
    pub load_ohm: f64,
    /// Reactance ratio used.
    pub factor: f64,
    /// Smallest choke inductance, H.
    pub inductance_min_h: f64,
    /// Its reactance at f, Ω (= factor·R).
    pub choke_reactance_ohm: f64,
    /// Smallest blocking capacitance, F.
    pub capacitance_min_f: f64,
    /// Its reactance at f, Ω (= R/factor).
    pub blocking_reactance_ohm: f64,
    /// Assumed self-capacitance of the choke, F.
    pub self_capacitance_f: f64,
    /// Estimated self-resonant frequency of the minimum choke with that
    /// capacitance, Hz (`None` when the assumed self-capacitance is zero).
    pub srf_estimate_hz: Option<f64>,
    /// Estimated reactance of the choke at f with the self-capacitance, Ω
    /// (negative if the estimate puts f above the SRF).
    pub choke_reactance_with_self_c_ohm: f64,
    /// Warnings, always including the must-check on self-resonance.
    pub warnings: Vec<String>,
    /// Where the rules come from.
    pub sources: Vec<String>,
}

/// Size a feed choke and a DC blocking capacitor for frequency `freq` (Hz)
/// and resistance `load_ohm` (Ω).
pub fn design_choke(
    freq: f64,
    load_ohm: f64,
    params: &ChokeParams,
) -> Result<ChokeDesign, DesignError> {
    positive("frequency", freq)?;
    positive("load resistance", load_ohm)?;
    positive("reactance factor", params.factor)?;
    non_negative("self-capacitance", params.self_capacitance)?;
    positive("SRF margin", params.srf_margin)?;
    let w = 2.0 * PI * freq;
    let xl = params.factor * load_ohm;
    let xc = load_ohm / params.factor;
    let l = finite("choke inductance", xl / w)?;
    let c = finite("blocking capacitance", 1.0 / (w * xc))?;
    let mut warnings = vec![
        "check the choke's self-resonant frequency on the actual part: above it the choke is capacitive and stops isolating the supply".to_string(),
    ];
    let (srf, x_eff) = if params.self_capacitance > 0.0 {
        let srf = finite(
            "SRF estimate",
            1.0 / (2.0 * PI * (l * params.self_capacitance).sqrt()),
        )?;
        let x_eff = finite("effective reactance", xl / (1.0 - (freq / srf).powi(2)))?;
        (srf, x_eff)
    } else {
        (f64::MAX, xl)
    };
    if srf < params.srf_margin * freq {
        warnings.push(format!(
            "estimated SRF {:.4} MHz (with an assumed {:.3} pF self-capacitance) is below {} x f: the choke's reactance at f would be about {:.1} ohm instead of {:.1} ohm",
            srf / 1e6,
            params.self_capacitance * 1e12,
            params.srf_margin,
            x_eff,
            xl
        ));
    }
    let top = freq * params.harmonics.max(1) as f64;
    if srf < top {
        warnings.push(format!(
            "estimated SRF {:.4} MHz lies below harmonic {} ({:.4} MHz): the choke is capacitive there",
            srf / 1e6,
            params.harmonics.max(1),
            top / 1e6
        ));
    }
    Ok(ChokeDesign {
        freq,
        load_ohm,
        factor: params.factor,
        inductance_min_h: l,
        choke_reactance_ohm: xl,
        capacitance_min_f: c,
        blocking_reactance_ohm: xc,
        self_capacitance_f: params.self_capacitance,
        srf_estimate_hz: (params.self_capacitance > 0.0).then_some(srf),
        choke_reactance_with_self_c_ohm: x_eff,
        warnings,
        sources: vec![
            "X_L >= 10 R and X_C <= R/10 at the operating frequency: common practice".into(),
            "SRF = 1/(2 pi sqrt(L C_self)) with an assumed C_self: estimate only, not sourced"
                .into(),
        ],
    })
}
