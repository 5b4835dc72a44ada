//! Tuning against analytic objectives.

use std::collections::BTreeMap;

use tankwave_circuit::Tune;
use tankwave_study::*;

const F: f64 = 7.1e6;
const L: f64 = 1.0e-6;
const R: f64 = 1000.0;

/// Power into a parallel R‖L‖C tank fed by a 1 A peak current source:
/// P = |I·Z|²/(2R), Z = 1/(1/R + j(ωC − 1/(ωL))). Its maximum is at
/// resonance, C₀ = 1/(ω²L) (Thomson's formula; any circuits text).
fn tank(point: &BTreeMap<String, f64>, ctx: &TuneContext) -> Result<TuneFigures, String> {
    let c = *point.get("ctun").ok_or("no ctun")?;
    let w = 2.0 * std::f64::consts::PI * F;
    let b = w * c - 1.0 / (w * L);
    let z2 = 1.0 / (1.0 / (R * R) + b * b);
    let i = ctx.drive_scale;
    Ok(TuneFigures {
        pout: Some(i * i * z2 / (2.0 * R)),
        efficiency: None,
        input_vswr: None,
    })
}

fn c0() -> f64 {
    let w = 2.0 * std::f64::consts::PI * F;
    1.0 / (w * w * L)
}

fn range(param: &str, from: f64, to: f64) -> Tune {
    Tune {
        param: param.to_string(),
        from,
        to,
    }
}

/// Finds the resonance to 0.1% (the brief's requirement). The peak is
/// quadratic, P/P₀ ≈ 1 − (Qδ)² with Q = R/(ωL) ≈ 22.4, so a 0.1% error in C
/// costs 5e-4 of the power, far above the 1e-10 stopping tolerance.
#[test]
fn finds_the_resonance_of_a_parallel_tank() {
    let res = tune(
        &[range("ctun", 100e-12, 1000e-12)],
        tank,
        TuneGoal::MaximisePout,
        &TuneParams::default(),
    )
    .unwrap();
    let c = res.optimum["ctun"];
    assert!((c / c0() - 1.0).abs() < 1e-3, "C = {c}, C0 = {}", c0());
    assert!(res.converged);
    assert!(res.at_bound.is_empty());
    // At resonance P = I²R/2 = 500 W.
    assert!((res.goal_value / 500.0 - 1.0).abs() < 1e-6);
    assert!(res.iterations > 0 && res.evaluations > res.iterations);
    assert_eq!(res.failed_evaluations, 0);
    // Sharpness at ±1%: P/P₀ = 1/(1 + (Qδ')²), δ' = ωC₀·R·δ·(C/C₀) ≈ Qδ, so the relative
    // change is −(Qδ)²/(1 + (Qδ)²) ≈ −0.048; the optimum's own error (< 1e-3) moves it by
    // at most 2Q²δ·1e-3 ≈ 1e-5, so 1e-4 is a safe tolerance.
    let q = R / (2.0 * std::f64::consts::PI * F * L);
    let want = -(q * 0.01).powi(2) / (1.0 + (q * 0.01).powi(2));
    let s = &res.sharpness[0];
    assert_eq!(s.param, "ctun");
    assert!((s.minus.unwrap() - want).abs() < 1e-4, "{s:?} vs {want}");
    assert!((s.plus.unwrap() - want).abs() < 1e-4, "{s:?} vs {want}");
}

#[test]
fn an_optimum_outside_the_range_stops_at_the_bound() {
    let lo = 1.2 * c0();
    let res = tune(
        &[range("ctun", lo, 3.0 * c0())],
        tank,
        TuneGoal::MaximisePout,
        &TuneParams::default(),
    )
    .unwrap();
    assert!((res.optimum["ctun"] / lo - 1.0).abs() < 1e-4);
    assert_eq!(res.at_bound, vec!["ctun".to_string()]);
    assert!(
        res.sharpness[0].minus.is_none(),
        "x − 1% is outside the range"
    );
}

#[test]
fn reduced_drive_search_reports_at_full_drive() {
    let p = TuneParams {
        search_drive: Some(0.5),
        ..Default::default()
    };
    let res = tune(
        &[range("ctun", 100e-12, 1000e-12)],
        tank,
        TuneGoal::MaximisePout,
        &p,
    )
    .unwrap();
    assert!((res.optimum["ctun"] / c0() - 1.0).abs() < 1e-3);
    let full = res.figures.pout.unwrap();
    let half = res.search_figures.unwrap().pout.unwrap();
    // Power scales with drive squared in this linear tank.
    assert!((full / half - 4.0).abs() < 1e-12);
}

/// Two parameters with a known optimum: efficiency η = 0.8 − (x − 3)² /100 − (y + 1)²/50,
/// pout = 10·x W; with pout ≥ 25 W the optimum is x = 3, y = −1 (pout 30 W, constraint slack).
/// With pout ≥ 35 W the constraint binds: the penalty 10·(1 − 10x/35) has slope 100/35 per
/// unit x, far steeper than the efficiency's, so x → 3.5 and y → −1.
#[test]
fn two_parameters_and_the_efficiency_goal() {
    let obj = |p: &BTreeMap<String, f64>, _: &TuneContext| {
        let (x, y) = (p["x"], p["y"]);
        Ok(TuneFigures {
            pout: Some(10.0 * x),
            efficiency: Some(0.8 - (x - 3.0).powi(2) / 100.0 - (y + 1.0).powi(2) / 50.0),
            input_vswr: None,
        })
    };
    let ranges = [range("x", 0.0, 10.0), range("y", -5.0, 5.0)];
    let res = tune(
        &ranges,
        obj,
        TuneGoal::MaximiseEfficiencyAt { pout_min: 25.0 },
        &TuneParams::default(),
    )
    .unwrap();
    // Optimum of a quadratic bowl: the cost tolerance 1e-10 bounds the parameter
    // error by about √(1e-10·100) = 1e-4; allow 1e-3.
    assert!((res.optimum["x"] - 3.0).abs() < 1e-3, "{res:?}");
    assert!((res.optimum["y"] + 1.0).abs() < 1e-3, "{res:?}");
    assert!((res.goal_value - 0.8).abs() < 1e-6);
    let res = tune(
        &ranges,
        obj,
        TuneGoal::MaximiseEfficiencyAt { pout_min: 35.0 },
        &TuneParams::default(),
    )
    .unwrap();
    assert!((res.optimum["x"] - 3.5).abs() < 1e-3, "{res:?}");
    assert!((res.optimum["y"] + 1.0).abs() < 1e-3, "{res:?}");
}

#[test]
fn vswr_goal_and_failing_evaluations() {
    // VSWR of a load R against 50 Ω: max(R/50, 50/R) (transmission-line definition).
    let obj = |p: &BTreeMap<String, f64>, _: &TuneContext| {
        let r = p["rl"];
        if r > 80.0 {
            return Err("solver did not converge".to_string());
        }
        Ok(TuneFigures {
            pout: None,
            efficiency: None,
            input_vswr: Some((r / 50.0).max(50.0 / r)),
        })
    };
    let p = TuneParams {
        start: [("rl".to_string(), 20.0)].into_iter().collect(),
        ..Default::default()
    };
    let res = tune(
        &[range("rl", 10.0, 100.0)],
        obj,
        TuneGoal::MinimiseInputVswr,
        &p,
    )
    .unwrap();
    assert!((res.optimum["rl"] / 50.0 - 1.0).abs() < 1e-3, "{res:?}");
    assert!((res.goal_value - 1.0).abs() < 1e-3);
    assert!(res.failed_evaluations > 0);
}

#[test]
fn bad_tuning_input_is_a_typed_error() {
    let p = TuneParams::default();
    assert!(matches!(
        tune(&[], tank, TuneGoal::MaximisePout, &p),
        Err(StudyError::NothingToTune)
    ));
    assert!(matches!(
        tune(&[range("ctun", 2.0, 1.0)], tank, TuneGoal::MaximisePout, &p),
        Err(StudyError::BadTuneRange { .. })
    ));
    let p2 = TuneParams {
        start: [("ctun".to_string(), 5.0)].into_iter().collect(),
        ..Default::default()
    };
    assert!(matches!(
        tune(
            &[range("ctun", 1.0, 2.0)],
            tank,
            TuneGoal::MaximisePout,
            &p2
        ),
        Err(StudyError::BadTuneStart { .. })
    ));
    let fails =
        |_: &BTreeMap<String, f64>, _: &TuneContext| Err::<TuneFigures, _>("no".to_string());
    assert!(matches!(
        tune(
            &[range("ctun", 1.0, 2.0)],
            fails,
            TuneGoal::MaximisePout,
            &p
        ),
        Err(StudyError::Objective { .. })
    ));
}
