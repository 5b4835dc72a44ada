//! Helpers shared by the study tests: study blocks built by hand and a
//! synthetic, deterministic work function that uses warm starts.
#![allow(dead_code)]

use std::collections::BTreeMap;
use std::path::PathBuf;

use tankwave_circuit::{
    Distribution, MonteCarlo, Origin, StudySpec, Sweep, Tolerance, Vary, VaryTarget,
};
use tankwave_study::{Outcome, Variant, Verdict, WarmStart};

pub fn vary_param(name: &str, sweep: Sweep) -> Vary {
    Vary {
        target: VaryTarget::Param(name.to_string()),
        sweep,
        origin: Origin::default(),
    }
}

pub fn vary_element(name: &str, sweep: Sweep) -> Vary {
    Vary {
        target: VaryTarget::Element(name.to_string()),
        sweep,
        origin: Origin::default(),
    }
}

pub fn tol(element: usize, fraction: f64, distribution: Distribution) -> Tolerance {
    Tolerance {
        element: tankwave_circuit::ElementId::new(element),
        fraction,
        distribution,
    }
}

/// Element names of the made-up stage the tests plan against.
pub const ELEMENTS: [&str; 4] = ["ctun", "lt", "rb", "cload"];

/// A study with a 3 x 5 grid (vcc outermost, ctun value inner), two
/// tolerances and 4 Monte Carlo runs: 60 variants.
pub fn mixed_spec() -> StudySpec {
    StudySpec {
        vary: vec![
            vary_param("vcc", Sweep::List(vec![12.0, 13.8, 15.0])),
            vary_element(
                "rb",
                Sweep::Log {
                    from: 10.0,
                    to: 100.0,
                    points: 5,
                },
            ),
        ],
        tolerances: vec![
            tol(0, 0.05, Distribution::Gaussian),
            tol(1, 0.1, Distribution::Uniform),
        ],
        montecarlo: Some(MonteCarlo { runs: 4, seed: 7 }),
        tune: vec![],
    }
}

/// Synthetic work: a few Newton steps for sqrt(vcc · rb · factors) started
/// from the warm-start payload (or 1), so the figures depend on the warm
/// start in the last bits, like a real solver within its tolerance. Fails
/// for every 17th variant, and gives a requirement `y >= 4` with margin y − 4.
pub fn synthetic(v: &Variant, warm: Option<&WarmStart>) -> Result<Outcome, String> {
    if v.index % 17 == 16 {
        return Err(format!("synthetic failure at {}", v.index));
    }
    let target: f64 = v.values.values().product();
    let mut y = warm.and_then(|w| w.first().copied()).unwrap_or(1.0);
    for _ in 0..6 {
        y = 0.5 * (y + target / y);
    }
    let mut metrics = BTreeMap::new();
    metrics.insert("y".to_string(), y);
    metrics.insert("target".to_string(), target);
    let mut verdicts = BTreeMap::new();
    verdicts.insert(
        "y >= 4".to_string(),
        Verdict {
            pass: y >= 4.0,
            margin: y - 4.0,
        },
    );
    Ok(Outcome {
        metrics,
        verdicts,
        warm: Some(vec![y]),
    })
}

pub fn reference() -> serde_json::Value {
    let p = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/reference/study/reference.json");
    let text = std::fs::read_to_string(&p).expect("reference.json is committed");
    serde_json::from_str(&text).expect("reference.json is valid JSON")
}

pub fn floats(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().expect("number"))
        .collect()
}
