//! The diode against the numpy reference in tests/reference/diode (gen.py
//! writes the closed forms — Shockley current, Getreu temperature scaling,
//! graded-junction depletion charge, charge-control diffusion charge,
//! exponential breakdown — independently of the Rust code; sources named there).

use tankwave_circuit::ir::DiodeParams;
use tankwave_devices::diode::Diode;

const CSV: &str = include_str!("../../../tests/reference/diode/diode.csv");

fn parse() -> (Vec<(String, f64)>, Vec<[f64; 5]>) {
    let mut params = Vec::new();
    let mut rows = Vec::new();
    for line in CSV.lines() {
        if let Some(rest) = line.strip_prefix("#param,") {
            let (k, v) = rest.split_once(',').expect("param line");
            params.push((k.to_string(), v.parse().expect("param value")));
        } else if line.starts_with('v') || line.trim().is_empty() {
            continue;
        } else {
            let vals: Vec<f64> = line
                .split(',')
                .map(|s| s.parse().expect("number"))
                .collect();
            rows.push([vals[0], vals[1], vals[2], vals[3], vals[4]]);
        }
    }
    (params, rows)
}

#[test]
fn diode_matches_numpy_reference() {
    let (params, rows) = parse();
    assert!(rows.len() >= 30, "reference too small: {}", rows.len());
    let get = |k: &str| {
        params
            .iter()
            .find(|(n, _)| n == k)
            .unwrap_or_else(|| panic!("{k}"))
            .1
    };
    let p = DiodeParams {
        sat_current: get("sat_current"),
        emission: get("emission"),
        r_series: 0.0,
        cj0: get("cj0"),
        v_junction: get("v_junction"),
        grading: get("grading"),
        linear_from: get("linear_from"),
        transit: get("transit"),
        breakdown: get("breakdown"),
        breakdown_current: get("breakdown_current"),
        gap: get("gap"),
        sat_temp_exp: get("sat_temp_exp"),
        t_measured: get("t_measured"),
    };
    let d = Diode::new(
        tankwave_circuit::ElementId::new(0),
        Some(0),
        None,
        Some(0),
        &p,
        get("area"),
        get("temp"),
    );
    // Both sides evaluate the same closed forms in f64 in a different order:
    // agreement to 1e-9 relative leaves room only for rounding.
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * a.abs().max(b.abs()) + 1e-300;
    for [v, i, g, q, c] in rows {
        let j = d.junction(v, 0.0);
        assert!(close(j.i, i), "I({v}) = {:e}, reference {i:e}", j.i);
        assert!(close(j.g, g), "G({v}) = {:e}, reference {g:e}", j.g);
        assert!(close(j.q, q), "Q({v}) = {:e}, reference {q:e}", j.q);
        assert!(close(j.c, c), "C({v}) = {:e}, reference {c:e}", j.c);
    }
}
