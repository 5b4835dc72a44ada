//! Numbers for people with an SI prefix (BIPM SI Brochure, 9th ed., 2019,
//! table 7): the one formatter every crate uses, from diagnostics in stage
//! files to reports.

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

/// Fixed decimals with a unit, e.g. `fixed(61.234, 1, "deg")` → `"61.2 deg"`;
/// "—" for a value that is not finite.
pub fn fixed(v: f64, decimals: usize, unit: &str) -> String {
    if !v.is_finite() {
        return "—".to_string();
    }
    if unit.is_empty() {
        format!("{:.*}", decimals, v)
    } else {
        format!("{:.*} {}", decimals, v, unit)
    }
}

/// A fraction in percent with three significant digits, e.g.
/// `percent(0.7538)` → `"75.4 %"`, `percent(-0.1037)` → `"-10.4 %"`; "—"
/// for a value that is not finite.
pub fn percent(v: f64) -> String {
    if !v.is_finite() {
        return "—".to_string();
    }
    format!("{} %", si_prefixed(v * 100.0, "", 3))
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
