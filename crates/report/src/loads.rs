//! The collector load figures ([`tankwave_measure::load`]) as a terminal
//! table, JSON and an HTML table: per transistor and harmonic, the
//! collector's voltage and current amplitudes and the impedance
//! `−V_ce,n / I_c,n` the collector sees, or why it is not resolved.

use serde_json::Value;
use tankwave_measure::CollectorLoad;

use crate::format::{impedance, si};
use crate::table::{Align, Table};

/// Column headings of the collector load table (terminal and HTML).
pub const HEADER: [&str; 6] = [
    "transistor",
    "n",
    "frequency",
    "vce amplitude",
    "ic amplitude",
    "load seen by the collector",
];

/// One row of cells per transistor and harmonic, in the order of [`HEADER`].
pub fn rows(loads: &[CollectorLoad]) -> Vec<[String; 6]> {
    let mut out = Vec::new();
    for l in loads {
        for h in &l.harmonics {
            out.push([
                l.element.clone(),
                h.n.to_string(),
                si(h.freq_hz, "Hz"),
                si(h.vce_v, "V"),
                si(h.ic_a, "A"),
                match h.z {
                    Some(z) => impedance(z.re, z.im),
                    None => format!("not resolved (ic below {})", si(l.floor_a, "A")),
                },
            ]);
        }
    }
    out
}

/// The terminal section: a heading and the table, or nothing without
/// transistors.
pub fn loads_text(loads: &[CollectorLoad]) -> String {
    if loads.is_empty() {
        return String::new();
    }
    let mut t = Table::new(vec![
        (HEADER[0], Align::Left),
        (HEADER[1], Align::Right),
        (HEADER[2], Align::Right),
        (HEADER[3], Align::Right),
        (HEADER[4], Align::Right),
        (HEADER[5], Align::Right),
    ]);
    for r in rows(loads) {
        t.row(r.to_vec());
    }
    format!(
        "Collector load (Z = -Vce/Ic at each harmonic: the network seen from the collector)\n{}",
        t.render()
    )
}

/// The JSON of the collector loads (docs/output.md).
pub fn loads_json(loads: &[CollectorLoad]) -> Value {
    serde_json::to_value(loads).unwrap_or(Value::Null)
}

#[cfg(test)]
mod tests {
    use super::*;
    use tankwave_measure::{HarmonicLoad, Impedance};

    #[test]
    fn resolved_and_unresolved_rows() {
        let l = CollectorLoad {
            element: "q1".into(),
            element_id: tankwave_circuit::ElementId::new(3),
            floor_a: 1e-4,
            harmonics: vec![
                HarmonicLoad {
                    n: 1,
                    freq_hz: 13.56e6,
                    vce_v: 12.0,
                    ic_a: 3.0,
                    z: Some(Impedance { re: 4.0, im: -0.28 }),
                    unresolved: None,
                },
                HarmonicLoad {
                    n: 2,
                    freq_hz: 27.12e6,
                    vce_v: 1e-9,
                    ic_a: 1e-8,
                    z: None,
                    unresolved: Some("below".into()),
                },
            ],
        };
        let r = rows(std::slice::from_ref(&l));
        assert_eq!(r[0][5], "4.00 Ohm - j280 mOhm");
        assert_eq!(r[1][5], "not resolved (ic below 100 µA)");
        let t = loads_text(std::slice::from_ref(&l));
        assert!(t.contains("13.6 MHz") && t.contains("not resolved"));
        let j = loads_json(&[l]);
        assert_eq!(j[0]["harmonics"][1]["z"], Value::Null);
        assert_eq!(j[0]["harmonics"][0]["z"]["re"], 4.0);
        assert!(loads_text(&[]).is_empty());
    }
}
