//! Lossless low-pass impedance matching from a source-side resistance R1
//! (usually the collector load line) to a load-side resistance R2 at f0.
//!
//! Shapes (all low-pass: series inductors, shunt capacitors):
//! - **L**: one section. `Q = √(Rh/Rl − 1)`, series reactance `Q·Rl` on the
//!   low-resistance side, shunt reactance `Rh/Q` on the high-resistance side.
//!   The orientation is chosen by which side is larger: from high to low the
//!   network starts with the shunt capacitor, from low to high with the series
//!   inductor. Its Q is fixed by the ratio.
//! - **pi**: two L-sections back to back through a virtual resistance
//!   `Rv = Rmax/(Q²+1)` below both terminations; `Qi = √(Ri/Rv − 1)`,
//!   `XC1 = R1/Q1`, `XC2 = R2/Q2`, `XL = Rv(Q1 + Q2)` (C. Bowick, RF Circuit
//!   Design, 2nd ed., 2008, ch. 4, from memory).
//! - **T**: the dual, through `Rv = Rmin(Q²+1)` above both terminations;
//!   `Qi = √(Rv/Ri − 1)`, series `XLi = Qi·Ri`, shunt `XC = Rv/(Q1 + Q2)`.
//!   (L-network formulas: common practice; the T as the dual of the pi
//!   follows from the same L-section algebra.)
//!
//! **Q convention.** Texts differ in which side carries the design Q. Here
//! the given loaded Q is the Q of the section at the *larger* resistance for
//! the pi (so `Rv = Rmax/(Q²+1)`), and of the section at the *smaller*
//! resistance for the T (so `Rv = Rmin(Q²+1)`): in both cases it is the
//! larger of the two section Qs, and it must exceed the L-network Q
//! `√(Rmax/Rmin − 1)`.
//!
//! **Absorbing the transistor's output capacitance.** With
//! [`MatchParams::absorb_cout`], the first shunt capacitor (at R1) is reduced
//! by that capacitance; it is an error if the capacitance is not below the
//! required one, or if the shape has no shunt capacitor at R1 (the T, and the
//! L from low to high).

use num_complex::Complex64;
use serde::Serialize;
use std::f64::consts::PI;

use crate::error::{finite, non_negative, positive, DesignError};
use crate::network::{
    harmonic_gains, ElementStress, HarmonicGain, LadderBuilder, Naming, Network, Part,
};

/// Shape of the matching network.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "lowercase", tag = "shape")]
pub enum MatchShape {
    /// One L-section; Q fixed by the resistance ratio.
    L,
    /// Shunt C, series L, shunt C with the given loaded Q (see the module doc).
    Pi {
        /// Loaded Q of the section at the larger resistance.
        q: f64,
    },
    /// Series L, shunt C, series L with the given loaded Q (see the module doc).
    T {
        /// Loaded Q of the section at the smaller resistance.
        q: f64,
    },
}

impl MatchShape {
    /// Short name: `l`, `pi` or `t`.
    pub fn name(&self) -> &'static str {
        match self {
            MatchShape::L => "l",
            MatchShape::Pi { .. } => "pi",
            MatchShape::T { .. } => "t",
        }
    }
}

/// Options of [`design_match`].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MatchParams {
    /// Output capacitance of the transistor (F) to absorb into the first
    /// shunt capacitor; `None` absorbs nothing.
    pub absorb_cout: Option<f64>,
    /// Node and element names of the fragment.
    pub naming: Naming,
    /// Power delivered to R2 at f0 (W) for the element stress table; `None`
    /// skips it.
    pub power: Option<f64>,
    /// Number of harmonics (from the fundamental) to report the gain at,
    /// clamped to 1..=50. Default 5.
    pub harmonics: u32,
}

impl Default for MatchParams {
    fn default() -> Self {
        Self {
            absorb_cout: None,
            power: None,
            naming: Naming::default(),
            harmonics: 5,
        }
    }
}

/// A capacitance absorbed into the first shunt capacitor.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Absorption {
    /// The transistor output capacitance taken over, F.
    pub cout_f: f64,
    /// The first shunt capacitance the network needs in total, F.
    pub required_f: f64,
    /// The capacitor left to fit externally, F (`required − cout`).
    pub external_f: f64,
}

/// A complex number for reports.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ComplexValue {
    /// Real part.
    pub re: f64,
    /// Imaginary part.
    pub im: f64,
}

impl From<Complex64> for ComplexValue {
    fn from(z: Complex64) -> Self {
        Self { re: z.re, im: z.im }
    }
}

/// Result of [`design_match`].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MatchDesign {
    /// `l`, `pi` or `t`.
    pub shape: &'static str,
    /// Source-side resistance R1, Ω.
    pub r_from: f64,
    /// Load-side resistance R2, Ω.
    pub r_to: f64,
    /// Design frequency f0, Hz.
    pub freq: f64,
    /// Loaded Q (for the L: the Q fixed by the ratio).
    pub q: f64,
    /// Which side carries Q, in words.
    pub q_convention: String,
    /// Virtual resistance between the two sections (pi and T), Ω.
    pub r_virtual: Option<f64>,
    /// Q of each L-section, from the source side.
    pub section_q: Vec<f64>,
    /// Signed reactance of each fragment element at f0, Ω (same order as the elements).
    pub reactances_ohm: Vec<f64>,
    /// The absorbed output capacitance, if any.
    pub absorbed: Option<Absorption>,
    /// The network to build (without the absorbed capacitance).
    pub network: Network,
    /// Input impedance at f0 with R2 attached (including any absorbed capacitance), Ω.
    pub input_impedance: ComplexValue,
    /// Transducer gain between R1 and R2 at the harmonics of f0 (chain-matrix arithmetic).
    pub harmonics: Vec<HarmonicGain>,
    /// Element voltages and currents at f0 for [`MatchParams::power`] into R2
    /// (fundamental only; empty if no power was given).
    pub stress: Vec<ElementStress>,
    /// Stage-file fragment ready to paste.
    pub fragment: String,
    /// Where the formulas come from.
    pub sources: Vec<String>,
}

impl MatchDesign {
    /// The network as the source sees it: the fragment's network plus the
    /// absorbed output capacitance (if any) as a shunt at the input named
    /// `cout_absorbed`. Use this to analyse or verify the design.
    pub fn analysis_network(&self) -> Network {
        let mut net = self.network.clone();
        if let Some(a) = self.absorbed {
            net.elements.insert(
                0,
                crate::network::NetworkElement {
                    name: "cout_absorbed".into(),
                    part: Part::Capacitor,
                    placement: crate::network::Placement::Shunt,
                    value: a.cout_f,
                    node_a: net.input_node.clone(),
                    node_b: "gnd".into(),
                },
            );
        }
        net
    }
}

fn cap(x: f64, w: f64) -> f64 {
    1.0 / (w * x)
}

fn ind(x: f64, w: f64) -> f64 {
    x / w
}

/// Design a matching network from `r_from` (Ω, source side) to `r_to` (Ω,
/// load side) at `freq` (Hz).
pub fn design_match(
    r_from: f64,
    r_to: f64,
    freq: f64,
    shape: MatchShape,
    params: &MatchParams,
) -> Result<MatchDesign, DesignError> {
    positive("source-side resistance", r_from)?;
    positive("load-side resistance", r_to)?;
    positive("frequency", freq)?;
    params.naming.check()?;
    let power = match params.power {
        Some(p) => Some(positive("output power", p)?),
        None => None,
    };
    let cout = match params.absorb_cout {
        Some(c) => Some(non_negative("output capacitance to absorb", c)?),
        None => None,
    };
    let w = 2.0 * PI * freq;
    let (rmin, rmax) = (r_from.min(r_to), r_from.max(r_to));
    let q_l = (rmax / rmin - 1.0).sqrt();
    let mut b = LadderBuilder::new(&params.naming);
    let mut reactances = Vec::new();
    // The total first shunt capacitance at R1, if the shape has one.
    let mut first_shunt: Option<f64> = None;
    let (q, q_convention, r_virtual, section_q, source);
    match shape {
        MatchShape::L => {
            if r_from == r_to {
                return Err(DesignError::EqualResistances { r: r_from });
            }
            q = q_l;
            let xs = q * rmin;
            let xp = rmax / q;
            if r_from > r_to {
                first_shunt = Some(cap(xp, w));
                b.shunt(Part::Capacitor, cap(xp, w));
                b.series(Part::Inductor, ind(xs, w), true);
                reactances.extend([-xp, xs]);
            } else {
                b.series(Part::Inductor, ind(xs, w), true);
                b.shunt(Part::Capacitor, cap(xp, w));
                reactances.extend([xs, -xp]);
            }
            q_convention = "fixed by the ratio: Q = sqrt(Rmax/Rmin - 1); series L on the lower-resistance side, shunt C on the higher".to_string();
            r_virtual = None;
            section_q = vec![q];
            source =
                "L network: Q = sqrt(Rh/Rl - 1), Xseries = Q Rl, Xshunt = Rh/Q (common practice)";
        }
        MatchShape::Pi { q: qq } => {
            positive("loaded Q", qq)?;
            if qq <= q_l {
                return Err(DesignError::QTooLow {
                    q: qq,
                    q_min: q_l,
                    r_from,
                    r_to,
                });
            }
            q = qq;
            let rv = rmax / (q * q + 1.0);
            let q1 = finite("section Q", (r_from / rv - 1.0).sqrt())?;
            let q2 = finite("section Q", (r_to / rv - 1.0).sqrt())?;
            let (x1, xl, x2) = (r_from / q1, rv * (q1 + q2), r_to / q2);
            first_shunt = Some(cap(x1, w));
            b.shunt(Part::Capacitor, cap(x1, w));
            b.series(Part::Inductor, ind(xl, w), true);
            b.shunt(Part::Capacitor, cap(x2, w));
            reactances.extend([-x1, xl, -x2]);
            q_convention =
                "Q is that of the section at the larger resistance: Rv = Rmax/(Q^2+1)".to_string();
            r_virtual = Some(rv);
            section_q = vec![q1, q2];
            source = "pi as two L-sections through Rv = Rmax/(Q^2+1), XC1 = R1/Q1, XC2 = R2/Q2, XL = Rv(Q1+Q2): C. Bowick, RF Circuit Design, 2nd ed., 2008, ch. 4 (from memory)";
        }
        MatchShape::T { q: qq } => {
            positive("loaded Q", qq)?;
            if qq <= q_l {
                return Err(DesignError::QTooLow {
                    q: qq,
                    q_min: q_l,
                    r_from,
                    r_to,
                });
            }
            q = qq;
            let rv = rmin * (q * q + 1.0);
            let q1 = finite("section Q", (rv / r_from - 1.0).sqrt())?;
            let q2 = finite("section Q", (rv / r_to - 1.0).sqrt())?;
            let (x1, xc, x2) = (q1 * r_from, rv / (q1 + q2), q2 * r_to);
            b.series(Part::Inductor, ind(x1, w), false);
            b.shunt(Part::Capacitor, cap(xc, w));
            b.series(Part::Inductor, ind(x2, w), true);
            reactances.extend([x1, -xc, x2]);
            q_convention =
                "Q is that of the section at the smaller resistance: Rv = Rmin(Q^2+1)".to_string();
            r_virtual = Some(rv);
            section_q = vec![q1, q2];
            source = "T as the dual of the pi: two L-sections through Rv = Rmin(Q^2+1), XL1 = Q1 R1, XL2 = Q2 R2, XC = Rv/(Q1+Q2) (L-section algebra, common practice)";
        }
    }
    let mut network = b.finish(r_from, r_to);
    let absorbed = match cout {
        None => None,
        Some(c) => {
            let required = first_shunt.ok_or(DesignError::NoShuntAtSource {
                shape: shape.name(),
            })?;
            if c >= required {
                return Err(DesignError::CoutTooLarge { cout: c, required });
            }
            if let Some(e) = network.elements.first_mut() {
                e.value = required - c;
            }
            if let Some(x) = reactances.first_mut() {
                *x = -1.0 / (w * (required - c));
            }
            Some(Absorption {
                cout_f: c,
                required_f: required,
                external_f: required - c,
            })
        }
    };
    for e in &network.elements {
        finite("element value", e.value)?;
    }
    let mut design = MatchDesign {
        shape: shape.name(),
        r_from,
        r_to,
        freq,
        q,
        q_convention,
        r_virtual,
        section_q,
        reactances_ohm: reactances,
        absorbed,
        network,
        input_impedance: ComplexValue { re: 0.0, im: 0.0 },
        harmonics: Vec::new(),
        stress: Vec::new(),
        fragment: String::new(),
        sources: vec![source.to_string()],
    };
    let an = design.analysis_network();
    let zin = an.input_impedance(freq);
    finite("input impedance", zin.re)?;
    finite("input impedance", zin.im)?;
    design.input_impedance = zin.into();
    design.harmonics = harmonic_gains(&an, freq, params.harmonics.clamp(1, 50));
    for h in &design.harmonics {
        finite("transducer gain", h.gain_db)?;
    }
    if let Some(p) = power {
        // Stress of the fragment's elements; the absorbed capacitance (first
        // in the analysis network) is the device's own and is left out.
        let skip = usize::from(design.absorbed.is_some());
        design.stress = an.element_stress(freq, p).into_iter().skip(skip).collect();
        for s in &design.stress {
            finite("element voltage", s.v_peak)?;
            finite("element current", s.i_rms)?;
        }
    }
    let mut title = format!(
        "{} match {} ohm -> {} ohm at {}, loaded Q {:.4}",
        shape.name(),
        crate::si::format_si(r_from, "", 5),
        crate::si::format_si(r_to, "", 5),
        crate::si::format_si(freq, "Hz", 5),
        q
    );
    if let Some(a) = absorbed {
        title.push_str(&format!(
            "; {} of device output capacitance absorbed into the first shunt capacitor",
            crate::si::format_si(a.cout_f, "F", 5)
        ));
    }
    // Print enough digits that the pasted values keep Zin within 1e-4
    // (a tenth of the verification's acceptance).
    let digits = an.digits_needed(freq, 1e-4);
    design.fragment = design.network.fragment(&title, digits);
    Ok(design)
}
