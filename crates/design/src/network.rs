//! Ladder networks of ideal inductors and capacitors between a source
//! resistance and a load resistance: the common output of every synthesis
//! helper.
//!
//! A [`Network`] lists its elements from the input (source) side to the
//! output (load) side; each is either in series along the signal path or a
//! shunt to ground. From this one value we get:
//! - the chain (ABCD) matrix at any frequency, by multiplying the section
//!   matrices (series impedance `[[1, Z], [0, 1]]`, shunt admittance
//!   `[[1, 0], [Y, 1]]`; D. M. Pozar, Microwave Engineering, 4th ed., §4.4),
//! - the input impedance with the load attached, `Zin = (A RL + B)/(C RL + D)`,
//! - the transducer gain `GT = 4 Rs RL / |A RL + B + C Rs RL + D Rs|²`
//!   (load power over the source's available power; derived from the chain
//!   matrix with the source and load resistances as terminations),
//! - a stage-file fragment ready to paste.

use num_complex::Complex64;
use serde::Serialize;
use std::f64::consts::PI;

use crate::error::DesignError;
use crate::si::format_si;

/// Which kind of reactive part an element is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Part {
    /// An inductor; value in henry.
    Inductor,
    /// A capacitor; value in farad.
    Capacitor,
}

/// Where an element sits in the ladder.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Placement {
    /// Along the signal path, between two nodes.
    Series,
    /// From a node to ground.
    Shunt,
}

/// One element of a ladder.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NetworkElement {
    /// Instance name in the fragment (e.g. `lm1`).
    pub name: String,
    /// Inductor or capacitor.
    pub part: Part,
    /// Series or shunt.
    pub placement: Placement,
    /// Value in H (inductor) or F (capacitor), > 0.
    pub value: f64,
    /// First terminal (for a shunt: the node it hangs on).
    pub node_a: String,
    /// Second terminal (for a shunt: `gnd`).
    pub node_b: String,
}

impl NetworkElement {
    /// Impedance of the element at `freq` Hz.
    pub fn impedance(&self, freq: f64) -> Complex64 {
        let w = 2.0 * PI * freq;
        match self.part {
            Part::Inductor => Complex64::new(0.0, w * self.value),
            Part::Capacitor => Complex64::new(0.0, -1.0 / (w * self.value)),
        }
    }

    /// The stage-file statement for this element, with the value written to
    /// `digits` significant digits.
    pub fn statement(&self, digits: usize) -> String {
        let (kw, unit) = match self.part {
            Part::Inductor => ("inductor", "H"),
            Part::Capacitor => ("capacitor", "F"),
        };
        format!(
            "{kw} {} {} {} {}",
            self.name,
            self.node_a,
            self.node_b,
            format_si(self.value, unit, digits)
        )
    }
}

/// Voltage and current of one element at a given delivered power (see
/// [`Network::element_stress`]).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ElementStress {
    /// Element name.
    pub name: String,
    /// Peak voltage across the element, V.
    pub v_peak: f64,
    /// RMS current through the element, A.
    pub i_rms: f64,
    /// Reactive power it handles, var (½·V̂·Î).
    pub reactive_power_var: f64,
}

/// A 2×2 complex chain (ABCD) matrix `[[A, B], [C, D]]`.
pub type Chain = [[Complex64; 2]; 2];

/// A ladder network with its intended terminations.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Network {
    /// Input (source-side) node name.
    pub input_node: String,
    /// Output (load-side) node name.
    pub output_node: String,
    /// Source resistance the network is designed to be driven from, Ω.
    pub source_resistance: f64,
    /// Load resistance the network is designed to feed, Ω.
    pub load_resistance: f64,
    /// Elements from input to output.
    pub elements: Vec<NetworkElement>,
}

fn mul(a: &Chain, b: &Chain) -> Chain {
    [
        [
            a[0][0] * b[0][0] + a[0][1] * b[1][0],
            a[0][0] * b[0][1] + a[0][1] * b[1][1],
        ],
        [
            a[1][0] * b[0][0] + a[1][1] * b[1][0],
            a[1][0] * b[0][1] + a[1][1] * b[1][1],
        ],
    ]
}

impl Network {
    /// The chain matrix of the whole ladder at `freq` Hz (> 0).
    pub fn chain(&self, freq: f64) -> Chain {
        let one = Complex64::new(1.0, 0.0);
        let zero = Complex64::new(0.0, 0.0);
        let mut m: Chain = [[one, zero], [zero, one]];
        for e in &self.elements {
            let z = e.impedance(freq);
            let s: Chain = match e.placement {
                Placement::Series => [[one, z], [zero, one]],
                Placement::Shunt => [[one, zero], [one / z, one]],
            };
            m = mul(&m, &s);
        }
        m
    }

    /// Input impedance at `freq` with [`Network::load_resistance`] attached, Ω.
    pub fn input_impedance(&self, freq: f64) -> Complex64 {
        let m = self.chain(freq);
        let rl = self.load_resistance;
        (m[0][0] * rl + m[0][1]) / (m[1][0] * rl + m[1][1])
    }

    /// Transducer gain (load power / available source power) at `freq`, dB.
    pub fn transducer_gain_db(&self, freq: f64) -> f64 {
        let m = self.chain(freq);
        let (rs, rl) = (self.source_resistance, self.load_resistance);
        let den = m[0][0] * rl + m[0][1] + m[1][0] * rs * rl + m[1][1] * rs;
        10.0 * (4.0 * rs * rl / den.norm_sqr()).log10()
    }

    /// Voltage and current of every element when the load absorbs
    /// `load_power_w` watts at `freq` (sinusoidal, fundamental only).
    ///
    /// Works back from the load: V2 = √(2 P R2) (peak), I2 = V2/R2, and each
    /// section's chain matrix gives the voltage and current on its input side.
    /// A series element carries the line current and drops Z·I; a shunt
    /// element sees the node voltage and carries V/Z.
    pub fn element_stress(&self, freq: f64, load_power_w: f64) -> Vec<ElementStress> {
        let v2 = (2.0 * load_power_w * self.load_resistance).sqrt();
        let mut v = Complex64::new(v2, 0.0);
        let mut i = v / self.load_resistance;
        let mut out = Vec::with_capacity(self.elements.len());
        for e in self.elements.iter().rev() {
            let z = e.impedance(freq);
            let (ve, ie) = match e.placement {
                Placement::Series => {
                    let drop = z * i;
                    v += drop;
                    (drop, i)
                }
                Placement::Shunt => {
                    let ish = v / z;
                    i += ish;
                    (v, ish)
                }
            };
            out.push(ElementStress {
                name: e.name.clone(),
                v_peak: ve.norm(),
                i_rms: ie.norm() / std::f64::consts::SQRT_2,
                reactive_power_var: 0.5 * ve.norm() * ie.norm(),
            });
        }
        out.reverse();
        out
    }

    /// The same network with every value rounded to `digits` significant
    /// digits (what a fragment written with that many digits holds).
    pub fn rounded(&self, digits: usize) -> Network {
        let mut n = self.clone();
        for e in &mut n.elements {
            e.value = round_sig(e.value, digits);
        }
        n
    }

    /// The fewest significant digits, from 5 up to 9, for which the rounded
    /// network's input impedance at `freq` stays within `rel` of the exact
    /// one (so printed values keep the design); 9 if none is enough.
    pub fn digits_needed(&self, freq: f64, rel: f64) -> usize {
        let exact = self.input_impedance(freq);
        (5..=9)
            .find(|&d| {
                let z = self.rounded(d).input_impedance(freq);
                (z - exact).norm() <= rel * exact.norm()
            })
            .unwrap_or(9)
    }

    /// The network as stage-file statements, one per line, after a comment
    /// naming the terminations it was designed for; values written to
    /// `digits` significant digits.
    pub fn fragment(&self, title: &str, digits: usize) -> String {
        let mut s = format!(
            "# {title}\n# designed for a source of {} between {} and gnd, and a load of {} between {} and gnd\n",
            format_si(self.source_resistance, "Ohm", 5),
            self.input_node,
            format_si(self.load_resistance, "Ohm", 5),
            self.output_node
        );
        for e in &self.elements {
            s.push_str(&e.statement(digits));
            s.push('\n');
        }
        s
    }
}

/// Round `v` to `digits` significant digits (0 and non-finite values unchanged).
pub fn round_sig(v: f64, digits: usize) -> f64 {
    if v == 0.0 || !v.is_finite() {
        return v;
    }
    let digits = digits.clamp(1, 15) as i32;
    let e = v.abs().log10().floor() as i32;
    let scale = 10f64.powi(digits - 1 - e);
    let r = (v * scale).round() / scale;
    if r.is_finite() {
        r
    } else {
        v
    }
}

/// Names for the fragment: element names are `l<prefix><k>` and
/// `c<prefix><k>` (inductors and capacitors numbered separately from 1, from
/// input to output); internal nodes are `<prefix>n<k>`.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Naming {
    /// Prefix of element and internal node names.
    pub prefix: String,
    /// Input node (source side).
    pub input: String,
    /// Output node (load side).
    pub output: String,
}

impl Default for Naming {
    fn default() -> Self {
        Self {
            prefix: "m".into(),
            input: "in".into(),
            output: "out".into(),
        }
    }
}

/// Whether `s` is a stage-file name: `[A-Za-z_][A-Za-z0-9_]*`.
pub fn is_name(s: &str) -> bool {
    let mut chars = s.chars();
    match chars.next() {
        Some(c) if c.is_ascii_alphabetic() || c == '_' => {}
        _ => return false,
    }
    chars.all(|c| c.is_ascii_alphanumeric() || c == '_')
}

impl Naming {
    /// Check the names; the prefix may be empty.
    pub fn check(&self) -> Result<(), DesignError> {
        for n in [&self.input, &self.output] {
            if !is_name(n) {
                return Err(DesignError::BadName { name: n.clone() });
            }
        }
        if !self.prefix.is_empty() && !is_name(&format!("l{}", self.prefix)) {
            return Err(DesignError::BadName {
                name: self.prefix.clone(),
            });
        }
        if self.input == self.output || self.input == "gnd" || self.output == "gnd" {
            return Err(DesignError::BadPorts {
                input: self.input.clone(),
                output: self.output.clone(),
            });
        }
        Ok(())
    }
}

/// Builds a ladder from a sequence of (part, placement, value), naming nodes
/// and elements by a [`Naming`].
pub(crate) struct LadderBuilder<'a> {
    naming: &'a Naming,
    current: String,
    next_node: usize,
    n_l: usize,
    n_c: usize,
    elements: Vec<NetworkElement>,
}

impl<'a> LadderBuilder<'a> {
    pub(crate) fn new(naming: &'a Naming) -> Self {
        Self {
            naming,
            current: naming.input.clone(),
            next_node: 1,
            n_l: 0,
            n_c: 0,
            elements: Vec::new(),
        }
    }

    fn name(&mut self, part: Part) -> String {
        match part {
            Part::Inductor => {
                self.n_l += 1;
                format!("l{}{}", self.naming.prefix, self.n_l)
            }
            Part::Capacitor => {
                self.n_c += 1;
                format!("c{}{}", self.naming.prefix, self.n_c)
            }
        }
    }

    /// Add a shunt element at the current node.
    pub(crate) fn shunt(&mut self, part: Part, value: f64) {
        let name = self.name(part);
        self.elements.push(NetworkElement {
            name,
            part,
            placement: Placement::Shunt,
            value,
            node_a: self.current.clone(),
            node_b: "gnd".into(),
        });
    }

    /// Add a series element from the current node to a new node (or to the
    /// output node if `last`).
    pub(crate) fn series(&mut self, part: Part, value: f64, last: bool) {
        let name = self.name(part);
        let to = if last {
            self.naming.output.clone()
        } else {
            let n = format!("{}n{}", self.naming.prefix, self.next_node);
            self.next_node += 1;
            n
        };
        self.elements.push(NetworkElement {
            name,
            part,
            placement: Placement::Series,
            value,
            node_a: self.current.clone(),
            node_b: to.clone(),
        });
        self.current = to;
    }

    /// Finish into a network. The caller guarantees the last series element
    /// was added with `last = true` (and any shunt after it sits on the output).
    pub(crate) fn finish(self, source_resistance: f64, load_resistance: f64) -> Network {
        Network {
            input_node: self.naming.input.clone(),
            output_node: self.naming.output.clone(),
            source_resistance,
            load_resistance,
            elements: self.elements,
        }
    }
}

/// Response of a network at one harmonic of the fundamental.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicGain {
    /// Harmonic number (1 = fundamental).
    pub harmonic: u32,
    /// Frequency, Hz.
    pub freq: f64,
    /// Transducer gain by chain-matrix arithmetic, dB (≤ 0 for a lossless ladder).
    pub gain_db: f64,
}

/// Transducer gain of `net` at harmonics 1..=`count` of `f0`.
pub(crate) fn harmonic_gains(net: &Network, f0: f64, count: u32) -> Vec<HarmonicGain> {
    (1..=count)
        .map(|n| {
            let f = f0 * n as f64;
            HarmonicGain {
                harmonic: n,
                freq: f,
                gain_db: net.transducer_gain_db(f),
            }
        })
        .collect()
}
