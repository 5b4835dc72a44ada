//! The study-record layout of one solved variant: the measured
//! [`Metrics`] flattened into `name → value` with the unit in the name's
//! suffix (`pout_w`, `h3_dbc`, `q1.tj_degc`), the requirement verdicts as
//! record verdicts, and the three figures a tuning goal reads.

use std::collections::BTreeMap;

use tankwave_measure::{Metrics, Verdict};
use tankwave_study::TuneFigures;

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
pub const UNMEASURED_MARGIN: f64 = -1e300;

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

#[cfg(test)]
mod tests {
    use super::*;

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
