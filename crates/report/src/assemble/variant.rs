//! The named figures of a study record (laid out by
//! `tankwave_stage::record` from the figure catalogue) for people: the unit
//! of a record key, how a value is shown, and the limit a `require` puts on
//! it, for the axes of study plots. Everything here is looked up in the
//! catalogue (`tankwave_measure::figure`), never guessed from a name.

use std::collections::BTreeMap;

use tankwave_circuit::{Bound, Circuit, Cmp};
use tankwave_measure::figure::{About, Figure};
use tankwave_measure::Unit;

use crate::plot::Limit;

/// The unit of each `require` of the stage, keyed by requirement text as
/// study records key their verdicts, so that margins print with it.
pub fn requirement_units(c: &Circuit) -> BTreeMap<String, Unit> {
    c.requirements
        .iter()
        .map(|r| (r.text.clone(), tankwave_measure::metric_unit(&r.metric)))
        .collect()
}

/// The unit a record keeps the figure of record key `name` in (`None` for
/// a key the catalogue does not know).
pub fn record_unit(name: &str) -> Option<Unit> {
    Figure::from_record_key(name).map(|f| f.unit().in_records())
}

/// Whether a recorded figure is a plain fraction (efficiency, PAE, THD),
/// which people read in percent.
pub fn figure_is_fraction(name: &str) -> bool {
    record_unit(name) == Some(Unit::Fraction)
}

/// A recorded figure for people, in its unit ([`Unit::brief`]); a key the
/// catalogue does not know is shown as a plain number.
pub fn show_figure(name: &str, v: f64) -> String {
    match record_unit(name) {
        Some(u) => u.brief(v),
        None => tankwave_measure::units::si_prefixed(v, "", 3),
    }
}

/// Symbol of the unit a recorded figure is kept in (empty for a fraction,
/// a ratio or an unknown key).
pub fn figure_unit(name: &str) -> &'static str {
    record_unit(name).map(Unit::symbol).unwrap_or("")
}

/// The limit the first `require` on a recorded per-stage figure puts on
/// it, if the bound is a number. `pass_above` is set for `>=` and `>`.
pub fn figure_limit(c: &Circuit, name: &str) -> Option<Limit> {
    c.requirements.iter().find_map(|r| {
        let f = r.metric.figure;
        if f.about() != About::Stage || f.record() != Some(name) {
            return None;
        }
        match r.bound {
            Bound::Value(v) => Some(Limit {
                value: v,
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
    fn units_from_the_catalogue() {
        assert_eq!(figure_unit("pout_w"), "W");
        assert_eq!(figure_unit("q1.vce_peak_v"), "V");
        assert_eq!(figure_unit("q1.ic_peak_a"), "A");
        assert_eq!(figure_unit("h3_dbc"), "dBc");
        assert_eq!(figure_unit("pout_dbm"), "dBm");
        assert_eq!(figure_unit("gain_db"), "dB");
        assert_eq!(figure_unit("q1.conduction_deg"), "deg");
        assert_eq!(figure_unit("q1.tj_degc"), "degC");
        assert_eq!(figure_unit("efficiency"), "");
        assert!(figure_is_fraction("thd"));
        assert!(!figure_is_fraction("input_vswr"));
        assert_eq!(show_figure("q1.tj_degc", 104.96), "105.0 degC");
        assert_eq!(show_figure("efficiency", 0.6051), "60.5 %");
        assert_eq!(show_figure("pout_w", 14.55), "14.6 W");
        assert_eq!(show_figure("input_vswr", 1.2345), "1.23");
        assert_eq!(show_figure("not_a_figure", 2.5), "2.50");
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
