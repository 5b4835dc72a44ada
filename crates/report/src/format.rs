//! Numbers for people: engineering notation with SI prefixes, fixed decimals
//! and decibels. Non-finite values print as "—" rather than NaN.

/// Format `v` with three significant digits and an SI prefix (BIPM SI
/// Brochure, 9th ed., 2019, table 7), e.g. `si(4.7e-6, "H")` → `"4.70 µH"`.
pub fn si(v: f64, unit: &str) -> String {
    tankwave_measure::units::si_prefixed(v, unit, 3)
}

/// Fixed decimals with a unit, e.g. `fixed(61.234, 1, "%")` → `"61.2 %"`
/// (the workspace's one number writer, `tankwave_circuit::si`).
pub use tankwave_measure::units::fixed;
/// A fraction in percent with three significant digits, e.g.
/// `percent(0.7538)` → `"75.4 %"`.
pub use tankwave_measure::units::percent;

/// A complex impedance as `R + jX` with SI prefixes, e.g.
/// `impedance(4.0, -0.28)` → `"4.00 Ohm - j280 mOhm"`.
pub fn impedance(re: f64, im: f64) -> String {
    format!(
        "{} {} j{}",
        si(re, "Ohm"),
        if im < 0.0 { "-" } else { "+" },
        si(im.abs(), "Ohm")
    )
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

/// The level of output harmonic `h` for people: its dBc level, or
/// "below floor (−N dBc)" when the method does not resolve it
/// (docs/measurements.md, "Numerical floor"), or "—" without a carrier.
pub fn harmonic_level(h: &tankwave_measure::HarmonicPower, floor_dbc: Option<f64>) -> String {
    match (h.resolved, h.dbc) {
        (true, Some(d)) => db(d, "dBc"),
        (false, _) => below_floor(floor_dbc),
        _ => "—".into(),
    }
}

/// The power of output harmonic `h` in dBm, or "—" when it is below the
/// floor (its number would be solver noise).
pub fn harmonic_power(h: &tankwave_measure::HarmonicPower) -> String {
    if h.resolved {
        db(h.dbm, "dBm")
    } else {
        "—".into()
    }
}

/// The judged level of a mask row: the measured level, or "below floor
/// (−N dBc)" for an unresolved harmonic (judged by the floor).
pub fn row_level(h: &tankwave_measure::HarmonicRow) -> String {
    match h.measured_dbc {
        Some(m) if h.resolved => db(m, "dBc"),
        _ => below_floor(h.floor_dbc.or(Some(h.judged_dbc))),
    }
}

/// The verdict word of a mask row: an unresolved harmonic that does not
/// pass is one the method cannot resolve, not a measured failure.
pub fn row_verdict(h: &tankwave_measure::HarmonicRow) -> &'static str {
    match (h.pass, h.resolved) {
        (true, _) => "pass",
        (false, true) => "FAIL",
        (false, false) => "FAIL: not resolved",
    }
}

/// "below floor (−N dBc)".
fn below_floor(floor_dbc: Option<f64>) -> String {
    match floor_dbc {
        Some(f) => format!("below floor ({})", db(f, "dBc")),
        None => "below floor".into(),
    }
}

/// The limit of a verdict for people: the comparison and the bound in the
/// figure's unit (`<= 36.00 V`), or the mask it names (`mask NAME`).
pub fn limit_text(v: &tankwave_measure::Verdict) -> String {
    match &v.mask {
        Some(name) => format!("mask {name}"),
        None => format!("{} {}", v.cmp, v.unit.show(v.limit.unwrap_or(f64::NAN))),
    }
}

/// The measured value of a verdict for people, or `not measured: why`.
pub fn value_text(v: &tankwave_measure::Verdict) -> String {
    match (v.value, &v.not_measured) {
        (Some(x), _) => v.unit.show(x),
        (None, Some(why)) => format!("not measured: {why}"),
        (None, None) => "not measured".to_string(),
    }
}

/// The margin of a verdict for people (empty when not measured).
pub fn margin_text(v: &tankwave_measure::Verdict) -> String {
    v.margin.map(|m| v.unit.show_margin(m)).unwrap_or_default()
}

/// A verdict in the JSON output (docs/output.md, `requirements`): its
/// typed fields and, beside them, the texts people read.
pub fn verdict_json(v: &tankwave_measure::Verdict) -> serde_json::Value {
    serde_json::json!({
        "requirement": v.requirement,
        "line": v.line,
        "metric": v.metric,
        "unit": v.unit,
        "cmp": v.cmp,
        "limit": v.limit,
        "limit_text": limit_text(v),
        "value": v.value,
        "value_text": value_text(v),
        "margin": v.margin,
        "margin_text": margin_text(v),
        "pass": v.pass,
        "not_measured": v.not_measured,
        "element": v.element,
        "harmonics": v.harmonics,
    })
}

/// Every verdict in the JSON output.
pub fn verdicts_json(vs: &[tankwave_measure::Verdict]) -> serde_json::Value {
    serde_json::Value::Array(vs.iter().map(verdict_json).collect())
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
        assert_eq!(impedance(4.0, -0.28), "4.00 Ohm - j280 mOhm");
    }

    #[test]
    fn decibels() {
        assert_eq!(db(-43.04, "dBc"), "-43.0 dBc");
        assert_eq!(db(f64::NEG_INFINITY, "dBc"), "< -200 dBc");
        assert_eq!(fixed(61.234, 1, "%"), "61.2 %");
        assert_eq!(percent(0.7538), "75.4 %");
        assert_eq!(percent(-0.1037), "-10.4 %");
        assert_eq!(percent(0.004), "0.400 %");
    }
}
