//! The unit each `let` parameter is shown in, read once from the stage file
//! during elaboration so that later layers (study plots, tuning tables)
//! never have to go back to the syntax tree.
//!
//! A parameter's unit comes from the literals written for it: its `tune`
//! range, its `vary` values or its `let` value. `tune` and `vary` state the
//! range a user thinks in, so the first of them that carries a unit wins
//! over `let`; a parameter with no unit-bearing literal is absent from the
//! table (shown as a bare number); a percent literal gives the empty symbol
//! (a plain fraction).

use std::collections::BTreeMap;
use tankwave_netlist::ast::{Expr, Stmt, SweepAst};
use tankwave_netlist::units::Unit;
use tankwave_netlist::Parsed;

/// The unit a literal shows once converted to SI: percent becomes a plain
/// fraction (empty symbol), dBm becomes watts, °C and K become kelvin.
pub fn si_symbol(u: Unit) -> &'static str {
    match u {
        Unit::Percent => "",
        Unit::Dbm => "W",
        Unit::DegC | Unit::Kelvin => "K",
        other => other.symbol(),
    }
}

/// Unit symbol of every parameter that has one, by the rule in the module
/// overview.
pub(crate) fn collect(parsed: &Parsed) -> BTreeMap<String, String> {
    let unit = |e: &Expr| e.literal_unit().flatten().map(si_symbol);
    let mut from_let: BTreeMap<String, &'static str> = BTreeMap::new();
    let mut from_range: BTreeMap<String, &'static str> = BTreeMap::new();
    for st in &parsed.statements {
        let (name, u, is_let) = match &st.stmt {
            Stmt::Tune { param, from, to } => (&param.name, unit(from).or(unit(to)), false),
            Stmt::Vary { target, sweep } => {
                let u = match sweep {
                    SweepAst::List(v) => v.iter().find_map(unit),
                    SweepAst::Step { from, to, .. } | SweepAst::Points { from, to, .. } => {
                        unit(from).or(unit(to))
                    }
                };
                (&target.name, u, false)
            }
            Stmt::Let { name, value } => (&name.name, unit(value), true),
            _ => continue,
        };
        if let Some(u) = u {
            let table = if is_let {
                &mut from_let
            } else {
                &mut from_range
            };
            table.entry(name.clone()).or_insert(u);
        }
    }
    let mut out: BTreeMap<String, String> = from_let
        .into_iter()
        .map(|(k, v)| (k, v.to_string()))
        .collect();
    for (k, v) in from_range {
        out.insert(k, v.to_string());
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn literals_show_their_si_unit() {
        assert_eq!(si_symbol(Unit::Percent), "");
        assert_eq!(si_symbol(Unit::Dbm), "W");
        assert_eq!(si_symbol(Unit::DegC), "K");
        assert_eq!(si_symbol(Unit::Kelvin), "K");
        assert_eq!(si_symbol(Unit::Farad), Unit::Farad.symbol());
    }

    #[test]
    fn tune_and_vary_win_over_let() {
        let p = tankwave_netlist::parse_str(
            "t.tank",
            "let a = 2\nlet c = 1nF\nlet d = 5\nlet e = 5V\ntune a from 1pF to 3\nvary d [1Ohm, 2Ohm]\n",
        );
        let u = collect(&p);
        assert_eq!(u.get("a").map(String::as_str), Some("F"));
        assert_eq!(u.get("c").map(String::as_str), Some("F"));
        assert_eq!(u.get("d").map(String::as_str), Some("Ohm"));
        assert_eq!(u.get("e").map(String::as_str), Some("V"));
        assert_eq!(u.get("missing"), None);
    }
}
