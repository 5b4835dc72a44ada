//! The options of every statement, declared once as typed tables.
//!
//! Each statement kind that takes `name=value` options (the element kinds,
//! the analyses and `montecarlo`) has one table of [`OptionSpec`]s: the option
//! name, what it takes (a value in a unit slot and range, a whole number, one
//! word of a fixed set, a name), its default and a doc line. Elaboration reads
//! options only through these tables (an option not in the table is an
//! `unknown-option` error with the nearest name; a word not in the set is an
//! `unknown-keyword` error with the nearest word), the defaults it applies are
//! the ones written here, and the docs test checks docs/vocabulary.md and the
//! `analyze` table of docs/language.md against them.
//!
//! The option words map straight to the typed values of the circuit IR
//! ([`Words`]), so there is no string left to match after elaboration.

use crate::ir::{Distribution, Integration, Scale, StartFrom, SteadyMethod};
use crate::models::Range;
use tankwave_netlist::Slot;

/// One option of a statement.
#[derive(Clone, Copy)]
pub struct OptionSpec {
    /// The option name as written before `=`.
    pub name: &'static str,
    /// What the option takes.
    pub takes: Takes,
    /// What holds when the option is left out.
    pub default: Default,
    /// One line saying what the option means.
    pub doc: &'static str,
}

/// What an option takes as its value.
#[derive(Clone, Copy)]
pub enum Takes {
    /// A value in this unit slot, within this range.
    Value(Slot, Range),
    /// A whole number at least this large.
    Count(u64),
    /// One value, or several in brackets (`[a, b, c]`), each in this unit
    /// slot and within this range.
    List(Slot, Range),
    /// One word of a fixed set.
    Word(&'static dyn WordSet),
    /// The name of an element.
    Element,
    /// The names of several elements in brackets (`[q1, d1]`), or one.
    Elements,
    /// The name of a node.
    Node,
    /// The name of a part.
    Part,
    /// A waveform (`sine(…)`, `square(…)`, `table(…)`).
    Wave,
    /// A double-quoted text (`"CQ TEST"`).
    Text,
}

/// What holds when an option is left out.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Default {
    /// The option must be given (`missing-option` otherwise).
    Required,
    /// Nothing: the option's effect is off.
    Absent,
    /// This number (in SI units).
    Number(f64),
    /// This word of the option's set.
    Word(&'static str),
    /// A value worked out from other values, as the docs say it.
    Derived(&'static str),
}

/// A fixed set of words, for docs and suggestions.
pub trait WordSet: Sync {
    /// The words, in the order the docs list them.
    fn words(&self) -> Vec<&'static str>;
}

/// A fixed set of words, each standing for one typed value.
pub struct Words<T: 'static, const N: usize>(pub [(&'static str, T); N]);

impl<T: Copy, const N: usize> Words<T, N> {
    /// The value a word stands for.
    pub fn get(&self, word: &str) -> Option<T> {
        self.0.iter().find(|(w, _)| *w == word).map(|(_, v)| *v)
    }
}

impl<T: Sync, const N: usize> WordSet for Words<T, N> {
    fn words(&self) -> Vec<&'static str> {
        self.0.iter().map(|(w, _)| *w).collect()
    }
}

impl OptionSpec {
    /// The words this option takes (empty unless it takes a word).
    pub fn words(&self) -> Vec<&'static str> {
        match self.takes {
            Takes::Word(w) => w.words(),
            _ => Vec::new(),
        }
    }

    /// The option as the `analyze` table of docs/language.md lists it:
    /// `` `name=` `` (`` `name=a\|b` `` for words, `` `name=ELEMENT` `` for
    /// an element), then the default in brackets unless it is absent.
    pub fn docs_cell(&self) -> String {
        let mut s = format!("`{}=", self.name);
        match self.takes {
            Takes::Word(w) => s.push_str(&w.words().join("\\|")),
            Takes::Element => s.push_str("ELEMENT"),
            Takes::Elements => s.push_str("[ELEMENT, …]"),
            Takes::Node => s.push_str("NODE"),
            Takes::Part => s.push('P'),
            Takes::List(..) => s.push_str("[…]"),
            Takes::Text => s.push_str("\"…\""),
            Takes::Value(..) | Takes::Count(_) | Takes::Wave => {}
        }
        s.push('`');
        let default = match (self.default, self.takes) {
            (Default::Required, _) => Some("required".to_string()),
            (Default::Absent, _) => None,
            (Default::Number(v), Takes::Count(min)) => {
                Some(format!("{}, ≥ {min}", crate::elaborate::fmt_num(v)))
            }
            (Default::Number(v), Takes::Value(Slot::Db, _)) => {
                Some(format!("{} dB", crate::elaborate::fmt_num(v)))
            }
            (Default::Number(v), _) => Some(crate::elaborate::fmt_num(v)),
            (Default::Word(w) | Default::Derived(w), _) => Some(w.to_string()),
        };
        if let Some(d) = default {
            s.push_str(&format!(" ({d})"));
        }
        s
    }
}

const fn opt(name: &'static str, takes: Takes, default: Default, doc: &'static str) -> OptionSpec {
    OptionSpec {
        name,
        takes,
        default,
        doc,
    }
}

// ------------------------------------------------------------------ words

/// `outside=` of a measured network: what it is beyond its file's band.
pub static OUTSIDE_WORDS: Words<crate::touchstone::Outside, 4> = Words([
    ("refuse", crate::touchstone::Outside::Refuse),
    ("open", crate::touchstone::Outside::Open),
    ("hold", crate::touchstone::Outside::Hold),
    ("short", crate::touchstone::Outside::Short),
]);
/// `start=` of a transient.
pub static START_WORDS: Words<StartFrom, 2> = Words([
    ("bias", StartFrom::OperatingPoint),
    ("zero", StartFrom::Zero),
]);
/// `method=` of a transient.
pub static INTEGRATION_WORDS: Words<Integration, 3> = Words([
    ("sdirk4", Integration::Sdirk4),
    ("trapezoidal", Integration::Trapezoidal),
    ("bdf2", Integration::Bdf2),
]);
/// `scale=` of an AC sweep.
pub static SCALE_WORDS: Words<Scale, 2> = Words([("linear", Scale::Linear), ("log", Scale::Log)]);
/// `method=` of a steady state.
pub static STEADY_WORDS: Words<SteadyMethod, 4> = Words([
    ("auto", SteadyMethod::Auto),
    ("balance", SteadyMethod::Balance),
    ("shooting", SteadyMethod::Shooting),
    ("settle", SteadyMethod::Settle),
]);
/// `pattern=` of a keying.
pub static PATTERN_WORDS: Words<crate::keying::Pattern, 2> = Words([
    ("dots", crate::keying::Pattern::Dots),
    ("paris", crate::keying::Pattern::Paris),
]);
/// `shape=` of a keying.
pub static SHAPE_WORDS: Words<crate::keying::EdgeShape, 3> = Words([
    ("raised_cosine", crate::keying::EdgeShape::RaisedCosine),
    ("gaussian", crate::keying::EdgeShape::Gaussian),
    ("linear", crate::keying::EdgeShape::Linear),
]);
/// The distribution word of `tolerance` (written after the fraction, not as an option).
pub static DISTRIBUTION_WORDS: Words<Distribution, 2> = Words([
    ("uniform", Distribution::Uniform),
    ("gaussian", Distribution::Gaussian),
]);
/// The default distribution of `tolerance`.
pub const DISTRIBUTION_DEFAULT: &str = "uniform";

// ------------------------------------------------------------------ elements

/// Options of the element kinds.
pub mod element {
    use super::*;

    /// `rating=` of a resistor: the power it may dissipate.
    pub const RESISTOR_RATING: OptionSpec = opt(
        "rating",
        Takes::Value(Slot::Power, Range::Positive),
        Default::Absent,
        "the power the resistor may dissipate (for require stress)",
    );
    /// `ntc_b=` of a resistor: the B constant that makes it a thermistor.
    pub const RESISTOR_NTC_B: OptionSpec = opt(
        "ntc_b",
        Takes::Value(Slot::Number, Range::Positive),
        Default::Absent,
        "B constant in kelvin (a plain number): the resistor is a thermistor whose value is its resistance at 25 degC",
    );
    /// `rating=` of a capacitor: the voltage it may carry.
    pub const CAPACITOR_RATING: OptionSpec = opt(
        "rating",
        Takes::Value(Slot::Voltage, Range::Positive),
        Default::Absent,
        "the peak voltage the capacitor may carry (for require stress)",
    );
    /// `current_rating=` of a capacitor: the RMS current it may carry.
    pub const CAPACITOR_CURRENT_RATING: OptionSpec = opt(
        "current_rating",
        Takes::Value(Slot::Current, Range::Positive),
        Default::Absent,
        "the RMS current the capacitor may carry (for require stress)",
    );
    /// `rating=` of an inductor: the current it may carry.
    pub const INDUCTOR_RATING: OptionSpec = opt(
        "rating",
        Takes::Value(Slot::Current, Range::Positive),
        Default::Absent,
        "the RMS current the inductor may carry (for require stress)",
    );
    /// `r=` of an inductor.
    pub const INDUCTOR_R: OptionSpec = opt(
        "r",
        Takes::Value(Slot::Resistance, Range::NonNegative),
        Default::Absent,
        "series loss resistance",
    );
    /// `q=` of an inductor.
    pub const INDUCTOR_Q: OptionSpec = opt(
        "q",
        Takes::Value(Slot::Number, Range::Positive),
        Default::Absent,
        "quality factor, turned into a series resistance 2πfL/Q",
    );
    /// `q_at=` of an inductor.
    pub const INDUCTOR_Q_AT: OptionSpec = opt(
        "q_at",
        Takes::Value(Slot::Frequency, Range::Positive),
        Default::Derived("the steady frequency"),
        "the frequency at which q= holds",
    );
    /// `k=` of a coupling.
    pub const COUPLING_K: OptionSpec = opt(
        "k",
        Takes::Value(Slot::Number, Range::Any),
        Default::Required,
        "coupling coefficient, |k| <= 1",
    );
    /// `dc=` of a voltage source.
    pub const VOLTAGE_DC: OptionSpec = opt(
        "dc",
        Takes::Value(Slot::Voltage, Range::Any),
        Default::Number(0.0),
        "the constant part of the source",
    );
    /// `dc=` of a current source.
    pub const CURRENT_DC: OptionSpec = opt(
        "dc",
        Takes::Value(Slot::Current, Range::Any),
        Default::Number(0.0),
        "the constant part of the source",
    );
    /// `wave=` of a source.
    pub const WAVE: OptionSpec = opt(
        "wave",
        Takes::Wave,
        Default::Absent,
        "the time-varying part of the source",
    );
    /// `internal=` of a voltage source.
    pub const INTERNAL: OptionSpec = opt(
        "internal",
        Takes::Value(Slot::Resistance, Range::NonNegative),
        Default::Number(0.0),
        "the source's internal (series) resistance",
    );
    /// `part=` of a diode or bjt.
    pub const PART: OptionSpec = opt(
        "part",
        Takes::Part,
        Default::Required,
        "the part that describes the device",
    );
    /// `area=` of a diode or bjt.
    pub const AREA: OptionSpec = opt(
        "area",
        Takes::Value(Slot::Number, Range::Positive),
        Default::Number(1.0),
        "relative junction area",
    );
    /// `c=` of a bjt.
    pub const COLLECTOR: OptionSpec =
        opt("c", Takes::Node, Default::Required, "the collector node");
    /// `b=` of a bjt.
    pub const BASE: OptionSpec = opt("b", Takes::Node, Default::Required, "the base node");
    /// `e=` of a bjt.
    pub const EMITTER: OptionSpec = opt("e", Takes::Node, Default::Required, "the emitter node");

    /// `outside=` of a measured network.
    pub const OUTSIDE: OptionSpec = opt(
        "outside",
        Takes::Word(&OUTSIDE_WORDS),
        Default::Word("refuse"),
        "what the network is at a frequency its file does not cover: refuse (an error), open, hold the nearest point, or short (every port short-circuited)",
    );
    /// `outside_r=` of a measured network.
    pub const OUTSIDE_R: OptionSpec = opt(
        "outside_r",
        Takes::Value(Slot::Resistance, Range::Positive),
        Default::Absent,
        "terminate every port in this resistance at a frequency the file does not cover",
    );
    /// `fit_error=` of a measured network: the bound on its time-domain fit.
    pub const FIT_ERROR: OptionSpec = opt(
        "fit_error",
        Takes::Value(Slot::Fraction, Range::Positive),
        Default::Number(0.01),
        "the worst relative error the time-domain model may have at the file's points (an error at lint otherwise)",
    );
    /// `fit_poles=` of a measured network: the most poles of its time-domain fit.
    pub const FIT_POLES: OptionSpec = opt(
        "fit_poles",
        Takes::Count(1),
        Default::Number(20.0),
        "the most poles the time-domain model may use (at most 40)",
    );

    /// The options of each element kind, by keyword.
    pub const ALL: &[(&str, &[OptionSpec])] = &[
        ("resistor", &[RESISTOR_RATING, RESISTOR_NTC_B]),
        ("capacitor", &[CAPACITOR_RATING, CAPACITOR_CURRENT_RATING]),
        (
            "inductor",
            &[INDUCTOR_RATING, INDUCTOR_R, INDUCTOR_Q, INDUCTOR_Q_AT],
        ),
        ("coupling", &[COUPLING_K]),
        ("voltage", &[VOLTAGE_DC, WAVE, INTERNAL]),
        ("current", &[CURRENT_DC, WAVE]),
        ("diode", &[PART, AREA]),
        ("bjt", &[COLLECTOR, BASE, EMITTER, PART, AREA]),
        ("measured", &[OUTSIDE, OUTSIDE_R, FIT_ERROR, FIT_POLES]),
    ];

    /// The options of an element kind (empty for an unknown kind).
    pub fn of(kind: &str) -> &'static [OptionSpec] {
        ALL.iter()
            .find(|(k, _)| *k == kind)
            .map(|(_, o)| *o)
            .unwrap_or(&[])
    }
}

// ------------------------------------------------------------------ analyses

/// Options of the analyses (`analyze KIND`).
pub mod analysis {
    use super::*;

    /// `stop=` of a transient.
    pub const STOP: OptionSpec = opt(
        "stop",
        Takes::Value(Slot::Time, Range::Positive),
        Default::Required,
        "the end time",
    );
    /// `step=` of a transient.
    pub const STEP: OptionSpec = opt(
        "step",
        Takes::Value(Slot::Time, Range::Positive),
        Default::Derived("stop/1000"),
        "the output step",
    );
    /// The number `stop` is divided by for the default `step`.
    pub const STEPS_PER_STOP: f64 = 1000.0;
    /// `max_step=` of a transient.
    pub const MAX_STEP: OptionSpec = opt(
        "max_step",
        Takes::Value(Slot::Time, Range::Positive),
        Default::Absent,
        "the longest internal step",
    );
    /// `start=` of a transient.
    pub const START: OptionSpec = opt(
        "start",
        Takes::Word(&START_WORDS),
        Default::Word("bias"),
        "start from the bias point or from all zero",
    );
    /// `method=` of a transient.
    pub const INTEGRATION: OptionSpec = opt(
        "method",
        Takes::Word(&INTEGRATION_WORDS),
        Default::Word("sdirk4"),
        "the integration rule",
    );
    /// `tolerance=` of a transient.
    pub const TOLERANCE: OptionSpec = opt(
        "tolerance",
        Takes::Value(Slot::Number, Range::Positive),
        Default::Absent,
        "the relative local error allowed per step (left out: the transient solver's own)",
    );
    /// `from=` of an AC sweep.
    pub const FROM: OptionSpec = opt(
        "from",
        Takes::Value(Slot::Frequency, Range::Positive),
        Default::Required,
        "the first frequency",
    );
    /// `to=` of an AC sweep.
    pub const TO: OptionSpec = opt(
        "to",
        Takes::Value(Slot::Frequency, Range::Positive),
        Default::Required,
        "the last frequency",
    );
    /// `points=` of an AC sweep.
    pub const POINTS: OptionSpec = opt(
        "points",
        Takes::Count(1),
        Default::Number(101.0),
        "the number of frequencies",
    );
    /// `scale=` of an AC sweep.
    pub const SCALE: OptionSpec = opt(
        "scale",
        Takes::Word(&SCALE_WORDS),
        Default::Word("linear"),
        "how the frequencies are spaced",
    );
    /// `source=` of an AC sweep.
    pub const SOURCE: OptionSpec = opt(
        "source",
        Takes::Element,
        Default::Derived("the `input`"),
        "the source that drives the sweep",
    );
    /// `impedance=` of an AC sweep.
    pub const IMPEDANCE: OptionSpec = opt(
        "impedance",
        Takes::Element,
        Default::Absent,
        "the element whose terminals the impedance is seen at",
    );
    /// `freq=` of a steady state.
    pub const FREQ: OptionSpec = opt(
        "freq",
        Takes::Value(Slot::Frequency, Range::Positive),
        Default::Required,
        "the fundamental frequency",
    );
    /// `harmonics=` of a steady state.
    pub const HARMONICS: OptionSpec = opt(
        "harmonics",
        Takes::Count(1),
        Default::Number(32.0),
        "the harmonics kept",
    );
    /// `method=` of a steady state.
    pub const STEADY_METHOD: OptionSpec = opt(
        "method",
        Takes::Word(&STEADY_WORDS),
        Default::Word("auto"),
        "harmonic balance, shooting, settling, or chosen by the stage",
    );
    /// `steps=` of a steady state (a power of two).
    pub const STEPS: OptionSpec = opt(
        "steps",
        Takes::Count(8),
        Default::Number(256.0),
        "time samples per period, a power of two",
    );
    /// `power_error=` of a steady state: auto's target on output power.
    pub const POWER_ERROR: OptionSpec = opt(
        "power_error",
        Takes::Value(Slot::Fraction, Range::Positive),
        Default::Number(1e-4),
        "the relative error of the output power that method=auto refines to",
    );
    /// `level_error=` of a steady state: auto's target on harmonic levels.
    pub const LEVEL_ERROR: OptionSpec = opt(
        "level_error",
        Takes::Value(Slot::Db, Range::Positive),
        Default::Number(0.05),
        "the error of every harmonic level above -100 dBc that method=auto refines to",
    );

    /// `vswr=` of a ruggedness sweep: the circles.
    pub const VSWR: OptionSpec = opt(
        "vswr",
        Takes::List(Slot::Number, Range::Positive),
        Default::Required,
        "the VSWR of each circle of loads, 1 to 100",
    );
    /// The largest VSWR a circle may have: beyond it the load is an open or
    /// a short circuit to within 2 % in |Γ|.
    pub const VSWR_MAX: f64 = 100.0;
    /// `phases=` of a ruggedness sweep.
    pub const PHASES: OptionSpec = opt(
        "phases",
        Takes::Count(1),
        Default::Number(12.0),
        "loads per circle, at equal steps of the reflection's phase",
    );
    /// `reference=` of a ruggedness sweep.
    pub const REFERENCE: OptionSpec = opt(
        "reference",
        Takes::Value(Slot::Resistance, Range::Positive),
        Default::Derived("the output resistor"),
        "the impedance the VSWR is counted against",
    );

    /// `sink=` of the heat analysis: the devices on the shared heatsink.
    pub const SINK: OptionSpec = opt(
        "sink",
        Takes::Elements,
        Default::Absent,
        "the transistors and diodes mounted on one shared heatsink",
    );
    /// `sink_ambient=` of the heat analysis.
    pub const SINK_AMBIENT: OptionSpec = opt(
        "sink_ambient",
        Takes::Value(Slot::Number, Range::Positive),
        Default::Absent,
        "thermal resistance of the shared heatsink to the ambient, K/W (required with sink=)",
    );
    /// `sink_heat=` of the heat analysis.
    pub const SINK_HEAT: OptionSpec = opt(
        "sink_heat",
        Takes::Value(Slot::Number, Range::NonNegative),
        Default::Number(0.0),
        "heat capacity of the shared heatsink, J/K (for heating over time)",
    );
    /// `transmit=` of the heat analysis.
    pub const TRANSMIT: OptionSpec = opt(
        "transmit",
        Takes::Value(Slot::Time, Range::Positive),
        Default::Absent,
        "length of a transmission whose heating over time is followed from a cold start",
    );
    /// `mark=` of the heat analysis.
    pub const MARK: OptionSpec = opt(
        "mark",
        Takes::Value(Slot::Time, Range::Positive),
        Default::Derived("transmit"),
        "time key down in each keying cycle",
    );
    /// `space=` of the heat analysis.
    pub const SPACE: OptionSpec = opt(
        "space",
        Takes::Value(Slot::Time, Range::NonNegative),
        Default::Number(0.0),
        "time key up in each keying cycle (the stage idles at its bias)",
    );
    /// `rounds=` of the heat analysis.
    pub const ROUNDS: OptionSpec = opt(
        "rounds",
        Takes::Count(2),
        Default::Number(30.0),
        "most electrical solves the electrothermal iteration may spend",
    );
    /// `spacing=` of a two-tone test.
    pub const SPACING: OptionSpec = opt(
        "spacing",
        Takes::List(Slot::Frequency, Range::Positive),
        Default::Required,
        "the distance between the two tones; several for IMD against spacing",
    );
    /// `order=` of a two-tone test.
    pub const ORDER: OptionSpec = opt(
        "order",
        Takes::Count(1),
        Default::Number(7.0),
        "the highest multiple of each tone kept among the mixing products",
    );
    /// The largest `order=` of a two-tone test: (2·20 + 1)² products.
    pub const ORDER_MAX: u64 = 20;
    /// `levels=` of a two-tone test.
    pub const LEVELS: OptionSpec = opt(
        "levels",
        Takes::List(Slot::Db, Range::Any),
        Default::Absent,
        "drive levels of a sweep, dB relative to the input's amplitude",
    );

    /// `reference=` of a load-pull: the impedance Γ is counted against.
    pub const PULL_REFERENCE: OptionSpec = opt(
        "reference",
        Takes::Value(Slot::Resistance, Range::Positive),
        Default::Required,
        "the impedance the reflection coefficients of the load grid are counted against",
    );
    /// `center=` of a load-pull: the middle of the region of loads.
    pub const CENTER: OptionSpec = opt(
        "center",
        Takes::List(Slot::Number, Range::Any),
        Default::Derived("[0, 0], the reference impedance"),
        "the reflection coefficient in the middle of the region, as [real, imaginary]",
    );
    /// `radius=` of a load-pull: the size of the region of loads.
    pub const RADIUS: OptionSpec = opt(
        "radius",
        Takes::Value(Slot::Number, Range::Positive),
        Default::Number(0.5),
        "the radius of the disc of reflection coefficients around center=",
    );
    /// `points=` of a load-pull: the fineness of the grid.
    pub const ACROSS: OptionSpec = opt(
        "points",
        Takes::Count(3),
        Default::Number(11.0),
        "grid points across the disc in each direction (the grid is points × points, cut to the disc)",
    );
    /// `transistor=` of a load-pull: whose collector is pulled.
    pub const TRANSISTOR: OptionSpec = opt(
        "transistor",
        Takes::Element,
        Default::Derived("the stage's only transistor"),
        "the transistor whose collector sees the loads of the grid",
    );
    /// The largest |Γ| a load-pull region may reach: that of
    /// [`VSWR_MAX`] (an open or a short circuit to within 2 % in |Γ|).
    pub const GAMMA_MAX: f64 = (VSWR_MAX - 1.0) / (VSWR_MAX + 1.0);

    /// `wpm=` of a keying: the speed in words per minute.
    pub const WPM: OptionSpec = opt(
        "wpm",
        Takes::Value(Slot::Number, Range::Positive),
        Default::Absent,
        "telegraph speed in words per minute of the 50-unit reference word PARIS (one unit = 1.2 s / wpm); this or baud=",
    );
    /// `baud=` of a keying: the speed in units per second.
    pub const BAUD: OptionSpec = opt(
        "baud",
        Takes::Value(Slot::Number, Range::Positive),
        Default::Absent,
        "telegraph speed in baud (units per second); this or wpm=",
    );
    /// The slowest and fastest keying speed, baud (0.5 to 100 wpm).
    pub const BAUD_RANGE: (f64, f64) = (0.5 / 1.2, 100.0 / 1.2);
    /// `pattern=` of a keying.
    pub const PATTERN: OptionSpec = opt(
        "pattern",
        Takes::Word(&PATTERN_WORDS),
        Default::Word("dots"),
        "what is keyed, repeated: a dot train, or the reference word PARIS with its word space",
    );
    /// `message=` of a keying.
    pub const MESSAGE: OptionSpec = opt(
        "message",
        Takes::Text,
        Default::Absent,
        "a text keyed in Morse code instead of the pattern: letters, digits, spaces and . , ? ' / ( ) : = + - \" @",
    );
    /// The longest `message=` of a keying, characters.
    pub const MESSAGE_MAX: usize = 200;
    /// `shape=` of a keying.
    pub const SHAPE: OptionSpec = opt(
        "shape",
        Takes::Word(&SHAPE_WORDS),
        Default::Word("raised_cosine"),
        "the shape of the drive's keying edges",
    );
    /// `rise=` of a keying.
    pub const RISE: OptionSpec = opt(
        "rise",
        Takes::Value(Slot::Time, Range::Positive),
        Default::Derived("a tenth of a unit"),
        "10-90 % time of the drive envelope's rising edge (at most half a unit)",
    );
    /// The default rise of a keying, as a fraction of a unit.
    pub const RISE_PER_UNIT: f64 = 0.1;
    /// `fall=` of a keying.
    pub const FALL: OptionSpec = opt(
        "fall",
        Takes::Value(Slot::Time, Range::Positive),
        Default::Derived("rise"),
        "10-90 % time of the drive envelope's falling edge (at most half a unit)",
    );
    /// `source=` of a keying: the keyed source.
    pub const KEYED: OptionSpec = opt(
        "source",
        Takes::Element,
        Default::Derived("the `input`"),
        "the source whose sine is keyed",
    );
    /// `cycles=` of a keying.
    pub const CYCLES: OptionSpec = opt(
        "cycles",
        Takes::Count(1),
        Default::Number(2.0),
        "periods of the pattern followed in time; the figures come from the last",
    );
    /// The most `cycles=` of a keying.
    pub const CYCLES_MAX: u64 = 20;
    /// `step=` of a keying: the slow-time step.
    pub const SLOW_STEP: OptionSpec = opt(
        "step",
        Takes::Value(Slot::Time, Range::Positive),
        Default::Derived("a twentieth of the shorter edge, at most a twentieth of a unit"),
        "the slow-time step of envelope following",
    );
    /// `rbw=` of a keying: the resolution bandwidth of the sideband spectrum.
    pub const RBW: OptionSpec = opt(
        "rbw",
        Takes::Value(Slot::Frequency, Range::Positive),
        Default::Derived("the line spacing"),
        "resolution bandwidth of the sideband spectrum",
    );
    /// `span=` of a keying: the widest offset shown.
    pub const SPAN: OptionSpec = opt(
        "span",
        Takes::Value(Slot::Frequency, Range::Positive),
        Default::Derived("ten times the necessary bandwidth"),
        "the widest offset from the carrier in the sideband spectrum",
    );
    /// `k_factor=` of a keying.
    pub const K_FACTOR: OptionSpec = opt(
        "k_factor",
        Takes::Value(Slot::Number, Range::Positive),
        Default::Number(5.0),
        "K of the necessary bandwidth B*K of telegraphy (5 for fading circuits, 3 without fading)",
    );

    /// The options of each analysis, by kind.
    pub const ALL: &[(&str, &[OptionSpec])] = &[
        ("bias", &[]),
        (
            "transient",
            &[STOP, STEP, MAX_STEP, START, INTEGRATION, TOLERANCE],
        ),
        ("ac", &[FROM, TO, POINTS, SCALE, SOURCE, IMPEDANCE]),
        (
            "steady",
            &[
                FREQ,
                HARMONICS,
                STEADY_METHOD,
                STEPS,
                POWER_ERROR,
                LEVEL_ERROR,
            ],
        ),
        ("ruggedness", &[VSWR, PHASES, REFERENCE]),
        (
            "heat",
            &[SINK, SINK_AMBIENT, SINK_HEAT, TRANSMIT, MARK, SPACE, ROUNDS],
        ),
        ("twotone", &[SPACING, ORDER, LEVELS]),
        (
            "keying",
            &[
                WPM, BAUD, PATTERN, MESSAGE, SHAPE, RISE, FALL, KEYED, CYCLES, SLOW_STEP, RBW,
                SPAN, K_FACTOR,
            ],
        ),
        (
            "loadpull",
            &[PULL_REFERENCE, CENTER, RADIUS, ACROSS, TRANSISTOR],
        ),
    ];

    /// The options of an analysis, or `None` for an unknown analysis.
    pub fn of(kind: &str) -> Option<&'static [OptionSpec]> {
        ALL.iter().find(|(k, _)| *k == kind).map(|(_, o)| *o)
    }

    /// The analysis kinds.
    pub fn kinds() -> Vec<&'static str> {
        ALL.iter().map(|(k, _)| *k).collect()
    }
}

// ------------------------------------------------------------------ studies

/// Options of `montecarlo`.
pub mod montecarlo {
    use super::*;

    /// `runs=`.
    pub const RUNS: OptionSpec = opt(
        "runs",
        Takes::Count(1),
        Default::Required,
        "the number of random variants",
    );
    /// `seed=`.
    pub const SEED: OptionSpec = opt(
        "seed",
        Takes::Count(0),
        Default::Number(1.0),
        "the seed of the random draws",
    );
    /// The options of `montecarlo`.
    pub const ALL: &[OptionSpec] = &[RUNS, SEED];
}

/// Every option name of every statement (for the vocabulary).
pub fn all_option_names() -> Vec<&'static str> {
    element::ALL
        .iter()
        .chain(analysis::ALL)
        .flat_map(|(_, o)| o.iter())
        .chain(montecarlo::ALL)
        .map(|o| o.name)
        .collect()
}

/// Every option word (including the distribution word of `tolerance`).
pub fn all_option_words() -> Vec<&'static str> {
    let mut v: Vec<&'static str> = element::ALL
        .iter()
        .chain(analysis::ALL)
        .flat_map(|(_, o)| o.iter())
        .chain(montecarlo::ALL)
        .flat_map(|o| o.words())
        .collect();
    v.extend(DISTRIBUTION_WORDS.words());
    v
}

#[cfg(test)]
mod tests {
    use super::*;
    use tankwave_netlist::vocab::{self, Place, ELEMENT_KINDS, RETIRED};

    #[test]
    fn every_element_kind_has_a_table() {
        for k in ELEMENT_KINDS {
            assert!(element::ALL.iter().any(|(e, _)| e == k), "{k}");
        }
        assert_eq!(element::ALL.len(), ELEMENT_KINDS.len());
    }

    fn tables() -> Vec<(&'static str, &'static [OptionSpec])> {
        let mut v: Vec<_> = element::ALL.iter().chain(analysis::ALL).copied().collect();
        v.push(("montecarlo", montecarlo::ALL));
        v
    }

    #[test]
    fn defaults_fit_what_each_option_takes() {
        for (stmt, table) in tables() {
            let mut names: Vec<&str> = table.iter().map(|o| o.name).collect();
            names.sort_unstable();
            names.dedup();
            assert_eq!(names.len(), table.len(), "{stmt}: an option listed twice");
            for o in table {
                assert!(!o.doc.is_empty(), "{stmt} {}", o.name);
                match (o.takes, o.default) {
                    (Takes::Word(w), Default::Word(d)) => {
                        assert!(w.words().contains(&d), "{stmt} {}: {d}", o.name)
                    }
                    (Takes::Word(_), d) => panic!("{stmt} {}: default {d:?}", o.name),
                    (_, Default::Word(d)) => panic!("{stmt} {}: word default {d}", o.name),
                    (Takes::Count(min), Default::Number(v)) => {
                        assert!(v.fract() == 0.0 && v >= min as f64, "{stmt} {}", o.name)
                    }
                    (Takes::Value(_, range), Default::Number(v)) => {
                        let fits = match range {
                            Range::Any => true,
                            Range::Positive => v > 0.0,
                            Range::NonNegative => v >= 0.0,
                            Range::UnitInterval => (0.0..1.0).contains(&v),
                        };
                        assert!(fits, "{stmt} {}", o.name)
                    }
                    (_, Default::Number(_)) => panic!("{stmt} {}: number default", o.name),
                    _ => {}
                }
            }
        }
        assert!(DISTRIBUTION_WORDS.get(DISTRIBUTION_DEFAULT).is_some());
    }

    #[test]
    fn no_retired_option_or_word_is_current_in_its_place() {
        for r in RETIRED {
            match r.place {
                Place::Analysis => assert!(analysis::of(r.old).is_none()),
                Place::Option(kinds) => {
                    for k in kinds {
                        let names: Vec<&str> = element::of(k).iter().map(|o| o.name).collect();
                        assert!(!names.contains(&r.old), "{}", r.old);
                        assert!(names.contains(&r.new), "{}", r.new);
                    }
                }
                Place::Word => {
                    assert!(!all_option_words().contains(&r.old), "{}", r.old);
                    assert!(all_option_words().contains(&r.new), "{}", r.new);
                }
                _ => {}
            }
        }
        assert!(vocab::retired("op", Place::Analysis).is_some());
    }

    #[test]
    fn the_analyze_table_of_the_language_doc_is_the_declaration() {
        let doc = std::fs::read_to_string(
            std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../../docs/language.md"),
        )
        .expect("docs/language.md");
        for (kind, table) in analysis::ALL {
            let cells: Vec<String> = table.iter().map(|o| o.docs_cell()).collect();
            let cell = if cells.is_empty() {
                "none".to_string()
            } else {
                cells.join(", ")
            };
            let row = format!("| `analyze {kind}` | {cell} |");
            assert!(
                doc.contains(&row),
                "docs/language.md should have the row\n{row}"
            );
        }
    }
}
