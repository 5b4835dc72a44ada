//! Numbers for people: engineering notation with SI prefixes, fixed decimals
//! and decibels. Non-finite values print as "—" rather than NaN.

/// Format `v` with three significant digits and an SI prefix (BIPM SI
/// Brochure, 9th ed., 2019, table 7), e.g. `si(4.7e-6, "H")` → `"4.70 µH"`.
pub fn si(v: f64, unit: &str) -> String {
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
    const PREFIXES: [(f64, &str); 11] = [
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
    let a = v.abs();
    let mut chosen = PREFIXES[PREFIXES.len() - 1];
    for p in PREFIXES {
        // round first so that 999.96 prints as 1.00 k rather than 1000
        let scaled = a / p.0;
        let digits = if scaled >= 100.0 {
            0
        } else if scaled >= 10.0 {
            1
        } else {
            2
        };
        let rounded: f64 = format!("{:.*}", digits, scaled).parse().unwrap_or(scaled);
        if rounded >= 1.0 {
            chosen = p;
            break;
        }
    }
    let scaled = v / chosen.0;
    let s = scaled.abs();
    let digits = if s >= 99.95 {
        0
    } else if s >= 9.995 {
        1
    } else {
        2
    };
    let sep = if unit.is_empty() && chosen.1.is_empty() {
        ""
    } else {
        " "
    };
    format!("{:.*}{}{}{}", digits, scaled, sep, chosen.1, unit)
}

/// Fixed decimals with a unit, e.g. `fixed(61.234, 1, "%")` → `"61.2 %"`.
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

/// Decibels with one decimal and a unit such as `dBc` or `dBm`; very small
/// levels print as `< -200 dBc` instead of -inf.
pub fn db(v: f64, unit: &str) -> String {
    if v.is_nan() {
        return "—".to_string();
    }
    if v < -200.0 {
        return format!("< -200 {unit}");
    }
    format!("{:.1} {}", v, unit)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn prefixes() {
        assert_eq!(si(4.7e-6, "H"), "4.70 µH");
        assert_eq!(si(13.56e6, "Hz"), "13.6 MHz");
        assert_eq!(si(20.0, "W"), "20.0 W");
        assert_eq!(si(-0.0123, "A"), "-12.3 mA");
        assert_eq!(si(999.96, "V"), "1.00 kV");
        assert_eq!(si(0.0, "V"), "0 V");
        assert_eq!(si(f64::NAN, "V"), "—");
        assert_eq!(si(250.0, "Ohm"), "250 Ohm");
    }

    #[test]
    fn decibels() {
        assert_eq!(db(-43.04, "dBc"), "-43.0 dBc");
        assert_eq!(db(f64::NEG_INFINITY, "dBc"), "< -200 dBc");
        assert_eq!(fixed(61.234, 1, "%"), "61.2 %");
    }
}
