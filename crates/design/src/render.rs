//! Designs as text for people: aligned tables of each design's figures, its
//! elements (with reactances and, given a power, their stress), its
//! harmonic response, the stage-file fragment to paste and the sources of
//! its formulas, and the table of a verification by AC analysis. Values in
//! the tables are written by the workspace's one SI formatter
//! ([`tankwave_circuit::si`]: a space before the unit, five significant
//! digits); only the stage-file fragment keeps the stage-file spelling
//! (`98.363pF`, [`crate::format_si`]) so that it can be pasted. The
//! functions return strings; the caller decides where they go.

use crate::{
    ChokeDesign, ElementStress, FilterKind, LoadLine, LowpassDesign, MatchDesign, Network, Part,
    Placement, Verification,
};

/// `v` with an SI prefix at five significant digits, by the shared formatter.
fn si(v: f64, unit: &str) -> String {
    tankwave_circuit::si::si_prefixed(v, unit, 5)
}

/// A signed reactance or other signed value with its unit, `+` shown.
fn signed(v: f64, unit: &str) -> String {
    let t = si(v, unit);
    if v > 0.0 {
        format!("+{t}")
    } else {
        t
    }
}

/// Parts of an impedance smaller than this fraction of its magnitude are
/// rounding residue of the chain-matrix arithmetic (double precision carries
/// about 16 digits; a ladder of a few sections loses at most a few), shown as
/// zero rather than as a figure like `j206 aOhm` (common practice).
const RESIDUE: f64 = 1e-9;

/// A complex impedance `R ± jX` in ohms, each part by the shared formatter;
/// a part below [`RESIDUE`] of the magnitude is shown as zero.
fn impedance(z: crate::ComplexValue) -> String {
    let mag = z.re.hypot(z.im);
    let clean = |v: f64| if v.abs() <= RESIDUE * mag { 0.0 } else { v };
    let (re, im) = (clean(z.re), clean(z.im));
    let sign = if im < 0.0 { '-' } else { '+' };
    format!("{} {sign} j{}", si(re, "Ohm"), si(im.abs(), "Ohm"))
}

/// A level in dB with `decimals` decimals.
fn db(v: f64, decimals: usize) -> String {
    tankwave_circuit::si::fixed(v, decimals, "dB")
}

/// Two-column table of (label, value) rows, labels padded to the longest.
fn kv(rows: &[(&str, String)]) -> String {
    let w = rows.iter().map(|r| r.0.chars().count()).max().unwrap_or(0);
    let mut s = String::new();
    for (k, v) in rows {
        s.push_str(&format!("  {k:<w$}  {v}\n"));
    }
    s
}

/// `Sources` and one line per source.
fn sources(list: &[String]) -> String {
    let mut s = String::from("Sources\n");
    for src in list {
        s.push_str(&format!("  - {src}\n"));
    }
    s
}

/// The load line as text.
pub fn loadline_text(ll: &LoadLine) -> String {
    let mut s = String::from("Load line\n");
    s.push_str(&kv(&[
        ("supply Vcc", si(ll.supply_v, "V")),
        ("output power Po", si(ll.power_w, "W")),
        ("saturation Vsat", si(ll.vsat_v, "V")),
        ("swing Vm = Vcc - Vsat", si(ll.swing_v, "V")),
        ("load-line resistance R", si(ll.resistance_ohm, "Ohm")),
        ("peak collector voltage", si(ll.vce_peak_v, "V")),
        (
            "conduction angle",
            tankwave_circuit::si::fixed(ll.conduction_deg, 1, "deg"),
        ),
        (
            "pulse coefficients a0, a1",
            format!("{:.6}, {:.6}", ll.alpha0, ll.alpha1),
        ),
        ("fundamental current (peak)", si(ll.ic_fundamental_a, "A")),
        ("peak collector current", si(ll.ic_peak_a, "A")),
        ("DC collector current", si(ll.ic_dc_a, "A")),
        ("DC input power", si(ll.dc_power_w, "W")),
        (
            "ideal collector efficiency",
            tankwave_circuit::si::percent(ll.efficiency),
        ),
    ]));
    s.push_str(&sources(&ll.sources));
    s
}

/// The elements of a network, source side first, with each element's
/// signed reactance at f0 where `reactances` gives it.
fn network_table(net: &Network, reactances: Option<&[f64]>) -> String {
    let mut s = String::new();
    s.push_str(&format!(
        "  {:<10} {:<9} {:<7} {:<10} {:<10} {:>12}\n",
        "element", "part", "place", "from", "to", "value"
    ));
    for (i, e) in net.elements.iter().enumerate() {
        let (part, unit) = match e.part {
            Part::Inductor => ("inductor", "H"),
            Part::Capacitor => ("capacitor", "F"),
        };
        let place = match e.placement {
            Placement::Series => "series",
            Placement::Shunt => "shunt",
        };
        let x = reactances
            .and_then(|r| r.get(i))
            .map(|x| format!("   X = {}", signed(*x, "Ohm")))
            .unwrap_or_default();
        s.push_str(&format!(
            "  {:<10} {:<9} {:<7} {:<10} {:<10} {:>12}{x}\n",
            e.name,
            part,
            place,
            e.node_a,
            e.node_b,
            si(e.value, unit)
        ));
    }
    s
}

/// Element stress at `power` into the load at `freq`; empty without a power.
fn stress_table(stress: &[ElementStress], power: Option<f64>, freq: f64) -> String {
    let Some(p) = power else {
        return String::new();
    };
    let mut s = format!(
        "Element stress at {} into the load, {} (fundamental only; rate parts with margin)\n  {:<10} {:>12} {:>12} {:>12}\n",
        si(p, "W"),
        si(freq, "Hz"),
        "element",
        "V peak",
        "I rms",
        "reactive"
    );
    for e in stress {
        s.push_str(&format!(
            "  {:<10} {:>12} {:>12} {:>12}\n",
            e.name,
            si(e.v_peak, "V"),
            si(e.i_rms, "A"),
            si(e.reactive_power_var, "var")
        ));
    }
    s
}

/// The verification by AC analysis as text: pass or fail, the input
/// impedance at f0 against the design's, and the response at each harmonic.
pub fn verification_text(v: &Verification) -> String {
    let mut s = format!(
        "Verification by tankwave AC analysis: {}\n",
        if v.passed { "PASS" } else { "FAIL" }
    );
    s.push_str(&format!(
        "  Zin at f0: {} (expected {}; relative error {}, limit {})\n",
        impedance(v.zin_measured),
        impedance(v.zin_expected),
        tankwave_circuit::si::si_prefixed(v.zin_error, "", 3),
        tankwave_circuit::si::si_prefixed(v.params.zin_tolerance, "", 2)
    ));
    s.push_str(&format!(
        "  {:>8} {:>12} {:>14} {:>14} {:>12}\n",
        "harmonic", "freq", "predicted", "measured", "difference"
    ));
    for p in &v.points {
        s.push_str(&format!(
            "  {:>8} {:>12} {:>14} {:>14} {:>12}\n",
            p.harmonic,
            si(p.freq, "Hz"),
            db(p.predicted_db, 4),
            db(p.measured_db, 4),
            format!("{} dB", tankwave_circuit::si::si_prefixed(p.diff_db, "", 2))
        ));
    }
    s
}

/// A matching network as text. `power` is the power into the load the
/// design was asked for (it adds the element stress table).
pub fn match_text(d: &MatchDesign, power: Option<f64>) -> String {
    let mut s = format!(
        "{} match: {} -> {} at {}\n",
        d.shape,
        si(d.r_from, "Ohm"),
        si(d.r_to, "Ohm"),
        si(d.freq, "Hz")
    );
    let qs: Vec<String> = d.section_q.iter().map(|q| format!("{q:.4}")).collect();
    let mut rows = vec![
        ("loaded Q", format!("{:.4}", d.q)),
        ("Q convention", d.q_convention.clone()),
        ("section Qs (source side first)", qs.join(", ")),
    ];
    if let Some(rv) = d.r_virtual {
        rows.push(("virtual resistance Rv", si(rv, "Ohm")));
    }
    if let Some(ab) = d.absorbed {
        rows.push((
            "absorbed output capacitance",
            format!(
                "{} of {} (fit {} externally)",
                si(ab.cout_f, "F"),
                si(ab.required_f, "F"),
                si(ab.external_f, "F")
            ),
        ));
    }
    rows.push(("Zin at f0 (chain matrix)", impedance(d.input_impedance)));
    s.push_str(&kv(&rows));
    s.push_str("Elements (source side first)\n");
    s.push_str(&network_table(&d.network, Some(&d.reactances_ohm)));
    s.push_str(&stress_table(&d.stress, power, d.freq));
    s.push_str("Transducer gain R1 -> R2 (chain matrix)\n");
    for h in &d.harmonics {
        s.push_str(&format!(
            "  harmonic {:>2}  {:>12}  {:>12}\n",
            h.harmonic,
            si(h.freq, "Hz"),
            db(h.gain_db, 3)
        ));
    }
    s.push_str("Stage-file fragment\n");
    s.push_str(&d.fragment);
    s.push_str(&sources(&d.sources));
    s
}

/// A low-pass ladder as text. `power` is the power into the load at the
/// fundamental the design was asked for (it adds the element stress table).
pub fn lowpass_text(d: &LowpassDesign, power: Option<f64>) -> String {
    let kind_text = match d.kind {
        FilterKind::Butterworth => "Butterworth".to_string(),
        FilterKind::Chebyshev { ripple_db } => {
            format!(
                "Chebyshev, {} dB ripple",
                tankwave_circuit::si::si_prefixed(ripple_db, "", 3)
            )
        }
    };
    let mut s = format!(
        "{kind_text} low-pass, order {}, cutoff {}\n",
        d.order,
        si(d.cutoff, "Hz")
    );
    let g: Vec<String> = d.prototype.g.iter().map(|g| format!("{g:.6}")).collect();
    s.push_str(&kv(&[
        ("prototype g1..gn", g.join(" ")),
        ("g(n+1)", format!("{:.6}", d.prototype.g_load)),
        ("source resistance", si(d.impedance, "Ohm")),
        ("load resistance", si(d.load_resistance, "Ohm")),
    ]));
    if (d.load_resistance - d.impedance).abs() > 1e-9 * d.impedance {
        s.push_str("  note: an even-order Chebyshev ladder needs the unequal load above\n");
    }
    s.push_str("Elements (source side first)\n");
    s.push_str(&network_table(&d.network, None));
    s.push_str(&stress_table(&d.stress, power, d.fundamental));
    s.push_str(&format!(
        "Attenuation at harmonics of {}\n  {:>8} {:>12} {:>8} {:>12} {:>12}\n",
        si(d.fundamental, "Hz"),
        "harmonic",
        "freq",
        "f/fc",
        "formula",
        "ladder"
    ));
    for h in &d.attenuation {
        s.push_str(&format!(
            "  {:>8} {:>12} {:>8.4} {:>12} {:>12}\n",
            h.harmonic,
            si(h.freq, "Hz"),
            h.omega,
            db(h.formula_db, 4),
            db(h.network_db, 4)
        ));
    }
    s.push_str("Stage-file fragment\n");
    s.push_str(&d.fragment);
    s.push_str(&sources(&d.sources));
    s
}

/// A feed choke and blocking capacitor as text, with the design's warnings.
pub fn choke_text(d: &ChokeDesign) -> String {
    let mut s = format!(
        "Feed choke and blocking capacitor at {} for {}\n",
        si(d.freq, "Hz"),
        si(d.load_ohm, "Ohm")
    );
    s.push_str(&kv(&[
        (
            "choke inductance (min)",
            format!(
                "{}  (X_L = {})",
                si(d.inductance_min_h, "H"),
                si(d.choke_reactance_ohm, "Ohm")
            ),
        ),
        (
            "blocking capacitance (min)",
            format!(
                "{}  (X_C = {})",
                si(d.capacitance_min_f, "F"),
                si(d.blocking_reactance_ohm, "Ohm")
            ),
        ),
        ("assumed self-capacitance", si(d.self_capacitance_f, "F")),
        (
            "SRF estimate",
            d.srf_estimate_hz
                .map(|f| si(f, "Hz"))
                .unwrap_or_else(|| "none (no self-capacitance assumed)".into()),
        ),
        (
            "X_L at f with self-C (estimate)",
            si(d.choke_reactance_with_self_c_ohm, "Ohm"),
        ),
    ]));
    s.push_str("Warnings\n");
    for w in &d.warnings {
        s.push_str(&format!("  - {w}\n"));
    }
    s.push_str(&sources(&d.sources));
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rounding_residue_of_an_impedance_shows_as_zero() {
        let z = |re, im| crate::ComplexValue { re, im };
        // 2e-16 Ohm beside 2.9 Ohm is below the residue: zero.
        assert_eq!(impedance(z(2.9, 2.06e-16)), "2.9000 Ohm + j0 Ohm");
        // a real reactance of 1 mOhm beside 2.9 Ohm is kept.
        assert!(
            impedance(z(2.9, -1e-3)).contains("- j1.0000 mOhm"),
            "{}",
            impedance(z(2.9, -1e-3))
        );
    }

    #[test]
    fn key_value_rows_align_on_the_longest_label() {
        let t = kv(&[("a", "1".into()), ("longer", "2".into())]);
        assert_eq!(t, "  a       1\n  longer  2\n");
    }

    #[test]
    fn stress_table_only_with_a_power() {
        let e = ElementStress {
            name: "lm1".into(),
            v_peak: 12.0,
            i_rms: 0.5,
            reactive_power_var: 3.4,
        };
        assert_eq!(stress_table(std::slice::from_ref(&e), None, 7.1e6), "");
        let t = stress_table(&[e], Some(25.0), 7.1e6);
        assert!(
            t.starts_with("Element stress at 25.000 W into the load, 7.1000 MHz"),
            "{t}"
        );
        assert!(
            t.contains("lm1") && t.contains("12.000 V") && t.contains("500.00 mA"),
            "{t}"
        );
        assert!(t.contains("3.4000 var"), "{t}");
    }

    /// The load-line example of docs/design.md (12.5 V, 25 W, Vsat 1 V,
    /// class B): R = (Vcc - Vsat)^2 / (2 Po) = 2.645 ohm (the load-line
    /// formula of any RF power amplifier text; common practice).
    #[test]
    fn load_line_text_shows_the_resistance() {
        let ll = crate::load_line(12.5, 25.0, 1.0, &crate::LoadLineParams::default())
            .expect("valid example");
        let t = loadline_text(&ll);
        assert!(t.starts_with("Load line\n"), "{t}");
        let line = t
            .lines()
            .find(|l| l.starts_with("  load-line resistance R "))
            .expect("a resistance row");
        assert!(line.ends_with(" 2.6450 Ohm"), "{line}");
        assert!(t.contains("Sources\n  - "), "{t}");
    }
}
