//! The unit of a quantity a person reads: one type for the whole workspace
//! (measured figures, requirement bounds and margins, study records, plot
//! axes), with the ways a value in it is written for people. All writing
//! goes through the one SI formatter, [`crate::si::si_prefixed`].
//!
//! Values are held in SI (fractions as fractions, temperatures in kelvin,
//! levels in dB); [`Unit::show`] and [`Unit::brief`] turn them into text.
//! (The unit *symbols* a stage file may write after a number are syntax and
//! belong to the parser; elaboration converts them to these quantities.)

use serde::Serialize;

use crate::si::{fixed, percent, si_prefixed};

/// Unit of a quantity. The variant names are part of the JSON output (the
/// `unit` of a requirement verdict), so they do not change.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
pub enum Unit {
    /// Watts.
    Watt,
    /// A plain fraction (shown as %).
    Fraction,
    /// Decibels (a ratio, e.g. gain).
    Db,
    /// Decibels relative to the carrier.
    Dbc,
    /// Decibels relative to 1 mW (a power level).
    Dbm,
    /// Volts.
    Volt,
    /// Amperes.
    Ampere,
    /// Ohms.
    Ohm,
    /// Kelvin (a temperature held in K, shown in °C).
    Kelvin,
    /// Degrees Celsius (a temperature held in °C, as study records keep it).
    DegC,
    /// Degrees of angle.
    Degree,
    /// A plain ratio (VSWR).
    Ratio,
    /// Seconds.
    Second,
    /// Hertz.
    Hertz,
}

impl Unit {
    /// Short symbol of the unit ("W", "dB", …; "" for fractions and ratios).
    pub fn symbol(self) -> &'static str {
        match self {
            Unit::Watt => "W",
            Unit::Fraction | Unit::Ratio => "",
            Unit::Db => "dB",
            Unit::Dbc => "dBc",
            Unit::Dbm => "dBm",
            Unit::Volt => "V",
            Unit::Ampere => "A",
            Unit::Ohm => "Ohm",
            Unit::Kelvin => "K",
            Unit::DegC => "degC",
            Unit::Degree => "deg",
            Unit::Second => "s",
            Unit::Hertz => "Hz",
        }
    }

    /// Whether an SI prefix goes in front of this unit's symbol.
    pub fn takes_prefix(self) -> bool {
        matches!(
            self,
            Unit::Watt | Unit::Volt | Unit::Ampere | Unit::Ohm | Unit::Second | Unit::Hertz
        )
    }

    /// The unit a study record keeps a value of this unit in: SI, except
    /// temperatures, which records keep in degC (`tj_degc`).
    pub fn in_records(self) -> Unit {
        match self {
            Unit::Kelvin => Unit::DegC,
            u => u,
        }
    }

    /// A value of this unit converted to [`Unit::in_records`].
    pub fn to_record(self, v: f64) -> f64 {
        match self {
            Unit::Kelvin => v - 273.15,
            _ => v,
        }
    }

    /// A value in this unit, for people, as verdicts write it: four
    /// significant figures with an SI prefix for W, V, A and Ω; two
    /// decimals for percent and decibels; one for temperatures and angles;
    /// three decimals for a ratio.
    pub fn show(self, v: f64) -> String {
        match self {
            Unit::Watt | Unit::Volt | Unit::Ampere | Unit::Ohm | Unit::Second | Unit::Hertz => {
                si_prefixed(v, self.symbol(), 4)
            }
            Unit::Fraction => format!("{:.2} %", v * 100.0),
            Unit::Db | Unit::Dbc | Unit::Dbm => format!("{v:.2} {}", self.symbol()),
            Unit::Kelvin => format!("{:.1} degC", v - 273.15),
            Unit::DegC => format!("{v:.1} degC"),
            Unit::Degree => format!("{v:.1} deg"),
            Unit::Ratio => format!("{v:.3}"),
        }
    }

    /// A difference (margin) in this unit, for people, with its sign:
    /// percent points for fractions, K for temperatures, dB for levels.
    pub fn show_margin(self, m: f64) -> String {
        match self {
            Unit::Fraction => format!("{:+.2} % points", m * 100.0),
            Unit::Kelvin | Unit::DegC => format!("{m:+.1} K"),
            Unit::Db | Unit::Dbc | Unit::Dbm => format!("{m:+.2} dB"),
            Unit::Watt | Unit::Volt | Unit::Ampere | Unit::Ohm | Unit::Second | Unit::Hertz => {
                let s = si_prefixed(m.abs(), self.symbol(), 4);
                if m < 0.0 {
                    format!("-{s}")
                } else {
                    format!("+{s}")
                }
            }
            Unit::Degree | Unit::Ratio => {
                let s = self.show(m);
                if m >= 0.0 {
                    format!("+{s}")
                } else {
                    s
                }
            }
        }
    }

    /// A value in this unit, briefly, as tables of many values write it:
    /// three significant figures with an SI prefix for W, V, A and Ω,
    /// percent for fractions, two decimals for decibels, one for
    /// temperatures and angles, three significant figures for a ratio;
    /// "—" for a value that is not finite.
    pub fn brief(self, v: f64) -> String {
        match self {
            Unit::Fraction => percent(v),
            Unit::Watt | Unit::Volt | Unit::Ampere | Unit::Ohm | Unit::Second | Unit::Hertz => {
                si_prefixed(v, self.symbol(), 3)
            }
            Unit::Db | Unit::Dbc | Unit::Dbm => fixed(v, 2, self.symbol()),
            Unit::Degree | Unit::DegC => fixed(v, 1, self.symbol()),
            Unit::Kelvin => fixed(v - 273.15, 1, "degC"),
            Unit::Ratio => si_prefixed(v, "", 3),
        }
    }

    /// The symbol an axis or a column heading carries for this unit ("%"
    /// for a fraction, which people read in percent) and the factor a
    /// value is multiplied by to be read in it.
    pub fn axis(self) -> (f64, &'static str) {
        match self {
            Unit::Fraction => (100.0, "%"),
            u => (1.0, u.symbol()),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::Unit;

    /// Conversions and text of each unit (SI prefixes: BIPM SI Brochure,
    /// 9th ed., 2019, table 7; 0 °C = 273.15 K by the definition of the
    /// Celsius scale, same brochure §2.3.1).
    #[test]
    fn writes_each_unit() {
        assert_eq!(Unit::Watt.show(12.3456), "12.35 W");
        assert_eq!(Unit::Watt.brief(12.3456), "12.3 W");
        assert_eq!(Unit::Fraction.show(0.60519), "60.52 %");
        assert_eq!(Unit::Fraction.brief(0.60519), "60.5 %");
        assert_eq!(Unit::Fraction.show_margin(-0.05), "-5.00 % points");
        assert_eq!(Unit::Kelvin.show(398.15), "125.0 degC");
        assert_eq!(Unit::Kelvin.show_margin(-2.5), "-2.5 K");
        assert_eq!(Unit::Kelvin.in_records(), Unit::DegC);
        assert!((Unit::Kelvin.to_record(398.15) - 125.0).abs() < 1e-9);
        assert_eq!(Unit::DegC.brief(125.04), "125.0 degC");
        assert_eq!(Unit::Dbc.show_margin(2.0), "+2.00 dB");
        assert_eq!(Unit::Dbm.brief(41.6), "41.60 dBm");
        assert_eq!(Unit::Volt.show_margin(-0.5), "-500.0 mV");
        assert_eq!(Unit::Ratio.show(1.23456), "1.235");
        assert_eq!(Unit::Ratio.brief(1.23456), "1.23");
        assert_eq!(Unit::Degree.show_margin(-3.0), "-3.0 deg");
        assert_eq!(Unit::Ohm.brief(50.0), "50.0 Ohm");
        assert_eq!(Unit::Watt.brief(f64::NAN), "—");
        assert_eq!(Unit::Fraction.axis(), (100.0, "%"));
        assert_eq!(Unit::Watt.axis(), (1.0, "W"));
    }
}
