//! Units on the axes of study and tuning plots: the unit a literal carries
//! once converted to SI, the unit of a `let` parameter (recorded by
//! elaboration from the literals written for it) and the unit of an
//! element's main value. Nothing here reads the syntax tree.

use tankwave_circuit::{Circuit, ElementKind};

pub use tankwave_circuit::param_units::si_symbol as unit_symbol;

/// The unit of a `let` parameter as elaboration recorded it
/// ([`Circuit::param_units`]); empty when no literal carries a unit.
pub fn param_unit(c: &Circuit, name: &str) -> String {
    c.param_units.get(name).cloned().unwrap_or_default()
}

/// The unit of the main value of element `name` (resistance, capacitance,
/// inductance); empty for other kinds or an unknown name.
pub fn element_unit(c: &Circuit, name: &str) -> &'static str {
    match c.elements.iter().find(|e| e.name == name).map(|e| &e.kind) {
        Some(ElementKind::Resistor { .. }) => "Ohm",
        Some(ElementKind::Capacitor { .. }) => "F",
        Some(ElementKind::Inductor { .. }) => "H",
        _ => "",
    }
}

/// The unit of every swept value (each `vary` of the stage, and every value
/// a summary names: a `let` parameter's or
/// an element's main value), keyed as in the records; tolerance factors are
/// left out (they are plain multipliers).
pub fn value_units(
    c: &Circuit,
    s: &tankwave_study::Summary,
) -> std::collections::BTreeMap<String, String> {
    let swept = c.study.vary.iter().map(|v| match &v.target {
        tankwave_circuit::VaryTarget::Param(n) | tankwave_circuit::VaryTarget::Element(n) => n,
    });
    s.requirements
        .values()
        .flat_map(|r| r.worst_values.keys())
        .chain(swept)
        .filter(|k| !k.ends_with(".factor"))
        .map(|k| {
            let u = param_unit(c, k);
            let u = if u.is_empty() {
                element_unit(c, k).to_string()
            } else {
                u
            };
            (k.clone(), u)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn param_units_come_from_elaboration() {
        let e = tankwave_circuit::load_str(
            "t.tank",
            "let a = 2\nlet d = 5\nvoltage v1 x gnd dc=1V\nresistor r1 x gnd 1Ohm\nvary d [1Ohm, 2Ohm]\n",
            &Default::default(),
        )
        .map_err(|e| e.diagnostics)
        .expect("valid stage");
        assert_eq!(param_unit(&e.circuit, "d"), "Ohm");
        assert_eq!(param_unit(&e.circuit, "a"), "");
    }

    #[test]
    fn element_units_by_kind() {
        let e = tankwave_circuit::load_str(
            "t.tank",
            "voltage v1 a gnd dc=1V\nresistor r1 a b 1Ohm\ncapacitor c1 b gnd 1nF\ninductor l1 b gnd 1uH\n",
            &Default::default(),
        )
        .map_err(|e| e.diagnostics)
        .expect("valid stage");
        assert_eq!(element_unit(&e.circuit, "r1"), "Ohm");
        assert_eq!(element_unit(&e.circuit, "c1"), "F");
        assert_eq!(element_unit(&e.circuit, "l1"), "H");
        assert_eq!(element_unit(&e.circuit, "v1"), "");
        assert_eq!(element_unit(&e.circuit, "zz"), "");
    }
}
