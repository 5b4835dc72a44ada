//! Verification of a designed network by tankwave's own AC analysis.
//!
//! Two ways to build the test circuit: [`circuit_for`] builds a
//! [`tankwave_circuit::Circuit`] around a [`Network`] directly with the exact
//! values ([`verify_network`]); [`fragment_harness`] wraps the printed
//! stage-file fragment in stage text that tankwave's own parser and
//! elaborator read ([`verify_fragment`], used by [`verify_match`] and
//! [`verify_lowpass`], so what is checked is exactly what the user pastes,
//! rounded values included). Both circuits hold a voltage source `vtest` from
//! node `<input>` to ground with source resistance equal to the design's
//! source resistance, the ladder, and a load resistor `rload` of the design's
//! load resistance at `<output>`. The check runs the AC analysis of tankwave-solve at the
//! fundamental and its harmonics (one linear sweep, f0 … N·f0, N points) and
//! measures, from the node voltages and the source branch current of the
//! unit-amplitude excitation:
//! - the input impedance `Zin = V(in) / I`, with `I` the current the source
//!   delivers into the network,
//! - the transducer gain `GT = (|V(out)|²/RL) / (1/(4 Rs))` (load power over
//!   the available power of a 1 V source behind Rs).
//!
//! It compares them with an expected input impedance (R1 for a matching
//! network) and with predicted gains (chain-matrix arithmetic for a matching
//! network, the closed-form prototype attenuation for a low-pass ladder). The
//! default acceptance is 0.1 % on the impedance and 0.1 dB on each gain.

use num_complex::Complex64;
use serde::Serialize;

use crate::error::{positive, DesignError};
use crate::lowpass::LowpassDesign;
use crate::matching::{ComplexValue, MatchDesign};
use crate::network::{Network, Part, Placement};
use crate::si::format_si;
use tankwave_circuit::{
    Circuit, Element, ElementId, ElementKind, NodeId, Origin, Overrides, Scale, Waveform,
};
use tankwave_devices::names;

/// Options of the verification.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct VerifyParams {
    /// Highest harmonic checked (1 = fundamental only), clamped to 1..=50. Default 5.
    pub harmonics: u32,
    /// Acceptance on the input impedance, relative `|Zmeas − Zexp|/|Zexp|`. Default 1e-3.
    pub zin_tolerance: f64,
    /// Acceptance on each gain, dB. Default 0.1.
    pub gain_tolerance_db: f64,
}

impl Default for VerifyParams {
    fn default() -> Self {
        Self {
            harmonics: 5,
            zin_tolerance: 1e-3,
            gain_tolerance_db: 0.1,
        }
    }
}

/// One checked frequency.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct VerifyPoint {
    /// Harmonic number.
    pub harmonic: u32,
    /// Frequency, Hz.
    pub freq: f64,
    /// Predicted transducer gain, dB.
    pub predicted_db: f64,
    /// Transducer gain from the AC analysis, dB.
    pub measured_db: f64,
    /// measured − predicted, dB.
    pub diff_db: f64,
}

/// How the AC run went.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct VerifyInfo {
    /// Unknowns in the solved circuit.
    pub unknowns: usize,
    /// Newton iterations of the operating point before the AC sweep.
    pub op_iterations: usize,
}

/// Result of [`verify_network`].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Verification {
    /// What did the measuring.
    pub method: String,
    /// Fundamental, Hz.
    pub f0: f64,
    /// Expected input impedance at f0, Ω.
    pub zin_expected: ComplexValue,
    /// Input impedance at f0 from the AC analysis, Ω.
    pub zin_measured: ComplexValue,
    /// `|Zmeas − Zexp| / |Zexp|`.
    pub zin_error: f64,
    /// Gains at the harmonics.
    pub points: Vec<VerifyPoint>,
    /// Whether every figure is within the tolerances of the [`VerifyParams`].
    pub passed: bool,
    /// Tolerances used.
    pub params: VerifyParams,
    /// Solver figures.
    pub info: VerifyInfo,
}

/// Name of the test source in [`circuit_for`].
pub const SOURCE_NAME: &str = "vtest";
/// Name of the load resistor in [`circuit_for`].
pub const LOAD_NAME: &str = "rload";

/// Build the test circuit around `net` (see the module doc).
pub fn circuit_for(net: &Network) -> Result<Circuit, DesignError> {
    positive("source resistance", net.source_resistance)?;
    positive("load resistance", net.load_resistance)?;
    let mut c = Circuit {
        title: Some("design verification".into()),
        temperature_k: 298.15,
        ..Circuit::default()
    };
    let node = |c: &mut Circuit, name: &str| -> NodeId {
        if let Some(n) = c.node(name) {
            return n;
        }
        c.nodes.push(name.to_string());
        NodeId::node(c.nodes.len() - 1)
    };
    let input = node(&mut c, &net.input_node);
    let output = node(&mut c, &net.output_node);
    let origin = Origin::default();
    c.elements.push(Element {
        name: SOURCE_NAME.into(),
        kind: ElementKind::VoltageSource {
            p: input,
            n: NodeId::GROUND,
            wave: Waveform::default(),
            rs: net.source_resistance,
        },
        origin: origin.clone(),
    });
    c.input = Some(ElementId::new(0));
    for e in &net.elements {
        positive("element value", e.value)?;
        let a = node(&mut c, &e.node_a);
        let b = match e.placement {
            Placement::Shunt => NodeId::GROUND,
            Placement::Series => node(&mut c, &e.node_b),
        };
        let kind = match e.part {
            Part::Inductor => ElementKind::Inductor {
                a,
                b,
                l: e.value,
                series_r: 0.0,
                rating_a: None,
            },
            Part::Capacitor => ElementKind::Capacitor {
                a,
                b,
                c: e.value,
                rating_v: None,
                rating_a: None,
            },
        };
        c.elements.push(Element {
            name: e.name.clone(),
            kind,
            origin: origin.clone(),
        });
    }
    c.elements.push(Element {
        name: LOAD_NAME.into(),
        kind: ElementKind::Resistor {
            a: output,
            b: NodeId::GROUND,
            r: net.load_resistance,
            rating_w: None,
            ntc_b: None,
        },
        origin,
    });
    c.output = Some(ElementId::new(c.elements.len() - 1));
    Ok(c)
}

/// Verify `net` at `f0` and its harmonics by AC analysis against
/// `zin_expected` at f0 and `predicted_db[k]` at harmonic k + 1 (entries
/// beyond [`VerifyParams::harmonics`] are ignored; missing ones are not
/// checked). The circuit is built directly from the exact element values.
pub fn verify_network(
    net: &Network,
    f0: f64,
    zin_expected: Complex64,
    predicted_db: &[f64],
    params: &VerifyParams,
) -> Result<Verification, DesignError> {
    let circuit = circuit_for(net)?;
    verify_circuit(
        &circuit,
        net,
        f0,
        zin_expected,
        predicted_db,
        params,
        "tankwave AC analysis (tankwave-solve ac) of the network with exact values, between a source of resistance R1 and a load resistor R2",
    )
}

/// The stage text [`verify_fragment`] reads: a source `vtest` with the
/// design's source resistance at the input node, an optional extra shunt
/// capacitor `cout_absorbed` at the input (an absorbed device capacitance),
/// the fragment as printed, and a load resistor `rload` at the output.
pub fn fragment_harness(net: &Network, fragment: &str, extra_input_shunt: Option<f64>) -> String {
    let mut t = format!(
        "title \"design verification\"\nvoltage {SOURCE_NAME} {} gnd dc=0V internal={}\n",
        net.input_node,
        format_si(net.source_resistance, "Ohm", 15)
    );
    if let Some(c) = extra_input_shunt {
        t.push_str(&format!(
            "capacitor cout_absorbed {} gnd {}\n",
            net.input_node,
            format_si(c, "F", 15)
        ));
    }
    t.push_str(fragment);
    t.push_str(&format!(
        "\nresistor {LOAD_NAME} {} gnd {}\ninput {SOURCE_NAME}\noutput {LOAD_NAME}\n",
        net.output_node,
        format_si(net.load_resistance, "Ohm", 15)
    ));
    t
}

/// Verify the stage-file fragment *as printed* (values rounded to the printed
/// digits): it is read by tankwave's own parser and elaborator inside
/// [`fragment_harness`], then solved by AC analysis as in [`verify_network`].
#[allow(clippy::too_many_arguments)]
pub fn verify_fragment(
    net: &Network,
    fragment: &str,
    extra_input_shunt: Option<f64>,
    f0: f64,
    zin_expected: Complex64,
    predicted_db: &[f64],
    params: &VerifyParams,
) -> Result<Verification, DesignError> {
    let text = fragment_harness(net, fragment, extra_input_shunt);
    let loaded = tankwave_circuit::load_str("design-fragment.tank", &text, &Overrides::default())
        .map_err(|e| {
        let msgs: Vec<String> = e
            .diagnostics
            .iter()
            .filter(|d| d.is_error())
            .map(|d| d.to_string())
            .collect();
        DesignError::Solver(format!(
            "the printed fragment does not load: {}",
            msgs.join("; ")
        ))
    })?;
    verify_circuit(
        &loaded.circuit,
        net,
        f0,
        zin_expected,
        predicted_db,
        params,
        "tankwave AC analysis (tankwave-solve ac) of the printed stage-file fragment, read by tankwave's parser, between a source of resistance R1 and a load resistor R2",
    )
}

fn verify_circuit(
    circuit: &Circuit,
    net: &Network,
    f0: f64,
    zin_expected: Complex64,
    predicted_db: &[f64],
    params: &VerifyParams,
    method: &str,
) -> Result<Verification, DesignError> {
    positive("fundamental frequency", f0)?;
    let nh = params.harmonics.clamp(1, 50);
    let source = circuit.element(SOURCE_NAME).ok_or_else(|| {
        DesignError::Solver(format!("the test circuit has no source {SOURCE_NAME}"))
    })?;
    let devices =
        tankwave_devices::instantiate(circuit).map_err(|e| DesignError::Solver(e.to_string()))?;
    let ac_params = tankwave_solve::AcParams {
        from: f0,
        to: f0 * nh as f64,
        points: nh as usize,
        scale: Scale::Linear,
        source: Some(source),
        ..tankwave_solve::AcParams::default()
    };
    let res = tankwave_solve::ac(circuit, &devices, &ac_params)
        .map_err(|e| DesignError::Solver(e.to_string()))?;
    let missing = |what: &str| DesignError::Solver(format!("the AC result has no unknown {what}"));
    let node = |name: &str| circuit.node(name).and_then(|n| devices.voltage_of(n));
    let k_in = node(&net.input_node)
        .ok_or_else(|| missing(&names::node_voltage(&net.input_node)))?
        .index();
    let k_out = node(&net.output_node)
        .ok_or_else(|| missing(&names::node_voltage(&net.output_node)))?
        .index();
    let k_src = devices
        .branch_of(source)
        .ok_or_else(|| missing(&names::branch_current(SOURCE_NAME)))?
        .index();
    let (rs, rl) = (net.source_resistance, net.load_resistance);
    let mut points = Vec::new();
    let mut zin_measured = Complex64::new(f64::NAN, f64::NAN);
    for (k, x) in res.x.iter().enumerate() {
        let get = |i: usize| {
            x.get(i)
                .copied()
                .ok_or_else(|| DesignError::Solver("AC result shorter than its names".into()))
        };
        let (vin, vout, j) = (get(k_in)?, get(k_out)?, get(k_src)?);
        let f = res.freq.get(k).copied().unwrap_or(f0);
        if k == 0 {
            // The source's branch current flows from its + terminal through
            // it, so the current into the network is −j.
            zin_measured = vin / (-j);
        }
        let gt = (vout.norm_sqr() / rl) / (1.0 / (4.0 * rs));
        let measured_db = 10.0 * gt.log10();
        if let Some(&p) = predicted_db.get(k) {
            points.push(VerifyPoint {
                harmonic: k as u32 + 1,
                freq: f,
                predicted_db: p,
                measured_db,
                diff_db: measured_db - p,
            });
        }
    }
    let zin_error = (zin_measured - zin_expected).norm() / zin_expected.norm();
    let all_finite = zin_error.is_finite()
        && points
            .iter()
            .all(|p| p.measured_db.is_finite() && p.predicted_db.is_finite());
    if !all_finite {
        return Err(DesignError::NonFinite {
            what: "verification figure",
            value: zin_error,
        });
    }
    let passed = zin_error <= params.zin_tolerance
        && points
            .iter()
            .all(|p| p.diff_db.abs() <= params.gain_tolerance_db);
    Ok(Verification {
        method: method.to_string(),
        f0,
        zin_expected: zin_expected.into(),
        zin_measured: zin_measured.into(),
        zin_error,
        points,
        passed,
        params: *params,
        info: VerifyInfo {
            unknowns: devices.n_unknowns,
            op_iterations: res.op.info.iterations,
        },
    })
}

/// Verify a matching network as printed (see [`verify_fragment`]): input
/// impedance R1 (+j0) at f0, and the chain-matrix transducer gains of the
/// exact design at the harmonics. The absorbed output capacitance, if any, is
/// included as a shunt at the input.
pub fn verify_match(d: &MatchDesign, params: &VerifyParams) -> Result<Verification, DesignError> {
    let net = d.analysis_network();
    let predicted: Vec<f64> = (1..=params.harmonics.clamp(1, 50))
        .map(|n| net.transducer_gain_db(d.freq * n as f64))
        .collect();
    verify_fragment(
        &d.network,
        &d.fragment,
        d.absorbed.map(|a| a.cout_f),
        d.freq,
        Complex64::new(d.r_from, 0.0),
        &predicted,
        params,
    )
}

/// Verify a low-pass ladder as printed (see [`verify_fragment`]): the input
/// impedance at the fundamental against the chain-matrix value of the exact
/// design, and the gain at the harmonics against the closed-form prototype
/// attenuation `−LA(f/fc)`.
pub fn verify_lowpass(
    d: &LowpassDesign,
    params: &VerifyParams,
) -> Result<Verification, DesignError> {
    let predicted: Vec<f64> = (1..=params.harmonics.clamp(1, 50))
        .map(|n| {
            crate::lowpass::attenuation_db(d.kind, d.order, d.fundamental * n as f64 / d.cutoff)
                .map(|la| -la)
        })
        .collect::<Result<_, _>>()?;
    let zin = d.network.input_impedance(d.fundamental);
    verify_fragment(
        &d.network,
        &d.fragment,
        None,
        d.fundamental,
        zin,
        &predicted,
        params,
    )
}
