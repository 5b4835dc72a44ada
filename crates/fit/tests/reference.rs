//! The fit against the outside: curves made by the independent numpy
//! generator `tests/reference/fit/gen.py` from known parameters
//! (`truth.csv`), and scipy.optimize.least_squares' fit of the noisy set
//! (`scipy_fit.csv`), both committed beside it.

use std::collections::HashMap;
use std::path::PathBuf;
use tankwave_fit::knob::Knob;
use tankwave_fit::{curve, fit, CurveKind, FitParams, FitResult};

fn dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../tests/reference/fit")
}

/// Every curve file of the set (a kind the set has no file for is left out).
fn load(set: &str) -> Vec<tankwave_fit::Curve> {
    CurveKind::ALL
        .iter()
        .filter_map(|&k| {
            let f = dir().join(set).join(format!("{}.csv", k.word()));
            let text = std::fs::read_to_string(&f).ok()?;
            Some(curve::parse(k, &f.display().to_string(), &text).expect("a valid curve"))
        })
        .collect()
}

fn table(name: &str) -> HashMap<String, f64> {
    let text = std::fs::read_to_string(dir().join(name)).expect("generated table");
    text.lines()
        .skip(1)
        .map(|l| {
            let (k, v) = l.split_once(',').expect("two columns");
            (k.to_string(), v.parse().expect("a number"))
        })
        .collect()
}

/// The generator's name of each knob.
fn gen_name(k: Knob) -> &'static str {
    match k {
        Knob::CapBc => "CJC",
        Knob::PotentialBc => "VJC",
        Knob::GradingBc => "MJC",
        Knob::CapBe => "CJE",
        Knob::PotentialBe => "VJE",
        Knob::GradingBe => "MJE",
        Knob::SatCurrent => "IS",
        Knob::Ideality => "NF",
        Knob::Beta => "BF",
        Knob::LeakBe => "ISE",
        Knob::LeakBeIdeality => "NE",
        Knob::Early => "VA",
        Knob::Knee => "IKF",
        Knob::Transit => "TF",
        Knob::BetaReverse => "BR",
        Knob::RCollector => "RC",
        Knob::REpi => "RCO",
        Knob::EpiGamma => "GAMMA",
        Knob::Breakdown => "BV",
        Knob::AvalancheExponent => "NAV",
    }
}

fn show(r: &FitResult, want: &HashMap<String, f64>) -> String {
    let mut s = tankwave_fit::report::text("ref", r);
    for k in &r.fitted {
        let w = want[gen_name(*k)];
        s.push_str(&format!(
            "{:?}: fit {:.6e} want {:.6e} ({:+.3e})\n",
            k,
            k.get(&r.params),
            w,
            k.get(&r.params) / w - 1.0
        ));
    }
    s
}

#[test]
fn clean_curves_give_back_the_parameters_they_were_made_from() {
    let r = fit(&load("clean"), false, &FitParams::default()).expect("fit");
    let truth = table("truth.csv");
    let report = show(&r, &truth);
    eprintln!("{report}");
    assert_eq!(r.fitted.len(), 16, "{report}");
    for k in &r.fitted {
        let got = k.get(&r.params);
        let want = truth[gen_name(*k)];
        // exact curves: the model and the generator agree to ~1e-9 (bisection
        // and central differences), so the optimum is the truth up to the
        // solver's stopping tolerance; 1e-4 relative leaves room for the
        // most weakly determined parameter (φ with m)
        assert!(
            (got / want - 1.0).abs() < 1e-4,
            "{k:?}: {got} vs {want}\n{report}"
        );
    }
    for c in &r.curves {
        assert!(c.rms_rel < 1e-6, "{:?} {}\n{report}", c.kind, c.rms_rel);
    }
}

/// A pnp's curves are given as magnitudes (docs/fit.md), and the model is
/// the npn's with every sign flipped (`pnp_mirrors_npn` in
/// crates/devices/tests/bjt_stamps.rs): the same curves fitted as a pnp
/// give the same parameters, and the part differs only in its kind.
#[test]
fn a_pnp_fit_of_the_same_magnitudes_gives_the_same_parameters() {
    let curves = load("clean");
    let n = fit(&curves, false, &FitParams::default()).expect("npn fit");
    let p = fit(&curves, true, &FitParams::default()).expect("pnp fit");
    assert!(p.params.pnp && !n.params.pnp);
    assert_eq!(n.fitted, p.fitted);
    for k in &n.fitted {
        assert_eq!(k.get(&n.params), k.get(&p.params), "{k:?}");
    }
    let (tn, tp) = (
        tankwave_fit::part::part_text("dev", &n),
        tankwave_fit::part::part_text("dev", &p),
    );
    assert!(tp.contains("part dev pnp {"), "{tp}");
    assert_eq!(tn.replace("part dev npn {", "part dev pnp {"), tp);
}

#[test]
fn noisy_curves_fit_as_scipy_fits_them() {
    let r = fit(&load("noisy"), false, &FitParams::default()).expect("fit");
    let sp = table("scipy_fit.csv");
    let report = show(&r, &sp);
    eprintln!("{report}");
    // the same objective (½ Σ of squared relative residuals) at both optima:
    // ours may not be worse than scipy's beyond its stopping tolerance
    // (ftol 1e-15 there, the default 1e-8-scale tolerances here: 1e-6)
    let cost = r.stages.last().expect("stages").objective;
    assert!(
        cost <= sp["cost"] * (1.0 + 1e-6),
        "cost {cost} scipy {}",
        sp["cost"]
    );
    for (n, k) in r.fitted.iter().enumerate() {
        let got = k.get(&r.params);
        let want = sp[gen_name(*k)];
        let se = r.std_err[n];
        // two optimisers stopping in the same valley differ along its
        // floor by far less than the noise moves the optimum: a quarter of
        // the parameter's standard error
        let d = (got / want).ln().abs();
        assert!(
            d < 0.25 * se,
            "{k:?}: {got} vs scipy {want}: |Δln p| {d:.2e}, std. err. {se:.2e}\n{report}"
        );
    }
}

#[test]
fn noisy_curves_give_the_parameters_back_within_their_standard_errors() {
    let r = fit(&load("noisy"), false, &FitParams::default()).expect("fit");
    let truth = table("truth.csv");
    let report = show(&r, &truth);
    for (n, k) in r.fitted.iter().enumerate() {
        let got = k.get(&r.params);
        let want = truth[gen_name(*k)];
        let se = r.std_err[n];
        // 1 % noise (0.3 % on V_BE), seed 20: each estimate within 4
        // standard errors of the truth (a normal deviate beyond 4σ has a
        // probability of 6e-5), and the error estimate itself is finite
        assert!(se.is_finite() && se > 0.0, "{k:?} {se}");
        let d = (got / want).ln().abs();
        assert!(
            d < 4.0 * se,
            "{k:?}: {got} vs truth {want}: |Δln p| {d:.2e}, std. err. {se:.2e}\n{report}"
        );
    }
    // residuals at the level of the noise put in: 1 % RMS (0.3 % on V_BE),
    // within the scatter of a sample of 8 to 24 points
    for c in &r.curves {
        let sd = if c.kind == CurveKind::BaseVoltage {
            0.003
        } else {
            0.01
        };
        assert!(
            c.rms_rel > 0.4 * sd && c.rms_rel < 1.6 * sd,
            "{:?} {}\n{report}",
            c.kind,
            c.rms_rel
        );
    }
    assert!(r.undetermined.is_empty(), "{report}");
}

#[test]
fn a_gain_curve_alone_leaves_the_saturation_current_undetermined() {
    // gain = I_C/I_B depends on I_S and I_SE only through I_SE/I_S^(n_F/n_E)
    // (docs/models.md: I_B = I_F/β_F + I_SE e^{V_BE/(n_E V_t)}, V_BE fixed by
    // I_C through I_S): without a base-voltage curve nothing pins I_S.
    let curves: Vec<_> = load("clean")
        .into_iter()
        .filter(|c| c.kind == CurveKind::Gain)
        .collect();
    let r = fit(&curves, false, &FitParams::default()).expect("fit");
    let report = tankwave_fit::report::text("gain only", &r);
    for k in [Knob::SatCurrent, Knob::Ideality] {
        assert!(
            r.undetermined.iter().any(|u| u.knob == k),
            "{k:?} not named\n{report}"
        );
    }
    assert!(
        report.contains("Not determined by these curves"),
        "{report}"
    );
}

#[test]
fn a_falling_transition_frequency_is_left_out_and_reported() {
    // a constant τ_F gives 1/(2π f_T) = τ_F + (C_je + C_jc)/g_m, which only
    // falls with current (Gray, Hurst, Lewis, Meyer, 5th ed., §1.4.8, from
    // memory): points past the peak that fall are left out, and their
    // misfit is reported
    let mut curves = load("clean");
    let f = curves
        .iter_mut()
        .find(|c| c.kind == CurveKind::Transition)
        .expect("ft");
    let last = *f.points.last().expect("points");
    for (n, drop) in [0.8, 0.6].iter().enumerate() {
        let mut q = last;
        q.a *= 1.5 * (n + 1) as f64;
        q.y *= drop;
        q.line += n + 1;
        f.points.push(q);
    }
    let r = fit(&curves, false, &FitParams::default()).expect("fit");
    let c = r
        .curves
        .iter()
        .find(|c| c.kind == CurveKind::Transition)
        .expect("ft");
    assert_eq!(c.points.iter().filter(|q| !q.used).count(), 2);
    assert!(
        c.left_out_rms_rel.expect("left out") > 0.2,
        "{:?}",
        c.left_out_rms_rel
    );
    assert!(
        r.notes
            .iter()
            .any(|n| n.contains("cannot follow a falling f_T")),
        "{:?}",
        r.notes
    );
    // the rest is still followed exactly
    assert!(c.rms_rel < 1e-6, "{}", c.rms_rel);
}

#[test]
fn capacitances_far_into_reverse_bias_leave_the_potential_on_a_flat_direction() {
    // far into reverse bias C = C_j0 (1 + V_R/φ)^(−m) → C_j0 φ^m V_R^(−m):
    // C_j0 and φ enter only as C_j0·φ^m, one direction the data cannot see
    let text = "reverse[V],cap[F]\n".to_string()
        + &[200.0, 300.0, 400.0, 600.0, 800.0]
            .iter()
            .map(|v: &f64| format!("{v},{}\n", 120e-12 * (1.0 + v / 0.6f64).powf(-0.4)))
            .collect::<String>();
    let c = curve::parse(CurveKind::OutputCap, "far.csv", &text).expect("curve");
    let r = fit(&[c], false, &FitParams::default()).expect("fit");
    let report = tankwave_fit::report::text("far", &r);
    eprintln!("{report}\n{:?}", r.singular_values);
    for k in [Knob::CapBc, Knob::PotentialBc] {
        assert!(
            r.undetermined
                .iter()
                .any(|u| u.knob == k && u.why.contains("flat direction")),
            "{k:?} not named\n{report}"
        );
    }
}

/// The power-device stage: curves of a transistor with an epitaxial
/// collector and avalanche multiplication (tests/reference/fit/power.py,
/// the Kull epi current and Miller's multiplication law solved by scipy),
/// gain and V_BE at one V_CE, saturation voltage and output
/// characteristics up to the avalanche rise. The fit sees the rise, parts
/// β_F from V_A with the output curves, fits R_CO, γ, BV_CBO and n_av and
/// gives every parameter back: the model reproduces these curves at the
/// truth to 1e-12 (the test below), so the optimum is the truth up to the
/// solver's stopping tolerance; 1e-6 relative leaves room for the most
/// weakly determined parameter (γ, which only the quasi-saturation points
/// touch).
#[test]
fn power_device_curves_give_back_the_epi_layer_and_the_breakdown() {
    let curves = load("power");
    assert_eq!(curves.len(), 4);
    let r = fit(&curves, false, &FitParams::default()).expect("fit");
    let truth = table("power/truth.csv");
    let report = show(&r, &truth);
    eprintln!("{report}");
    for k in [
        Knob::REpi,
        Knob::EpiGamma,
        Knob::Breakdown,
        Knob::AvalancheExponent,
        Knob::Early,
    ] {
        assert!(r.fitted.contains(&k), "{k:?} fitted\n{report}");
    }
    let mut seen = r.fitted.clone();
    seen.sort();
    seen.dedup();
    assert_eq!(seen.len(), r.fitted.len(), "each parameter once\n{report}");
    for k in &r.fitted {
        let (got, want) = (k.get(&r.params), truth[gen_name(*k)]);
        assert!(
            (got / want - 1.0).abs() < 1e-6,
            "{k:?}: {got} vs {want}\n{report}"
        );
    }
    for c in &r.curves {
        assert!(c.rms_rel < 1e-6, "{:?} {}\n{report}", c.kind, c.rms_rel);
    }
    // the part written for a stage file carries both new blocks
    let text = tankwave_fit::part::part_text("tw_power", &r);
    assert!(
        text.contains("epi {") && text.contains("avalanche {"),
        "{text}"
    );
}

/// The model's value of every power-device curve point at the truth
/// against the generator's (tests/reference/fit/power.py, which solves the
/// same published equations its own way: scipy's root finder, numpy's
/// expressions): 1e-12 relative (both are solved to machine precision; the
/// generator's residuals are checked below 1e-10 in the relative currents,
/// which moves a point by far less).
#[test]
fn the_model_reproduces_the_power_device_curves_at_the_truth() {
    let t = table("power/truth.csv");
    let p = tankwave_circuit::BjtParams {
        sat_current: t["IS"],
        emission_fwd: t["NF"],
        gain_fwd: t["BF"],
        leak_be: t["ISE"],
        leak_be_emission: t["NE"],
        early_fwd: t["VA"],
        knee_fwd: t["IKF"],
        transit_fwd: t["TF"],
        gain_rev: t["BR"],
        r_collector: t["RC"],
        r_epi: t["RCO"],
        epi_gamma: t["GAMMA"],
        bv_cbo: t["BV"],
        avalanche_exp: t["NAV"],
        emission_rev: 1.0,
        t_measured: 298.15,
        ..Default::default()
    };
    let curves = load("power");
    for c in &curves {
        for q in &c.points {
            let v = tankwave_fit::model::value(&p, c.kind, q)
                .unwrap_or_else(|e| panic!("{:?} line {}: {e}", c.kind, q.line));
            assert!(
                (v / q.y - 1.0).abs() < 1e-12,
                "{:?} line {}: {v} vs {}",
                c.kind,
                q.line,
                q.y
            );
        }
    }
}
