//! Model parameter tables: stage-file names, the unit slot of each, and how
//! they map onto [`DiodeParams`] and [`BjtParams`].

use crate::ir::{BjtParams, DiodeParams};
use tankwave_netlist::Slot;

/// Allowed range of a model parameter.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Range {
    /// Any finite number.
    Any,
    /// > 0.
    Positive,
    /// ≥ 0.
    NonNegative,
    /// 0 ≤ x < 1.
    UnitInterval,
}

/// Diode parameters: (name, slot, range).
pub const DIODE_PARAMS: &[(&str, Slot, Range)] = &[
    ("sat_current", Slot::Current, Range::Positive),
    ("emission", Slot::Number, Range::Positive),
    ("r_series", Slot::Resistance, Range::NonNegative),
    ("cj0", Slot::Capacitance, Range::NonNegative),
    ("v_junction", Slot::Voltage, Range::Positive),
    ("grading", Slot::Number, Range::UnitInterval),
    ("linear_from", Slot::Number, Range::UnitInterval),
    ("transit", Slot::Time, Range::NonNegative),
    ("breakdown", Slot::Voltage, Range::Positive),
    ("breakdown_current", Slot::Current, Range::Positive),
    ("gap", Slot::Number, Range::Positive),
    ("sat_temp_exp", Slot::Number, Range::Any),
    ("t_measured", Slot::Temperature, Range::Positive),
];

/// Bipolar parameters: (name, slot, range).
pub const BJT_PARAMS: &[(&str, Slot, Range)] = &[
    ("sat_current", Slot::Current, Range::Positive),
    ("gain_fwd", Slot::Number, Range::Positive),
    ("gain_rev", Slot::Number, Range::Positive),
    ("emission_fwd", Slot::Number, Range::Positive),
    ("emission_rev", Slot::Number, Range::Positive),
    ("early_fwd", Slot::Voltage, Range::Positive),
    ("early_rev", Slot::Voltage, Range::Positive),
    ("knee_fwd", Slot::Current, Range::Positive),
    ("knee_rev", Slot::Current, Range::Positive),
    ("leak_be", Slot::Current, Range::NonNegative),
    ("leak_be_emission", Slot::Number, Range::Positive),
    ("leak_bc", Slot::Current, Range::NonNegative),
    ("leak_bc_emission", Slot::Number, Range::Positive),
    ("r_base", Slot::Resistance, Range::NonNegative),
    ("r_collector", Slot::Resistance, Range::NonNegative),
    ("r_emitter", Slot::Resistance, Range::NonNegative),
    ("cj_be", Slot::Capacitance, Range::NonNegative),
    ("vj_be", Slot::Voltage, Range::Positive),
    ("grading_be", Slot::Number, Range::UnitInterval),
    ("cj_bc", Slot::Capacitance, Range::NonNegative),
    ("vj_bc", Slot::Voltage, Range::Positive),
    ("grading_bc", Slot::Number, Range::UnitInterval),
    ("linear_from", Slot::Number, Range::UnitInterval),
    ("transit_fwd", Slot::Time, Range::NonNegative),
    ("transit_rev", Slot::Time, Range::NonNegative),
    ("gap", Slot::Number, Range::Positive),
    ("sat_temp_exp", Slot::Number, Range::Any),
    ("gain_temp_exp", Slot::Number, Range::Any),
    ("t_measured", Slot::Temperature, Range::Positive),
    ("max_vce", Slot::Voltage, Range::Positive),
    ("max_ic", Slot::Current, Range::Positive),
    ("max_power", Slot::Power, Range::Positive),
    ("max_tj", Slot::Temperature, Range::Positive),
    ("rth_ja", Slot::Number, Range::Positive),
    ("rth_jc", Slot::Number, Range::Positive),
    ("rth_sink", Slot::Number, Range::Positive),
];

/// Set a diode parameter by its stage-file name; false if the name is unknown.
pub fn set_diode(p: &mut DiodeParams, name: &str, v: f64) -> bool {
    let f = match name {
        "sat_current" => &mut p.sat_current,
        "emission" => &mut p.emission,
        "r_series" => &mut p.r_series,
        "cj0" => &mut p.cj0,
        "v_junction" => &mut p.v_junction,
        "grading" => &mut p.grading,
        "linear_from" => &mut p.linear_from,
        "transit" => &mut p.transit,
        "breakdown" => &mut p.breakdown,
        "breakdown_current" => &mut p.breakdown_current,
        "gap" => &mut p.gap,
        "sat_temp_exp" => &mut p.sat_temp_exp,
        "t_measured" => &mut p.t_measured,
        _ => return false,
    };
    *f = v;
    true
}

/// Set a bipolar parameter by its stage-file name; false if the name is unknown.
pub fn set_bjt(p: &mut BjtParams, name: &str, v: f64) -> bool {
    let f = match name {
        "sat_current" => &mut p.sat_current,
        "gain_fwd" => &mut p.gain_fwd,
        "gain_rev" => &mut p.gain_rev,
        "emission_fwd" => &mut p.emission_fwd,
        "emission_rev" => &mut p.emission_rev,
        "early_fwd" => &mut p.early_fwd,
        "early_rev" => &mut p.early_rev,
        "knee_fwd" => &mut p.knee_fwd,
        "knee_rev" => &mut p.knee_rev,
        "leak_be" => &mut p.leak_be,
        "leak_be_emission" => &mut p.leak_be_emission,
        "leak_bc" => &mut p.leak_bc,
        "leak_bc_emission" => &mut p.leak_bc_emission,
        "r_base" => &mut p.r_base,
        "r_collector" => &mut p.r_collector,
        "r_emitter" => &mut p.r_emitter,
        "cj_be" => &mut p.cj_be,
        "vj_be" => &mut p.vj_be,
        "grading_be" => &mut p.grading_be,
        "cj_bc" => &mut p.cj_bc,
        "vj_bc" => &mut p.vj_bc,
        "grading_bc" => &mut p.grading_bc,
        "linear_from" => &mut p.linear_from,
        "transit_fwd" => &mut p.transit_fwd,
        "transit_rev" => &mut p.transit_rev,
        "gap" => &mut p.gap,
        "sat_temp_exp" => &mut p.sat_temp_exp,
        "gain_temp_exp" => &mut p.gain_temp_exp,
        "t_measured" => &mut p.t_measured,
        "max_vce" => &mut p.max_vce,
        "max_ic" => &mut p.max_ic,
        "max_power" => &mut p.max_power,
        "max_tj" => &mut p.max_tj,
        "rth_ja" => &mut p.rth_ja,
        "rth_jc" => &mut p.rth_jc,
        "rth_sink" => &mut p.rth_sink,
        _ => return false,
    };
    *f = v;
    true
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_table_name_is_settable() {
        let mut d = DiodeParams::default();
        for (n, _, _) in DIODE_PARAMS {
            assert!(set_diode(&mut d, n, 0.25), "{n}");
        }
        assert_eq!(d.sat_current, 0.25);
        let mut b = BjtParams::default();
        for (n, _, _) in BJT_PARAMS {
            assert!(set_bjt(&mut b, n, 0.5), "{n}");
        }
        assert_eq!(b.rth_sink, 0.5);
        assert!(!set_bjt(&mut b, "nonsense", 1.0));
    }
}
