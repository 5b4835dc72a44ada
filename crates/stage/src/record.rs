//! The study-record layout of one solved variant: the measured
//! [`Metrics`] flattened into `record key → value` (the keys, with the unit
//! in their suffix — `pout_w`, `h3_dbc`, `q1.tj_degc` — come from the
//! figure catalogue, `tankwave_measure::figure`), the requirement verdicts
//! as record verdicts, and the three figures a tuning goal reads.

use std::collections::BTreeMap;

use tankwave_measure::{Metrics, Verdict};
use tankwave_study::TuneFigures;

/// Flatten `m` into the recorded figures of the catalogue (units in the
/// keys). Figures that are absent or not finite are left out; harmonics 2
/// to 5 are kept in dBc, temperatures in degC.
pub fn record_metrics(m: &Metrics) -> BTreeMap<String, f64> {
    tankwave_measure::figure::recorded(m).into_iter().collect()
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
    use tankwave_measure::figure::{stage_value, Figure};
    TuneFigures {
        pout: stage_value(Figure::Pout, m),
        efficiency: stage_value(Figure::Efficiency, m),
        input_vswr: stage_value(Figure::InputVswr, m),
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
            mask: None,
            value: None,
            margin,
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
