//! Level conversions (dBm, dBc), the reflection/VSWR formulas, and the one
//! SI-prefix number format the project uses ([`si_prefixed`]: verdict text
//! here, tables and plots in the report crate).
//!
//! dB conversions floor the power at [`POWER_FLOOR_W`] so that a silent
//! harmonic reads as a very low but finite level, never −∞ or NaN (the same
//! floor the circuit crate uses in `Limit::allowed_dbc`).

use num_complex::Complex64;

/// Smallest power used in dB conversions, W (1e-30 W = −270 dBm).
pub const POWER_FLOOR_W: f64 = 1e-30;

/// Largest VSWR reported; a total reflection (|Γ| → 1) reads as this cap.
pub const VSWR_CAP: f64 = 1e6;

/// Power in dBm: 10·log10(P / 1 mW), P floored at [`POWER_FLOOR_W`].
pub fn dbm(p_w: f64) -> f64 {
    10.0 * (p_w.max(POWER_FLOOR_W) / 1e-3).log10()
}

/// Watts from dBm: 1 mW·10^(dBm/10).
pub fn watts_from_dbm(dbm: f64) -> f64 {
    1e-3 * 10f64.powf(dbm / 10.0)
}

/// Level of `p_w` relative to a carrier of `carrier_w`, dB; `None` when the
/// carrier power is not positive (no carrier to refer to).
pub fn dbc(p_w: f64, carrier_w: f64) -> Option<f64> {
    if !(carrier_w.is_finite() && carrier_w > 0.0 && p_w.is_finite()) {
        return None;
    }
    Some(10.0 * (p_w.max(POWER_FLOOR_W) / carrier_w).log10())
}

/// Reflection coefficient Γ = (Z − R0)/(Z + R0) of impedance `z` against a
/// real reference `r0`; `None` when R0 is not positive or Z = −R0.
pub fn reflection(z: Complex64, r0: f64) -> Option<Complex64> {
    if !(r0.is_finite() && r0 > 0.0 && z.re.is_finite() && z.im.is_finite()) {
        return None;
    }
    let den = z + r0;
    if den.norm() <= f64::MIN_POSITIVE {
        return None;
    }
    let g = (z - r0) / den;
    if g.re.is_finite() && g.im.is_finite() {
        Some(g)
    } else {
        None
    }
}

/// VSWR = (1 + |Γ|)/(1 − |Γ|), capped at [`VSWR_CAP`] when |Γ| ≥ 1 or the
/// ratio would exceed the cap (a total or active reflection).
pub fn vswr_from_gamma(gamma_mag: f64) -> f64 {
    if !gamma_mag.is_finite() || gamma_mag >= 1.0 {
        return VSWR_CAP;
    }
    let s = (1.0 + gamma_mag) / (1.0 - gamma_mag);
    if s.is_finite() {
        s.min(VSWR_CAP)
    } else {
        VSWR_CAP
    }
}

/// VSWR of impedance `z` against real reference `r0` (capped); `None` when
/// R0 is not positive.
pub fn vswr(z: Complex64, r0: f64) -> Option<f64> {
    if !(r0.is_finite() && r0 > 0.0) {
        return None;
    }
    match reflection(z, r0) {
        Some(g) => Some(vswr_from_gamma(g.norm())),
        // Z = −R0 (or not finite): the reflection is unbounded.
        None => Some(VSWR_CAP),
    }
}

/// SI prefixes and the SI formatter live with the circuit crate (the lowest
/// that prints numbers); re-exported here where measurement code finds them.
pub use tankwave_circuit::si::{fixed, percent, si_prefixed, SI_PREFIXES};
/// The unit of a quantity (one type for the workspace, declared in the
/// circuit crate).
pub use tankwave_circuit::unit::Unit;
