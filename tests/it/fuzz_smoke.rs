//! Smoke version of the `stage` fuzz target (fuzz/fuzz_targets/stage.rs) for
//! the normal test run: random but valid R/C/L/diode networks driven by a
//! source go through the stage crate's load and the same bounded solve
//! (operating point, then transient, AC and steady state with capped sizes,
//! going on past a failed analysis). The operating point must succeed; the other analyses may
//! return an error, but none may panic, and every successful result must be
//! finite.

use proptest::prelude::*;
use tankwave_circuit::Overrides;
use tankwave_stage::{Caps, Scope, SolveOptions};

/// One two-terminal part between two nodes (0 is gnd).
#[derive(Debug, Clone)]
enum Part {
    R(f64),
    C(f64),
    D,
}

fn node(k: usize) -> String {
    if k == 0 {
        "gnd".into()
    } else {
        format!("n{k}")
    }
}

/// Stage text for `nodes` nodes: a source with series resistance drives n1;
/// every node has a resistor to gnd (a DC path); `parts` are placed between
/// node pairs; `inductors[k]` (if any) joins node k+1 to a lower node, so the
/// inductors form a forest rooted at gnd and never close a loop.
#[allow(clippy::too_many_arguments)]
fn stage(
    nodes: usize,
    amp: f64,
    dc: f64,
    freq: f64,
    rs: f64,
    shunts: &[f64],
    parts: &[(usize, usize, Part)],
    inductors: &[Option<(usize, f64)>],
    harmonics: usize,
) -> String {
    let mut s = String::from("title \"random smoke network\"\n");
    s.push_str("part dsmoke diode { junction { sat_current=10fA ideality=1.2 } resistance { series=0.5Ohm } }\n");
    s.push_str(&format!(
        "voltage vs n1 gnd dc={dc}V wave=sine(amp={amp}V, freq={freq}Hz) internal={rs}Ohm\n"
    ));
    for k in 1..=nodes {
        let r = shunts[(k - 1) % shunts.len()];
        s.push_str(&format!("resistor rg{k} {} gnd {r}Ohm\n", node(k)));
    }
    for (i, (a, b, part)) in parts.iter().enumerate() {
        let (a, b) = (a % (nodes + 1), b % (nodes + 1));
        if a == b {
            continue;
        }
        let (na, nb) = (node(a), node(b));
        match part {
            Part::R(v) => s.push_str(&format!("resistor r{i} {na} {nb} {v}Ohm\n")),
            Part::C(v) => s.push_str(&format!("capacitor c{i} {na} {nb} {v}F\n")),
            Part::D => s.push_str(&format!("diode d{i} {na} {nb} part=dsmoke\n")),
        }
    }
    for (k, l) in inductors.iter().take(nodes).enumerate() {
        if let Some((to, v)) = l {
            let from = k + 1;
            let to = to % from; // a lower node: no inductor loops
            s.push_str(&format!(
                "inductor l{from} {} {} {v}H\n",
                node(from),
                node(to)
            ));
        }
    }
    s.push_str("analyze bias\n");
    s.push_str(&format!(
        "analyze transient stop=({}/{freq}) step=(1/({freq}*32))\n",
        4
    ));
    s.push_str(&format!(
        "analyze ac from=({freq}/10) to=({freq}*10) points=9 scale=log\n"
    ));
    s.push_str(&format!(
        "analyze steady freq={freq}Hz harmonics={harmonics}\n"
    ));
    s
}

fn finite(v: &[f64]) -> bool {
    v.iter().all(|x| x.is_finite())
}

/// The bounded solve of the fuzz target, on text that must elaborate: the
/// stage crate's own pipeline with caps, going on past a failed analysis.
fn bounded_solve(text: &str) {
    let source = tankwave_stage::StageSource::from_text("smoke.tank", text);
    assert!(
        source.parse_diagnostics().is_empty(),
        "generated text parses cleanly: {:?}\n{text}",
        source.parse_diagnostics()
    );
    let stage = match tankwave_stage::load_source(source, &Overrides::default()) {
        Ok(s) => s,
        Err(e) => panic!("a valid network elaborates: {e:?}\n{text}"),
    };
    let opts = SolveOptions {
        caps: Some(Caps {
            max_unknowns: usize::MAX,
            max_steps_per_period: 64,
            ..Caps::default()
        }),
        keep_going: true,
        ..SolveOptions::scope(Scope::All)
    };
    let r = tankwave_stage::solve(&stage.circuit, &opts)
        .unwrap_or_else(|e| panic!("devices build for a valid network: {e}\n{text}"));
    let op = r.op.as_ref().unwrap_or_else(|| {
        panic!(
            "operating point of a resistive-path network: {:?}\n{text}",
            r.failures
        )
    });
    assert!(finite(&op.x), "operating point finite: {:?}\n{text}", op.x);
    for t in &r.transients {
        assert!(finite(&t.time));
        assert!(
            t.x.iter().all(|row| finite(row)),
            "transient finite\n{text}"
        );
    }
    for ac in &r.acs {
        assert!(
            ac.x.iter()
                .flatten()
                .all(|c| c.re.is_finite() && c.im.is_finite()),
            "AC finite\n{text}"
        );
    }
    if let Some(s) = &r.steady {
        assert!(
            s.solution.x.iter().all(|row| finite(row)),
            "steady state finite\n{text}"
        );
    }
    for e in &r.failures {
        assert!(!e.to_string().is_empty(), "a failure says what failed");
    }
}

fn part() -> impl Strategy<Value = Part> {
    prop_oneof![
        (1.0f64..1e4).prop_map(Part::R),
        (1e-12f64..1e-6).prop_map(Part::C),
        Just(Part::D),
    ]
}

proptest! {
    // A handful of cases: this is a smoke test; the fuzz target explores further.
    #![proptest_config(ProptestConfig { cases: 32, ..ProptestConfig::default() })]

    #[test]
    fn random_networks_solve_or_fail_cleanly(
        nodes in 1usize..5,
        amp in 0.0f64..20.0,
        dc in -5.0f64..5.0,
        freq in 1e5f64..3e7,
        rs in 1.0f64..100.0,
        shunts in prop::collection::vec(10.0f64..1e5, 1..5),
        parts in prop::collection::vec((0usize..5, 0usize..5, part()), 0..6),
        inductors in prop::collection::vec(prop::option::of((0usize..5, 1e-8f64..1e-4)), 0..5),
        harmonics in 1usize..8,
    ) {
        let text = stage(nodes, amp, dc, freq, rs, &shunts, &parts, &inductors, harmonics);
        bounded_solve(&text);
    }
}
