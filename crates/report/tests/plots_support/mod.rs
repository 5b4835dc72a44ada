//! Hand-made inputs for the plot tests (invented demo data) and small
//! helpers to inspect SVG/HTML documents.
#![allow(dead_code)]

use std::f64::consts::PI;

use num_complex::Complex64;
use tankwave_circuit::handle::{ElementId, ModelId, NodeId};
use tankwave_circuit::{
    BjtParams, Circuit, Element, ElementKind, Model, ModelParams, Origin, SteadyMethod,
};
use tankwave_devices::UnknownKind;
use tankwave_measure::{
    HarmonicPower, HarmonicRow, MaskEvaluation, Metrics, OutputMetrics, StressQuantity, StressRow,
    TransistorMetrics, Unit, Verdict,
};
use tankwave_report::plot::{Curve, Surface, SweepCurves};
use tankwave_solve::{
    AcResult, NewtonInfo, OpResult, PeriodicSolution, SteadyInfo, Strategy, TransientInfo,
    TransientResult,
};

/// Carrier of the demo stage, Hz.
pub const F0: f64 = 7.1e6;
/// Element index of the transistor.
pub const Q1: ElementId = ElementId::new(0);
/// Element index of the load.
pub const RL: ElementId = ElementId::new(1);
/// Samples per period.
pub const N: usize = 256;

fn origin() -> Origin {
    Origin {
        file: "demo-stage.tw".into(),
        line: 1,
        column: 1,
    }
}

/// Nodes: vcc(0), col(1), base(2), out(3). Q1 (c=col, b=base, e=gnd), RL (out, gnd).
pub fn circuit() -> Circuit {
    Circuit {
        title: Some("demo".into()),
        nodes: vec!["vcc".into(), "col".into(), "base".into(), "out".into()],
        elements: vec![
            Element {
                name: "Q1".into(),
                kind: ElementKind::Bjt {
                    c: NodeId::node(1),
                    b: NodeId::node(2),
                    e: NodeId::GROUND,
                    model: ModelId::new(0),
                    area: 1.0,
                },
                origin: origin(),
            },
            Element {
                name: "RL".into(),
                kind: ElementKind::Resistor {
                    a: NodeId::node(3),
                    b: NodeId::GROUND,
                    r: 50.0,
                    rating_w: None,
                    ntc_b: None,
                },
                origin: origin(),
            },
        ],
        models: vec![Model {
            name: "demo_npn".into(),
            params: ModelParams::Bjt(BjtParams::default()),
            origin: origin(),
        }],
        output: Some(RL),
        ..Default::default()
    }
}

/// An idealised class-C period: cosine-pulse collector current of
/// conduction angle `theta_deg` centred on t = 0, sinusoidal collector and
/// output voltages.
pub fn class_c_stage(theta_deg: f64) -> (Circuit, PeriodicSolution) {
    let half = (theta_deg / 2.0).to_radians();
    let wt: Vec<f64> = (0..N).map(|k| 2.0 * PI * k as f64 / N as f64).collect();
    let vcc = vec![12.0; N];
    let vce: Vec<f64> = wt.iter().map(|w| 12.0 - 10.5 * w.cos()).collect();
    let vbe: Vec<f64> = wt.iter().map(|w| -0.4 + 1.3 * w.cos()).collect();
    let vout: Vec<f64> = wt.iter().map(|w| -30.0 * w.cos()).collect();
    let ic: Vec<f64> = wt
        .iter()
        .map(|w| 2.2 * ((w.cos() - half.cos()) / (1.0 - half.cos())).max(0.0))
        .collect();
    let ib: Vec<f64> = ic.iter().map(|i| i / 20.0).collect();
    let ie: Vec<f64> = ic.iter().zip(&ib).map(|(c, b)| -(c + b)).collect();
    let il: Vec<f64> = vout.iter().map(|v| v / 50.0).collect();
    let sol = PeriodicSolution {
        freq: F0,
        harmonics: 9,
        samples_per_period: N,
        x: vec![vcc, vce, vbe, vout],
        terminal_currents: vec![
            vec![ic, ib, ie],
            vec![il.clone(), il.iter().map(|v| -v).collect()],
        ],
        transport_currents: vec![None, None],
        info: SteadyInfo {
            tolerance: 1e-6,
            method: SteadyMethod::Balance,
            fell_back_from: None,
            iterations: 7,
            residual: 2e-7,
            system_size: 40,
            balance: None,
            shooting: None,
            floquet: None,
            floor: Vec::new(),
            accuracy: None,
        },
    };
    (circuit(), sol)
}

pub fn harmonic(n: usize, dbc: f64) -> HarmonicPower {
    let p1 = 9.0;
    let p = p1 * 10f64.powf(dbc / 10.0);
    HarmonicPower {
        resolved: true,
        n,
        freq_hz: n as f64 * F0,
        power_w: p,
        dbm: 10.0 * (p / 1e-3).log10(),
        dbc: Some(dbc),
        voltage_v: (2.0 * p * 50.0).sqrt(),
        current_a: (2.0 * p / 50.0).sqrt(),
    }
}

/// Output levels (dBc) of harmonics 1..=5.
pub const LEVELS: [f64; 5] = [0.0, -38.0, -40.5, -55.0, -61.0];
/// Allowed levels (dBc) of harmonics 2..=5.
pub const ALLOWED: [f64; 4] = [-43.0, -43.0, -43.0, -43.0];

pub fn metrics() -> Metrics {
    let h: Vec<HarmonicPower> = LEVELS
        .iter()
        .enumerate()
        .map(|(k, d)| harmonic(k + 1, *d))
        .collect();
    Metrics {
        freq_hz: F0,
        harmonics: 5,
        samples: N,
        output: Some(OutputMetrics {
            floor_dbc: None,
            element: "RL".into(),
            element_id: RL,
            p1_w: 9.0,
            p1_dbm: 39.54,
            harmonic_power_w: h.iter().skip(1).map(|x| x.power_w).sum(),
            dc_power_w: 0.0,
            total_power_w: 9.1,
            thd: Some(0.014),
            harmonics: h,
        }),
        supplies: vec![],
        pdc_w: 12.5,
        efficiency: Some(0.72),
        pae: None,
        drive: None,
        gain_db: None,
        gain_basis: None,
        transistors: vec![TransistorMetrics {
            element: "Q1".into(),
            element_id: Q1,
            pnp: false,
            conduction_deg: 150.0,
            conduction_pulses: 1,
            conduction_notches: 0,
            vce_peak_v: 22.5,
            vce_min_v: 1.5,
            vbe_reverse_v: 3.0,
            ic_peak_a: 2.2,
            ic_mean_a: 1.04,
            dissipation_w: 3.5,
            rth_k_per_w: None,
            tj_k: None,
            tj_peak_k: None,
            multiplication_peak: None,
        }],
        stress: vec![StressRow {
            element: "Q1".into(),
            element_id: Q1,
            quantity: StressQuantity::VcePeak,
            value: 22.5,
            unit: "V".into(),
            rating: Some(36.0),
            fraction: Some(22.5 / 36.0),
            basis: None,
        }],
        notes: vec![],
        two_tone: None,
        keying: None,
    }
}

/// Mask rows for harmonics 2..=5 against −43 dBc: harmonic 2 is left
/// unconstrained, harmonic 3 (−40.5 dBc) fails by 2.5 dB and is the worst.
pub fn mask_eval() -> MaskEvaluation {
    let rows: Vec<HarmonicRow> = (2..=5)
        .map(|n| {
            let measured = LEVELS[n - 1];
            let allowed = ALLOWED[n - 2];
            let allowed = if n == 2 { None } else { Some(allowed) };
            let margin = allowed.map(|a| a - measured);
            HarmonicRow {
                resolved: true,
                n,
                freq_hz: n as f64 * F0,
                power_w: 0.0,
                measured_dbc: Some(measured),
                floor_dbc: None,
                judged_dbc: measured,
                allowed_dbc: allowed,
                margin_db: margin,
                pass: margin.is_none_or(|m| m >= 0.0),
            }
        })
        .collect();
    MaskEvaluation {
        mask: "demo-mask".into(),
        f0_hz: F0,
        carrier_w: 9.0,
        worst: Some(1),
        pass: false,
        rows,
    }
}

pub fn verdicts() -> Vec<Verdict> {
    let base = Verdict {
        requirement: "pout >= 8 W".into(),
        line: 12,
        metric: "pout".into(),
        unit: Unit::Watt,
        cmp: ">=".into(),
        limit: Some(8.0),
        mask: None,
        value: Some(9.0),
        margin: Some(1.0),
        pass: true,
        not_measured: None,
        element: None,
        harmonics: vec![],
    };
    let mask = Verdict {
        requirement: "harmonics <= mask demo-mask".into(),
        line: 13,
        metric: "harmonics".into(),
        unit: Unit::Dbc,
        cmp: "<=".into(),
        limit: Some(-43.0),
        mask: Some("demo-mask".into()),
        value: Some(-40.5),
        margin: Some(-2.5),
        pass: false,
        not_measured: None,
        element: None,
        harmonics: mask_eval().rows,
    };
    vec![base, mask]
}

/// A transient start-up: the output rises as 1 − e^(−t/τ) over 40 periods.
pub fn startup_run() -> (Circuit, TransientResult) {
    let per = 100;
    let n = 40 * per;
    let tau = 1.2e-6;
    let time: Vec<f64> = (0..n).map(|k| k as f64 / (per as f64 * F0)).collect();
    let x: Vec<Vec<f64>> = time
        .iter()
        .map(|t| {
            let a = 30.0 * (1.0 - (-t / tau).exp());
            let w = 2.0 * PI * F0 * t;
            vec![12.0, 12.0 - 0.35 * a * w.cos(), 0.0, -a * w.cos()]
        })
        .collect();
    let tr = TransientResult {
        names: vec![
            "V[vcc]".into(),
            "V[col]".into(),
            "V[base]".into(),
            "V[out]".into(),
        ],
        time,
        x,
        restarts: vec![],
        info: TransientInfo {
            accepted: n,
            rejected_lte: 0,
            rejected_newton: 0,
            newton_iterations: 2 * n,
            op: None,
        },
    };
    (circuit(), tr)
}

/// A first-order low-pass seen at "out" driven from "in": H = 1/(1 + j f/fc).
pub fn ac_result() -> AcResult {
    let fc = 7e6;
    let freq: Vec<f64> = (0..60)
        .map(|k| 1e6 * 10f64.powf(k as f64 / 59.0 * 1.5))
        .collect();
    let x = freq
        .iter()
        .map(|f| {
            let h = Complex64::new(1.0, 0.0) / Complex64::new(1.0, f / fc);
            vec![Complex64::new(1.0, 0.0), h]
        })
        .collect();
    AcResult {
        freq,
        names: vec!["V[in]".into(), "V[out]".into()],
        x,
        impedance: None,
        op: OpResult {
            x: vec![0.0, 0.0],
            names: vec!["V[in]".into(), "V[out]".into()],
            kinds: vec![UnknownKind::Voltage; 2],
            info: NewtonInfo {
                iterations: 1,
                residual: 0.0,
                strategy: Strategy::Newton,
            },
            devices: vec![],
        },
    }
}

/// `groups` curves of output power against C1, `points` each, with a limit.
pub fn sweep_curves(groups: usize, points: usize) -> SweepCurves {
    let curves = (0..groups)
        .map(|g| {
            let c2 = 100e-12 + 50e-12 * g as f64;
            let x: Vec<f64> = (0..points)
                .map(|k| 200e-12 + k as f64 * 300e-12 / (points - 1).max(1) as f64)
                .collect();
            let y: Vec<f64> = x
                .iter()
                .map(|c| 12.0 + 3.0 * g as f64 - ((c - 350e-12) / 60e-12).powi(2))
                .collect();
            Curve {
                label: format!("C2 = {:.0} pF", c2 * 1e12),
                x,
                y,
            }
        })
        .collect();
    SweepCurves {
        title: "Output power against C1".into(),
        x_name: "C1".into(),
        x_unit: "F".into(),
        y_name: "output power".into(),
        y_unit: "W".into(),
        curves,
        limit: Some((10.0, "pout >= 10 W".into())),
    }
}

/// Deterministic normal-looking values (Box–Muller on a fixed LCG).
pub fn normal_values(n: usize, mean: f64, sd: f64) -> Vec<f64> {
    let mut s: u64 = 0x2545_f491_4f6c_dd1d;
    let mut u = || {
        s = s
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((s >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    };
    (0..n)
        .map(|_| {
            let (a, b) = (u(), u());
            mean + sd * (-2.0 * a.ln()).sqrt() * (2.0 * PI * b).cos()
        })
        .collect()
}

/// Efficiency over C1 × C2 with its peak at (400 pF, 220 pF).
pub fn surface() -> Surface {
    let xs: Vec<f64> = (0..15).map(|k| 300e-12 + k as f64 * 15e-12).collect();
    let ys: Vec<f64> = (0..11).map(|k| 170e-12 + k as f64 * 10e-12).collect();
    let values = ys
        .iter()
        .map(|y| {
            xs.iter()
                .map(|x| {
                    0.75 - ((x - 400e-12) / 120e-12).powi(2) - ((y - 220e-12) / 80e-12).powi(2)
                })
                .collect()
        })
        .collect();
    Surface {
        title: "Efficiency around the tuned point".into(),
        x_name: "C1".into(),
        x_unit: "F".into(),
        y_name: "C2".into(),
        y_unit: "F".into(),
        z_name: "efficiency".into(),
        z_unit: "".into(),
        xs,
        ys,
        values,
        optimum: Some((400e-12, 220e-12)),
    }
}

pub fn parse(svg: &str) -> roxmltree::Document<'_> {
    roxmltree::Document::parse(svg).expect("SVG is well-formed XML")
}

pub fn has_class(n: &roxmltree::Node, class: &str) -> bool {
    n.attribute("class")
        .is_some_and(|c| c.split_whitespace().any(|x| x == class))
}

/// `data-label`s of the series groups, in document order.
pub fn series_labels(doc: &roxmltree::Document) -> Vec<String> {
    doc.descendants()
        .filter(|n| n.has_tag_name("g") && has_class(n, "series"))
        .map(|n| n.attribute("data-label").unwrap_or("").to_string())
        .collect()
}

pub fn legend_labels(doc: &roxmltree::Document) -> Vec<String> {
    doc.descendants()
        .filter(|n| n.has_tag_name("g") && has_class(n, "legend-entry"))
        .map(|n| n.attribute("data-label").unwrap_or("").to_string())
        .collect()
}

pub fn count_class(doc: &roxmltree::Document, class: &str) -> usize {
    doc.descendants()
        .filter(|n| n.has_tag_name("g") && has_class(n, class))
        .count()
}

/// Elements named `tag` inside the series group labelled `label`.
pub fn count_in_series(doc: &roxmltree::Document, label: &str, tag: &str) -> usize {
    doc.descendants()
        .filter(|n| {
            n.has_tag_name("g")
                && has_class(n, "series")
                && n.attribute("data-label") == Some(label)
        })
        .map(|g| g.descendants().filter(|d| d.has_tag_name(tag)).count())
        .sum()
}

/// Every text element's content, trimmed.
pub fn texts(doc: &roxmltree::Document) -> Vec<String> {
    doc.descendants()
        .filter(|n| n.has_tag_name("text"))
        .map(|n| n.text().unwrap_or("").trim().to_string())
        .collect()
}

/// Keep a copy of a figure when TW_PLOT_OUT names a directory.
pub fn keep(name: &str, content: &str) {
    if let Ok(dir) = std::env::var("TW_PLOT_OUT") {
        let _ = std::fs::create_dir_all(&dir);
        let _ = std::fs::write(std::path::Path::new(&dir).join(name), content);
    }
}
