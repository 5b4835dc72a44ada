//! Bench binary for `analyze heat` (run: `cargo bench --bench heat`).
//!
//! Machines are noisy, so the figures read are ratios of medians measured
//! in the same run: the diode-biased demo of netlists/heat/ solved with its
//! electrothermal iteration (and its keyed 10-minute transmission) against
//! the same stage's plain steady state at the ambient, and the heating run
//! alone against a plain steady state.

use std::path::PathBuf;
use tankwave_circuit::{Analysis, Overrides};
use tankwave_stage::{solve, SolveOptions};

#[allow(dead_code)] // not every bench uses both helpers
#[path = "support/timing.rs"]
mod timing;
use timing::time;

fn main() {
    let f =
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("netlists/heat/heat-7m1-diode-bias.tank");
    let c = tankwave_stage::load(&f, &[], &Overrides::default())
        .expect("the demo loads")
        .circuit;
    let mut plain = c.clone();
    plain.analyses.retain(|a| !matches!(a, Analysis::Heat(_)));
    plain.requirements.clear();
    let mut no_run = c.clone();
    for a in &mut no_run.analyses {
        if let Analysis::Heat(h) = a {
            h.transmit = None;
            h.space = 0.0;
        }
    }
    no_run.requirements.retain(|r| !r.text.contains("tj_peak"));
    let opts = SolveOptions::default();
    let rounds = solve(&c, &opts)
        .expect("solves")
        .heat
        .expect("heat")
        .rounds
        .len();
    let t_plain = time(5, || {
        solve(&plain, &opts).expect("plain");
    });
    let t_heat = time(5, || {
        solve(&no_run, &opts).expect("heat");
    });
    let t_all = time(5, || {
        solve(&c, &opts).expect("heat and transmission");
    });
    println!("analyze heat on {} (median of 5 runs each)", f.display());
    println!(
        "  plain steady state at the ambient      {:>9.4} s  1.00",
        t_plain
    );
    println!(
        "  electrothermal ({rounds} rounds + loop gain)   {:>9.4} s  {:.2}",
        t_heat,
        t_heat / t_plain
    );
    println!(
        "  + idle solve and 6000-cycle heating run {:>9.4} s  {:.2}",
        t_all,
        t_all / t_plain
    );
}
