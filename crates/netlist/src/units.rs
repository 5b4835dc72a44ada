//! SI prefixes, unit symbols and value slots.
//!
//! A number in a stage file may carry an SI prefix and a unit symbol. The
//! prefixes are exactly those of the BIPM SI Brochure, 9th edition (2019),
//! table 7, restricted to the ones this language accepts (f p n u µ m k M G T).
//! Where a value goes, a [`Slot`] says which units fit; a bare prefix takes
//! the slot's unit. Conversion to plain SI numbers is done by [`to_si`]:
//! `%` becomes a fraction, `dBm` becomes watts, `degC` becomes kelvin.

use std::fmt;

/// A unit symbol a number may carry.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Unit {
    /// `Ohm` or `Ω`.
    Ohm,
    /// `F`.
    Farad,
    /// `H`.
    Henry,
    /// `V`.
    Volt,
    /// `A`.
    Ampere,
    /// `W`.
    Watt,
    /// `Hz`.
    Hertz,
    /// `s`.
    Second,
    /// `%` (converted to a fraction).
    Percent,
    /// `dB` (a ratio in decibels, kept in dB).
    Db,
    /// `dBm` (power relative to 1 mW, converted to watts).
    Dbm,
    /// `dBc` (relative to the carrier, kept in dB).
    Dbc,
    /// `degC` (converted to kelvin).
    DegC,
    /// `K` (kelvin).
    Kelvin,
    /// `deg` (an angle in degrees, kept in degrees).
    Deg,
}

impl Unit {
    /// The symbol as written in stage files.
    pub fn symbol(self) -> &'static str {
        match self {
            Unit::Ohm => "Ohm",
            Unit::Farad => "F",
            Unit::Henry => "H",
            Unit::Volt => "V",
            Unit::Ampere => "A",
            Unit::Watt => "W",
            Unit::Hertz => "Hz",
            Unit::Second => "s",
            Unit::Percent => "%",
            Unit::Db => "dB",
            Unit::Dbm => "dBm",
            Unit::Dbc => "dBc",
            Unit::DegC => "degC",
            Unit::Kelvin => "K",
            Unit::Deg => "deg",
        }
    }
    /// Whether an SI prefix may go in front of this unit.
    pub fn takes_prefix(self) -> bool {
        matches!(
            self,
            Unit::Ohm
                | Unit::Farad
                | Unit::Henry
                | Unit::Volt
                | Unit::Ampere
                | Unit::Watt
                | Unit::Hertz
                | Unit::Second
        )
    }
}

impl fmt::Display for Unit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.symbol())
    }
}

/// Unit symbols by spelling.
const UNITS: &[(&str, Unit)] = &[
    ("Ohm", Unit::Ohm),
    ("Ω", Unit::Ohm),
    ("F", Unit::Farad),
    ("H", Unit::Henry),
    ("V", Unit::Volt),
    ("A", Unit::Ampere),
    ("W", Unit::Watt),
    ("Hz", Unit::Hertz),
    ("s", Unit::Second),
    ("%", Unit::Percent),
    ("dB", Unit::Db),
    ("dBm", Unit::Dbm),
    ("dBc", Unit::Dbc),
    ("degC", Unit::DegC),
    ("K", Unit::Kelvin),
    ("deg", Unit::Deg),
];

/// Every suffix a number may carry, in table order: each unit spelling
/// (`Ohm` and `Ω` both), then each prefix with each unit that takes one
/// (`pF`, `µH`, `kOhm`, …). Every one is accepted by [`split_suffix`].
pub fn suffix_spellings() -> Vec<String> {
    let mut v: Vec<String> = UNITS.iter().map(|(s, _)| s.to_string()).collect();
    for (p, _) in PREFIXES {
        for (s, u) in UNITS {
            if u.takes_prefix() {
                v.push(format!("{p}{s}"));
            }
        }
    }
    v
}

/// The accepted SI prefixes with their decimal exponents (BIPM SI Brochure,
/// 9th ed. 2019, table 7). `u` is accepted as an ASCII spelling of micro, and
/// both the micro sign U+00B5 and the Greek mu U+03BC are accepted.
pub const PREFIXES: &[(&str, i32)] = &[
    ("f", -15),
    ("p", -12),
    ("n", -9),
    ("u", -6),
    ("µ", -6),
    ("μ", -6),
    ("m", -3),
    ("k", 3),
    ("M", 6),
    ("G", 9),
    ("T", 12),
];

/// Split a number suffix like `nF`, `MHz`, `k`, `dBm` into (decimal exponent, unit).
/// Whole-unit spellings are tried before prefix + unit, so `dB` is decibel, not deci-B.
pub fn split_suffix(s: &str) -> Result<(i32, Option<Unit>), String> {
    if s.is_empty() {
        return Ok((0, None));
    }
    if let Some((_, u)) = UNITS.iter().find(|(n, _)| *n == s) {
        return Ok((0, Some(*u)));
    }
    for (p, e) in PREFIXES {
        if let Some(rest) = s.strip_prefix(p) {
            if rest.is_empty() {
                return Ok((*e, None));
            }
            if let Some((_, u)) = UNITS.iter().find(|(n, _)| *n == rest) {
                if u.takes_prefix() {
                    return Ok((*e, Some(*u)));
                }
                return Err(format!("'{}' takes no SI prefix, got '{s}'", u.symbol()));
            }
        }
    }
    Err(format!("'{s}' is not an SI prefix and/or a known unit"))
}

/// Spellings a suffix may mean when [`split_suffix`] refused it: the known
/// prefix + unit spellings that equal it ignoring ASCII case, or ignoring a
/// plural `s` (`uh` → `uH`, `pf` → `pF`, `ohms` → `Ohm`, `mhz` → `MHz` or
/// `mHz`). The most plausible first: an upper-case `M` before a lower-case
/// `m` for hertz (a radio frequency), the other way round otherwise.
pub fn suffix_suggestions(s: &str) -> Vec<String> {
    let singular = s.strip_suffix('s').filter(|r| !r.is_empty());
    let matches = |cand: &str| {
        cand.eq_ignore_ascii_case(s) || singular.is_some_and(|r| cand.eq_ignore_ascii_case(r))
    };
    let mut out: Vec<String> = Vec::new();
    for (n, _) in UNITS {
        if matches(n) {
            out.push(n.to_string());
        }
    }
    for (p, _) in PREFIXES {
        for (n, u) in UNITS {
            let cand = format!("{p}{n}");
            if u.takes_prefix() && matches(&cand) && !out.contains(&cand) {
                out.push(cand);
            }
        }
        if matches(p) && !out.iter().any(|c| c == p) {
            out.push(p.to_string());
        }
    }
    let hertz = s.to_ascii_lowercase().ends_with("hz");
    out.sort_by_key(|c| {
        let upper_mega = c.starts_with('M');
        // false sorts first: put the likely reading first.
        if hertz {
            !upper_mega
        } else {
            upper_mega
        }
    });
    out.retain(|c| c != s);
    out
}

/// The one-line list of units and prefixes that a bad suffix's help shows,
/// derived from the tables above (one place per fact).
pub fn suffix_help() -> String {
    let units: Vec<&str> = UNITS.iter().map(|(n, _)| *n).collect();
    let prefixes: Vec<&str> = PREFIXES.iter().map(|(p, _)| *p).collect();
    format!(
        "units: {}; prefixes: {} (kilo is a lower-case k; K is kelvin)",
        units.join(" "),
        prefixes.join(" ")
    )
}

/// Convert a number written with `unit` to a plain SI number:
/// `%` → fraction, `dBm` → W, `degC` → K; every other unit is already SI.
pub fn to_si(value: f64, unit: Option<Unit>) -> f64 {
    match unit {
        Some(Unit::Percent) => value / 100.0,
        Some(Unit::Dbm) => 1e-3 * 10f64.powf(value / 10.0),
        Some(Unit::DegC) => value + 273.15,
        _ => value,
    }
}

/// What kind of value a place in a statement takes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Slot {
    /// Ω.
    Resistance,
    /// F.
    Capacitance,
    /// H.
    Inductance,
    /// V.
    Voltage,
    /// A.
    Current,
    /// W or dBm.
    Power,
    /// Hz.
    Frequency,
    /// s.
    Time,
    /// `%` or a bare fraction.
    Fraction,
    /// dB (dB or dBc accepted).
    Db,
    /// degC or K (a plain number is refused as ambiguous); stored in kelvin.
    Temperature,
    /// deg (a bare number is degrees).
    Angle,
    /// A plain number (a `%` is accepted and becomes a fraction).
    Number,
    /// Anything (a `let`): converted to SI.
    Any,
}

impl Slot {
    /// Whether a literal with `unit` fits this slot.
    pub fn accepts(self, unit: Unit) -> bool {
        use Unit::*;
        match self {
            Slot::Resistance => unit == Ohm,
            Slot::Capacitance => unit == Farad,
            Slot::Inductance => unit == Henry,
            Slot::Voltage => unit == Volt,
            Slot::Current => unit == Ampere,
            Slot::Power => matches!(unit, Watt | Dbm),
            Slot::Frequency => unit == Hertz,
            Slot::Time => unit == Second,
            Slot::Fraction => unit == Percent,
            Slot::Db => matches!(unit, Db | Dbc),
            Slot::Temperature => matches!(unit, DegC | Kelvin),
            Slot::Angle => unit == Deg,
            Slot::Number => unit == Percent,
            Slot::Any => true,
        }
    }
    /// The unit(s) this slot needs, for messages (`"F"`, `"W or dBm"`).
    pub fn describe(self) -> &'static str {
        match self {
            Slot::Resistance => "Ohm",
            Slot::Capacitance => "F",
            Slot::Inductance => "H",
            Slot::Voltage => "V",
            Slot::Current => "A",
            Slot::Power => "W or dBm",
            Slot::Frequency => "Hz",
            Slot::Time => "s",
            Slot::Fraction => "% or a plain fraction",
            Slot::Db => "dB",
            Slot::Temperature => "degC or K",
            Slot::Angle => "deg",
            Slot::Number => "a plain number",
            Slot::Any => "any unit",
        }
    }
    /// True if a literal here must carry a unit (temperatures: `25degC` or `298.15K`,
    /// never a plain number, which could be read either way).
    pub fn needs_unit(self) -> bool {
        self == Slot::Temperature
    }
}

#[cfg(test)]
mod tests {
    #[test]
    fn every_suffix_spelling_is_accepted() {
        let all = super::suffix_spellings();
        assert!(all.iter().any(|s| s == "nF") && all.iter().any(|s| s == "µH"));
        assert!(!all.iter().any(|s| s == "mdB"), "dB takes no prefix");
        for s in &all {
            assert!(
                super::split_suffix(s).is_ok_and(|(_, u)| u.is_some()),
                "{s}"
            );
        }
    }

    use super::*;

    /// A wrong-case or plural suffix gets the spelling it was meant to be
    /// (common practice: SI symbols are case-sensitive, BIPM SI Brochure,
    /// 9th ed. 2019, section 5.2, which is why they are not simply accepted).
    #[test]
    fn wrong_case_suffixes_get_suggestions() {
        assert_eq!(suffix_suggestions("uh"), vec!["uH"]);
        assert_eq!(suffix_suggestions("pf"), vec!["pF"]);
        assert_eq!(suffix_suggestions("nf"), vec!["nF"]);
        assert_eq!(suffix_suggestions("ohm"), vec!["Ohm"]);
        assert_eq!(suffix_suggestions("ohms"), vec!["Ohm"]);
        assert_eq!(suffix_suggestions("kohm"), vec!["kOhm"]);
        // A frequency reads as mega first, anything else as milli first.
        assert_eq!(suffix_suggestions("mhz"), vec!["MHz", "mHz"]);
        assert!(suffix_suggestions("xyz").is_empty());
        // Every suggestion is itself accepted.
        for s in ["uh", "pf", "ohms", "mhz", "KHZ", "dbm", "hz"] {
            for t in suffix_suggestions(s) {
                assert!(split_suffix(&t).is_ok(), "{s} -> {t}");
            }
        }
    }

    /// The help line lists every unit and prefix of the tables.
    #[test]
    fn suffix_help_lists_the_tables() {
        let h = suffix_help();
        for (n, _) in UNITS {
            assert!(h.contains(n), "{n} missing from {h}");
        }
        for (p, _) in PREFIXES {
            assert!(h.contains(p), "{p} missing from {h}");
        }
    }

    /// Prefix values checked against the BIPM SI Brochure, 9th edition (2019),
    /// table 7 "SI prefixes": femto 10^-15, pico 10^-12, nano 10^-9,
    /// micro 10^-6, milli 10^-3, kilo 10^3, mega 10^6, giga 10^9, tera 10^12.
    #[test]
    fn prefixes_match_si_brochure_table_7() {
        let table7 = [
            ("f", -15),
            ("p", -12),
            ("n", -9),
            ("µ", -6),
            ("m", -3),
            ("k", 3),
            ("M", 6),
            ("G", 9),
            ("T", 12),
        ];
        for (sym, exp) in table7 {
            assert_eq!(split_suffix(sym), Ok((exp, None)), "prefix {sym}");
            assert_eq!(
                split_suffix(&format!("{sym}F")),
                Ok((exp, Some(Unit::Farad)))
            );
        }
        assert_eq!(split_suffix("u"), Ok((-6, None)));
        assert_eq!(split_suffix("μH"), Ok((-6, Some(Unit::Henry))));
    }

    #[test]
    fn whole_units_win_over_prefixes() {
        assert_eq!(split_suffix("dBm"), Ok((0, Some(Unit::Dbm))));
        assert_eq!(split_suffix("MHz"), Ok((6, Some(Unit::Hertz))));
        assert_eq!(split_suffix("mOhm"), Ok((-3, Some(Unit::Ohm))));
        assert_eq!(split_suffix("kΩ"), Ok((3, Some(Unit::Ohm))));
        assert!(split_suffix("k%").is_err());
        assert!(split_suffix("mdB").is_err());
        assert!(split_suffix("x").is_err());
        // Case matters: capital K is not kilo.
        assert!(split_suffix("KOhm").is_err());
    }

    #[test]
    fn conversions() {
        assert_eq!(to_si(65.0, Some(Unit::Percent)), 0.65);
        // 30 dBm = 1 W by the definition of dBm (power relative to 1 mW).
        assert!((to_si(30.0, Some(Unit::Dbm)) - 1.0).abs() < 1e-12);
        // 0 degC = 273.15 K exactly (SI Brochure 9th ed., 2.3.1).
        assert_eq!(to_si(0.0, Some(Unit::DegC)), 273.15);
        assert_eq!(to_si(-43.0, Some(Unit::Dbc)), -43.0);
    }

    #[test]
    fn slots_accept_their_units() {
        assert!(Slot::Capacitance.accepts(Unit::Farad));
        assert!(!Slot::Capacitance.accepts(Unit::Henry));
        assert!(Slot::Power.accepts(Unit::Dbm));
        assert!(Slot::Db.accepts(Unit::Dbc));
        assert!(!Slot::Db.accepts(Unit::Dbm));
        assert!(Slot::Temperature.accepts(Unit::Kelvin) && Slot::Temperature.needs_unit());
        assert_eq!(split_suffix("K"), Ok((0, Some(Unit::Kelvin))));
    }
}
