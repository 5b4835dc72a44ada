//! Fuzz target `stage`: arbitrary bytes through the stage crate's pipeline
//! (parse, elaborate, device instantiation and a solve bounded by
//! `tankwave_stage::Caps`, going on past a failed analysis). Every step may
//! return an error; none may panic, hang, or return a non-finite number
//! inside a successful result.
#![no_main]

use libfuzzer_sys::fuzz_target;
use tankwave_circuit::{Overrides, StageSource};
use tankwave_stage::{Caps, Scope, SolveOptions};

fn all_finite(v: &[f64]) -> bool {
    v.iter().all(|x| x.is_finite())
}

fuzz_target!(|data: &[u8]| {
    // A name in a directory that does not exist, so `include` statements
    // resolve to nothing on disk (relative ones at least).
    let source = StageSource::from_bytes("/nonexistent-fuzz-dir/stage.tank", data);
    let Ok(stage) = tankwave_stage::load_source(source, &Overrides::default()) else {
        return;
    };
    let opts = SolveOptions {
        caps: Some(Caps::default()),
        keep_going: true,
        ..SolveOptions::scope(Scope::All)
    };
    let Ok(r) = tankwave_stage::solve(&stage.circuit, &opts) else {
        return;
    };
    if let Some(op) = &r.op {
        assert!(all_finite(&op.x), "non-finite operating point: {:?}", op.x);
        assert!(op.info.residual.is_finite());
        for d in &op.devices {
            for (name, v) in &d.figures {
                assert!(v.is_finite(), "non-finite device figure {name} of {}", d.name);
            }
        }
    }
    for t in &r.transients {
        assert!(all_finite(&t.time), "non-finite transient time");
        for row in &t.x {
            assert!(all_finite(row), "non-finite transient value");
        }
    }
    for ac in &r.acs {
        assert!(all_finite(&ac.freq));
        for row in &ac.x {
            assert!(
                row.iter().all(|c| c.re.is_finite() && c.im.is_finite()),
                "non-finite AC response"
            );
        }
        if let Some(z) = &ac.impedance {
            assert!(
                z.iter().all(|c| c.re.is_finite() && c.im.is_finite()),
                "non-finite AC impedance"
            );
        }
    }
    if let Some(s) = &r.steady {
        assert!(s.solution.freq.is_finite());
        for row in &s.solution.x {
            assert!(all_finite(row), "non-finite steady-state sample");
        }
        for el in &s.solution.terminal_currents {
            for t in el {
                assert!(all_finite(t), "non-finite terminal current");
            }
        }
    }
});
