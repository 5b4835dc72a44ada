//! Writing values in SI with a prefix, the way the stage-file language reads
//! them (BIPM, The International System of Units, 9th ed., 2019, table 7).

/// Prefixes used when writing, from small to large. Micro is written `u` so
/// the fragment stays ASCII (the language accepts both `u` and `µ`).
const PREFIXES: [(f64, &str); 10] = [
    (1e-15, "f"),
    (1e-12, "p"),
    (1e-9, "n"),
    (1e-6, "u"),
    (1e-3, "m"),
    (1.0, ""),
    (1e3, "k"),
    (1e6, "M"),
    (1e9, "G"),
    (1e12, "T"),
];

/// Write `value` with an SI prefix so the mantissa lies in [1, 1000), with
/// `digits` significant digits (trailing zeros dropped), followed by `unit`.
///
/// `format_si(135.43e-9, "H", 5)` gives `"135.43nH"`. Zero gives `"0"` plus the
/// unit; values beyond the prefix table keep the nearest prefix. Non-finite
/// values are written as Rust writes them (callers never pass them).
pub fn format_si(value: f64, unit: &str, digits: usize) -> String {
    if !value.is_finite() {
        return format!("{value}{unit}");
    }
    if value == 0.0 {
        return format!("0{unit}");
    }
    let digits = digits.clamp(1, 15);
    let mag = value.abs();
    // Pick the largest prefix not above the magnitude (after rounding to
    // the requested digits, so 999.996 rounds into the next prefix).
    let mut chosen = PREFIXES[0];
    for p in PREFIXES {
        if mag >= p.0 * (1.0 - 0.5 * 10f64.powi(-(digits as i32))) {
            chosen = p;
        }
    }
    let mantissa = value / chosen.0;
    let int_digits = if mantissa.abs() >= 1.0 {
        (mantissa.abs().log10().floor() as i32 + 1).max(1)
    } else {
        1
    };
    let decimals = (digits as i32 - int_digits).max(0) as usize;
    let mut s = format!("{mantissa:.decimals$}");
    if s.contains('.') {
        while s.ends_with('0') {
            s.pop();
        }
        if s.ends_with('.') {
            s.pop();
        }
    }
    format!("{s}{}{unit}", chosen.1)
}

#[cfg(test)]
mod tests {
    use super::format_si;

    #[test]
    fn writes_prefixed_values() {
        assert_eq!(format_si(135.43e-9, "H", 5), "135.43nH");
        assert_eq!(format_si(17.037e-9, "F", 5), "17.037nF");
        assert_eq!(format_si(4.7e-12, "F", 5), "4.7pF");
        assert_eq!(format_si(50.0, "Ohm", 5), "50Ohm");
        assert_eq!(format_si(7.1e6, "Hz", 5), "7.1MHz");
        assert_eq!(format_si(2.2e-6, "H", 5), "2.2uH");
        assert_eq!(format_si(0.0, "F", 5), "0F");
        // Rounding carries into the next prefix.
        assert_eq!(format_si(999.9999e-12, "F", 5), "1nF");
    }
}
