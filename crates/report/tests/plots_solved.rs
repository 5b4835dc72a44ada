//! The period plot on a solution from the real solver: the class-C demo
//! stage of tests/data/sweep solved by the periodic steady-state analysis.
//! Checks that the plot reads the solver's layout (node voltages first,
//! terminal currents per element) and that the shaded interval is the
//! conduction angle the measurement rule gives for the same current.

use tankwave_circuit::{load_file, Analysis, Overrides};
use tankwave_report::plot::{self, PlotParams};
use tankwave_solve::{steady, SteadyParams};

#[test]
fn period_plot_of_the_solved_class_c_stage() {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../tests/data/sweep/classc-load.tank"
    );
    let el = load_file(path, &Overrides::default()).expect("stage loads");
    let c = el.circuit;
    let devices = tankwave_devices::instantiate(&c).expect("devices");
    let a = c
        .analyses
        .iter()
        .find(|a| matches!(a, Analysis::Steady { .. }))
        .expect("the stage asks for a steady state");
    let params = SteadyParams::from_analysis(a).expect("steady parameters");
    let sol = steady(&c, &devices, &params).expect("steady state");
    let q1 = c.element("q1").expect("q1");
    let svg =
        plot::period_plot(&c, &sol, q1, &PlotParams::for_source("classc-load.tank")).expect("plot");
    if let Ok(dir) = std::env::var("TW_PLOT_OUT") {
        let _ = std::fs::write(std::path::Path::new(&dir).join("period_solved.svg"), &svg);
    }
    let doc = roxmltree::Document::parse(&svg).expect("well-formed");
    let labels: Vec<&str> = doc
        .descendants()
        .filter(|n| n.has_tag_name("g") && n.attribute("class") == Some("series"))
        .filter_map(|n| n.attribute("data-label"))
        .collect();
    assert_eq!(
        labels,
        vec!["v_ce", "i_c", "i_t (transport)", "v_be", "v_rl"]
    );

    // the plot shades what the conduction angle counts: the measure's rule on
    // the transport current with v_ce; its subtitle states that angle
    let it = sol.transport_current(q1).expect("transport current");
    let node = |name: &str| sol.x[c.nodes.iter().position(|x| x == name).expect("node")].clone();
    let vce = node("coll");
    let t = 1.0 / sol.freq;
    let cond = tankwave_measure::conduction(it, Some(&vce), t, 0.05);
    let shaded: f64 = cond.intervals.iter().map(|(a, b)| b - a).sum::<f64>() / t * 360.0;
    let measured = cond.angle_deg;
    assert!(
        (shaded - measured).abs() < 1e-6,
        "shaded {shaded} deg, measured {measured} deg"
    );
    assert!(
        svg.contains(&format!("{measured:.0} deg in {} pulse", cond.pulses)),
        "subtitle states the counted angle {measured}"
    );
    // a class-C stage conducts for less than half the period
    assert!(
        measured > 0.0 && measured < 180.0,
        "conduction {measured} deg"
    );
}
