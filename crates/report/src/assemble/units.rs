//! Units on the axes of study and tuning plots, read from the stage file:
//! the unit a literal carries once converted to SI, the unit of a `let`
//! parameter (from the literals written for it) and the unit of an
//! element's main value.

use tankwave_circuit::{Circuit, ElementKind};
use tankwave_netlist::ast::{Expr, Stmt, SweepAst};
use tankwave_netlist::units::Unit;
use tankwave_netlist::Parsed;

/// The unit a literal shows on an axis once converted to SI: percent
/// becomes a plain fraction, dBm becomes watts, °C and K become kelvin.
pub fn unit_symbol(u: Unit) -> &'static str {
    match u {
        Unit::Percent => "",
        Unit::Dbm => "W",
        Unit::DegC | Unit::Kelvin => "K",
        other => other.symbol(),
    }
}

/// The unit of a `let` parameter, from the literals written for it: its
/// `tune` range, its `vary` values or its `let` value. `tune` and `vary`
/// state the range a user thinks in, so the first of them that carries a
/// unit wins over `let`; empty when no literal carries a unit.
pub fn param_unit(parsed: &Parsed, name: &str) -> String {
    let unit = |e: &Expr| e.literal_unit().flatten().map(unit_symbol);
    let mut found = None;
    for st in &parsed.statements {
        let u = match &st.stmt {
            Stmt::Tune { param, from, to } if param.name == name => unit(from).or(unit(to)),
            Stmt::Vary { target, sweep } if target.name == name => match sweep {
                SweepAst::List(v) => v.iter().find_map(unit),
                SweepAst::Step { from, to, .. } | SweepAst::Points { from, to, .. } => {
                    unit(from).or(unit(to))
                }
            },
            Stmt::Let { name: n, value } if n.name == name => unit(value),
            _ => None,
        };
        if let Some(u) = u {
            let from_let = matches!(&st.stmt, Stmt::Let { .. });
            if !from_let {
                return u.to_string();
            }
            found.get_or_insert(u);
        }
    }
    found.unwrap_or("").to_string()
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn literals_show_their_si_unit() {
        assert_eq!(unit_symbol(Unit::Percent), "");
        assert_eq!(unit_symbol(Unit::Dbm), "W");
        assert_eq!(unit_symbol(Unit::DegC), "K");
        assert_eq!(unit_symbol(Unit::Kelvin), "K");
        assert_eq!(unit_symbol(Unit::Farad), Unit::Farad.symbol());
    }

    #[test]
    fn tune_and_vary_win_over_let() {
        let p = tankwave_netlist::parse_str(
            "t.tank",
            "let a = 2\nlet c = 1nF\nlet d = 5\nlet e = 5V\ntune a from 1pF to 3\nvary d [1Ohm, 2Ohm]\n",
        );
        assert_eq!(param_unit(&p, "a"), "F");
        assert_eq!(param_unit(&p, "c"), "F");
        assert_eq!(param_unit(&p, "d"), "Ohm");
        assert_eq!(param_unit(&p, "e"), "V");
        assert_eq!(param_unit(&p, "missing"), "");
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
