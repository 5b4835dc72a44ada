//! The named figures of one solved variant, as study records and the tuner
//! hold them: the measured [`Metrics`] flattened into `name → value` with
//! the unit in the name's suffix (`pout_w`, `h3_dbc`, `q1.tj_degc`), the
//! requirement verdicts as record verdicts, and the three figures a tuning
//! goal reads. Also the unit of a flattened name and the limit a `require`
//! puts on it, for the axes of study plots.

use std::collections::BTreeMap;

use tankwave_circuit::{Bound, Circuit, Cmp, Metric};
use tankwave_measure::{Metrics, Verdict};
use tankwave_study::TuneFigures;

use crate::plot::Limit;

/// Flatten `m` into named figures (units in the names). Figures that are
/// absent or not finite are left out; harmonics 2 to 5 are kept in dBc.
pub fn record_metrics(m: &Metrics) -> BTreeMap<String, f64> {
    let mut f = BTreeMap::new();
    let mut put = |k: String, v: Option<f64>| {
        if let Some(v) = v.filter(|v| v.is_finite()) {
            f.insert(k, v);
        }
    };
    if let Some(o) = &m.output {
        put("pout_w".into(), Some(o.p1_w));
        put("pout_dbm".into(), Some(o.p1_dbm));
        put("thd".into(), o.thd);
        for h in o.harmonics.iter().skip(1).take(4) {
            put(format!("h{}_dbc", h.n), h.dbc);
        }
    }
    put("pdc_w".into(), Some(m.pdc_w));
    put("efficiency".into(), m.efficiency);
    put("pae".into(), m.pae);
    put("gain_db".into(), m.gain_db);
    if let Some(d) = &m.drive {
        put("input_vswr".into(), d.vswr);
        put("pin_w".into(), Some(d.pin_w));
    }
    for q in &m.transistors {
        let n = &q.element;
        put(format!("{n}.conduction_deg"), Some(q.conduction_deg));
        put(format!("{n}.vce_peak_v"), Some(q.vce_peak_v));
        put(format!("{n}.ic_peak_a"), Some(q.ic_peak_a));
        put(format!("{n}.dissipation_w"), Some(q.dissipation_w));
        put(format!("{n}.tj_degc"), q.tj_k.map(|k| k - 273.15));
    }
    f
}

/// Margin recorded for a requirement that could not be measured: the most
/// negative finite number a record holds (records keep finite margins only).
const UNMEASURED_MARGIN: f64 = -1e300;

/// The verdicts of a variant as record verdicts, keyed by requirement text.
/// A margin that is missing (not measured) or below -1e300 is recorded as -1e300.
pub fn record_verdicts(verdicts: &[Verdict]) -> BTreeMap<String, tankwave_study::Verdict> {
    verdicts
        .iter()
        .map(|x| {
            (
                x.requirement.clone(),
                tankwave_study::Verdict {
                    pass: x.pass,
                    margin: x.margin.unwrap_or(f64::NEG_INFINITY).max(UNMEASURED_MARGIN),
                },
            )
        })
        .collect()
}

/// The figures a tuning goal reads: output power at the fundamental,
/// collector efficiency and input VSWR (each absent when not measured).
pub fn objective_figures(m: &Metrics) -> TuneFigures {
    TuneFigures {
        pout: m.output.as_ref().map(|o| o.p1_w),
        efficiency: m.efficiency,
        input_vswr: m.drive.as_ref().and_then(|d| d.vswr),
    }
}

/// The unit of each `require` of the stage, keyed by requirement text as
/// study records key their verdicts, so that margins print with it.
pub fn requirement_units(c: &Circuit) -> BTreeMap<String, tankwave_measure::Unit> {
    c.requirements
        .iter()
        .map(|r| (r.text.clone(), tankwave_measure::metric_unit(&r.metric)))
        .collect()
}

/// Whether a flattened figure is a plain fraction (efficiency, PAE, THD),
/// which people read in percent.
pub fn figure_is_fraction(name: &str) -> bool {
    matches!(name, "efficiency" | "pae" | "thd")
}

/// A flattened figure for people: SI prefix and unit for W, V and A, two
/// decimals for decibels, one for degrees, percent for fractions, three
/// significant digits for a plain ratio (VSWR).
pub fn show_figure(name: &str, v: f64) -> String {
    if figure_is_fraction(name) {
        return crate::format::percent(v);
    }
    match figure_unit(name) {
        u @ ("W" | "V" | "A") => crate::format::si(v, u),
        u @ ("dBc" | "dBm" | "dB") => crate::format::fixed(v, 2, u),
        u @ ("deg" | "degC") => crate::format::fixed(v, 1, u),
        u => tankwave_measure::units::si_prefixed(v, u, 3),
    }
}

/// Unit of a flattened figure, from its name's suffix (empty for a ratio).
pub fn figure_unit(name: &str) -> &'static str {
    if name.ends_with("_w") {
        "W"
    } else if name.ends_with("_v") {
        "V"
    } else if name.ends_with("_a") {
        "A"
    } else if name.ends_with("_dbc") {
        "dBc"
    } else if name.ends_with("_dbm") {
        "dBm"
    } else if name.ends_with("_db") {
        "dB"
    } else if name.ends_with("_deg") {
        "deg"
    } else if name.ends_with("_degc") {
        "degC"
    } else {
        ""
    }
}

/// The limit the first `require` on a flattened figure puts on it, if the
/// figure is one of the plain ones (pout, efficiency, PAE, gain, VSWR, THD)
/// and the bound is a number. `pass_above` is set for `>=` and `>`.
pub fn figure_limit(c: &Circuit, name: &str) -> Option<Limit> {
    c.requirements.iter().find_map(|r| {
        let key = match r.metric {
            Metric::Pout => "pout_w",
            Metric::Efficiency => "efficiency",
            Metric::Pae => "pae",
            Metric::Gain => "gain_db",
            Metric::InputVswr => "input_vswr",
            Metric::Thd => "thd",
            _ => return None,
        };
        match (&r.bound, key == name) {
            (Bound::Value(v), true) => Some(Limit {
                value: *v,
                label: r.text.clone(),
                pass_above: matches!(r.cmp, Cmp::Ge | Cmp::Gt),
            }),
            _ => None,
        }
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use tankwave_circuit::Overrides;

    #[test]
    fn units_from_suffixes() {
        assert_eq!(figure_unit("pout_w"), "W");
        assert_eq!(figure_unit("q1.vce_peak_v"), "V");
        assert_eq!(figure_unit("q1.ic_peak_a"), "A");
        assert_eq!(figure_unit("h3_dbc"), "dBc");
        assert_eq!(figure_unit("pout_dbm"), "dBm");
        assert_eq!(figure_unit("gain_db"), "dB");
        assert_eq!(figure_unit("q1.conduction_deg"), "deg");
        assert_eq!(figure_unit("q1.tj_degc"), "degC");
        assert_eq!(figure_unit("efficiency"), "");
    }

    #[test]
    fn limits_from_plain_requirements_only() {
        let text = "voltage vdrv src gnd wave=sine(amp=10V, freq=1MHz) internal=50Ohm\n\
            resistor rload src gnd 50Ohm\noutput rload\ninput vdrv\n\
            analyze steady freq=1MHz harmonics=4\n\
            require pout >= 0.23W\nrequire input_vswr <= 1.5\n";
        let c = match tankwave_circuit::load_str("t.tank", text, &Overrides::default()) {
            Ok(e) => e.circuit,
            Err(e) => panic!("test stage must elaborate: {:?}", e.diagnostics),
        };
        let l = figure_limit(&c, "pout_w").expect("pout has a limit");
        assert_eq!(l.value, 0.23);
        assert!(l.pass_above);
        let v = figure_limit(&c, "input_vswr").expect("VSWR has a limit");
        assert_eq!(v.value, 1.5);
        assert!(!v.pass_above);
        assert!(figure_limit(&c, "efficiency").is_none());
        assert!(figure_limit(&c, "pdc_w").is_none());
    }

    /// A requirement that was not measured has no margin; records hold it as
    /// the most negative finite margin so they stay finite.
    #[test]
    fn unmeasured_margins_are_finite_in_records() {
        let v = |req: &str, pass: bool, margin: Option<f64>| Verdict {
            requirement: req.into(),
            line: 0,
            metric: "pout".into(),
            unit: tankwave_measure::Unit::Watt,
            cmp: ">=".into(),
            limit: None,
            limit_text: String::new(),
            value: None,
            value_text: String::new(),
            margin,
            margin_text: String::new(),
            pass,
            not_measured: None,
            element: None,
            harmonics: Vec::new(),
        };
        let r = record_verdicts(&[v("a", true, Some(0.5)), v("b", false, None)]);
        assert_eq!(r["a"].margin, 0.5);
        assert!(r["a"].pass);
        assert_eq!(r["b"].margin, -1e300);
        assert!(!r["b"].pass);
    }
}
