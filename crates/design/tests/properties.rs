//! Properties over many inputs: no panic and no NaN on any input, and the
//! defining property of each synthesis (a matching network presents R1 at f0
//! with R2 attached, with no loss at f0: lossless L-section algebra, common
//! practice; a ladder's chain-matrix loss equals the prototype LA formula,
//! Matthaei, Young, Jones 1964 §4.05). Tolerances cover double-precision
//! rounding through a chain of up to 20 sections.

use proptest::prelude::*;
use tankwave_design::*;

fn any_f64() -> impl Strategy<Value = f64> {
    prop_oneof![
        any::<f64>(),
        Just(f64::NAN),
        Just(f64::INFINITY),
        Just(0.0),
        Just(-1.0),
        1e-3..1e3f64,
    ]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    /// Any input: an error or a finite result, never a panic.
    #[test]
    fn never_panics(a in any_f64(), b in any_f64(), c in any_f64(), d in any_f64(), n in 0usize..30) {
        if let Ok(ll) = load_line(a, b, c, &LoadLineParams { conduction_deg: d }) {
            prop_assert!(ll.resistance_ohm.is_finite() && ll.ic_peak_a.is_finite() && ll.efficiency.is_finite());
        }
        for shape in [MatchShape::L, MatchShape::Pi { q: d }, MatchShape::T { q: d }] {
            let p = MatchParams { absorb_cout: Some(c.abs() * 1e-12), ..MatchParams::default() };
            if let Ok(m) = design_match(a, b, c, shape, &p) {
                prop_assert!(m.input_impedance.re.is_finite());
                prop_assert!(m.network.elements.iter().all(|e| e.value.is_finite() && e.value > 0.0));
            }
        }
        for kind in [FilterKind::Butterworth, FilterKind::Chebyshev { ripple_db: d }] {
            if let Ok(f) = design_lowpass(kind, n, a, b, &LowpassParams::default()) {
                prop_assert!(f.attenuation.iter().all(|x| x.formula_db.is_finite() && x.network_db.is_finite()));
            }
        }
        if let Ok(ch) = design_choke(a, b, &ChokeParams::default()) {
            prop_assert!(ch.inductance_min_h.is_finite() && ch.capacitance_min_f.is_finite());
        }
    }

    /// Every matching shape presents R1 + j0 at f0 and passes all power there.
    #[test]
    fn matches_present_r1(r1 in 0.5..500.0f64, r2 in 0.5..500.0f64, f in 1.8e6..30e6f64, extra in 0.01..20.0f64) {
        prop_assume!((r1 / r2 - 1.0).abs() > 1e-3);
        let qmin = (r1.max(r2) / r1.min(r2) - 1.0).sqrt();
        for shape in [MatchShape::L, MatchShape::Pi { q: qmin + extra }, MatchShape::T { q: qmin + extra }] {
            let m = design_match(r1, r2, f, shape, &MatchParams::default()).unwrap();
            prop_assert!((m.input_impedance.re - r1).abs() < 1e-9 * r1, "{:?}", m.input_impedance);
            prop_assert!(m.input_impedance.im.abs() < 1e-9 * r1);
            prop_assert!(m.harmonics[0].gain_db.abs() < 1e-9);
            prop_assert!(m.harmonics.iter().all(|h| h.gain_db <= 1e-9));
        }
    }

    /// Ladder loss equals the prototype formula at any frequency.
    #[test]
    fn ladders_follow_formula(n in 2usize..12, ripple in 0.01..3.0f64, omega in 0.05..6.0f64, series in any::<bool>(), cheb in any::<bool>()) {
        let kind = if cheb { FilterKind::Chebyshev { ripple_db: ripple } } else { FilterKind::Butterworth };
        let p = LowpassParams {
            first: if series { FirstElement::Series } else { FirstElement::Shunt },
            fundamental: Some(omega * 10e6),
            harmonics: 1,
            ..LowpassParams::default()
        };
        let d = design_lowpass(kind, n, 10e6, 50.0, &p).unwrap();
        let a = &d.attenuation[0];
        prop_assert!((a.formula_db - a.network_db).abs() < 1e-6 + 1e-9 * a.formula_db, "{:?}", a);
    }
}
