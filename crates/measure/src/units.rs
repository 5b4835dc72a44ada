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

/// SI prefixes from tera to atto, largest first (BIPM SI Brochure, 9th ed.,
/// 2019, table 7).
pub const SI_PREFIXES: [(f64, &str); 11] = [
    (1e12, "T"),
    (1e9, "G"),
    (1e6, "M"),
    (1e3, "k"),
    (1.0, ""),
    (1e-3, "m"),
    (1e-6, "µ"),
    (1e-9, "n"),
    (1e-12, "p"),
    (1e-15, "f"),
    (1e-18, "a"),
];

/// Decimals that show `x` (≥ 0) to `significant` figures, after rounding
/// (so 99.96 at 3 figures is "100", not "100.0").
fn decimals(x: f64, significant: usize) -> usize {
    if x <= 0.0 || !x.is_finite() {
        return significant.saturating_sub(1);
    }
    let e = x.log10().floor() as i64;
    let d = (significant as i64 - 1 - e).max(0) as usize;
    let rounded: f64 = format!("{x:.d$}").parse().unwrap_or(x);
    if d > 0 && rounded >= 10f64.powi(e as i32 + 1) {
        d - 1
    } else {
        d
    }
}

/// `v` with an SI prefix and `significant` figures (1–15), e.g.
/// `si_prefixed(4.7e-6, "H", 3)` → `"4.70 µH"`, `si_prefixed(999.96, "V", 3)`
/// → `"1.00 kV"`. Below atto the value is written in scientific notation
/// (`"4.19e-21 W"`). A bare number (empty `unit`) takes no prefix: it is
/// written plainly between 1e-4 and 1e6 (`"0.550"`), in scientific notation
/// outside. Zero is `"0 unit"`; a non-finite value is `"—"` (never
/// "NaN" in anything a person reads).
pub fn si_prefixed(v: f64, unit: &str, significant: usize) -> String {
    if !v.is_finite() {
        return "—".to_string();
    }
    if v == 0.0 {
        return if unit.is_empty() {
            "0".to_string()
        } else {
            format!("0 {unit}")
        };
    }
    let sig = significant.clamp(1, 15);
    let a = v.abs();
    if unit.is_empty() {
        // A bare number (a ratio, a factor): prefixes belong to units, so it
        // is written plainly, in scientific notation far from 1.
        let d = decimals(a, sig);
        let rounded: f64 = format!("{a:.d$}").parse().unwrap_or(a);
        return if (1e-4..1e6).contains(&rounded) {
            format!("{v:.d$}")
        } else {
            let d = sig - 1;
            format!("{v:.d$e}")
        };
    }
    let mut chosen = None;
    for p in SI_PREFIXES {
        // round first, so that 999.96 takes the next prefix up
        let scaled = a / p.0;
        let d = decimals(scaled, sig);
        let rounded: f64 = format!("{scaled:.d$}").parse().unwrap_or(scaled);
        if rounded >= 1.0 {
            chosen = Some(p);
            break;
        }
    }
    // below the smallest prefix (atto): plain scientific notation
    let Some(chosen) = chosen else {
        let d = sig - 1;
        return format!("{v:.d$e} {unit}");
    };
    let scaled = v / chosen.0;
    let d = decimals(scaled.abs(), sig);
    format!("{scaled:.d$} {}{unit}", chosen.1)
}

#[cfg(test)]
mod si_tests {
    use super::si_prefixed;

    /// Prefixes of the SI (BIPM SI Brochure, 9th ed., 2019, table 7); the
    /// roll-over cases are common practice: round first, then choose.
    #[test]
    fn four_and_three_figures_with_roll_over() {
        assert_eq!(si_prefixed(12.3456, "W", 4), "12.35 W");
        assert_eq!(si_prefixed(0.0012345, "A", 4), "1.234 mA");
        assert_eq!(si_prefixed(999.96, "V", 4), "1.000 kV");
        assert_eq!(si_prefixed(99.96, "V", 3), "100 V");
        assert_eq!(si_prefixed(-4.7e-6, "H", 3), "-4.70 µH");
        assert_eq!(si_prefixed(1.5e15, "Hz", 3), "1500 THz");
        assert_eq!(si_prefixed(0.0, "V", 4), "0 V");
        assert_eq!(si_prefixed(f64::NAN, "V", 4), "—");
        assert_eq!(si_prefixed(f64::INFINITY, "W", 3), "—");
        assert_eq!(si_prefixed(2.5, "", 3), "2.50");
        // below atto, scientific notation rather than "0.00419 aW"
        assert_eq!(si_prefixed(4.19e-21, "W", 3), "4.19e-21 W");
        assert_eq!(si_prefixed(-1e-19, "", 3), "-1.00e-19");
        // a bare number takes no prefix (prefixes attach to units)
        assert_eq!(si_prefixed(0.55, "", 3), "0.550");
        assert_eq!(si_prefixed(12345.0, "", 3), "12345");
        assert_eq!(si_prefixed(2.5e7, "", 3), "2.50e7");
    }
}
