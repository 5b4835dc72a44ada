//! The time-domain models of measured networks, as text and JSON: for each
//! `measured` element that elaboration fitted (the file has a transient,
//! shooting or settle), its poles, its fit error over the file's band, what
//! passivity enforcement cost and its value at 0 Hz against the element's
//! out-of-band rule (docs/analyses.md, "The fitted rational model").

use serde_json::{json, Value};
use tankwave_circuit::rational::Fitted;
use tankwave_circuit::si::{percent, si_prefixed};
use tankwave_circuit::touchstone::Form;
use tankwave_circuit::{Circuit, ElementKind};

/// Every fitted measured network of `c`: (element name, band in Hz, the
/// matrix it is held as, fit).
fn fits(c: &Circuit) -> Vec<(&str, (f64, f64), Form, &Fitted)> {
    c.elements
        .iter()
        .filter_map(|e| match &e.kind {
            ElementKind::Measured { network, .. } => network
                .fit
                .as_deref()
                .map(|f| (e.name.as_str(), network.band(), network.form(), f)),
            _ => None,
        })
        .collect()
}

/// Said before a fit in impedance form (the admittance form is the usual
/// one and says nothing).
fn held_as(form: Form) -> &'static str {
    match form {
        Form::Admittance => "",
        Form::Impedance => "impedance ",
    }
}

fn poles_text(f: &Fitted, form: Form) -> String {
    let n = f.model.order();
    let term = f.model.e.iter().any(|v| *v != 0.0);
    let term_name = match form {
        Form::Admittance => " and a capacitance term",
        Form::Impedance => " and an inductance term",
    };
    format!(
        "{n} pole{}{}",
        if n == 1 { "" } else { "s" },
        if term { term_name } else { "" }
    )
}

/// One paragraph per fitted measured network; empty without any.
pub fn fits_text(c: &Circuit) -> String {
    let all = fits(c);
    if all.is_empty() {
        return String::new();
    }
    let mut s = String::from("Measured networks in the time domain (fitted rational models)\n");
    for (name, (lo, hi), form, f) in all {
        s.push_str(&format!(
            "{name}: {}fitted with {}, worst error {} at {} over the file's band {} to {} (RMS {})\n",
            held_as(form),
            poles_text(f, form),
            percent(f.info.worst_error),
            si_prefixed(f.info.worst_at, "Hz", 3),
            si_prefixed(lo, "Hz", 3),
            si_prefixed(hi, "Hz", 3),
            percent(f.info.rms_error),
        ));
        if f.passivity.passes == 0 {
            s.push_str("  passive as fitted\n");
        } else {
            s.push_str(&format!(
                "  made passive in {} correction pass{} (worst error before {})\n",
                f.passivity.passes,
                if f.passivity.passes == 1 { "" } else { "es" },
                percent(f.passivity.error_before),
            ));
        }
        s.push_str(&format!(
            "  at 0 Hz: {} against the out-of-band rule's {} (off by {} of the band's largest {})\n",
            si_prefixed(f.dc[0], form.unit(), 3),
            si_prefixed(f.dc_rule[0], form.unit(), 3),
            percent(f.dc_error),
            form.word(),
        ));
    }
    s.push_str("  (harmonic balance and AC use the file itself)\n");
    s
}

/// The fits as a section of the HTML report (the text's figures as a
/// table); `None` without any.
pub fn fits_section(c: &Circuit) -> Option<crate::html::StudySection> {
    let all = fits(c);
    if all.is_empty() {
        return None;
    }
    let rows = all
        .iter()
        .map(|(name, (lo, hi), form, f)| {
            vec![
                name.to_string(),
                format!("{}{}", held_as(*form), poles_text(f, *form)),
                format!(
                    "{} to {}",
                    si_prefixed(*lo, "Hz", 3),
                    si_prefixed(*hi, "Hz", 3)
                ),
                format!(
                    "{} at {}",
                    percent(f.info.worst_error),
                    si_prefixed(f.info.worst_at, "Hz", 3)
                ),
                percent(f.info.rms_error),
                if f.passivity.passes == 0 {
                    "passive as fitted".to_string()
                } else {
                    format!(
                        "{} pass(es), worst error before {}",
                        f.passivity.passes,
                        percent(f.passivity.error_before)
                    )
                },
                format!(
                    "{} against {}",
                    si_prefixed(f.dc[0], form.unit(), 3),
                    si_prefixed(f.dc_rule[0], form.unit(), 3)
                ),
            ]
        })
        .collect();
    Some(crate::html::StudySection {
        title: "Measured networks in the time domain".into(),
        lines: vec![(
            "use".into(),
            "transient, shooting and settle use the fitted rational model; harmonic balance and \
             AC use the file itself"
                .into(),
        )],
        table: Some(crate::html::PlainTable {
            header: [
                "element",
                "model",
                "file's band",
                "worst error",
                "RMS error",
                "passivity",
                "at 0 Hz (rule)",
            ]
            .iter()
            .map(|h| h.to_string())
            .collect(),
            rows,
        }),
        figures: Vec::new(),
    })
}

/// The fits as JSON (`measured_fits`, docs/output.md); `None` without any.
pub fn fits_json(c: &Circuit) -> Option<Value> {
    let all = fits(c);
    if all.is_empty() {
        return None;
    }
    Some(
        all.iter()
            .map(|(name, (lo, hi), form, f)| {
                let mut v = json!({
                    "element": name,
                    "poles": f.model.order(),
                    "capacitance_term": f.model.e.iter().any(|v| *v != 0.0),
                    "band_hz": [lo, hi],
                    "worst_error": f.info.worst_error,
                    "worst_at_hz": f.info.worst_at,
                    "rms_error": f.info.rms_error,
                    "passivity_passes": f.passivity.passes,
                    "worst_error_before_passivity": f.passivity.error_before,
                    "dc_error": f.dc_error,
                });
                // the DC values under a key that carries their unit
                let (dc, rule) = match form {
                    Form::Admittance => ("dc_s", "dc_rule_s"),
                    Form::Impedance => ("dc_ohm", "dc_rule_ohm"),
                };
                v[dc] = json!(f.dc);
                v[rule] = json!(f.dc_rule);
                v
            })
            .collect(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use tankwave_circuit::{load_str, Overrides};

    fn circuit(analysis: &str) -> Circuit {
        let dir = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/../../tests/reference/touchstone"
        );
        let text = format!(
            "voltage vs in gnd wave=sine(amp=1V, freq=2MHz) internal=50Ohm\n\
             measured ant in gnd \"rlc1g_ri_v1.s1p\" outside_r=20Ohm\ninput vs\n{analysis}"
        );
        load_str(&format!("{dir}/check.tank"), &text, &Overrides::default())
            .unwrap_or_else(|e| panic!("{:?}", e.diagnostics))
            .circuit
    }

    #[test]
    fn a_fitted_network_is_reported_in_text_and_json() {
        let c = circuit("analyze transient stop=1us step=10ns\n");
        let t = fits_text(&c);
        assert!(t.contains("ant: fitted with"), "{t}");
        assert!(
            t.contains("over the file's band 250 kHz to 60.0 MHz"),
            "{t}"
        );
        let j = fits_json(&c).unwrap();
        assert_eq!(j[0]["element"], "ant");
        // the file's network is rational (R–L ∥ C): the fit is exact to rounding
        assert!(j[0]["worst_error"].as_f64().unwrap() < 1e-9);
        // its DC rule is the network's own DC conductance, 1/20 S
        assert!((j[0]["dc_rule_s"][0].as_f64().unwrap() - 0.05).abs() < 1e-15);
    }

    #[test]
    fn a_fit_in_impedance_form_is_reported_in_ohms() {
        // outside=short holds the network as Z: its DC values are ohms
        // under keys that say so, the short's 0 Ω the rule.
        let dir = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/../../tests/reference/touchstone"
        );
        let text = "voltage vs in gnd wave=sine(amp=1V, freq=2MHz) internal=50Ohm\n\
             measured ant in gnd \"tank1_ri_v1.s1p\" outside=short\ninput vs\n\
             analyze transient stop=1us step=10ns\n";
        let c = load_str(&format!("{dir}/check.tank"), text, &Overrides::default())
            .unwrap_or_else(|e| panic!("{:?}", e.diagnostics))
            .circuit;
        let t = fits_text(&c);
        assert!(t.contains("ant: impedance fitted with 2 poles"), "{t}");
        assert!(t.contains("the out-of-band rule's 0 Ohm"), "{t}");
        let j = fits_json(&c).unwrap();
        assert_eq!(j[0]["dc_rule_ohm"][0].as_f64(), Some(0.0));
        assert!(j[0]["dc_s"].is_null());
    }

    #[test]
    fn nothing_without_a_time_domain_analysis() {
        let c = circuit("analyze steady freq=2MHz harmonics=8 method=balance\n");
        assert!(fits_text(&c).is_empty() && fits_json(&c).is_none());
    }
}
