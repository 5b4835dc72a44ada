//! The catalogue of measured figures, declared once in
//! [`figure_catalogue!`](crate::figure_catalogue) and derived everywhere:
//! the figures a `require` may name and the unit of its bound (elaboration,
//! here), how each is computed and checked (tankwave-measure's `figure`
//! module, which expands the same catalogue with the value expressions),
//! the study-record keys (tankwave-stage), units, labels and limits of
//! tables and plots (tankwave-report), and the figure table of
//! docs/measurements.md (a test compares them).
//!
//! The declaration sits in this crate, not in tankwave-measure, because
//! elaboration (here) must know the figures' names and units and comes
//! before measurement in the one-way crate order; the measure crate
//! expands the same text with the value expressions, which are compiled
//! there and only there.

use crate::unit::Unit;

/// The catalogue of figures: each figure once, with everything about it.
///
/// The macro hands the catalogue to the macro named as its argument (a
/// callback), so that each crate derives what it needs from the same text:
/// this crate the [`Figure`] enum and its facts, tankwave-measure the value
/// of each figure.
///
/// # One entry
///
/// ```text
/// Pout {                                  // the Figure variant
///     word: Some("pout"),                 // stage-file name (`require`), None: recorded only
///     record: Some("pout_w"),             // study-record key, None: not recorded
///     unit: Watt,                         // a tankwave_circuit::Unit variant
///     label: "output power at the fundamental",  // for people (docs, help)
///     about: Stage(|m| Ok(m.output.as_ref().ok_or("pout")?.p1_w)),
/// },
/// ```
///
/// `about` says what the figure is about and how it is computed:
/// - `Stage(f)`: one value per stage; `f: fn(&Metrics) -> Result<f64,
///   &'static str>` reads it from the measured `Metrics`, the error naming
///   the `Metrics` note that says why it is missing;
/// - `Transistor(f)`: one value per bipolar transistor; `f:
///   fn(&TransistorMetrics) -> Option<f64>`; a `require` may name one
///   transistor, else the worst counts; records key it `q1.KEY`;
/// - `Harmonic`: the level of harmonic N (`require harmonic N`, records
///   `h2_dbc` … `h5_dbc`, the `{n}` of the key);
/// - `Mask`: every harmonic against a mask (`require harmonics <= MASK`);
/// - `RatedPart`: the largest fraction of a rating used, of one rated
///   resistor, capacitor or inductor or of all.
///
/// The closures are compiled only in tankwave-measure (names such as
/// `Metrics` resolve there). The unit of a `require` bound follows from
/// `unit` (W or dBm for Watt, % or a fraction for Fraction, degC or K for
/// Kelvin, …); records keep values in [`Unit::in_records`].
///
/// # Adding a figure
///
/// 1. If `Metrics` (tankwave-measure, `metrics.rs`) does not hold the
///    quantity yet, measure it there (a field and its computation) — that
///    is the measurement, not the catalogue.
/// 2. Add one entry below (in the order the `require` help lists figures).
/// 3. Add the row `tankwave_measure::figure::docs_table()` prints to the
///    figure table of docs/measurements.md and, for a new `require` word,
///    to docs/vocabulary.md and the `require` table of docs/language.md (the
///    docs tests print the expected row when one is missing).
/// 4. Test the value against a source (see docs/check-values.md).
///
/// Nothing else changes: elaboration accepts the word and checks the bound's
/// unit, verdicts, record keys, study tables, plot axes and limits follow.
#[macro_export]
macro_rules! figure_catalogue {
    ($then:ident) => {
        $then! {
            Pout {
                word: Some("pout"),
                record: Some("pout_w"),
                unit: Watt,
                label: "output power at the fundamental",
                about: Stage(|m| Ok(m.output.as_ref().ok_or("pout")?.p1_w)),
            },
            PoutDbm {
                word: None,
                record: Some("pout_dbm"),
                unit: Dbm,
                label: "output power at the fundamental as a level",
                about: Stage(|m| Ok(m.output.as_ref().ok_or("pout")?.p1_dbm)),
            },
            Efficiency {
                word: Some("efficiency"),
                record: Some("efficiency"),
                unit: Fraction,
                label: "collector efficiency",
                about: Stage(|m| m.efficiency.ok_or("efficiency")),
            },
            Pae {
                word: Some("pae"),
                record: Some("pae"),
                unit: Fraction,
                label: "power-added efficiency",
                about: Stage(|m| m.pae.ok_or("pae")),
            },
            Gain {
                word: Some("gain"),
                record: Some("gain_db"),
                unit: Db,
                label: "transducer gain",
                about: Stage(|m| m.gain_db.ok_or("gain")),
            },
            Harmonic {
                word: Some("harmonic"),
                record: Some("h{n}_dbc"),
                unit: Dbc,
                label: "level of harmonic N",
                about: Harmonic,
            },
            Harmonics {
                word: Some("harmonics"),
                record: None,
                unit: Dbc,
                label: "every harmonic against a mask",
                about: Mask,
            },
            Thd {
                word: Some("thd"),
                record: Some("thd"),
                unit: Fraction,
                label: "total harmonic distortion",
                about: Stage(|m| m.output.as_ref().ok_or("pout")?.thd.ok_or("thd")),
            },
            InputVswr {
                word: Some("input_vswr"),
                record: Some("input_vswr"),
                unit: Ratio,
                label: "input VSWR against the source resistance",
                about: Stage(|m| m.drive.as_ref().and_then(|d| d.vswr).ok_or("input_vswr")),
            },
            Pin {
                word: None,
                record: Some("pin_w"),
                unit: Watt,
                label: "power the drive delivers at the fundamental",
                about: Stage(|m| m.drive.as_ref().map(|d| d.pin_w).ok_or("pin")),
            },
            VcePeak {
                word: Some("vce_peak"),
                record: Some("vce_peak_v"),
                unit: Volt,
                label: "peak collector–emitter voltage",
                about: Transistor(|t| Some(t.vce_peak_v)),
            },
            VbeReverse {
                word: Some("vbe_reverse"),
                record: None,
                unit: Volt,
                label: "peak reverse base–emitter voltage",
                about: Transistor(|t| Some(t.vbe_reverse_v)),
            },
            IcPeak {
                word: Some("ic_peak"),
                record: Some("ic_peak_a"),
                unit: Ampere,
                label: "peak collector current",
                about: Transistor(|t| Some(t.ic_peak_a)),
            },
            Dissipation {
                word: Some("dissipation"),
                record: Some("dissipation_w"),
                unit: Watt,
                label: "average transistor dissipation",
                about: Transistor(|t| Some(t.dissipation_w)),
            },
            Tj {
                word: Some("tj"),
                record: Some("tj_degc"),
                unit: Kelvin,
                label: "junction temperature",
                about: Transistor(|t| t.tj_k),
            },
            TjPeak {
                word: Some("tj_peak"),
                record: None,
                unit: Kelvin,
                label: "peak junction temperature over a transmission",
                about: Transistor(|t| t.tj_peak_k),
            },
            Avalanche {
                word: Some("avalanche"),
                record: None,
                unit: Fraction,
                label: "peak avalanche multiplication M − 1 of the collector–base junction",
                about: Transistor(|t| t.multiplication_peak),
            },
            Stress {
                word: Some("stress"),
                record: None,
                unit: Fraction,
                label: "fraction of the rating used",
                about: RatedPart,
            },
            Pdc {
                word: Some("pdc"),
                record: Some("pdc_w"),
                unit: Watt,
                label: "DC input power",
                about: Stage(|m| Ok(m.pdc_w)),
            },
            Conduction {
                word: Some("conduction"),
                record: Some("conduction_deg"),
                unit: Degree,
                label: "conduction angle",
                about: Transistor(|t| Some(t.conduction_deg)),
            },
            Imd3 {
                word: Some("imd3"),
                record: None,
                unit: Dbc,
                label: "third-order intermodulation of a two-tone test, worse side",
                about: Stage(|m| m.two_tone.as_ref().ok_or("imd3")?.worst_dbc_or_floor(3).ok_or("imd3")),
            },
            Imd5 {
                word: Some("imd5"),
                record: None,
                unit: Dbc,
                label: "fifth-order intermodulation of a two-tone test, worse side",
                about: Stage(|m| m.two_tone.as_ref().ok_or("imd5")?.worst_dbc_or_floor(5).ok_or("imd5")),
            },
            Imd7 {
                word: Some("imd7"),
                record: None,
                unit: Dbc,
                label: "seventh-order intermodulation of a two-tone test, worse side",
                about: Stage(|m| m.two_tone.as_ref().ok_or("imd7")?.worst_dbc_or_floor(7).ok_or("imd7")),
            },
            Pep {
                word: Some("pep"),
                record: None,
                unit: Watt,
                label: "peak envelope power of a two-tone test",
                about: Stage(|m| Ok(m.two_tone.as_ref().ok_or("pep")?.pep_w)),
            },
            KeyRise {
                word: Some("key_rise"),
                record: None,
                unit: Second,
                label: "10–90 % rise time of the keyed output envelope",
                about: Stage(|m| m.keying.as_ref().ok_or("key_rise")?.rise_s.ok_or("key_rise")),
            },
            KeyFall {
                word: Some("key_fall"),
                record: None,
                unit: Second,
                label: "90–10 % fall time of the keyed output envelope",
                about: Stage(|m| m.keying.as_ref().ok_or("key_fall")?.fall_s.ok_or("key_fall")),
            },
            KeyOvershoot {
                word: Some("key_overshoot"),
                record: None,
                unit: Fraction,
                label: "overshoot of the keyed output envelope over key-down",
                about: Stage(|m| m.keying.as_ref().ok_or("key_overshoot")?.overshoot.ok_or("key_overshoot")),
            },
            OccupiedBw {
                word: Some("occupied_bw"),
                record: None,
                unit: Hertz,
                label: "occupied bandwidth (99 % of the power) of the keyed output",
                about: Stage(|m| m.keying.as_ref().ok_or("occupied_bw")?.occupied_bw_hz.ok_or("occupied_bw")),
            },
            Sidebands {
                word: Some("sidebands"),
                record: None,
                unit: Dbc,
                label: "every keying sideband against a mask",
                about: SidebandMask,
            },
        }
    };
}

/// What a figure is about (see [`figure_catalogue!`](crate::figure_catalogue)).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum About {
    /// One value per stage.
    Stage,
    /// One value per bipolar transistor.
    Transistor,
    /// The level of harmonic N.
    Harmonic,
    /// Every harmonic against a mask.
    Mask,
    /// Every keying sideband against a mask's `offset` rules.
    SidebandMask,
    /// The fraction of a rating used, per rated resistor, capacitor or inductor.
    RatedPart,
}

impl About {
    /// Whether a `require` on the figure may name one element.
    pub fn takes_element(self) -> bool {
        matches!(self, About::Transistor | About::RatedPart)
    }
}

/// Expands the catalogue into [`Figure`] and its facts.
macro_rules! declare_figures {
    ($(
        $name:ident {
            word: $word:expr,
            record: $record:expr,
            unit: $unit:ident,
            label: $label:literal,
            about: $kind:ident $(($value:expr))? $(,)?
        }
    ),* $(,)?) => {
        /// A measured figure (the catalogue's entries, in its order).
        #[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
        pub enum Figure {
            $(
                #[doc = $label]
                $name,
            )*
        }

        impl Figure {
            /// Every figure, in catalogue order.
            pub const ALL: &'static [Figure] = &[$(Figure::$name),*];

            /// The stage-file name (`require WORD`); `None` for a figure
            /// that is recorded but not required.
            pub fn word(self) -> Option<&'static str> {
                match self {
                    $(Figure::$name => $word,)*
                }
            }

            /// The study-record key (`{n}` stands for the harmonic number;
            /// per-transistor keys are prefixed `ELEMENT.`); `None` for a
            /// figure records do not keep.
            pub fn record(self) -> Option<&'static str> {
                match self {
                    $(Figure::$name => $record,)*
                }
            }

            /// The unit of the figure's value, bound and margin.
            pub fn unit(self) -> Unit {
                match self {
                    $(Figure::$name => Unit::$unit,)*
                }
            }

            /// The figure for people.
            pub fn label(self) -> &'static str {
                match self {
                    $(Figure::$name => $label,)*
                }
            }

            /// What the figure is about.
            pub fn about(self) -> About {
                match self {
                    $(Figure::$name => About::$kind,)*
                }
            }
        }
    };
}

figure_catalogue!(declare_figures);

impl Figure {
    /// Whether the figure is measured on an `analyze keying`.
    pub fn is_keying(self) -> bool {
        matches!(
            self,
            Figure::KeyRise
                | Figure::KeyFall
                | Figure::KeyOvershoot
                | Figure::OccupiedBw
                | Figure::Sidebands
        )
    }

    /// The figure a `require` names by `word`.
    pub fn from_word(word: &str) -> Option<Figure> {
        Figure::ALL.iter().copied().find(|f| f.word() == Some(word))
    }

    /// Every stage-file name, in catalogue order.
    pub fn words() -> impl Iterator<Item = &'static str> {
        Figure::ALL.iter().filter_map(|f| f.word())
    }

    /// The record key of this figure for harmonic `n` and element
    /// `element` (the parts that apply), or `None` if records do not keep
    /// it.
    pub fn record_key(self, n: Option<usize>, element: Option<&str>) -> Option<String> {
        let key = self.record()?;
        let key = match n {
            Some(n) => key.replace("{n}", &n.to_string()),
            None => key.to_string(),
        };
        Some(match element {
            Some(e) => format!("{e}.{key}"),
            None => key,
        })
    }

    /// The figure a study-record key names (`pout_w`, `h3_dbc`,
    /// `q1.vce_peak_v`).
    pub fn from_record_key(key: &str) -> Option<Figure> {
        let (prefix, base) = match key.rsplit_once('.') {
            Some((e, b)) => (Some(e), b),
            None => (None, key),
        };
        Figure::ALL.iter().copied().find(|f| {
            let Some(pattern) = f.record() else {
                return false;
            };
            if prefix.is_some() != (f.about() == About::Transistor) {
                return false;
            }
            match pattern.split_once("{n}") {
                Some((head, tail)) => base
                    .strip_prefix(head)
                    .and_then(|r| r.strip_suffix(tail))
                    .is_some_and(|n| !n.is_empty() && n.bytes().all(|b| b.is_ascii_digit())),
                None => base == pattern,
            }
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn words_and_keys_are_unique_and_round_trip() {
        let words: Vec<_> = Figure::words().collect();
        let mut sorted = words.clone();
        sorted.sort();
        sorted.dedup();
        assert_eq!(sorted.len(), words.len(), "a word names two figures");
        for f in Figure::ALL {
            if let Some(w) = f.word() {
                assert_eq!(Figure::from_word(w), Some(*f));
            }
            let n = (f.about() == About::Harmonic).then_some(3);
            let e = (f.about() == About::Transistor).then_some("q1");
            if let Some(k) = f.record_key(n, e) {
                assert_eq!(Figure::from_record_key(&k), Some(*f), "{k}");
            }
        }
        assert_eq!(Figure::from_record_key("h3_dbc"), Some(Figure::Harmonic));
        assert_eq!(Figure::from_record_key("q1.tj_degc"), Some(Figure::Tj));
        assert_eq!(Figure::from_record_key("tj_degc"), None);
        assert_eq!(Figure::from_record_key("q1.pout_w"), None);
        assert_eq!(Figure::from_record_key("h_dbc"), None);
    }

    /// A record key ends in the symbol of the unit records keep it in
    /// (`_w`, `_dbc`, `_degc` …), or in nothing for a fraction or a ratio,
    /// so that a reader of a CSV file sees the unit in the column name.
    #[test]
    fn record_keys_carry_their_unit() {
        for f in Figure::ALL {
            let Some(k) = f.record() else { continue };
            let sym = f.unit().in_records().symbol().to_lowercase();
            if sym.is_empty() {
                assert!(!k.contains('_') || f.word() == Some(k), "{k}");
            } else {
                assert!(k.ends_with(&format!("_{sym}")), "{k} should end in _{sym}");
            }
        }
    }
}
