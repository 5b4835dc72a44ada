//! Property tests: the plot functions never panic, whatever numbers they are
//! given (NaN, infinities, huge or tiny values, empty input); they return
//! either a well-formed SVG or a typed error.

use proptest::prelude::*;
use tankwave_report::plot::{self, Curve, HistogramSpec, Limit, PlotParams, Surface, SweepCurves};

fn any_value() -> impl Strategy<Value = f64> {
    prop_oneof![
        4 => -1e3f64..1e3,
        1 => prop::num::f64::ANY,
        1 => Just(0.0),
        1 => Just(f64::MAX),
        1 => Just(-f64::MAX),
        1 => Just(f64::MIN_POSITIVE),
        1 => Just(1e-300),
    ]
}

fn well_formed_or_error(r: Result<String, plot::PlotError>) -> Result<(), TestCaseError> {
    if let Ok(svg) = r {
        prop_assert!(
            roxmltree::Document::parse(&svg).is_ok(),
            "SVG does not parse"
        );
        prop_assert!(!svg.contains("NaN"), "SVG holds NaN");
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]

    #[test]
    fn histogram_never_panics(values in prop::collection::vec(any_value(), 0..40), limit in any_value(), bins in prop::option::of(0usize..80)) {
        let spec = HistogramSpec {
            title: "t".into(),
            name: "x".into(),
            unit: "W".into(),
            limit: Some(Limit { value: limit, label: "x >= l".into(), pass_above: true }),
            bins,
        };
        well_formed_or_error(plot::histogram_plot(&values, &spec, &PlotParams::default()))?;
    }

    #[test]
    fn sweep_never_panics(
        xs in prop::collection::vec(any_value(), 0..12),
        ys in prop::collection::vec(any_value(), 0..12),
        limit in any_value(),
    ) {
        let s = SweepCurves {
            title: "t".into(),
            x_name: "x".into(),
            x_unit: "F".into(),
            y_name: "y".into(),
            y_unit: "".into(),
            curves: vec![Curve { label: "a".into(), x: xs, y: ys }],
            limit: Some((limit, "l".into())),
        };
        well_formed_or_error(plot::sweep_plot(&s, &PlotParams::default()))?;
    }

    #[test]
    fn startup_never_panics(v in prop::collection::vec(any_value(), 0..60), f in any_value(), step in any_value()) {
        let time: Vec<f64> = (0..v.len()).map(|k| k as f64 * step).collect();
        well_formed_or_error(plot::startup_plot_series(&time, &v, f, "v", &PlotParams::default()))?;
    }

    #[test]
    fn surface_never_panics(z in prop::collection::vec(any_value(), 0..12), x0 in any_value(), dx in any_value(), opt in any_value()) {
        let xs: Vec<f64> = (0..4).map(|k| x0 + k as f64 * dx).collect();
        let ys = vec![1.0, 2.0, 3.0];
        let values: Vec<Vec<f64>> = z.chunks(4).map(|c| c.to_vec()).collect();
        let s = Surface {
            title: "t".into(),
            x_name: "a".into(),
            x_unit: "H".into(),
            y_name: "b".into(),
            y_unit: "".into(),
            z_name: "c".into(),
            z_unit: "".into(),
            xs,
            ys,
            values,
            optimum: Some((opt, 2.0)),
        };
        well_formed_or_error(plot::surface_plot(&s, &PlotParams::default()))?;
    }

    #[test]
    fn tuning_curve_never_panics(xs in prop::collection::vec(any_value(), 0..10), opt in any_value()) {
        let ys: Vec<f64> = xs.iter().map(|x| x * 0.5).collect();
        well_formed_or_error(plot::tuning_curve_plot("t", "x", "F", "y", "", &xs, &ys, Some(opt), &PlotParams::default()))?;
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]

    #[test]
    fn spectrum_never_panics(levels in prop::collection::vec(any_value(), 0..12), allowed in prop::collection::vec(prop::option::of(any_value()), 0..12)) {
        use tankwave_measure::{HarmonicPower, HarmonicRow, MaskEvaluation};
        let h: Vec<HarmonicPower> = levels
            .iter()
            .enumerate()
            .map(|(k, d)| HarmonicPower {
                resolved: true,
                n: k + 1,
                freq_hz: (k + 1) as f64 * 7e6,
                power_w: 1.0,
                dbm: 30.0,
                dbc: Some(*d),
                voltage_v: 1.0,
                current_a: 1.0,
            })
            .collect();
        let rows: Vec<HarmonicRow> = allowed
            .iter()
            .enumerate()
            .map(|(k, a)| HarmonicRow {
                resolved: true,
                n: k + 2,
                freq_hz: (k + 2) as f64 * 7e6,
                power_w: 0.0,
                measured_dbc: Some(levels.get(k + 1).copied().unwrap_or(-50.0)),
                floor_dbc: None,
                judged_dbc: levels.get(k + 1).copied().unwrap_or(-50.0),
                allowed_dbc: *a,
                margin_db: a.map(|a| a - levels.get(k + 1).copied().unwrap_or(-50.0)),
                pass: false,
            })
            .collect();
        let m = MaskEvaluation {
            mask: "m".into(),
            f0_hz: 7e6,
            carrier_w: 1.0,
            worst: if rows.is_empty() { None } else { Some(0) },
            pass: false,
            rows,
        };
        well_formed_or_error(plot::spectrum_plot(&h, Some(&m), &PlotParams::default()))?;
    }
}
