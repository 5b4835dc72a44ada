//! Keying envelopes: the on/off pattern of a CW transmission at a given
//! speed, with shaped edges, as a function of time between 0 and 1.
//!
//! This module is pure (no circuit, no solver): `analyze keying` lowers to a
//! [`KeyingSpec`], and [`KeyingEnvelope`] turns it into the drive envelope
//! `a(τ)` that the stage layer applies to the keyed source.
//!
//! # Speed
//! The telegraph speed is given in words per minute or in baud. The
//! reference word is PARIS, 50 units long including its word space (ITU-R
//! M.1677-1, "International Morse code", 2009: a dot is one unit, a dash
//! three, the space within a character one, between characters three and
//! between words seven; PARIS so counted is 50 units, from memory), so one
//! unit lasts `60 s / (50 · wpm) = 1.2 s / wpm`, and the speed in baud is
//! `B = 1 / unit = wpm / 1.2`.
//!
//! # Edges
//! Every key-down element is a rectangle from its start to its end (the
//! times at half amplitude) smoothed by an edge kernel, i.e. the envelope is
//! the rectangle convolved with a pulse of unit area; the rising edge uses
//! the rise kernel, the falling edge the fall kernel. The edge's step
//! response `C(x)` (0 → 1, one half at `x = 0`) is, for a 10–90 % time `t₁₀₉₀`:
//!
//! | shape | `C(x)` | full edge | full edge / `t₁₀₉₀` |
//! | --- | --- | --- | --- |
//! | `raised_cosine` | `½(1 + sin(πx/T))` on `|x| ≤ T/2` | `T` | `π / (2 asin 0.8)` = 1.6941 |
//! | `linear` | `½ + x/T` on `|x| ≤ T/2` | `T` | 1.25 |
//! | `gaussian` | `Φ(x/σ)` | `±6σ` kept | `σ = t₁₀₉₀ / (2 z₀.₉)`, `z₀.₉ = 1.2815516` |
//!
//! (The raised cosine's 10–90 % time is `T (asin 0.8 − asin(−0.8)) / π`:
//! solve `½(1 + sin(πx/T)) = 0.1, 0.9`.) With the rectangle of width `W`
//! convolved with the raised-cosine kernel `(π/2T) cos(πx/T)`, the spectrum
//! of one element is `W sinc(fW) · cos(πfT)/(1 − 4f²T²)`, the form the
//! sideband check uses (docs/check-values.md, "Keying").
//!
//! ```
//! use tankwave_circuit::keying::{EdgeShape, KeyingEnvelope, KeyingSpec, Pattern};
//! let spec = KeyingSpec::new(1.2 / 25.0, Pattern::Dots, EdgeShape::RaisedCosine, 5e-3, 5e-3);
//! let env = KeyingEnvelope::new(&spec);
//! // a dot train: one unit key-up, one unit key-down, period 2 units = 96 ms;
//! // time 0 is the middle of a key-up unit
//! assert!((env.period() - 0.096).abs() < 1e-12);
//! assert!(env.at(0.0).abs() < 1e-12); // key up
//! assert!((env.at(0.048) - 1.0).abs() < 1e-12); // key down
//! assert!((env.at(0.024) - 0.5).abs() < 1e-12); // half amplitude at the element's start
//! ```

use crate::ir::ElementId;

/// Units in the reference word PARIS, its word space included (ITU-R
/// M.1677-1, from memory).
pub const PARIS_UNITS: f64 = 50.0;

/// The 90 % point of the standard normal distribution, z with Φ(z) = 0.9
/// (any table of the normal distribution).
pub const Z90: f64 = 1.281_551_565_544_600_5;

/// The fewest carrier periods a keying edge (10–90 %) may last: envelope
/// following assumes the envelope slow against the carrier (common
/// practice; real keying edges are thousands of periods).
pub const MIN_EDGE_PERIODS: f64 = 10.0;

/// Harmonics of the carrier kept by envelope following and by the
/// quasi-static drive sweep of a keying: enough that the key-down output
/// power meets the steady state's default accuracy (1e-4) on the class-C
/// keying demo (crates/stage/tests/keying.rs; 16 were 6.7e-4 low).
pub const KEYING_HARMONICS: usize = 32;

/// About how many slow-time samples envelope following keeps with all
/// their phasors in a keying (every `steps / KEPT_SAMPLES`-th, and the
/// last: at most `KEPT_SAMPLES + 2`); the output's fundamental, which the
/// figures read, is kept at every step.
pub const KEPT_SAMPLES: usize = 64;

/// The length of one unit (a dot), s, at a speed in words per minute.
pub fn unit_from_wpm(wpm: f64) -> f64 {
    60.0 / (PARIS_UNITS * wpm)
}

/// The telegraph speed in baud (units per second) at a speed in words per
/// minute.
pub fn baud_from_wpm(wpm: f64) -> f64 {
    1.0 / unit_from_wpm(wpm)
}

/// The International Morse code of the characters a `message=` may hold
/// (ITU-R M.1677-1, part I, from memory): `.` a dot, `-` a dash.
#[rustfmt::skip]
pub const MORSE: &[(char, &str)] = &[
    ('A', ".-"), ('B', "-..."), ('C', "-.-."), ('D', "-.."), ('E', "."), ('F', "..-."),
    ('G', "--."), ('H', "...."), ('I', ".."), ('J', ".---"), ('K', "-.-"), ('L', ".-.."),
    ('M', "--"), ('N', "-."), ('O', "---"), ('P', ".--."), ('Q', "--.-"), ('R', ".-."),
    ('S', "..."), ('T', "-"), ('U', "..-"), ('V', "...-"), ('W', ".--"), ('X', "-..-"),
    ('Y', "-.--"), ('Z', "--.."),
    ('0', "-----"), ('1', ".----"), ('2', "..---"), ('3', "...--"), ('4', "....-"),
    ('5', "....."), ('6', "-...."), ('7', "--..."), ('8', "---.."), ('9', "----."),
    ('.', ".-.-.-"), (',', "--..--"), ('?', "..--.."), ('\'', ".----."), ('/', "-..-."),
    ('(', "-.--."), (')', "-.--.-"), (':', "---..."), ('=', "-...-"), ('+', ".-.-."),
    ('-', "-....-"), ('"', ".-..-."), ('@', ".--.-."),
];

/// The units of a message keyed in Morse code, one period, starting with
/// the word space (7 units key-up) so that the period starts key-up and
/// repeats with a word space between repetitions: a dot 1 unit, a dash 3,
/// 1 unit between the elements of a character, 3 between characters, 7
/// between words (ITU-R M.1677-1, from memory). Letters are read without
/// case; runs of spaces are one word space. `Err` names the first
/// character that has no code; a message with no character is `Err(' ')`.
pub fn message_units(message: &str) -> Result<Vec<bool>, char> {
    let mut u = vec![false; 7];
    let mut any = false;
    for (w, word) in message.split_whitespace().enumerate() {
        if w > 0 {
            u.extend([false; 7]);
        }
        for (i, c) in word.chars().enumerate() {
            let up = c.to_ascii_uppercase();
            let code = MORSE
                .iter()
                .find(|(k, _)| *k == up)
                .map(|(_, v)| *v)
                .ok_or(c)?;
            if i > 0 {
                u.extend([false; 3]);
            }
            for (j, e) in code.chars().enumerate() {
                if j > 0 {
                    u.push(false);
                }
                u.extend(std::iter::repeat_n(true, if e == '-' { 3 } else { 1 }));
            }
            any = true;
        }
    }
    if any {
        Ok(u)
    } else {
        Err(' ')
    }
}

/// The shape of the keying edges.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum EdgeShape {
    /// Half a cosine period (zero slope at both ends).
    #[default]
    RaisedCosine,
    /// The step response of a Gaussian filter.
    Gaussian,
    /// A straight ramp.
    Linear,
}

impl EdgeShape {
    /// The stage-file word (`shape=`), from the option's word table.
    pub fn word(self) -> &'static str {
        crate::options::SHAPE_WORDS
            .0
            .iter()
            .find(|(_, v)| *v == self)
            .map_or("?", |(w, _)| w)
    }

    /// The full length of an edge whose 10–90 % time is `t1090`, s (for
    /// the Gaussian, the ±6σ span that is kept).
    pub fn full_edge(self, t1090: f64) -> f64 {
        match self {
            EdgeShape::RaisedCosine => t1090 * std::f64::consts::PI / (2.0 * 0.8f64.asin()),
            EdgeShape::Linear => t1090 / 0.8,
            EdgeShape::Gaussian => 12.0 * t1090 / (2.0 * Z90),
        }
    }

    /// The step response `C(x)` of an edge of 10–90 % time `t1090`: 0 well
    /// before, 1 well after, ½ at `x = 0`.
    pub fn step(self, x: f64, t1090: f64) -> f64 {
        match self {
            EdgeShape::RaisedCosine | EdgeShape::Linear => {
                let t = self.full_edge(t1090);
                if x <= -t / 2.0 {
                    0.0
                } else if x >= t / 2.0 {
                    1.0
                } else if self == EdgeShape::Linear {
                    0.5 + x / t
                } else {
                    0.5 * (1.0 + (std::f64::consts::PI * x / t).sin())
                }
            }
            EdgeShape::Gaussian => {
                let sigma = t1090 / (2.0 * Z90);
                if x <= -6.0 * sigma {
                    0.0
                } else if x >= 6.0 * sigma {
                    1.0
                } else {
                    0.5 * libm::erfc(-x / (sigma * std::f64::consts::SQRT_2))
                }
            }
        }
    }
}

/// What is keyed, repeated for as long as the analysis runs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Pattern {
    /// A dot train: one unit key-up, one unit key-down.
    #[default]
    Dots,
    /// The reference word PARIS and its word space (50 units), beginning
    /// with the word space, so the pattern starts key-up.
    Paris,
}

impl Pattern {
    /// The stage-file word (`pattern=`), from the option's word table.
    pub fn word(self) -> &'static str {
        crate::options::PATTERN_WORDS
            .0
            .iter()
            .find(|(_, v)| *v == self)
            .map_or("?", |(w, _)| w)
    }

    /// One period of the pattern, unit by unit (`true` key-down), starting
    /// key-up.
    pub fn units(self) -> Vec<bool> {
        match self {
            Pattern::Dots => vec![false, true],
            Pattern::Paris => message_units("PARIS").unwrap_or_default(),
        }
    }
}

/// The keying an `analyze keying` asks for (docs/analyses.md, "Keying").
#[derive(Debug, Clone, PartialEq)]
pub struct KeyingSpec {
    /// Length of one unit (a dot), s.
    pub unit: f64,
    /// What is keyed.
    pub pattern: Pattern,
    /// The edge shape.
    pub shape: EdgeShape,
    /// 10–90 % time of the rising edge of the drive envelope, s.
    pub rise: f64,
    /// 10–90 % time of the falling edge of the drive envelope, s.
    pub fall: f64,
    /// The keyed source (`None`: the file's `input`).
    pub source: Option<ElementId>,
    /// Periods of the pattern followed by envelope following (the figures
    /// come from the last one).
    pub cycles: usize,
    /// Slow-time step of envelope following, s (`None`: derived from the
    /// edges, docs/analyses.md).
    pub step: Option<f64>,
    /// Resolution bandwidth of the sideband spectrum, Hz (`None`: the line
    /// spacing, so every line is shown alone).
    pub rbw: Option<f64>,
    /// Widest offset from the carrier shown in the sideband spectrum, Hz.
    pub span: Option<f64>,
    /// The `K` of the necessary bandwidth `B·K` (ITU Radio Regulations
    /// Appendix 1: 5 for fading circuits, 3 for non-fading).
    pub k_factor: f64,
    /// A text keyed in Morse code instead of `pattern` (`message=`).
    pub message: Option<String>,
}

impl KeyingSpec {
    /// A spec with the given timing and the defaults of everything else.
    pub fn new(unit: f64, pattern: Pattern, shape: EdgeShape, rise: f64, fall: f64) -> Self {
        KeyingSpec {
            unit,
            pattern,
            shape,
            rise,
            fall,
            source: None,
            cycles: table_default(&crate::options::analysis::CYCLES) as usize,
            step: None,
            rbw: None,
            span: None,
            k_factor: table_default(&crate::options::analysis::K_FACTOR),
            message: None,
        }
    }

    /// One period of what is keyed, unit by unit (`true` key-down),
    /// starting key-up: the message when there is one, else the pattern.
    pub fn units(&self) -> Vec<bool> {
        match &self.message {
            Some(m) => message_units(m).unwrap_or_default(),
            None => self.pattern.units(),
        }
    }

    /// What is keyed, for people: `message "…"` or `pattern WORD`.
    pub fn keyed_text(&self) -> String {
        match &self.message {
            Some(m) => format!("message \"{}\"", crate::escape::escape(m)),
            None => format!("pattern {}", self.pattern.word()),
        }
    }

    /// The speed in baud.
    pub fn baud(&self) -> f64 {
        1.0 / self.unit
    }

    /// The speed in words per minute (of PARIS).
    pub fn wpm(&self) -> f64 {
        60.0 / (PARIS_UNITS * self.unit)
    }

    /// The necessary bandwidth of telegraphy, `B·K`, Hz (ITU Radio
    /// Regulations Appendix 1).
    pub fn necessary_bandwidth(&self) -> f64 {
        self.baud() * self.k_factor
    }

    /// The slow-time step envelope following uses, s: the one given, or a
    /// twentieth of the shorter edge's 10–90 % time, at most a twentieth of
    /// a unit.
    pub fn slow_step(&self) -> f64 {
        self.step
            .unwrap_or_else(|| (self.rise.min(self.fall) / 20.0).min(self.unit / 20.0))
    }
}

/// The number an option of `analyze keying` defaults to, from its one
/// declaration in [`crate::options`].
fn table_default(spec: &crate::options::OptionSpec) -> f64 {
    match spec.default {
        crate::options::Default::Number(v) => v,
        _ => f64::NAN,
    }
}

/// The drive envelope of a [`KeyingSpec`]: periodic, between 0 and 1.
#[derive(Debug, Clone)]
pub struct KeyingEnvelope {
    period: f64,
    /// Key-down intervals (start, end) of one period, at half amplitude.
    intervals: Vec<(f64, f64)>,
    shape: EdgeShape,
    rise: f64,
    fall: f64,
}

impl KeyingEnvelope {
    /// The envelope of `spec`.
    pub fn new(spec: &KeyingSpec) -> Self {
        let units = spec.units();
        let mut intervals = Vec::new();
        let mut i = 0;
        while i < units.len() {
            if units[i] {
                let start = i;
                while i < units.len() && units[i] {
                    i += 1;
                }
                // time 0 in the middle of the first (key-up) unit
                intervals.push((
                    (start as f64 - 0.5) * spec.unit,
                    (i as f64 - 0.5) * spec.unit,
                ));
            } else {
                i += 1;
            }
        }
        KeyingEnvelope {
            period: units.len() as f64 * spec.unit,
            intervals,
            shape: spec.shape,
            rise: spec.rise,
            fall: spec.fall,
        }
    }

    /// The length of one period of the pattern, s.
    pub fn period(&self) -> f64 {
        self.period
    }

    /// The key-down intervals of one period (start and end at half
    /// amplitude), s; time 0 is the middle of the pattern's first unit,
    /// which is key-up, so the envelope starts at rest.
    pub fn intervals(&self) -> &[(f64, f64)] {
        &self.intervals
    }

    /// The envelope at time `t` ≥ 0 (periodic in [`Self::period`]),
    /// between 0 and 1.
    pub fn at(&self, t: f64) -> f64 {
        if !t.is_finite() || self.period <= 0.0 {
            return 0.0;
        }
        let tp = t.rem_euclid(self.period);
        let mut a = 0.0;
        // the neighbouring periods' edges reach into this one
        for shift in [-self.period, 0.0, self.period] {
            for &(s, e) in &self.intervals {
                a += self.shape.step(tp - (s + shift), self.rise)
                    - self.shape.step(tp - (e + shift), self.fall);
            }
        }
        a.clamp(0.0, 1.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn paris_is_fifty_units() {
        // ITU-R M.1677-1 (from memory): PARIS with its word space is 50 units
        let u = Pattern::Paris.units();
        assert_eq!(u.len(), 50);
        // 10 dots (1 unit) and 4 dashes (3 units) key down 22 units
        assert_eq!(u.iter().filter(|&&k| k).count(), 22);
        assert!(!u[0], "the pattern starts key-up");
    }

    #[test]
    fn wpm_and_baud() {
        // 1.2 s / wpm: 20 wpm is a 60 ms unit, 16.67 baud
        assert!((unit_from_wpm(20.0) - 0.06).abs() < 1e-15);
        assert!((baud_from_wpm(20.0) - 50.0 / 3.0).abs() < 1e-12);
    }

    #[test]
    fn ten_to_ninety_is_the_rise() {
        for shape in [
            EdgeShape::RaisedCosine,
            EdgeShape::Linear,
            EdgeShape::Gaussian,
        ] {
            let r = 5e-3;
            // bisection for the 10 % and 90 % points of the step response
            let find = |level: f64| {
                let (mut lo, mut hi) = (-r * 10.0, r * 10.0);
                for _ in 0..200 {
                    let mid = 0.5 * (lo + hi);
                    if shape.step(mid, r) < level {
                        lo = mid;
                    } else {
                        hi = mid;
                    }
                }
                0.5 * (lo + hi)
            };
            let t = find(0.9) - find(0.1);
            // libm's erfc is accurate to a few ulp; the others are exact
            assert!((t - r).abs() < 1e-12, "{shape:?}: {t}");
        }
    }
}
