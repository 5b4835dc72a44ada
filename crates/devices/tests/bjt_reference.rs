//! Bipolar transistor against the independent numpy evaluation of the
//! published equations (tests/reference/bjt/gen.py → points.csv): H. K. Gummel,
//! H. C. Poon, Bell Syst. Tech. J. 49(5), 1970; reciprocal q1 after L. W.
//! Nagel, ERL M520, 1975; base currents, charges and temperature scaling after
//! I. Getreu, Modeling the Bipolar Transistor, 1976 (forms from memory).
//!
//! The parameter sets are read back from the `# set` header lines, so the
//! generator and this test cannot drift apart.
//!
//! Tolerance: 1e-9 relative, with an absolute floor of 1e-9 × (IS·area) for
//! currents and 1e-9 × (CJE + CJC)·1 V for charges. Both sides evaluate the
//! same closed forms in float64, so they agree to ~1e-14 except where a
//! result is a difference of nearly equal terms (e.g. IC near VBE = VBC,
//! where the difference is of order IS); the floor covers exactly that.

use std::collections::BTreeMap;
use tankwave_circuit::BjtParams;
use tankwave_devices::bjt::{intrinsic, Bjt, BjtNodes};
use tankwave_devices::{DenseStamp, Device, EvalCtx};

const CSV: &str = include_str!("../../../tests/reference/bjt/points.csv");

struct Set {
    p: BjtParams,
    temp: f64,
    area: f64,
}

fn parse_set(line: &str) -> (String, Set) {
    let rest = line.trim_start_matches("# set ");
    let (name, kvs) = rest.split_once(':').expect("set line has a colon");
    let mut m = BTreeMap::new();
    for kv in kvs.split_whitespace() {
        let (k, v) = kv.split_once('=').expect("key=value");
        m.insert(k.to_string(), v.parse::<f64>().expect("number"));
    }
    let g = |k: &str| *m.get(k).unwrap_or_else(|| panic!("missing {k}"));
    let p = BjtParams {
        sat_current: g("sat_current"),
        gain_fwd: g("gain_fwd"),
        gain_rev: g("gain_rev"),
        emission_fwd: g("emission_fwd"),
        emission_rev: g("emission_rev"),
        early_fwd: g("early_fwd"),
        early_rev: g("early_rev"),
        knee_fwd: g("knee_fwd"),
        knee_rev: g("knee_rev"),
        leak_be: g("leak_be"),
        leak_be_emission: g("leak_be_emission"),
        leak_bc: g("leak_bc"),
        leak_bc_emission: g("leak_bc_emission"),
        cj_be: g("cj_be"),
        vj_be: g("vj_be"),
        grading_be: g("grading_be"),
        cj_bc: g("cj_bc"),
        vj_bc: g("vj_bc"),
        grading_bc: g("grading_bc"),
        linear_from: g("linear_from"),
        transit_fwd: g("transit_fwd"),
        transit_rev: g("transit_rev"),
        gap: g("gap"),
        sat_temp_exp: g("sat_temp_exp"),
        gain_temp_exp: g("gain_temp_exp"),
        t_measured: g("t_measured"),
        // avalanche only in the sets that give it
        bv_cbo: m.get("bv_cbo").copied().unwrap_or(f64::INFINITY),
        avalanche_exp: m.get("avalanche_exp").copied().unwrap_or(4.0),
        bv_tempco: m.get("bv_tempco").copied().unwrap_or(0.0),
        ..BjtParams::default()
    };
    (
        name.trim().to_string(),
        Set {
            p,
            temp: g("temp"),
            area: g("area"),
        },
    )
}

fn close(got: f64, want: f64, floor: f64) -> bool {
    (got - want).abs() <= 1e-9 * want.abs() + floor
}

#[test]
fn matches_numpy_reference_at_every_bias_point() {
    let mut sets = BTreeMap::new();
    let mut header: Vec<&str> = Vec::new();
    let mut rows = 0;
    let mut regions = BTreeMap::new();
    for line in CSV.lines() {
        if line.starts_with("# set ") {
            let (n, s) = parse_set(line);
            sets.insert(n, s);
            continue;
        }
        if line.starts_with('#') || line.is_empty() {
            continue;
        }
        let f: Vec<&str> = line.split(',').collect();
        if f[0] == "set" {
            header = f;
            continue;
        }
        let col = |name: &str| -> f64 {
            let i = header.iter().position(|h| *h == name).expect("column");
            f[i].parse().expect("number")
        };
        let set = &sets[f[0]];
        *regions.entry(f[1].to_string()).or_insert(0) += 1;
        let (vbe, vbc) = (col("vbe"), col("vbc"));
        // Collector 0, base 1, emitter 2 (none grounded, so IE is stamped too).
        let nodes = BjtNodes {
            c: Some(0),
            b: Some(1),
            e: Some(2),
            ci: Some(0),
            cj: Some(0),
            bi: Some(1),
            ei: Some(2),
            phase: [None, None],
        };
        let q = Bjt::new(
            tankwave_circuit::ElementId::new(0),
            nodes,
            &set.p,
            set.area,
            set.temp,
        );
        let ctx = EvalCtx {
            junction_leak: 0.0,
            limit: false,
            ..EvalCtx::default()
        };
        let ve = 0.3; // arbitrary common offset: only differences matter
        let x = [ve + vbe - vbc, ve + vbe, ve];
        let mut st = DenseStamp::new(3);
        let mut state = [0.0; 2];
        q.eval(&x, &ctx, &mut state, &mut st);
        let i_floor = 1e-9 * q.constants().is;
        let q_floor = 1e-9 * (q.constants().cj_be + q.constants().cj_bc);
        let at = format!("set {} {} vbe {vbe} vbc {vbc}", f[0], f[1]);
        assert!(
            close(st.i[0], col("ic"), i_floor),
            "IC {} vs {} at {at}",
            st.i[0],
            col("ic")
        );
        assert!(
            close(st.i[1], col("ib"), i_floor),
            "IB {} vs {} at {at}",
            st.i[1],
            col("ib")
        );
        assert!(
            close(st.i[2], col("ie"), i_floor),
            "IE {} vs {} at {at}",
            st.i[2],
            col("ie")
        );
        // Charges: collector row holds −Q_BC, emitter row −Q_BE.
        assert!(
            close(-st.q[2], col("qbe"), q_floor),
            "Qbe {} vs {} at {at}",
            -st.q[2],
            col("qbe")
        );
        assert!(
            close(-st.q[0], col("qbc"), q_floor),
            "Qbc {} vs {} at {at}",
            -st.q[0],
            col("qbc")
        );
        let t = intrinsic(q.constants(), vbe, vbc, 0.0);
        assert!(close(t.base.q1, col("q1"), 0.0), "q1 at {at}");
        assert!(
            close(
                t.base.q2,
                col("q2"),
                1e-9 * q.constants().is * q.constants().inv_ikr
            ),
            "q2 at {at}"
        );
        assert!(close(t.base.qb, col("qb"), 0.0), "qb at {at}");
        rows += 1;
    }
    assert_eq!(sets.len(), 4);
    assert!(rows >= 150, "only {rows} rows");
    for r in [
        "cutoff",
        "forward",
        "saturation",
        "reverse",
        "high",
        "avalanche",
    ] {
        assert!(
            regions.get(r).copied().unwrap_or(0) >= 8,
            "region {r} under-covered"
        );
    }
}

const EPI_CSV: &str = include_str!("../../../tests/reference/bjt/epi.csv");

/// The epitaxial collector (quasi-saturation: G. M. Kull et al., IEEE Trans.
/// Electron Devices 32(6), 1985; charges after C. C. McAndrew et al., IEEE
/// JSSC 31(10), 1996; from memory) against the numpy evaluation in
/// tests/reference/bjt/gen.py → epi.csv, over both sides' base–collector
/// voltages from −20 V to 0.9 V, at 330 K with parameters taken at
/// 300.15 K (the R_CO and γ temperature laws) and area 2. Tolerance 1e-9
/// relative; floors 1e-12 A (the current is V_t-sized differences of
/// order-1 terms over R_CO ≈ 1 Ω) and 1e-24 C.
#[test]
fn epi_layer_matches_numpy_reference() {
    let mut m = BTreeMap::new();
    let mut rows = 0;
    let mut k = None;
    for line in EPI_CSV.lines() {
        if let Some(rest) = line.strip_prefix("# set E: ") {
            for kv in rest.split_whitespace() {
                let (a, b) = kv.split_once('=').expect("key=value");
                m.insert(a.to_string(), b.parse::<f64>().expect("number"));
            }
            let g = |s: &str| m[s];
            let p = BjtParams {
                r_epi: g("r_epi"),
                epi_gamma: g("epi_gamma"),
                epi_charge: g("epi_charge"),
                epi_temp_exp: g("epi_temp_exp"),
                gap: g("gap"),
                t_measured: g("t_measured"),
                ..BjtParams::default()
            };
            k = Some(tankwave_devices::bjt::BjtConstants::new(
                &p,
                g("area"),
                g("temp"),
            ));
            continue;
        }
        if line.starts_with('#') || line.starts_with("vbci") || line.is_empty() {
            continue;
        }
        let f: Vec<f64> = line
            .split(',')
            .map(|v| v.parse().expect("number"))
            .collect();
        let k = k.as_ref().expect("the set line comes first");
        let e = tankwave_devices::bjt::epi(k, f[0], f[1]);
        let at = format!("V_BCI {} V_BCX {}", f[0], f[1]);
        assert!(
            (e.i - f[2]).abs() <= 1e-9 * f[2].abs() + 1e-12,
            "I {} vs {} at {at}",
            e.i,
            f[2]
        );
        assert!(
            (e.qi - f[3]).abs() <= 1e-9 * f[3].abs() + 1e-24,
            "Qi {} vs {} at {at}",
            e.qi,
            f[3]
        );
        assert!(
            (e.qx - f[4]).abs() <= 1e-9 * f[4].abs() + 1e-24,
            "Qx {} vs {} at {at}",
            e.qx,
            f[4]
        );
        rows += 1;
    }
    assert_eq!(rows, 63);
}

const CROWDING_CSV: &str = include_str!("../../../tests/reference/bjt/crowding.csv");

/// Current crowding (J. R. Hauser, IEEE Trans. Electron Devices 11(5), 1964,
/// in Getreu's 1976 form, from memory) against the numpy evaluation in
/// tests/reference/bjt/gen.py → crowding.csv: the base resistance over base
/// currents from −1 A to 100 A, area 2; at I_B = I_RB·area it has fallen
/// halfway (0.506 of the way, from the law). Tolerance 1e-9 relative: the
/// generator evaluates the closed form directly, tankwave its cancellation-
/// free rewriting.
#[test]
fn crowded_base_resistance_matches_numpy_reference() {
    let mut k = None;
    let mut rows = 0;
    for line in CROWDING_CSV.lines() {
        if let Some(rest) = line.strip_prefix("# set F: ") {
            let m: BTreeMap<&str, f64> = rest
                .split_whitespace()
                .map(|kv| {
                    let (a, b) = kv.split_once('=').expect("key=value");
                    (a, b.parse::<f64>().expect("number"))
                })
                .collect();
            let p = BjtParams {
                r_base: m["r_base"],
                r_base_min: m["r_base_min"],
                base_half_current: m["base_half_current"],
                ..BjtParams::default()
            };
            k = Some(tankwave_devices::bjt::BjtConstants::new(
                &p, m["area"], 300.15,
            ));
            continue;
        }
        if line.starts_with('#') || line.starts_with("ib") || line.is_empty() {
            continue;
        }
        let f: Vec<f64> = line
            .split(',')
            .map(|v| v.parse().expect("number"))
            .collect();
        let k = k.as_ref().expect("the set line comes first");
        let r = tankwave_devices::bjt::base_resistance(k, f[0]).expect("crowding is on");
        assert!(
            (r.v - f[1]).abs() <= 1e-9 * f[1],
            "{} vs {} at {} A",
            r.v,
            f[1],
            f[0]
        );
        rows += 1;
    }
    assert_eq!(rows, 12);
}
