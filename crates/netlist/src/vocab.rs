//! The words of the stage-file language, declared once.
//!
//! Every statement keyword, element kind, waveform and its arguments and part
//! kind the parser or the elaborator accepts is listed here, and both read
//! these tables instead of repeating string literals. The options of each
//! statement (name, unit, default, words) are meaning rather than syntax and
//! are declared once in the circuit crate's `options` tables.
//! docs/vocabulary.md lists the same names with the reason each is ours (or
//! which trade term or open standard it is); a test in the circuit crate
//! keeps the two in step. The spellings that were retired are in [`RETIRED`]:
//! the parser and elaborator name their replacement, and the `upgrade`
//! module rewrites them.

/// Statement keywords other than the element kinds ([`ELEMENT_KINDS`]); a
/// line starting with either begins a statement (see [`statement_keywords`]).
pub const OTHER_STATEMENTS: &[&str] = &[
    "title",
    "ambient",
    "include",
    "let",
    "part",
    "output",
    "input",
    "analyze",
    "mask",
    "require",
    "vary",
    "tolerance",
    "montecarlo",
    "tune",
];

/// The element statement keywords.
pub const ELEMENT_KINDS: &[&str] = &[
    "resistor",
    "capacitor",
    "inductor",
    "coupling",
    "voltage",
    "current",
    "diode",
    "bjt",
    "measured",
];

/// Every statement keyword: the element kinds, then the other statements.
pub fn statement_keywords() -> impl Iterator<Item = &'static &'static str> {
    ELEMENT_KINDS.iter().chain(OTHER_STATEMENTS)
}

/// Whether `word` begins a statement.
pub fn is_statement_keyword(word: &str) -> bool {
    statement_keywords().any(|k| *k == word)
}

/// Waveforms for `wave=`, with the names of their arguments (all named;
/// `table` takes `time: value` pairs instead).
pub const WAVEFORMS: &[(&str, &[&str])] = &[
    ("sine", &["amp", "freq", "phase", "offset", "start", "rise"]),
    (
        "square",
        &["base", "top", "start", "rise", "fall", "hold", "every"],
    ),
    ("table", &[]),
];

/// Part kinds (`part NAME KIND { … }`).
pub const PART_KINDS: &[&str] = &["npn", "pnp", "diode"];

/// The argument names of a waveform, or `None` for an unknown one.
pub fn waveform_args(shape: &str) -> Option<&'static [&'static str]> {
    WAVEFORMS.iter().find(|(k, _)| *k == shape).map(|(_, a)| *a)
}

/// Where a retired spelling was used.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Place {
    /// A statement keyword.
    Statement,
    /// A waveform name in `wave=`.
    Waveform,
    /// An option name of the statements listed (element kinds or analyses).
    Option(&'static [&'static str]),
    /// An analysis kind after `analyze`.
    Analysis,
    /// An option word (the value of `start=` of a transient).
    Word,
    /// An argument name of a waveform.
    WaveArgument,
}

/// A spelling of an earlier version of the language and what replaced it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Retired {
    /// The old spelling.
    pub old: &'static str,
    /// Where it was used.
    pub place: Place,
    /// The new spelling (a word of the current language).
    pub new: &'static str,
    /// The new form as a reader would write it.
    pub shows: &'static str,
}

/// Every retired spelling (the message for each names the new form and
/// `tankwave upgrade FILE`, which rewrites it).
pub const RETIRED: &[Retired] = &[
    Retired {
        old: "vsource",
        place: Place::Statement,
        new: "voltage",
        shows: "voltage NAME p n dc=… wave=… internal=…",
    },
    Retired {
        old: "isource",
        place: Place::Statement,
        new: "current",
        shows: "current NAME p n dc=… wave=…",
    },
    Retired {
        old: "model",
        place: Place::Statement,
        new: "part",
        shows: "part NAME npn { transport { sat_current=… beta=… beta_reverse=… } … }",
    },
    Retired {
        old: "temperature",
        place: Place::Statement,
        new: "ambient",
        shows: "ambient 25degC",
    },
    Retired {
        old: "pulse",
        place: Place::Waveform,
        new: "square",
        shows: "square(base=…, top=…, start=…, rise=…, fall=…, hold=…, every=…)",
    },
    Retired {
        old: "pwl",
        place: Place::Waveform,
        new: "table",
        shows: "table(0s: 0V, 1us: 1V, …)",
    },
    Retired {
        old: "rs",
        place: Place::Option(&["voltage"]),
        new: "internal",
        shows: "internal=50Ohm",
    },
    Retired {
        old: "model",
        place: Place::Option(&["diode", "bjt"]),
        new: "part",
        shows: "part=NAME",
    },
    Retired {
        old: "qfreq",
        place: Place::Option(&["inductor"]),
        new: "q_at",
        shows: "q=Q q_at=FREQ",
    },
    Retired {
        old: "op",
        place: Place::Analysis,
        new: "bias",
        shows: "analyze bias",
    },
    Retired {
        old: "op",
        place: Place::Word,
        new: "bias",
        shows: "start=bias",
    },
    Retired {
        old: "delay",
        place: Place::WaveArgument,
        new: "start",
        shows: "sine(amp=…, freq=…, start=…)",
    },
];

/// The retired spelling `old` used at `place`, if it is one (for option
/// names, see [`retired_option`]).
pub fn retired(old: &str, place: Place) -> Option<&'static Retired> {
    RETIRED.iter().find(|r| r.old == old && r.place == place)
}

/// The retired option name `old` of the statement `statement` (an element kind), if it is one.
pub fn retired_option(old: &str, statement: &str) -> Option<&'static Retired> {
    RETIRED
        .iter()
        .find(|r| r.old == old && matches!(r.place, Place::Option(k) if k.contains(&statement)))
}

/// The message for a retired spelling: what it is now and how to rewrite a file.
pub fn retired_message(r: &Retired) -> String {
    format!(
        "'{}' is now '{}' (written {}); run `tankwave upgrade FILE` to rewrite a file",
        r.old, r.new, r.shows
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_element_kind_is_a_statement() {
        for k in ELEMENT_KINDS {
            assert!(is_statement_keyword(k), "{k}");
            assert!(!OTHER_STATEMENTS.contains(k), "{k} listed twice");
        }
    }

    #[test]
    fn no_retired_syntax_word_is_a_current_word_in_its_place() {
        // Retired option names, analyses and option words are checked
        // against the circuit crate's option tables there.
        for r in RETIRED {
            match r.place {
                Place::Statement => assert!(!is_statement_keyword(r.old)),
                Place::Waveform => assert!(waveform_args(r.old).is_none()),
                Place::Analysis | Place::Option(_) | Place::Word => {}
                Place::WaveArgument => {
                    assert!(!waveform_args("sine").unwrap_or(&[]).contains(&r.old))
                }
            }
        }
    }
}
