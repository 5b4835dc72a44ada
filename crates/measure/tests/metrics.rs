//! Metrics on hand-built periods against closed forms.

mod common;

use std::f64::consts::PI;
#[allow(unused_imports)]
use tankwave_circuit::handle::*;

use common::{alpha_closed, bjt, bjt_model, circuit, resistor, sample, truncated_cosine, vsource};
use num_complex::Complex64;
use tankwave_circuit::Figure;
use tankwave_circuit::{BjtParams, Circuit};
use tankwave_measure::units::{reflection, vswr};
use tankwave_measure::{
    measure, GainBasis, MeasureError, MeasureParams, Metrics, PeriodData, StressQuantity,
};

/// An ideal tuned class-C stage built from its waveforms: supply `vcc`
/// delivering the collector current, collector voltage Vcc − Vcc cos x (a
/// perfect tank, Vc1 = Vcc), a load resistor seeing only the fundamental,
/// R = Vc1/(α1 Imax).
struct ClassC {
    circuit: Circuit,
    v: Vec<Vec<f64>>,
    i: Vec<Vec<Vec<f64>>>,
    r: f64,
}

const VCC: f64 = 12.5;
const IMAX: f64 = 3.0;
const VB: f64 = 3.0;

fn class_c(full_deg: f64, n: usize, params: BjtParams) -> ClassC {
    let mut c = circuit(
        &["vcc", "c", "out", "b"],
        vec![
            vsource("vcc", Some(0), None, VCC, 0.0),
            bjt("q1", Some(1), Some(3), None, 0),
            resistor("rl", Some(2), None, 1.0, Some(10.0)),
        ],
    );
    c.models.push(bjt_model(params));
    c.output = Some(ElementId::new(2));
    let r = VCC / (alpha_closed(1, full_deg) * IMAX);
    if let Some(tankwave_circuit::Element {
        kind: tankwave_circuit::ElementKind::Resistor { r: rr, .. },
        ..
    }) = c.elements.get_mut(2)
    {
        *rr = r;
    }
    let ic: Vec<f64> = truncated_cosine(full_deg, n)
        .iter()
        .map(|x| x * IMAX)
        .collect();
    let vc = sample(n, |x| VCC - VCC * x.cos());
    let vout = sample(n, |x| VCC * x.cos());
    let iout: Vec<f64> = vout.iter().map(|v| v / r).collect();
    // the base swings ±VB around the grounded emitter: a reverse peak of VB
    let vb = sample(n, |x| VB * x.cos());
    let v = vec![vec![VCC; n], vc, vout, vb];
    let i = vec![
        vec![ic.iter().map(|x| -x).collect(), ic.clone()],
        vec![ic.clone(), vec![0.0; n], ic.iter().map(|x| -x).collect()],
        vec![iout.clone(), iout.iter().map(|x| -x).collect()],
    ];
    ClassC {
        circuit: c,
        v,
        i,
        r,
    }
}

fn run(s: &ClassC, k: usize) -> Metrics {
    measure(
        &PeriodData {
            node_floors: &[],
            circuit: &s.circuit,
            freq: 7.1e6,
            node_voltages: &s.v,
            terminal_currents: &s.i,
            transport_currents: &[],
            harmonics: k,
        },
        &MeasureParams::default(),
    )
    .unwrap()
}

/// Ideal efficiency η = ½ (α1/α0)(Vc1/Vcc) (Cripps 2006 ch. 3; Krauss,
/// Bostian, Raab 1980; closed forms from memory, confirmed by quadrature in
/// check-values.md), energy balance P_diss = P_dc − P_out (common practice),
/// and the conduction angle. P_dc is the sample mean of the pulse: its
/// aliasing error is ≈ 1e-8 relative at N = 2^14, hence 1e-6.
#[test]
fn ideal_class_c_efficiency_and_transistor_figures() {
    let n = 1 << 14;
    for ang in [120.0, 150.0, 180.0, 240.0] {
        let params = BjtParams {
            max_vce: 40.0,
            max_ic: 6.0,
            max_power: 50.0,
            max_tj: 473.15,
            max_vbe_reverse: 4.0,
            rth_ja: 5.0,
            ..Default::default()
        };
        let s = class_c(ang, n, params);
        let m = run(&s, 8);
        let eta = 0.5 * alpha_closed(1, ang) / alpha_closed(0, ang);
        assert!((m.efficiency.unwrap() - eta).abs() < 1e-6, "{ang} deg");
        let out = m.output.as_ref().unwrap();
        let p1 = 0.5 * VCC * VCC / s.r;
        assert!((out.p1_w - p1).abs() < 1e-9 * p1);
        assert!((m.pdc_w - VCC * alpha_closed(0, ang) * IMAX).abs() < 1e-6 * m.pdc_w);
        assert!(out.thd.unwrap() < 1e-6, "pure cosine output");
        let q = &m.transistors[0];
        // The load was sized with the closed-form α1, the collector sees the
        // sampled pulse: they differ by the aliasing error (≈ 1e-8 relative).
        assert!((q.dissipation_w - (m.pdc_w - out.p1_w)).abs() < 1e-6 * m.pdc_w);
        assert!((q.vce_peak_v - 2.0 * VCC).abs() < 1e-9);
        assert!(q.vce_min_v.abs() < 1e-9);
        // the base at VB cos x (sampled at x = 0 and π): the reverse peak is
        // VB exactly (common practice: the peak of the reversed voltage)
        assert!((q.vbe_reverse_v - VB).abs() < 1e-12);
        assert!((q.ic_peak_a - IMAX).abs() < 1e-12);
        assert!((q.conduction_deg - ang).abs() <= 360.0 / n as f64);
        let tj = 298.15 + 5.0 * q.dissipation_w; // common practice: Tj = Ta + Rth·P
        assert!((q.tj_k.unwrap() - tj).abs() < 1e-9);
        // Stress rows: fractions of the transistor ratings.
        let row = |qty| {
            m.stress
                .iter()
                .find(|r| r.element == "q1" && r.quantity == qty)
                .unwrap()
        };
        assert!((row(StressQuantity::VcePeak).fraction.unwrap() - 2.0 * VCC / 40.0).abs() < 1e-9);
        assert!((row(StressQuantity::IcPeak).fraction.unwrap() - IMAX / 6.0).abs() < 1e-12);
        assert!(
            (row(StressQuantity::Dissipation).fraction.unwrap() - q.dissipation_w / 50.0).abs()
                < 1e-12
        );
        assert!(
            (row(StressQuantity::JunctionTemp).fraction.unwrap()
                - (tj - 298.15) / (473.15 - 298.15))
                .abs()
                < 1e-9
        );
        // the reverse base–emitter peak against its rating (value / rating)
        let vr = row(StressQuantity::VbeReverse);
        assert!((vr.value - VB).abs() < 1e-12);
        assert!((vr.fraction.unwrap() - VB / 4.0).abs() < 1e-12);
        // No drive source: PAE and gain are missing, with reasons.
        assert!(m.pae.is_none() && m.gain_db.is_none());
        assert!(m.note("pae").is_some() && m.note("gain").is_some());
    }
}

/// A resistor fed by a known waveform v = V0 + V1 cos x + V3 cos(3x + φ)
/// from an ideal drive source: P_n = V_n²/(2R), mean power
/// V0²/R + Σ V_n²/(2R), THD = V3/V1, harmonic 3 at 20 log10(V3/V1) dBc
/// (common practice: power in a resistor). Exact up to rounding.
#[test]
fn resistor_fed_by_known_waveform() {
    let (v0, v1, v3, phi, r) = (2.0, 10.0, 0.5, 0.7, 50.0);
    let n = 64;
    let mut c = circuit(
        &["a"],
        vec![
            vsource("vs", Some(0), None, v0, 0.0),
            resistor("rl", Some(0), None, r, Some(2.0)),
        ],
    );
    c.output = Some(ElementId::new(1));
    c.input = Some(ElementId::new(0));
    let v = sample(n, |x| v0 + v1 * x.cos() + v3 * (3.0 * x + phi).cos());
    let i: Vec<f64> = v.iter().map(|x| x / r).collect();
    let neg: Vec<f64> = i.iter().map(|x| -x).collect();
    let m = measure(
        &PeriodData {
            node_floors: &[],
            circuit: &c,
            freq: 3.5e6,
            node_voltages: std::slice::from_ref(&v),
            terminal_currents: &[vec![neg.clone(), i.clone()], vec![i.clone(), neg]],
            transport_currents: &[],
            harmonics: 5,
        },
        &MeasureParams::default(),
    )
    .unwrap();
    let o = m.output.as_ref().unwrap();
    let h = |k: usize| &o.harmonics[k - 1];
    assert!((o.p1_w - v1 * v1 / (2.0 * r)).abs() < 1e-12);
    assert!(h(2).power_w.abs() < 1e-12);
    assert!((h(3).power_w - v3 * v3 / (2.0 * r)).abs() < 1e-12);
    assert!((h(3).dbc.unwrap() - 20.0 * (v3 / v1).log10()).abs() < 1e-9);
    assert!((h(1).dbm - 10.0 * (v1 * v1 / (2.0 * r) / 1e-3).log10()).abs() < 1e-9);
    assert!((h(3).freq_hz - 10.5e6).abs() < 1e-3);
    assert!((o.thd.unwrap() - v3 / v1).abs() < 1e-12);
    let mean_p = v0 * v0 / r + (v1 * v1 + v3 * v3) / (2.0 * r);
    assert!((o.total_power_w - mean_p).abs() < 1e-12);
    assert!((o.dc_power_w - v0 * v0 / r).abs() < 1e-12);
    let st = m.stress.iter().find(|s| s.element == "rl").unwrap();
    assert!((st.value - mean_p).abs() < 1e-12);
    assert!((st.fraction.unwrap() - mean_p / 2.0).abs() < 1e-12);
    // The drive is ideal (rs = 0): gain is referred to the input power, 0 dB here.
    let d = m.drive.as_ref().unwrap();
    assert!((d.pin_w - v1 * v1 / (2.0 * r)).abs() < 1e-12);
    assert!((d.average_power_w - mean_p).abs() < 1e-12);
    let z = d.z_in.unwrap();
    assert!((z.re - r).abs() < 1e-9 && z.im.abs() < 1e-9);
    assert_eq!(m.gain_basis, Some(GainBasis::InputPower));
    assert!(m.gain_db.unwrap().abs() < 1e-9);
    assert!(d.vswr.is_none() && m.note("input_vswr").is_some());
    // No supply: no efficiency, with a reason.
    assert!(m.supplies.is_empty() && m.pdc_w == 0.0);
    assert!(m.efficiency.is_none() && m.note("efficiency").is_some());
}

/// Drive source with Rs = 50 Ω into Z = 30 + j20 Ω, EMF 10 V peak: Z_in = Z,
/// VSWR from Γ = (Z − Rs)/(Z + Rs), available power |Vs|²/(8 Rs), and the
/// delivered power P_in = P_avs (1 − |Γ|²) (D. M. Pozar, Microwave
/// Engineering, 4th ed., §2.3 and §11.1, from memory). Exact up to rounding.
#[test]
fn drive_impedance_vswr_and_available_power() {
    let (rs, z, vs) = (50.0, Complex64::new(30.0, 20.0), Complex64::new(10.0, 0.0));
    let i1 = vs / (z + rs);
    let v1 = z * i1;
    let n = 32;
    let mut c = circuit(&["in"], vec![vsource("drive", Some(0), None, 0.0, rs)]);
    c.input = Some(ElementId::new(0));
    let v = sample(n, |x| (v1 * Complex64::cis(x)).re);
    let ip: Vec<f64> = sample(n, |x| -(i1 * Complex64::cis(x)).re);
    let ineg: Vec<f64> = ip.iter().map(|x| -x).collect();
    let m = measure(
        &PeriodData {
            node_floors: &[],
            circuit: &c,
            freq: 14e6,
            node_voltages: &[v],
            terminal_currents: &[vec![ip, ineg]],
            transport_currents: &[],
            harmonics: 3,
        },
        &MeasureParams::default(),
    )
    .unwrap();
    let d = m.drive.as_ref().unwrap();
    let zin = d.z_in.unwrap();
    assert!((zin.re - 30.0).abs() < 1e-9 && (zin.im - 20.0).abs() < 1e-9);
    let g = reflection(z, rs).unwrap().norm();
    assert!((d.vswr.unwrap() - (1.0 + g) / (1.0 - g)).abs() < 1e-9);
    assert!((d.vswr.unwrap() - vswr(z, rs).unwrap()).abs() < 1e-12);
    assert!((d.emf1_v.unwrap() - 10.0).abs() < 1e-9);
    let pavs = 100.0 / (8.0 * rs);
    assert!((d.pavs_w.unwrap() - pavs).abs() < 1e-12);
    assert!((d.pin_w - pavs * (1.0 - g * g)).abs() < 1e-12);
    // No output element: output figures missing with a reason, not NaN.
    assert!(m.output.is_none() && m.note("pout").is_some());
    assert!(m.gain_db.is_none());
}

/// Walk a serialized value; nulls are allowed only under these Option fields.
fn check_no_nan(v: &serde_json::Value, key: &str, path: &str) {
    const OPTIONAL: &[&str] = &[
        "output",
        "efficiency",
        "pae",
        "drive",
        "gain_db",
        "gain_basis",
        "thd",
        "dbc",
        "floor_dbc",
        "source_resistance_ohm",
        "emf1_v",
        "pavs_w",
        "z_in",
        "vswr",
        "rth_k_per_w",
        "tj_k",
        "rating",
        "fraction",
    ];
    match v {
        serde_json::Value::Null => {
            assert!(OPTIONAL.contains(&key), "null (NaN?) at {path}")
        }
        serde_json::Value::Array(a) => {
            for (i, x) in a.iter().enumerate() {
                check_no_nan(x, key, &format!("{path}[{i}]"));
            }
        }
        serde_json::Value::Object(o) => {
            for (k, x) in o {
                check_no_nan(x, k, &format!("{path}.{k}"));
            }
        }
        _ => {}
    }
}

/// All-zero waveforms (no drive, nothing switched on): every figure is a
/// number or a documented None, never NaN (engineering rule of the project).
#[test]
fn zero_input_never_gives_nan() {
    let n = 64;
    let mut s = class_c(
        150.0,
        n,
        BjtParams {
            rth_ja: 5.0,
            max_vce: 40.0,
            ..Default::default()
        },
    );
    let mut c = s.circuit.clone();
    c.elements.push(vsource("drive", Some(3), None, 0.0, 50.0));
    c.input = Some(ElementId::new(3));
    s.circuit = c;
    for row in s.v.iter_mut() {
        row.iter_mut().for_each(|x| *x = 0.0);
    }
    s.i.push(vec![vec![0.0; n], vec![0.0; n]]);
    for el in s.i.iter_mut() {
        for t in el.iter_mut() {
            t.iter_mut().for_each(|x| *x = 0.0);
        }
    }
    let m = run(&s, 4);
    let json = serde_json::to_value(&m).unwrap();
    check_no_nan(&json, "", "metrics");
    assert!(m.efficiency.is_none() && m.gain_db.is_none() && m.pae.is_none());
    assert!(m.output.as_ref().unwrap().thd.is_none());
    assert!(m
        .output
        .as_ref()
        .unwrap()
        .harmonics
        .iter()
        .all(|h| h.dbc.is_none()));
    assert_eq!(m.transistors[0].conduction_deg, 0.0);
    let d = m.drive.as_ref().unwrap();
    assert!(d.z_in.is_none() && d.vswr.is_none());
    // Tj with zero dissipation is the ambient.
    assert!((m.transistors[0].tj_k.unwrap() - 298.15).abs() < 1e-12);
}

/// A pnp reads positive in normal operation (sign convention of
/// docs/measurements.md); no Rth → Tj not reported.
#[test]
fn pnp_signs_and_missing_rth() {
    let n = 256;
    let mut s = class_c(
        180.0,
        n,
        BjtParams {
            pnp: true,
            ..Default::default()
        },
    );
    for row in s.v.iter_mut() {
        row.iter_mut().for_each(|x| *x = -*x);
    }
    for el in s.i.iter_mut() {
        for t in el.iter_mut() {
            t.iter_mut().for_each(|x| *x = -*x);
        }
    }
    let m = run(&s, 4);
    let q = &m.transistors[0];
    assert!(q.pnp);
    assert!((q.ic_peak_a - IMAX).abs() < 1e-12);
    assert!((q.vce_peak_v - 2.0 * VCC).abs() < 1e-9);
    // the base voltage flipped with the rest: the pnp's junction is reversed
    // by VB at the other half of the period, the same peak
    assert!((q.vbe_reverse_v - VB).abs() < 1e-12);
    assert!((q.conduction_deg - 180.0).abs() <= 360.0 / n as f64);
    assert!(q.dissipation_w > 0.0);
    assert!(q.tj_k.is_none() && m.note("tj q1").is_some());
    assert!(m.efficiency.unwrap() > 0.78 && m.efficiency.unwrap() < PI / 4.0 + 1e-3);
}

/// Malformed periods are typed errors carrying the numbers.
#[test]
fn malformed_periods_are_errors() {
    let s = class_c(180.0, 64, BjtParams::default());
    let data = |v: &'_ [Vec<f64>], i: &'_ [Vec<Vec<f64>>], k: usize, f: f64| {
        measure(
            &PeriodData {
                node_floors: &[],
                circuit: &s.circuit,
                freq: f,
                node_voltages: v,
                terminal_currents: i,
                transport_currents: &[],
                harmonics: k,
            },
            &MeasureParams::default(),
        )
    };
    assert_eq!(
        data(&s.v[..3], &s.i, 4, 1e6).unwrap_err(),
        MeasureError::NodeCount {
            expected: 4,
            got: 3
        }
    );
    assert_eq!(
        data(&s.v, &s.i[..2], 4, 1e6).unwrap_err(),
        MeasureError::ElementCount {
            expected: 3,
            got: 2
        }
    );
    assert_eq!(
        data(&s.v, &s.i, 4, f64::NAN).unwrap_err().to_string(),
        "fundamental frequency NaN Hz is not finite and positive"
    );
    assert_eq!(
        data(&s.v, &s.i, 32, 1e6).unwrap_err(),
        MeasureError::TooFewSamples {
            samples: 64,
            harmonics: 32,
            need: 64
        }
    );
    let mut bad = s.i.clone();
    bad[1].pop();
    assert!(matches!(
        data(&s.v, &bad, 4, 1e6).unwrap_err(),
        MeasureError::TerminalCount {
            expected: 3,
            got: 2,
            ..
        }
    ));
    let mut nan = s.v.clone();
    nan[2][5] = f64::INFINITY;
    assert!(matches!(
        data(&nan, &s.i, 4, 1e6).unwrap_err(),
        MeasureError::NotFinite { index: 5, .. }
    ));
    let mut short = s.v.clone();
    short[1].truncate(32);
    assert!(matches!(
        data(&short, &s.i, 4, 1e6).unwrap_err(),
        MeasureError::Length {
            expected: 64,
            got: 32,
            ..
        }
    ));
}

/// End to end: measure a period, then judge the stage file's requirements.
/// A 50 Ω load fed with 100 V peak at 7.1 MHz (100 W, common practice:
/// V²/(2R)) and a second harmonic 45 dB down: `harmonics <= us_amateur_hf`
/// passes with 2 dB margin (47 CFR §97.307(d): −43 dBc), `pout >= 120 W`
/// fails by 20 W.
#[test]
fn measure_then_evaluate() {
    use tankwave_circuit::{Bound, Cmp, Metric, Origin, Requirement};
    let (r, v1) = (50.0, 100.0);
    let v2 = v1 * 10f64.powf(-45.0 / 20.0);
    let n = 128;
    let mut c = circuit(&["a"], vec![resistor("rl", Some(0), None, r, None)]);
    c.output = Some(ElementId::new(0));
    let req = |metric, cmp, bound| Requirement {
        metric,
        cmp,
        bound,
        text: "require".into(),
        origin: Origin::default(),
    };
    c.requirements = vec![
        req(
            Metric::of(Figure::Harmonics),
            Cmp::Le,
            Bound::BuiltinMask("us_amateur_hf".into()),
        ),
        req(Metric::of(Figure::Pout), Cmp::Ge, Bound::Value(120.0)),
    ];
    let v = sample(n, |x| v1 * x.cos() + v2 * (2.0 * x + 0.3).cos());
    let i: Vec<f64> = v.iter().map(|x| x / r).collect();
    let neg: Vec<f64> = i.iter().map(|x| -x).collect();
    let m = measure(
        &PeriodData {
            node_floors: &[],
            circuit: &c,
            freq: 7.1e6,
            node_voltages: std::slice::from_ref(&v),
            terminal_currents: &[vec![i, neg]],
            transport_currents: &[],
            harmonics: 8,
        },
        &MeasureParams::default(),
    )
    .unwrap();
    let verdicts = tankwave_measure::evaluate(&c, &m);
    assert!(verdicts[0].pass);
    assert!((verdicts[0].margin.unwrap() - 2.0).abs() < 1e-9);
    assert_eq!(verdicts[0].harmonics.len(), 7);
    assert_eq!(verdicts[0].element.as_deref(), Some("harmonic 2"));
    assert!(!verdicts[1].pass);
    assert!((verdicts[1].margin.unwrap() + 20.0).abs() < 1e-9);
}

mod never_panics {
    use super::*;
    use proptest::prelude::*;
    use tankwave_circuit::{Bound, Cmp, Metric, Origin, Requirement};

    /// One requirement of every metric kind (all `<=`).
    fn every_metric() -> Vec<Requirement> {
        let q = Some(ElementId::new(1));
        let metrics = [
            (Metric::of(Figure::Pout), 1.0),
            (Metric::of(Figure::Efficiency), 0.5),
            (Metric::of(Figure::Pae), 0.5),
            (Metric::of(Figure::Gain), 10.0),
            (Metric::harmonic(2), -30.0),
            (Metric::of(Figure::Harmonics), -40.0),
            (Metric::of(Figure::Thd), 0.1),
            (Metric::of(Figure::InputVswr), 2.0),
            (Metric::about(Figure::VcePeak, q), 30.0),
            (Metric::about(Figure::IcPeak, None), 3.0),
            (Metric::about(Figure::Dissipation, q), 10.0),
            (Metric::about(Figure::Tj, None), 400.0),
            (Metric::about(Figure::Stress, None), 0.8),
            (Metric::of(Figure::Pdc), 10.0),
            (Metric::about(Figure::Conduction, q), 180.0),
        ];
        let mut v: Vec<Requirement> = metrics
            .into_iter()
            .map(|(metric, b)| Requirement {
                metric,
                cmp: Cmp::Le,
                bound: Bound::Value(b),
                text: String::new(),
                origin: Origin::default(),
            })
            .collect();
        v.push(Requirement {
            metric: Metric::of(Figure::Harmonics),
            cmp: Cmp::Le,
            bound: Bound::BuiltinMask("itu_amateur".into()),
            text: String::new(),
            origin: Origin::default(),
        });
        v
    }

    proptest! {
        /// Any finite current gives an angle in [0, 360] (project rule: no
        /// panic, no NaN on any input).
        #[test]
        fn conduction_angle_is_bounded(
            x in proptest::collection::vec(-1e6f64..1e6, 0..200),
            thr in -1.0f64..2.0,
        ) {
            let a = tankwave_measure::conduction_angle_deg(&x, thr);
            prop_assert!(a.is_finite() && (0.0..=360.0).contains(&a));
        }

        /// Any finite waveforms on the class-C circuit give metrics with no NaN.
        #[test]
        fn random_periods_have_no_nan(
            seed in proptest::collection::vec(-1e3f64..1e3, 4 * 32 + 7 * 32),
        ) {
            let n = 32;
            let s = class_c(150.0, n, BjtParams { rth_ja: 3.0, ..Default::default() });
            let v: Vec<Vec<f64>> = (0..4).map(|k| seed[k * n..(k + 1) * n].to_vec()).collect();
            let mut off = 4 * n;
            let i: Vec<Vec<Vec<f64>>> = s
                .i
                .iter()
                .map(|el| {
                    el.iter()
                        .map(|_| {
                            let t = seed[off..off + n].to_vec();
                            off += n;
                            t
                        })
                        .collect()
                })
                .collect();
            let m = measure(
                &PeriodData {
                    node_floors: &[],
                    circuit: &s.circuit,
                    freq: 1e6,
                    node_voltages: &v,
                    terminal_currents: &i,
                    transport_currents: &[],
                    harmonics: 8,
                },
                &MeasureParams::default(),
            )
            .unwrap();
            check_no_nan(&serde_json::to_value(&m).unwrap(), "", "metrics");
            let mut c = s.circuit.clone();
            c.requirements = every_metric();
            for v in tankwave_measure::evaluate(&c, &m) {
                prop_assert!(v.margin.is_none_or(f64::is_finite));
                prop_assert!(v.value.is_none_or(f64::is_finite));
                prop_assert!(v.pass == v.margin.is_some_and(|x| x >= 0.0) || v.margin.is_none());
            }
        }
    }
}

/// The output floor in dBc is 20·log10(δV/|V1|) of the voltage floor the
/// solver gives per node (docs/measurements.md, "Numerical floor"): 1 mV
/// under a 10 V carrier is −80 dBc; harmonic 3 at 0.5 V is resolved, the
/// absent harmonic 2 is not and has no level (common practice: power in a
/// resistor, as the test above).
#[test]
fn harmonics_under_the_node_floor_are_not_resolved() {
    let (v1, v3, r) = (10.0, 0.5, 50.0);
    let n = 64;
    let mut c = circuit(
        &["a"],
        vec![
            vsource("vs", Some(0), None, 0.0, 0.0),
            resistor("rl", Some(0), None, r, None),
        ],
    );
    c.output = Some(ElementId::new(1));
    let v = sample(n, |x| v1 * x.cos() + v3 * (3.0 * x).cos());
    let i: Vec<f64> = v.iter().map(|x| x / r).collect();
    let neg: Vec<f64> = i.iter().map(|x| -x).collect();
    let m = measure(
        &PeriodData {
            node_floors: &[1e-3],
            circuit: &c,
            freq: 3.5e6,
            node_voltages: std::slice::from_ref(&v),
            terminal_currents: &[vec![neg.clone(), i.clone()], vec![i, neg]],
            transport_currents: &[],
            harmonics: 5,
        },
        &MeasureParams::default(),
    )
    .unwrap();
    let o = m.output.as_ref().unwrap();
    assert!((o.floor_dbc.unwrap() + 80.0).abs() < 1e-9);
    assert!(o.harmonics[0].resolved && o.harmonics[2].resolved);
    assert!((o.harmonics[2].dbc.unwrap() - 20.0 * (v3 / v1).log10()).abs() < 1e-9);
    for k in [1, 3, 4] {
        assert!(!o.harmonics[k].resolved && o.harmonics[k].dbc.is_none());
    }
}
