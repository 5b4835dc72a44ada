//! The catalogue of figures on the measurement side: how each figure of
//! [`tankwave_circuit::figure_catalogue!`] is computed from the measured
//! [`Metrics`], expanded from the same declaration that gives the figure's
//! name, record key, unit and label ([`Figure`]). Add a figure there (its
//! doc comment lists the steps); this module, verdicts, records, reports
//! and the docs table follow.

use crate::metrics::{Metrics, TransistorMetrics};
pub use tankwave_circuit::figure::{About, Figure};
pub use tankwave_circuit::unit::Unit;

/// Reads a per-stage figure from the metrics; the error names the
/// [`Metrics::note`] that says why it is missing.
pub type StageValue = fn(&Metrics) -> Result<f64, &'static str>;

/// Reads a per-transistor figure from one transistor's metrics.
pub type TransistorValue = fn(&TransistorMetrics) -> Option<f64>;

/// How a figure is computed (the `about` of its catalogue entry).
#[derive(Clone, Copy)]
pub enum Value {
    /// One value per stage.
    Stage(StageValue),
    /// One value per bipolar transistor.
    Transistor(TransistorValue),
    /// The level of harmonic N, dBc, from the output spectrum.
    Harmonic,
    /// Every harmonic against a mask.
    Mask,
    /// Every keying sideband against a mask's `offset` rules.
    SidebandMask,
    /// The largest fraction of a rating used ([`Metrics::stress`]).
    RatedPart,
}

/// Expands the catalogue into [`value`].
macro_rules! figure_values {
    ($(
        $name:ident {
            word: $word:expr,
            record: $record:expr,
            unit: $unit:ident,
            label: $label:literal,
            about: $kind:ident $(($value:expr))? $(,)?
        }
    ),* $(,)?) => {
        /// How `figure` is computed.
        pub fn value(figure: Figure) -> Value {
            match figure {
                $(Figure::$name => Value::$kind $(($value))?,)*
            }
        }
    };
}

tankwave_circuit::figure_catalogue!(figure_values);

/// The value of a per-stage figure in `m` (`None` when it was not
/// measured, or when `figure` is not a per-stage one).
pub fn stage_value(figure: Figure, m: &Metrics) -> Option<f64> {
    match value(figure) {
        Value::Stage(get) => get(m).ok(),
        _ => None,
    }
}

/// Every recorded figure of `m` as `(record key, value in the unit records
/// keep)`: per stage, per transistor (`q1.KEY`), and harmonics 2 to 5 in
/// dBc. Figures that are absent or not finite are left out.
pub fn recorded(m: &Metrics) -> Vec<(String, f64)> {
    let mut out = Vec::new();
    for &f in Figure::ALL {
        if f.record().is_none() {
            continue;
        }
        let unit = f.unit();
        let mut put = |key: Option<String>, v: Option<f64>| {
            if let (Some(k), Some(v)) = (key, v.map(|v| unit.to_record(v))) {
                if v.is_finite() {
                    out.push((k, v));
                }
            }
        };
        match value(f) {
            Value::Stage(get) => put(f.record_key(None, None), get(m).ok()),
            Value::Transistor(get) => {
                for q in &m.transistors {
                    put(f.record_key(None, Some(&q.element)), get(q));
                }
            }
            Value::Harmonic => {
                if let Some(o) = &m.output {
                    for h in o.harmonics.iter().skip(1).take(4) {
                        put(f.record_key(Some(h.n), None), h.dbc);
                    }
                }
            }
            Value::Mask | Value::SidebandMask | Value::RatedPart => {}
        }
    }
    out
}

/// The figure table of docs/measurements.md, one row per figure:
/// requirement word, record key, unit, what it is about, label.
pub fn docs_table() -> String {
    let mut s = String::from(
        "| figure | record key | unit | per | meaning |\n| --- | --- | --- | --- | --- |\n",
    );
    for &f in Figure::ALL {
        let code = |x: Option<&str>| x.map(|w| format!("`{w}`")).unwrap_or_else(|| "–".into());
        let unit = match f.unit() {
            Unit::Fraction => "fraction (shown in %)".to_string(),
            Unit::Ratio => "ratio".to_string(),
            Unit::Kelvin => "K (shown and recorded in degC)".to_string(),
            u => u.symbol().to_string(),
        };
        let per = match f.about() {
            About::Stage => "stage",
            About::Transistor => "bjt",
            About::Harmonic => "harmonic N",
            About::Mask | About::SidebandMask => "mask",
            About::RatedPart => "rated part",
        };
        s.push_str(&format!(
            "| {} | {} | {unit} | {per} | {} |\n",
            code(f.word()),
            code(f.record()),
            f.label()
        ));
    }
    s
}
