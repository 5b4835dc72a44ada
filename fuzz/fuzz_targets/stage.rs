//! Fuzz target `stage`: arbitrary bytes through parse, elaborate, device
//! instantiation and a bounded solve. Every step may return an error; none may
//! panic, hang, or return a non-finite number inside a successful result.
#![no_main]

use libfuzzer_sys::fuzz_target;
use tankwave_circuit::{Analysis, Overrides};
use tankwave_solve::{AcParams, OpParams, SteadyParams, TransientParams};

/// Most unknowns for which the analyses beyond the operating point are run.
const MAX_UNKNOWNS: usize = 20;
/// Cap on the harmonics of a steady-state solve.
const MAX_HARMONICS: usize = 8;
/// Cap on the output steps of a transient.
const MAX_STEPS: f64 = 200.0;
/// Cap on the points of an AC sweep.
const MAX_AC_POINTS: usize = 16;

fn all_finite(v: &[f64]) -> bool {
    v.iter().all(|x| x.is_finite())
}

fuzz_target!(|data: &[u8]| {
    // A name in a directory that does not exist, so `include` statements
    // resolve to nothing on disk (relative ones at least).
    let parsed = tankwave_netlist::parse_bytes("/nonexistent-fuzz-dir/stage.tank", data);
    let Ok(el) = tankwave_circuit::elaborate(&parsed, &Overrides::default()) else {
        return;
    };
    let circuit = el.circuit;
    let Ok(devices) = tankwave_devices::instantiate(&circuit) else {
        return;
    };

    if let Ok(op) = tankwave_solve::operating_point(&circuit, &devices, &OpParams::default()) {
        assert!(all_finite(&op.x), "non-finite operating point: {:?}", op.x);
        assert!(op.info.residual.is_finite());
        for d in &op.devices {
            for (name, v) in &d.figures {
                assert!(v.is_finite(), "non-finite device figure {name:?} of {}", d.name);
            }
        }
    }
    if devices.n_unknowns > MAX_UNKNOWNS {
        return;
    }

    for a in &circuit.analyses {
        match a {
            Analysis::Bias => {}
            Analysis::Transient { .. } => {
                let Some(mut p) = TransientParams::from_analysis(a) else {
                    continue;
                };
                if !(p.step.is_finite() && p.step > 0.0 && p.stop.is_finite()) {
                    // Let the solver reject it: that path must not panic either.
                    let _ = tankwave_solve::transient(&circuit, &devices, &p);
                    continue;
                }
                p.stop = p.stop.min(MAX_STEPS * p.step);
                let max_step = p.max_step.unwrap_or(p.step).min(p.step);
                p.max_step = Some(max_step);
                // Bound the number of internal steps: at most ~1e3 per output step.
                p.min_step = Some(p.step * 1e-3);
                if let Ok(r) = tankwave_solve::transient(&circuit, &devices, &p) {
                    assert!(all_finite(&r.time), "non-finite transient time");
                    for row in &r.x {
                        assert!(all_finite(row), "non-finite transient value");
                    }
                }
            }
            Analysis::Ac { .. } => {
                let Some(mut p) = AcParams::from_analysis(a) else {
                    continue;
                };
                p.points = p.points.min(MAX_AC_POINTS);
                if let Ok(r) = tankwave_solve::ac(&circuit, &devices, &p) {
                    assert!(all_finite(&r.freq));
                    for row in &r.x {
                        assert!(
                            row.iter().all(|c| c.re.is_finite() && c.im.is_finite()),
                            "non-finite AC response"
                        );
                    }
                    if let Some(z) = &r.impedance {
                        assert!(
                            z.iter().all(|c| c.re.is_finite() && c.im.is_finite()),
                            "non-finite AC impedance"
                        );
                    }
                }
            }
            Analysis::Steady { .. } => {
                let Some(mut p) = SteadyParams::from_analysis(a) else {
                    continue;
                };
                p.harmonics = p.harmonics.min(MAX_HARMONICS);
                // 128 keeps both grids of shooting in play (the coarse one needs N ≥ 128)
                p.steps_per_period = p.steps_per_period.min(128);
                p.balance.max_harmonics = MAX_HARMONICS;
                p.balance.max_levels = p.balance.max_levels.min(40);
                p.balance.max_iter = p.balance.max_iter.min(30);
                p.shooting.max_iter = p.shooting.max_iter.min(20);
                p.shooting.warmup_periods = p.shooting.warmup_periods.min(2);
                p.settle.max_periods = p.settle.max_periods.min(50);
                if let Ok(s) = tankwave_solve::steady(&circuit, &devices, &p) {
                    assert!(s.freq.is_finite());
                    for row in &s.x {
                        assert!(all_finite(row), "non-finite steady-state sample");
                    }
                    for el in &s.terminal_currents {
                        for t in el {
                            assert!(all_finite(t), "non-finite terminal current");
                        }
                    }
                }
            }
        }
    }
});
