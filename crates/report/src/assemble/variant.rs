//! The named figures of a study record (laid out by
//! `tankwave_stage::record`) for people: the unit of a flattened name, how
//! it is shown, and the limit a `require` puts on it, for the axes of study
//! plots.

use std::collections::BTreeMap;

use tankwave_circuit::{Bound, Circuit, Cmp, Metric};

use crate::plot::Limit;

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
}
