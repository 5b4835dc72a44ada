//! Variant numbering, sweep values against numpy, and reproducible draws.

mod common;

use common::*;
use tankwave_circuit::{Distribution, MonteCarlo, StudySpec, Sweep};
use tankwave_study::{factor_key, Plan, StudyError};

#[test]
fn counts_and_numbering_first_vary_outermost_samples_innermost() {
    let plan = Plan::new(&mixed_spec(), &ELEMENTS).unwrap();
    assert_eq!(plan.grid_points(), 15);
    assert_eq!(plan.runs(), 4);
    assert_eq!(plan.len(), 60);
    // i = ((k_vcc * 5) + k_rb) * 4 + j
    let v = plan.variant(2 * 20 + 3 * 4 + 1).unwrap();
    assert_eq!(v.positions, vec![2, 3]);
    assert_eq!(v.sample, Some(1));
    assert_eq!(v.grid_point, 13);
    assert_eq!(v.values["vcc"], 15.0);
    assert_eq!(v.overrides.params["vcc"], 15.0);
    assert!(v.overrides.element_values.contains_key("rb"));
    assert!(v.overrides.element_factors.contains_key("ctun"));
    assert!(v.values.contains_key(&factor_key("lt")));
    assert!(matches!(
        plan.variant(60),
        Err(StudyError::IndexOutOfRange {
            index: 60,
            total: 60
        })
    ));
}

#[test]
fn no_study_is_one_nominal_variant_and_tolerances_need_montecarlo() {
    let plan = Plan::new(&StudySpec::default(), &ELEMENTS).unwrap();
    assert_eq!(plan.len(), 1);
    let mut spec = mixed_spec();
    spec.vary.clear();
    spec.montecarlo = None;
    let plan = Plan::new(&spec, &ELEMENTS).unwrap();
    assert_eq!(plan.len(), 1);
    let v = plan.variant(0).unwrap();
    assert!(v.overrides.element_factors.is_empty());
    assert_eq!(v.sample, None);
    spec.montecarlo = Some(MonteCarlo { runs: 9, seed: 1 });
    assert_eq!(Plan::new(&spec, &ELEMENTS).unwrap().len(), 9);
}

/// Sweep points against numpy.linspace / numpy.logspace (reference.json from
/// tests/reference/study/generate.py). Tolerance: linear points agree to a few
/// ulp of the larger bound (both compute a + (b − a)·i/(n − 1) in binary64,
/// in a different order); log points to 1e-14 relative (exp/ln here, 10^x
/// there: each rounds to ≤ 1 ulp of a result of magnitude |ln x| < 30, so
/// ≤ 30·2.2e-16 ≈ 7e-15 relative).
#[test]
fn sweep_points_match_numpy() {
    let r = reference();
    for case in r["linear"].as_array().unwrap() {
        let (a, b) = (case["from"].as_f64().unwrap(), case["to"].as_f64().unwrap());
        let n = case["points"].as_u64().unwrap() as usize;
        let spec = StudySpec {
            vary: vec![vary_param(
                "x",
                Sweep::Linear {
                    from: a,
                    to: b,
                    points: n,
                },
            )],
            ..Default::default()
        };
        let plan = Plan::new(&spec, &ELEMENTS).unwrap();
        assert_eq!(plan.len(), n as u64);
        let want = floats(&case["values"]);
        for (i, w) in want.iter().enumerate() {
            let got = plan.variant(i as u64).unwrap().values["x"];
            let scale = a.abs().max(b.abs()).max(1.0);
            assert!(
                (got - w).abs() <= 4.0 * f64::EPSILON * scale,
                "linear {a}..{b} #{i}: {got} vs {w}"
            );
        }
    }
    for case in r["log"].as_array().unwrap() {
        let (a, b) = (case["from"].as_f64().unwrap(), case["to"].as_f64().unwrap());
        let n = case["points"].as_u64().unwrap() as usize;
        let spec = StudySpec {
            vary: vec![vary_param(
                "x",
                Sweep::Log {
                    from: a,
                    to: b,
                    points: n,
                },
            )],
            ..Default::default()
        };
        let plan = Plan::new(&spec, &ELEMENTS).unwrap();
        let want = floats(&case["values"]);
        assert_eq!(plan.len(), want.len() as u64);
        for (i, w) in want.iter().enumerate() {
            let got = plan.variant(i as u64).unwrap().values["x"];
            assert!(
                ((got - w) / w).abs() <= 1e-14,
                "log {a}..{b} #{i}: {got} vs {w}"
            );
        }
        // Log spacing: constant ratio between neighbours, (b/a)^(1/(n−1)) (closed form).
        if n > 2 {
            let ratio = (b / a).powf(1.0 / (n - 1) as f64);
            for i in 1..n {
                let r = want[i] / want[i - 1];
                assert!((r / ratio - 1.0).abs() < 1e-13);
            }
        }
    }
}

#[test]
fn bad_sweeps_and_tolerances_are_typed_errors() {
    let mk = |s: Sweep| StudySpec {
        vary: vec![vary_param("x", s)],
        ..Default::default()
    };
    assert!(matches!(
        Plan::new(&mk(Sweep::List(vec![])), &ELEMENTS),
        Err(StudyError::EmptySweep { .. })
    ));
    assert!(matches!(
        Plan::new(
            &mk(Sweep::Linear {
                from: 0.0,
                to: 1.0,
                points: 0
            }),
            &ELEMENTS
        ),
        Err(StudyError::EmptySweep { .. })
    ));
    assert!(matches!(
        Plan::new(
            &mk(Sweep::Log {
                from: 0.0,
                to: 1.0,
                points: 3
            }),
            &ELEMENTS
        ),
        Err(StudyError::LogSweepNotPositive { .. })
    ));
    assert!(matches!(
        Plan::new(&mk(Sweep::List(vec![1.0, f64::NAN])), &ELEMENTS),
        Err(StudyError::NonFiniteSweepValue { position: 1, .. })
    ));
    let mut spec = mixed_spec();
    spec.vary.push(vary_param("vcc", Sweep::List(vec![1.0])));
    assert!(matches!(
        Plan::new(&spec, &ELEMENTS),
        Err(StudyError::DuplicateName { .. })
    ));
    let mut spec = mixed_spec();
    spec.tolerances.push(tol(9, 0.1, Distribution::Uniform));
    assert!(matches!(
        Plan::new(&spec, &ELEMENTS),
        Err(StudyError::UnknownElement {
            element: 9,
            count: 4,
            ..
        })
    ));
    let mut spec = mixed_spec();
    spec.tolerances[0].fraction = 1.0;
    assert!(matches!(
        Plan::new(&spec, &ELEMENTS),
        Err(StudyError::BadTolerance { .. })
    ));
    let spec = StudySpec {
        vary: (0..70)
            .map(|k| vary_param(&format!("p{k}"), Sweep::List(vec![1.0, 2.0])))
            .collect(),
        ..Default::default()
    };
    assert!(matches!(
        Plan::new(&spec, &ELEMENTS),
        Err(StudyError::TooManyVariants { .. })
    ));
}

#[test]
fn draws_depend_only_on_seed_sample_and_tolerance() {
    let plan = Plan::new(&mixed_spec(), &ELEMENTS).unwrap();
    // Same variant twice: identical.
    assert_eq!(plan.variant(33).unwrap(), plan.variant(33).unwrap());
    // Common random numbers: sample j draws the same factors at every grid point.
    let a = plan.variant(1).unwrap();
    let b = plan.variant(14 * 4 + 1).unwrap();
    assert_eq!(a.values["ctun.factor"], b.values["ctun.factor"]);
    assert_eq!(a.values["lt.factor"], b.values["lt.factor"]);
    // Different samples differ.
    assert_ne!(
        a.values["ctun.factor"],
        plan.variant(2).unwrap().values["ctun.factor"]
    );
    // Removing the sweep or the other tolerance does not change a tolerance's draws.
    let mut spec = mixed_spec();
    spec.vary.clear();
    spec.tolerances.remove(0);
    let alone = Plan::new(&spec, &ELEMENTS).unwrap();
    // lt was tolerance #1 and is now #0: its stream changes, so compare a plan
    // where it keeps position 1 behind a different first tolerance.
    let mut spec2 = mixed_spec();
    spec2.vary.clear();
    spec2.tolerances[0] = tol(3, 0.2, Distribution::Uniform);
    let other = Plan::new(&spec2, &ELEMENTS).unwrap();
    for j in 0..4 {
        assert_eq!(
            other.variant(j).unwrap().values["lt.factor"],
            plan.variant(j).unwrap().values["lt.factor"]
        );
    }
    assert_eq!(alone.len(), 4);
    // Another seed gives other draws.
    let mut spec3 = mixed_spec();
    spec3.montecarlo = Some(MonteCarlo { runs: 4, seed: 8 });
    let p3 = Plan::new(&spec3, &ELEMENTS).unwrap();
    assert_ne!(
        p3.variant(0).unwrap().values["ctun.factor"],
        plan.variant(0).unwrap().values["ctun.factor"]
    );
}

/// The draws follow the recipe documented in `sample`, re-derived here
/// independently from the ChaCha8 stream (rand_chacha): key = seed ‖ sample
/// (little-endian) ‖ zeros, stream = tolerance position, uniform from the top
/// 53 bits, Gaussian by the polar method truncated at 3σ. Bit-exact, since
/// both sides do the same IEEE-754 operations.
#[test]
fn draws_follow_the_documented_recipe() {
    use rand::{RngCore, SeedableRng};
    use rand_chacha::ChaCha8Rng;
    use tankwave_study::sample::tolerance_factor;
    let rng_for = |seed: u64, sample: u64, t: u64| {
        let mut key = [0u8; 32];
        key[..8].copy_from_slice(&seed.to_le_bytes());
        key[8..16].copy_from_slice(&sample.to_le_bytes());
        let mut r = ChaCha8Rng::from_seed(key);
        r.set_stream(t);
        r
    };
    let unit = |r: &mut ChaCha8Rng| (r.next_u64() >> 11) as f64 / 2f64.powi(53);
    for (seed, sample, t) in [
        (7u64, 0u64, 0usize),
        (7, 3, 1),
        (123456789, 99, 4),
        (0, u64::MAX, 2),
    ] {
        let mut r = rng_for(seed, sample, t as u64);
        let want_u = 1.0 + 0.05 * (2.0 * unit(&mut r) - 1.0);
        assert_eq!(
            tolerance_factor(seed, sample, t, 0.05, Distribution::Uniform),
            want_u
        );
        let mut r = rng_for(seed, sample, t as u64);
        let z = loop {
            let (u, v) = (2.0 * unit(&mut r) - 1.0, 2.0 * unit(&mut r) - 1.0);
            let s = u * u + v * v;
            if s > 0.0 && s < 1.0 {
                let z = u * (-2.0 * libm::log(s) / s).sqrt();
                if z.abs() <= 3.0 {
                    break z;
                }
            }
        };
        assert_eq!(
            tolerance_factor(seed, sample, t, 0.05, Distribution::Gaussian),
            1.0 + 0.05 / 3.0 * z
        );
    }
}

#[test]
fn segments_cover_every_variant_once() {
    let plan = Plan::new(&mixed_spec(), &ELEMENTS).unwrap();
    for chain in [1u64, 2, 3, 5, 9] {
        let mut seen = vec![0u32; plan.len() as usize];
        for s in 0..plan.segment_count(chain).unwrap() {
            let members: Vec<u64> = plan.segment(s, chain).unwrap().collect();
            assert!(!members.is_empty() && members.len() as u64 <= chain);
            // A segment walks the innermost sweep with everything else fixed.
            let vs: Vec<_> = members.iter().map(|&i| plan.variant(i).unwrap()).collect();
            for w in vs.windows(2) {
                assert_eq!(w[0].positions[0], w[1].positions[0]);
                assert_eq!(w[0].sample, w[1].sample);
                assert_eq!(w[0].positions[1] + 1, w[1].positions[1]);
            }
            for i in members {
                seen[i as usize] += 1;
            }
        }
        assert!(seen.iter().all(|&c| c == 1), "chain {chain}: {seen:?}");
    }
    assert!(plan.segment_count(0).is_err());
}
