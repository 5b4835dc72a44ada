//! The elaborated circuit: the plain-data value every later stage consumes.
//!
//! Everything here is already checked and evaluated to SI numbers: nodes are
//! numbered (ground is [`NodeId::GROUND`]; nodes, elements and models are
//! referred to by the typed handles of [`crate::handle`], names kept for
//! display and files), models are bound by kind, parameters are
//! evaluated. Solvers, measurements and studies read these types and never
//! look back at text.

use std::collections::BTreeMap;

/// Where something came from in the input, for messages after elaboration.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct Origin {
    /// File path as given (or as resolved for includes).
    pub file: String,
    /// 1-based line.
    pub line: u32,
    /// 1-based column.
    pub column: u32,
}

pub use crate::handle::{ElementId, ModelId, NodeId, Terminal};

/// A whole elaborated stage.
#[derive(Debug, Clone, Default)]
pub struct Circuit {
    /// `title "..."`, if given.
    pub title: Option<String>,
    /// Ambient temperature in kelvin (`temperature`, default 25 °C = 298.15 K).
    pub temperature_k: f64,
    /// Names of the non-ground nodes; [`NodeId::node`]`(i)` is `nodes[i]`.
    pub nodes: Vec<String>,
    /// Every element in file order.
    pub elements: Vec<Element>,
    /// Every model that some element uses or that is declared.
    pub models: Vec<Model>,
    /// The element whose absorbed power is the stage's output (`output NAME`).
    pub output: Option<ElementId>,
    /// The drive source (`input NAME`).
    pub input: Option<ElementId>,
    /// Analyses in file order.
    pub analyses: Vec<Analysis>,
    /// User masks (built-in masks live in the measure crate and are named by `MaskRef::Builtin`).
    pub masks: Vec<Mask>,
    /// Requirements in file order.
    pub requirements: Vec<Requirement>,
    /// Sweeps, tolerances and Monte Carlo settings.
    pub study: StudySpec,
    /// Every `let` parameter, evaluated (after overrides).
    pub params: BTreeMap<String, f64>,
    /// The unit symbol each parameter is shown in, where the stage file
    /// gives one (see [`crate::param_units`]); read from the file once, so
    /// later layers never go back to the syntax tree.
    pub param_units: BTreeMap<String, String>,
}

/// One element instance.
#[derive(Debug, Clone)]
pub struct Element {
    /// Instance name, unique in the circuit.
    pub name: String,
    /// What it is and its evaluated values.
    pub kind: ElementKind,
    /// Where it was written.
    pub origin: Origin,
}

/// The temperature at which a thermistor's resistance is written, K
/// (25 °C, the reference of thermistor B constants; common practice).
pub const THERMISTOR_REFERENCE_K: f64 = 298.15;

/// The largest B constant a thermistor may be given, K (real NTC
/// thermistors have 2,000–6,000 K, common practice; the cap keeps the law
/// finite at every temperature a stage can reach).
pub const MAX_THERMISTOR_B_K: f64 = 20_000.0;

/// A thermistor's resistance at `t_k` from its resistance `r_ref` at
/// [`THERMISTOR_REFERENCE_K`] and its B constant `b_k` (K), by the
/// B-parameter law R(T) = R_ref·exp(B·(1/T − 1/T_ref)) (the one-term
/// simplification of J. S. Steinhart, S. R. Hart, Deep-Sea Research 15,
/// 1968, from memory; docs/check-values.md, "Thermistor").
pub fn thermistor_resistance(r_ref: f64, b_k: f64, t_k: f64) -> f64 {
    r_ref * (b_k * (1.0 / t_k - 1.0 / THERMISTOR_REFERENCE_K)).exp()
}

/// Element kinds with their evaluated values (SI units).
#[derive(Debug, Clone)]
pub enum ElementKind {
    /// `resistor NAME a b VALUE [rating=W]`.
    Resistor {
        /// Terminal a.
        a: NodeId,
        /// Terminal b.
        b: NodeId,
        /// Resistance, Ω (> 0).
        r: f64,
        /// Power rating, W.
        rating_w: Option<f64>,
        /// B constant of a thermistor, K (`ntc_b=`): `r` is then the
        /// resistance at [`THERMISTOR_REFERENCE_K`] and the element follows
        /// the B-parameter law at its temperature (docs/thermal.md).
        ntc_b: Option<f64>,
    },
    /// `capacitor NAME a b VALUE [rating=V]`.
    Capacitor {
        /// Terminal a.
        a: NodeId,
        /// Terminal b.
        b: NodeId,
        /// Capacitance, F (> 0).
        c: f64,
        /// Voltage rating, V.
        rating_v: Option<f64>,
        /// RMS current rating, A (`current_rating=`).
        rating_a: Option<f64>,
    },
    /// `inductor NAME a b VALUE [r=Ω | q=Q [q_at=Hz]] [rating=A]`.
    Inductor {
        /// Terminal a (branch current flows a → b through the inductor).
        a: NodeId,
        /// Terminal b.
        b: NodeId,
        /// Inductance, H (> 0).
        l: f64,
        /// Series loss resistance, Ω (≥ 0); a `q=` is converted to r = 2π f L / Q.
        series_r: f64,
        /// Current rating (RMS), A.
        rating_a: Option<f64>,
    },
    /// `coupling NAME L1 L2 [L3 ...] k=K`: mutual inductance M = k √(L_i L_j) for every pair.
    Coupling {
        /// The coupled inductors (element ids of `Inductor`s), at least two.
        inductors: Vec<ElementId>,
        /// Coupling coefficient, |k| ≤ 1.
        k: f64,
    },
    /// `voltage source NAME p n [dc=V] [wave=...] [rs=Ω]`: v(p) − v(n) = dc + wave(t) behind rs.
    VoltageSource {
        /// Positive terminal.
        p: NodeId,
        /// Negative terminal.
        n: NodeId,
        /// The source value over time.
        wave: Waveform,
        /// Source resistance, Ω (0 = ideal).
        rs: f64,
    },
    /// `current source NAME p n [dc=A] [wave=...]`: current dc + wave(t) flows from p through the source to n.
    CurrentSource {
        /// Terminal the current leaves the external circuit into.
        p: NodeId,
        /// Terminal the current returns to the external circuit from.
        n: NodeId,
        /// The source value over time.
        wave: Waveform,
    },
    /// `diode NAME anode cathode part=M [area=X]`.
    Diode {
        /// Anode.
        a: NodeId,
        /// Cathode.
        k: NodeId,
        /// Bound diode model.
        model: ModelId,
        /// Area factor (scales currents and capacitances), default 1.
        area: f64,
    },
    /// `bjt NAME c=.. b=.. e=.. part=M [area=X]`.
    Bjt {
        /// Collector.
        c: NodeId,
        /// Base.
        b: NodeId,
        /// Emitter.
        e: NodeId,
        /// Bound npn or pnp model.
        model: ModelId,
        /// Area factor, default 1.
        area: f64,
    },
    /// `measured NAME p1 n1 [p2 n2] "FILE" [outside=…]`: a one- or
    /// two-port network measured over frequency (a Touchstone file), used
    /// exactly at each frequency in AC and harmonic balance.
    Measured {
        /// The (positive, negative) terminals of each port.
        ports: Vec<(NodeId, NodeId)>,
        /// Its admittance over frequency and its out-of-band rule.
        network: std::sync::Arc<crate::touchstone::MeasuredNetwork>,
    },
}

impl ElementKind {
    /// The terminals of this element (empty for a coupling).
    pub fn terminals(&self) -> Vec<NodeId> {
        match self {
            ElementKind::Resistor { a, b, .. }
            | ElementKind::Capacitor { a, b, .. }
            | ElementKind::Inductor { a, b, .. } => vec![*a, *b],
            ElementKind::VoltageSource { p, n, .. } | ElementKind::CurrentSource { p, n, .. } => {
                vec![*p, *n]
            }
            ElementKind::Diode { a, k, .. } => vec![*a, *k],
            ElementKind::Bjt { c, b, e, .. } => vec![*c, *b, *e],
            ElementKind::Coupling { .. } => vec![],
            ElementKind::Measured { ports, .. } => {
                ports.iter().flat_map(|(p, n)| [*p, *n]).collect()
            }
        }
    }
    /// The statement keyword of this kind (`"resistor"`, …).
    pub fn keyword(&self) -> &'static str {
        match self {
            ElementKind::Resistor { .. } => "resistor",
            ElementKind::Capacitor { .. } => "capacitor",
            ElementKind::Inductor { .. } => "inductor",
            ElementKind::Coupling { .. } => "coupling",
            ElementKind::VoltageSource { .. } => "voltage",
            ElementKind::CurrentSource { .. } => "current",
            ElementKind::Diode { .. } => "diode",
            ElementKind::Bjt { .. } => "bjt",
            ElementKind::Measured { .. } => "measured",
        }
    }
}

/// A source value over time: `dc + shape(t)`.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Waveform {
    /// Constant part (`dc=`), V or A.
    pub dc: f64,
    /// Time-varying part (`wave=`), if any.
    pub shape: Option<Shape>,
}

/// Time-varying source shapes.
#[derive(Debug, Clone, PartialEq)]
pub enum Shape {
    /// `sine(amp, freq, phase, offset, start, rise)`:
    /// `offset + amp·env(t)·sin(2π freq (t − start) + phase)` for t ≥ start, `offset` before,
    /// where env ramps from 0 to 1 over `rise` seconds after `start` (raised cosine), 1 if rise = 0.
    Sine {
        /// Peak amplitude.
        amp: f64,
        /// Frequency, Hz (> 0).
        freq: f64,
        /// Phase, radians (written in degrees with `deg`, or as a plain number of degrees).
        phase: f64,
        /// Constant offset.
        offset: f64,
        /// Start time (`start=`), s.
        delay: f64,
        /// Amplitude rise time, s (0 = none).
        rise: f64,
    },
    /// `square(base, top, start, rise, fall, hold, every)`: `base` until
    /// `start`, then a ramp to `top` over `rise`, `top` for `hold`, a ramp
    /// back over `fall`, `base` again; repeated every `every` seconds.
    Square {
        /// Value before and between pulses.
        base: f64,
        /// Value during a pulse.
        top: f64,
        /// Time of the first rising edge, s.
        start: f64,
        /// Rise time, s.
        rise: f64,
        /// Fall time, s.
        fall: f64,
        /// Time at `top`, s.
        hold: f64,
        /// Repetition period, s (0 or ∞ = a single pulse).
        every: f64,
    },
    /// `table(t1: v1, t2: v2, ...)`: linear between points, held flat outside, times strictly increasing.
    Table(Vec<(f64, f64)>),
}

/// Kind of a model block.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ModelKind {
    /// npn bipolar transistor.
    Npn,
    /// pnp bipolar transistor.
    Pnp,
    /// Junction diode.
    Diode,
}

/// A bound model with typed, evaluated parameters.
#[derive(Debug, Clone)]
pub struct Model {
    /// Model name.
    pub name: String,
    /// The parameters.
    pub params: ModelParams,
    /// Where it was declared.
    pub origin: Origin,
}

/// Typed model parameters, by kind.
// A circuit holds one per part (a handful), read in place by every layer:
// boxing the bipolar variant would save a few hundred bytes per part.
#[allow(clippy::large_enum_variant)]
#[derive(Debug, Clone, PartialEq)]
pub enum ModelParams {
    /// Diode parameters.
    Diode(DiodeParams),
    /// Bipolar parameters; `polarity` tells npn from pnp.
    Bjt(BjtParams),
}

impl Model {
    /// The kind of this model.
    pub fn kind(&self) -> ModelKind {
        match &self.params {
            ModelParams::Diode(_) => ModelKind::Diode,
            ModelParams::Bjt(p) => {
                if p.pnp {
                    ModelKind::Pnp
                } else {
                    ModelKind::Npn
                }
            }
        }
    }
}

/// Junction diode parameters; their stage-file names, defaults and sources
/// are declared once in [`crate::models::DIODE_PARAMS`] (see docs/models.md).
#[derive(Debug, Clone, PartialEq)]
pub struct DiodeParams {
    /// I_S: saturation current (A); stage file `junction { sat_current= }`.
    pub sat_current: f64,
    /// n: ideality factor (—); stage file `junction { ideality= }`.
    pub emission: f64,
    /// r_S: ohmic series resistance (Ω); stage file `resistance { series= }`.
    pub r_series: f64,
    /// C_j0: depletion capacitance at zero bias (F); stage file `charge { capacitance= }`.
    pub cj0: f64,
    /// φ: built-in potential (V); stage file `charge { potential= }`.
    pub v_junction: f64,
    /// m: grading exponent (—); stage file `charge { grading= }`.
    pub grading: f64,
    /// k_lin: fraction of the built-in potential above which the depletion capacitance continues as a straight line (—); stage file `charge { linear_from= }`.
    pub linear_from: f64,
    /// τ_T: transit time (diffusion charge τ_T·I_D) (s); stage file `charge { transit= }`.
    pub transit: f64,
    /// V_BR: reverse breakdown voltage (V); stage file `breakdown { voltage= }`.
    pub breakdown: f64,
    /// I_BR: reverse current at the breakdown voltage (A); stage file `breakdown { current= }`.
    pub breakdown_current: f64,
    /// E_g: band gap, sets how I_S rises with temperature (eV); stage file `temperature { band_gap= }`.
    pub gap: f64,
    /// ξ_S: exponent of T in I_S(T) besides the band-gap term (—); stage file `temperature { sat_current_exponent= }`.
    pub sat_temp_exp: f64,
    /// T_0: temperature the parameters were measured at (written in degC or K) (K); stage file `temperature { measured_at= }`.
    pub t_measured: f64,
}

impl Default for DiodeParams {
    fn default() -> Self {
        Self {
            sat_current: 1e-14,
            emission: 1.0,
            r_series: 0.0,
            cj0: 0.0,
            v_junction: 0.7,
            grading: 0.5,
            linear_from: 0.5,
            transit: 0.0,
            breakdown: f64::INFINITY,
            breakdown_current: 1e-10,
            gap: 1.11,
            sat_temp_exp: 3.0,
            t_measured: 298.15,
        }
    }
}

/// Bipolar transistor parameters (Gummel–Poon type). What each is written
/// as in a stage file, its default and its source are declared once in
/// [`crate::models::BJT_PARAMS`]; `Default` here is only a starting point for
/// code (the elaborator sets every field that has an effect from that table).
#[derive(Debug, Clone, PartialEq)]
pub struct BjtParams {
    /// true for a pnp model.
    pub pnp: bool,
    /// I_S: transport saturation current (A); stage file `transport { sat_current= }`.
    pub sat_current: f64,
    /// β_F: ideal maximum forward current gain (—); stage file `transport { beta= }`.
    pub gain_fwd: f64,
    /// β_R: ideal maximum reverse current gain (—); stage file `transport { beta_reverse= }`.
    pub gain_rev: f64,
    /// n_F: forward ideality factor of the transport current (—); stage file `transport { ideality= }`.
    pub emission_fwd: f64,
    /// n_R: reverse ideality factor of the transport current (—); stage file `transport { ideality_reverse= }`.
    pub emission_rev: f64,
    /// V_A: forward Early voltage (base-width modulation) (V); stage file `transport { early_voltage= }`.
    pub early_fwd: f64,
    /// V_B: reverse Early voltage (V); stage file `transport { early_voltage_reverse= }`.
    pub early_rev: f64,
    /// I_KF: forward high-injection knee current (A); stage file `transport { knee_current= }`.
    pub knee_fwd: f64,
    /// I_KR: reverse high-injection knee current (A); stage file `transport { knee_current_reverse= }`.
    pub knee_rev: f64,
    /// I_SE: base–emitter recombination saturation current (A); stage file `leakage { be_current= }`.
    pub leak_be: f64,
    /// n_E: ideality factor of the base–emitter recombination current (—); stage file `leakage { be_ideality= }`.
    pub leak_be_emission: f64,
    /// I_SC: base–collector recombination saturation current (A); stage file `leakage { bc_current= }`.
    pub leak_bc: f64,
    /// n_C: ideality factor of the base–collector recombination current (—); stage file `leakage { bc_ideality= }`.
    pub leak_bc_emission: f64,
    /// r_B: ohmic base resistance (Ω); stage file `resistance { base= }`.
    pub r_base: f64,
    /// r_C: ohmic collector resistance (Ω); stage file `resistance { collector= }`.
    pub r_collector: f64,
    /// r_E: ohmic emitter resistance (Ω); stage file `resistance { emitter= }`.
    pub r_emitter: f64,
    /// φ_F: excess phase of the forward transport current at 1/(2π τ_F) (degrees); stage file `charge { excess_phase= }`.
    pub excess_phase: f64,
    /// r_BM: base resistance at high current, with current crowding (Ω); stage file `resistance { base_min= }`.
    pub r_base_min: f64,
    /// I_RB: base current at which the base resistance has fallen halfway to r_BM (A); stage file `resistance { base_half_current= }`.
    pub base_half_current: f64,
    /// ξ_RB: exponent of T in r_B(T) and r_BM(T) (—); stage file `resistance { base_exponent= }`.
    pub base_temp_exp: f64,
    /// R_CO: resistance of the epitaxial collector at low current (Ω); stage file `epi { resistance= }`.
    pub r_epi: f64,
    /// γ: doping factor of the epitaxial collector, (2 n_i/N_epi)² (—); stage file `epi { doping_factor= }`.
    pub epi_gamma: f64,
    /// Q_CO: charge factor of the epitaxial collector (C); stage file `epi { stored_charge= }`.
    pub epi_charge: f64,
    /// ξ_RC: exponent of T in R_CO(T) (—); stage file `epi { resistance_exponent= }`.
    pub epi_temp_exp: f64,
    /// BV_CBO: collector–base avalanche breakdown voltage of the multiplication law (V); stage file `avalanche { cb_voltage= }`.
    pub bv_cbo: f64,
    /// n_av: exponent of the multiplication law (—); stage file `avalanche { exponent= }`.
    pub avalanche_exp: f64,
    /// α_BV: relative change of BV_CBO per kelvin (1/K); stage file `avalanche { voltage_tempco= }`.
    pub bv_tempco: f64,
    /// C_je0: base–emitter depletion capacitance at zero bias (F); stage file `charge { be_capacitance= }`.
    pub cj_be: f64,
    /// φ_E: base–emitter built-in potential (V); stage file `charge { be_potential= }`.
    pub vj_be: f64,
    /// m_E: base–emitter grading exponent (—); stage file `charge { be_grading= }`.
    pub grading_be: f64,
    /// C_jc0: base–collector depletion capacitance at zero bias (F); stage file `charge { bc_capacitance= }`.
    pub cj_bc: f64,
    /// φ_C: base–collector built-in potential (V); stage file `charge { bc_potential= }`.
    pub vj_bc: f64,
    /// m_C: base–collector grading exponent (—); stage file `charge { bc_grading= }`.
    pub grading_bc: f64,
    /// k_lin: fraction of the built-in potential above which a depletion capacitance continues as a straight line (—); stage file `charge { linear_from= }`.
    pub linear_from: f64,
    /// τ_F: forward transit time (diffusion charge τ_F·I_CC) (s); stage file `charge { transit= }`.
    pub transit_fwd: f64,
    /// τ_R: reverse transit time (s); stage file `charge { transit_reverse= }`.
    pub transit_rev: f64,
    /// E_g: band gap, sets how I_S rises with temperature (eV); stage file `temperature { band_gap= }`.
    pub gap: f64,
    /// ξ_S: exponent of T in I_S(T) besides the band-gap term (—); stage file `temperature { sat_current_exponent= }`.
    pub sat_temp_exp: f64,
    /// ξ_β: exponent of T in β_F(T) and β_R(T) (—); stage file `temperature { beta_exponent= }`.
    pub gain_temp_exp: f64,
    /// T_0: temperature the parameters were measured at (written in degC or K) (K); stage file `temperature { measured_at= }`.
    pub t_measured: f64,
    /// V_CE,max: collector–emitter voltage rating (V); stage file `ratings { vce_max= }`.
    pub max_vce: f64,
    /// I_C,max: collector current rating (A); stage file `ratings { ic_max= }`.
    pub max_ic: f64,
    /// P_max: dissipation rating (W); stage file `ratings { power_max= }`.
    pub max_power: f64,
    /// T_J,max: junction temperature rating (written in degC or K) (K); stage file `ratings { tj_max= }`.
    pub max_tj: f64,
    /// V_EB,max: reverse base–emitter voltage rating (V); stage file `ratings { vbe_reverse_max= }`.
    pub max_vbe_reverse: f64,
    /// V_CER,max: collector–emitter rating with a resistor of at most `vce_resistor_ohm` from base to emitter (V); stage file `ratings { vce_resistor_max= }`.
    pub max_vce_resistor: f64,
    /// R_BE: the base–emitter resistance `max_vce_resistor` is rated at (Ω); stage file `ratings { vce_resistor_at= }`.
    pub vce_resistor_ohm: f64,
    /// V_CES,max: collector–emitter rating with the base shorted to the emitter (V); stage file `ratings { vce_short_max= }`.
    pub max_vce_short: f64,
    /// V_CB,max: collector–base voltage rating (V); stage file `ratings { vcb_max= }`.
    pub max_vcb: f64,
    /// θ_JA: thermal resistance junction to ambient (K/W); stage file `thermal { junction_ambient= }`.
    pub rth_ja: f64,
    /// θ_JC: thermal resistance junction to case (K/W); stage file `thermal { junction_case= }`.
    pub rth_jc: f64,
    /// θ_CA: thermal resistance case to ambient, through the heatsink (K/W); stage file `thermal { case_ambient= }`.
    pub rth_sink: f64,
    /// C_J: heat capacity of the die, between junction and case (for heating over time) (J/K); stage file `thermal { junction_heat= }`.
    pub heat_junction: f64,
    /// C_C: heat capacity of the case (for heating over time) (J/K); stage file `thermal { case_heat= }`.
    pub heat_case: f64,
    /// θ_CS: thermal resistance case to a shared heatsink (the mounting) (K/W); stage file `thermal { case_sink= }`.
    pub rth_cs: f64,
    /// R_1: junction to case as a Foster ladder from data: resistance of term 1 (K/W); stage file `thermal { foster_r1= }`.
    pub foster_r1: f64,
    /// τ_1: junction to case as a Foster ladder from data: time constant of term 1 (s); stage file `thermal { foster_tau1= }`.
    pub foster_tau1: f64,
    /// R_2: junction to case as a Foster ladder from data: resistance of term 2 (K/W); stage file `thermal { foster_r2= }`.
    pub foster_r2: f64,
    /// τ_2: junction to case as a Foster ladder from data: time constant of term 2 (s); stage file `thermal { foster_tau2= }`.
    pub foster_tau2: f64,
    /// R_3: junction to case as a Foster ladder from data: resistance of term 3 (K/W); stage file `thermal { foster_r3= }`.
    pub foster_r3: f64,
    /// τ_3: junction to case as a Foster ladder from data: time constant of term 3 (s); stage file `thermal { foster_tau3= }`.
    pub foster_tau3: f64,
}

impl Default for BjtParams {
    fn default() -> Self {
        Self {
            pnp: false,
            sat_current: 1e-15,
            gain_fwd: 100.0,
            gain_rev: 1.0,
            emission_fwd: 1.0,
            emission_rev: 1.0,
            early_fwd: f64::INFINITY,
            early_rev: f64::INFINITY,
            knee_fwd: f64::INFINITY,
            knee_rev: f64::INFINITY,
            leak_be: 0.0,
            leak_be_emission: 1.5,
            leak_bc: 0.0,
            leak_bc_emission: 2.0,
            r_base: 0.0,
            r_collector: 0.0,
            r_emitter: 0.0,
            excess_phase: 0.0,
            r_base_min: 0.0,
            base_temp_exp: 0.0,
            base_half_current: f64::INFINITY,
            r_epi: 0.0,
            epi_gamma: 1e-11,
            epi_charge: 0.0,
            epi_temp_exp: 2.42,
            bv_cbo: f64::INFINITY,
            avalanche_exp: 4.0,
            bv_tempco: 0.0,
            cj_be: 0.0,
            vj_be: 0.75,
            grading_be: 0.33,
            cj_bc: 0.0,
            vj_bc: 0.75,
            grading_bc: 0.33,
            linear_from: 0.5,
            transit_fwd: 0.0,
            transit_rev: 0.0,
            gap: 1.11,
            sat_temp_exp: 3.0,
            gain_temp_exp: 0.0,
            t_measured: 298.15,
            max_vce: f64::INFINITY,
            max_ic: f64::INFINITY,
            max_power: f64::INFINITY,
            max_tj: f64::INFINITY,
            max_vbe_reverse: f64::INFINITY,
            max_vce_resistor: f64::INFINITY,
            vce_resistor_ohm: f64::INFINITY,
            max_vce_short: f64::INFINITY,
            max_vcb: f64::INFINITY,
            rth_ja: f64::INFINITY,
            rth_jc: f64::INFINITY,
            rth_sink: f64::INFINITY,
            heat_junction: 0.0,
            heat_case: 0.0,
            rth_cs: f64::INFINITY,
            foster_r1: 0.0,
            foster_tau1: 0.0,
            foster_r2: 0.0,
            foster_tau2: 0.0,
            foster_r3: 0.0,
            foster_tau3: 0.0,
        }
    }
}

impl BjtParams {
    /// The junction–case Foster ladder from data, `(R_i, τ_i)` for each
    /// term with R_i > 0 (empty when none is given).
    pub fn foster_terms(&self) -> Vec<(f64, f64)> {
        [
            (self.foster_r1, self.foster_tau1),
            (self.foster_r2, self.foster_tau2),
            (self.foster_r3, self.foster_tau3),
        ]
        .into_iter()
        .filter(|t| t.0 > 0.0)
        .collect()
    }

    /// Junction to case, K/W: `rth_jc` if set, else the sum of the Foster
    /// terms if any, else `None`.
    pub fn junction_case(&self) -> Option<f64> {
        if self.rth_jc.is_finite() {
            Some(self.rth_jc)
        } else {
            let f = self.foster_terms();
            (!f.is_empty()).then(|| f.iter().map(|t| t.0).sum())
        }
    }

    /// How this transistor's heat leaves it in `analyze heat`, on the
    /// shared heatsink or not (docs/thermal.md, "The thermal network"; the
    /// stage builds the network from this, elaboration checks it).
    pub fn heat_path(&self, on_sink: bool) -> HeatPath {
        let jc = self.junction_case();
        if on_sink {
            match jc {
                None => HeatPath::SinkWithoutJunctionCase,
                Some(_) => HeatPath::Sink {
                    case: self.rth_cs.is_finite(),
                },
            }
        } else if jc.is_some() && self.rth_sink.is_finite() && !self.rth_ja.is_finite() {
            HeatPath::Case
        } else if self.rth_ja.is_finite() {
            HeatPath::Direct
        } else {
            HeatPath::Absent
        }
    }

    /// Whether the junction is one node of heat capacity `heat_junction`
    /// (else the Cauer ladder of the part's Foster terms, whose capacities
    /// come from the terms).
    pub fn lumped_junction(&self) -> bool {
        self.rth_jc.is_finite() || self.foster_terms().is_empty()
    }

    /// The first heat capacity a transient of the thermal network needs
    /// and this part does not give, by its word (`None`: all given, or the
    /// path has no nodes of its own). The heatsink's own capacity is the
    /// analysis's (`sink_heat=`).
    pub fn missing_heat(&self, path: HeatPath) -> Option<&'static str> {
        let junction = match path {
            HeatPath::Direct => true,
            HeatPath::Sink { .. } | HeatPath::Case => self.lumped_junction(),
            HeatPath::Absent | HeatPath::SinkWithoutJunctionCase => return None,
        };
        if junction && self.heat_junction <= 0.0 {
            return Some("junction_heat");
        }
        let case = matches!(path, HeatPath::Case | HeatPath::Sink { case: true });
        (case && self.heat_case <= 0.0).then_some("case_heat")
    }

    /// Junction-to-ambient thermal resistance in K/W: `rth_ja` if set, else
    /// junction to case ([`BjtParams::junction_case`]) + `rth_sink` if both
    /// are set, else `None`.
    pub fn thermal_resistance(&self) -> Option<f64> {
        if self.rth_ja.is_finite() {
            Some(self.rth_ja)
        } else {
            match self.junction_case() {
                Some(jc) if self.rth_sink.is_finite() => Some(jc + self.rth_sink),
                _ => None,
            }
        }
    }
}

/// How a transistor's heat leaves it in `analyze heat`
/// ([`BjtParams::heat_path`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HeatPath {
    /// On the shared heatsink: junction –θ_JC– case –θ_CS– sink when
    /// `case` (the part gives `case_sink`), else junction –θ_JC– sink with
    /// the case's heat capacity put on the sink.
    Sink {
        /// Whether the case is a node of its own.
        case: bool,
    },
    /// Off the heatsink: junction –θ_JC– case –θ_CA– ambient.
    Case,
    /// Junction –θ_JA– ambient.
    Direct,
    /// No heat path given: the transistor stays at the ambient.
    Absent,
    /// On the heatsink, but the part gives no junction–case resistance
    /// (refused).
    SinkWithoutJunctionCase,
}

/// Integration method for transient analysis.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Integration {
    /// Trapezoidal rule.
    Trapezoidal,
    /// Second-order backward differentiation.
    Bdf2,
    /// Five-stage L-stable singly diagonally implicit Runge–Kutta method of
    /// order 4 with an embedded order-3 error estimate (default).
    #[default]
    Sdirk4,
}

/// How a transient starts.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum StartFrom {
    /// From the DC operating point (default).
    #[default]
    OperatingPoint,
    /// From all-zero state.
    Zero,
}

/// Periodic steady-state method.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum SteadyMethod {
    /// Pick balance or shooting, fall back to the other.
    #[default]
    Auto,
    /// Harmonic balance.
    Balance,
    /// Shooting Newton.
    Shooting,
    /// Plain transient until settled.
    Settle,
}

/// Frequency scale of an AC sweep.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Scale {
    /// Linearly spaced points.
    #[default]
    Linear,
    /// Logarithmically spaced points.
    Log,
}

/// An `analyze` statement.
#[derive(Debug, Clone, PartialEq)]
pub enum Analysis {
    /// `analyze bias`.
    Bias,
    /// `analyze transient stop=.. [step=..] [max_step=..] [start=bias|zero] [method=trapezoidal|bdf2] [tolerance=..]`.
    Transient {
        /// End time, s.
        stop: f64,
        /// Output (and initial) step, s.
        step: f64,
        /// Largest internal step, s (default: `step`).
        max_step: Option<f64>,
        /// Start from the operating point or from zero.
        start: StartFrom,
        /// Integration method.
        method: Integration,
        /// Relative tolerance of the local truncation error (`tolerance=`; default in docs/analyses.md).
        rel_tolerance: Option<f64>,
    },
    /// `analyze ac from=.. to=.. points=.. [scale=linear|log] [source=NAME] [impedance=NAME]`.
    Ac {
        /// Start frequency, Hz.
        from: f64,
        /// Stop frequency, Hz.
        to: f64,
        /// Number of points (≥ 1).
        points: usize,
        /// Spacing.
        scale: Scale,
        /// The source driven with unit amplitude (default: the `input` element).
        source: Option<ElementId>,
        /// Element at whose position the impedance is reported (seen by that element, looking into the rest).
        impedance_at: Option<ElementId>,
    },
    /// `analyze steady freq=.. [harmonics=K] [method=auto|balance|shooting|settle] [steps=N]`.
    Steady {
        /// Fundamental frequency, Hz.
        freq: f64,
        /// Number of harmonics K (default 32).
        harmonics: usize,
        /// Method.
        method: SteadyMethod,
        /// Time steps per period for shooting/settle (power of two, default 256).
        steps_per_period: usize,
        /// The accuracy `method=auto` refines to.
        accuracy: SteadyAccuracy,
    },
    /// `analyze ruggedness vswr=[S, …] [phases=N] [reference=Ω]`: the output
    /// load moved around circles of constant VSWR (docs/analyses.md,
    /// "Mismatch sweep").
    Ruggedness {
        /// The VSWR of each circle (1 ≤ S ≤ 100), in file order.
        vswr: Vec<f64>,
        /// Loads per circle, at phases 360°·k/N.
        phases: usize,
        /// The reference impedance, Ω (`None`: the output resistor's value).
        reference: Option<f64>,
    },
    /// `analyze twotone spacing=Hz|[Hz, …] [order=K] [levels=[dB, …]]`: the `input`
    /// source's sine split into two tones of half its amplitude at
    /// `f ∓ spacing/2`, solved by multi-tone harmonic balance
    /// (docs/analyses.md, "Two-tone test").
    TwoTone {
        /// Distance between the two tones, Hz (the first of `spacings`).
        spacing: f64,
        /// Every spacing given, in file order: with more than one, the
        /// intermodulation at full drive is also reported at each.
        spacings: Vec<f64>,
        /// Box truncation order: every multiple of each tone up to it.
        order: usize,
        /// Drive levels of the sweep, dB relative to the input's amplitude
        /// (empty: the full drive only).
        levels: Vec<f64>,
    },
    /// `analyze heat [sink=[…] sink_ambient=K/W sink_heat=J/K] [transmit=s mark=s space=s] [rounds=N]`:
    /// the steady state solved together with the junction temperatures,
    /// and the heating over a keyed transmission (docs/thermal.md).
    Heat(HeatSpec),
    /// `analyze loadpull reference=Ω [center=[x, y]] [radius=ρ] [points=N]
    /// [transistor=NAME]`: the load the collector sees at the fundamental
    /// moved over a grid of reflection coefficients, its harmonic
    /// terminations held at those of its own network (docs/analyses.md,
    /// "Load-pull").
    LoadPull(LoadPullSpec),
    /// `analyze keying wpm=N|baud=B [pattern=dots|paris] [shape=…] [rise=s]
    /// [fall=s] [source=NAME] [cycles=N] [step=s] [rbw=Hz] [span=Hz]
    /// [k_factor=K]`: a source's sine keyed on and off, the envelope
    /// followed through the stage, key-click sidebands measured
    /// (docs/analyses.md, "Keying").
    Keying(crate::keying::KeyingSpec),
}

/// What `analyze loadpull` asks for.
#[derive(Debug, Clone, PartialEq)]
pub struct LoadPullSpec {
    /// The reference impedance of Γ, Ω (> 0).
    pub reference: f64,
    /// The middle of the region, Γ = re + j·im.
    pub center: (f64, f64),
    /// The radius of the disc of Γ around `center` (|center| + radius ≤
    /// [`crate::options::analysis::GAMMA_MAX`]).
    pub radius: f64,
    /// Grid points across the disc in each direction (≥ 3).
    pub points: usize,
    /// The transistor whose collector is pulled.
    pub transistor: ElementId,
}

/// What `analyze heat` asks for.
#[derive(Debug, Clone, PartialEq)]
pub struct HeatSpec {
    /// The transistors and diodes on the shared heatsink, in file order.
    pub sink: Vec<ElementId>,
    /// Heatsink to ambient, K/W (`Some` whenever `sink` is not empty).
    pub sink_ambient: Option<f64>,
    /// Heat capacity of the heatsink, J/K (0: none given).
    pub sink_heat: f64,
    /// Length of the transmission followed over time, s.
    pub transmit: Option<f64>,
    /// Key-down time of each keying cycle, s (the whole transmission when not keyed).
    pub mark: f64,
    /// Key-up time of each keying cycle, s (0: one continuous key-down).
    pub space: f64,
    /// Most electrical solves of the electrothermal iteration.
    pub rounds: usize,
}

impl Analysis {
    /// The word after `analyze` that declares this analysis (the keys of
    /// [`crate::options::analysis::ALL`]).
    pub fn keyword(&self) -> &'static str {
        let k = match self {
            Analysis::Bias => 0,
            Analysis::Transient { .. } => 1,
            Analysis::Ac { .. } => 2,
            Analysis::Steady { .. } => 3,
            Analysis::Ruggedness { .. } => 4,
            Analysis::Heat(_) => 5,
            Analysis::TwoTone { .. } => 6,
            Analysis::LoadPull(_) => 7,
            Analysis::Keying(_) => 8,
        };
        crate::options::analysis::ALL[k].0
    }
}

/// The accuracy target of an automatic steady state (`power_error=`,
/// `level_error=`; docs/analyses.md, "Accuracy of the steady state").
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SteadyAccuracy {
    /// Largest relative error of the output power, a fraction.
    pub power_error: f64,
    /// Largest error of a harmonic level above −100 dBc, dB.
    pub level_error_db: f64,
}

impl Default for SteadyAccuracy {
    /// The option table's defaults (`options::analysis::POWER_ERROR`,
    /// `LEVEL_ERROR`): the one place these numbers are written.
    fn default() -> Self {
        use crate::options::{analysis, Default as D};
        let num = |d: D, fallback: f64| match d {
            D::Number(v) => v,
            _ => fallback,
        };
        Self {
            power_error: num(analysis::POWER_ERROR.default, f64::NAN),
            level_error_db: num(analysis::LEVEL_ERROR.default, f64::NAN),
        }
    }
}

/// A mask: spurious-emission limits as rules.
#[derive(Debug, Clone)]
pub struct Mask {
    /// Mask name.
    pub name: String,
    /// Rules; where several cover one harmonic, all must hold.
    pub rules: Vec<MaskRule>,
    /// Where it was declared.
    pub origin: Origin,
}

/// Which spurious emissions a rule covers.
#[derive(Debug, Clone, PartialEq)]
pub enum MaskRange {
    /// Harmonic numbers `from..=to` (to `None` = every harmonic computed from `from` on).
    Harmonics {
        /// First harmonic number (≥ 2).
        from: u32,
        /// Last harmonic number, inclusive.
        to: Option<u32>,
    },
    /// Emission frequency range in Hz, inclusive.
    Frequency {
        /// Lower edge, Hz.
        from: f64,
        /// Upper edge, Hz.
        to: f64,
    },
    /// Keying sidebands whose distance from the carrier is from `from` to
    /// `to`, Hz, inclusive, on either side (`offset A to B`); judged by
    /// `require sidebands`, never by `require harmonics`.
    Offset {
        /// Nearer edge, Hz.
        from: f64,
        /// Farther edge, Hz.
        to: f64,
    },
    /// Every spurious emission. A carrier-frequency condition combines with
    /// any range through [`MaskRule::carrier`].
    Any,
}

/// A limit on one spurious emission, evaluated against the carrier power.
#[derive(Debug, Clone, PartialEq)]
pub enum Limit {
    /// At most this many dB relative to the carrier (negative, e.g. −43). The
    /// expression may use `pcarrier` (carrier power, W).
    Dbc(LimitExpr),
    /// At most this absolute power, W. The expression may use `pcarrier`.
    Watts(LimitExpr),
    /// Every sub-limit must hold (the most stringent applies).
    All(Vec<Limit>),
    /// The least stringent sub-limit applies.
    Lenient(Vec<Limit>),
    /// A carrier-power condition: `then` applies when the carrier power is strictly
    /// below `watts`, `otherwise` at or above it (rules that change with the
    /// transmitter's mean power).
    IfCarrierBelow {
        /// The carrier-power threshold, W.
        watts: f64,
        /// The limit for a carrier below `watts`.
        then: Box<Limit>,
        /// The limit for a carrier of `watts` or more.
        otherwise: Box<Limit>,
    },
}

/// A limit value: a constant, or a closed-form function of the carrier power.
#[derive(Debug, Clone, PartialEq)]
pub enum LimitExpr {
    /// A constant number (dBc or W by context).
    Const(f64),
    /// `a + b·log10(pcarrier / 1 W)` — enough for every published rule we ship.
    LogCarrier {
        /// Constant term.
        a: f64,
        /// Coefficient of log10(P/1 W).
        b: f64,
    },
}

impl LimitExpr {
    /// Evaluate at carrier power `pcarrier_w` (W).
    pub fn eval(&self, pcarrier_w: f64) -> f64 {
        match *self {
            LimitExpr::Const(v) => v,
            LimitExpr::LogCarrier { a, b } => a + b * (pcarrier_w.max(1e-30)).log10(),
        }
    }
}

impl Limit {
    /// The allowed level of one spurious emission, in dB relative to a carrier of
    /// `pcarrier_w` watts (e.g. −43.0). Absolute limits are converted.
    pub fn allowed_dbc(&self, pcarrier_w: f64) -> f64 {
        let pc = pcarrier_w.max(1e-30);
        match self {
            Limit::Dbc(e) => e.eval(pc),
            Limit::Watts(e) => 10.0 * (e.eval(pc).max(1e-30) / pc).log10(),
            Limit::All(v) => v
                .iter()
                .map(|l| l.allowed_dbc(pc))
                .fold(f64::INFINITY, f64::min),
            Limit::Lenient(v) => v
                .iter()
                .map(|l| l.allowed_dbc(pc))
                .fold(f64::NEG_INFINITY, f64::max),
            Limit::IfCarrierBelow {
                watts,
                then,
                otherwise,
            } => {
                if pc < *watts {
                    then.allowed_dbc(pc)
                } else {
                    otherwise.allowed_dbc(pc)
                }
            }
        }
    }
}

/// One rule of a mask.
#[derive(Debug, Clone, PartialEq)]
pub struct MaskRule {
    /// Which emissions it covers.
    pub range: MaskRange,
    /// Optional carrier-frequency condition (Hz, inclusive): the rule applies only then.
    pub carrier: Option<(f64, f64)>,
    /// The limit.
    pub limit: Limit,
}

/// Comparison in a requirement.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Cmp {
    /// `<=`
    Le,
    /// `>=`
    Ge,
    /// `<`
    Lt,
    /// `>`
    Gt,
}

/// A figure a requirement constrains: a figure of the catalogue
/// ([`crate::figure`]), the harmonic number for `harmonic N`, and the element
/// a per-element figure is about (none: every such element, the worst counts).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Metric {
    /// The figure.
    pub figure: crate::figure::Figure,
    /// The harmonic number, for `harmonic N`.
    pub harmonic: Option<u32>,
    /// The element, for a per-element figure.
    pub element: Option<ElementId>,
}

impl Metric {
    /// A figure about the whole stage (or every element of its kind).
    pub fn of(figure: crate::figure::Figure) -> Metric {
        Metric {
            figure,
            harmonic: None,
            element: None,
        }
    }

    /// A per-element figure about `element` (`None`: every such element).
    pub fn about(figure: crate::figure::Figure, element: Option<ElementId>) -> Metric {
        Metric {
            element,
            ..Metric::of(figure)
        }
    }

    /// `harmonic N`.
    pub fn harmonic(n: u32) -> Metric {
        Metric {
            harmonic: Some(n),
            ..Metric::of(crate::figure::Figure::Harmonic)
        }
    }

    /// The figure as a stage file writes it (`pout`, `harmonic 3`,
    /// `vce_peak q1`), element names from `c`.
    pub fn spelled(&self, c: &Circuit) -> String {
        let mut s = self.figure.word().unwrap_or("?").to_string();
        if let Some(n) = self.harmonic {
            s.push_str(&format!(" {n}"));
        }
        if let Some(i) = self.element {
            s.push(' ');
            s.push_str(
                c.elements
                    .get(i.index())
                    .map(|e| e.name.as_str())
                    .unwrap_or("?"),
            );
        }
        s
    }
}

/// What a requirement compares against.
#[derive(Debug, Clone, PartialEq)]
pub enum Bound {
    /// A number in SI (fractions for %, dB for dB/dBc figures, K for temperatures).
    Value(f64),
    /// A user mask (index into [`Circuit::masks`]).
    Mask(usize),
    /// A built-in mask, by its name.
    BuiltinMask(String),
}

/// A `require` statement.
#[derive(Debug, Clone, PartialEq)]
pub struct Requirement {
    /// The figure.
    pub metric: Metric,
    /// The comparison (for masks always `Le`).
    pub cmp: Cmp,
    /// The bound.
    pub bound: Bound,
    /// The statement's text as written, for reports.
    pub text: String,
    /// Where it was written.
    pub origin: Origin,
}

/// What a `vary` changes.
#[derive(Debug, Clone, PartialEq)]
pub enum VaryTarget {
    /// A `let` parameter by name.
    Param(String),
    /// The main value of an element by name.
    Element(String),
}

/// The values a `vary` takes.
#[derive(Debug, Clone, PartialEq)]
pub enum Sweep {
    /// An explicit list.
    List(Vec<f64>),
    /// `from A to B step S` or `from A to B points N` (linear).
    Linear {
        /// First value.
        from: f64,
        /// Last value.
        to: f64,
        /// Number of points (≥ 1), derived from a step if one was given.
        points: usize,
    },
    /// `from A to B points N log`.
    Log {
        /// First value (> 0).
        from: f64,
        /// Last value (> 0).
        to: f64,
        /// Number of points (≥ 1).
        points: usize,
    },
}

impl Sweep {
    /// The values in order.
    pub fn values(&self) -> Vec<f64> {
        match self {
            Sweep::List(v) => v.clone(),
            Sweep::Linear { from, to, points } => {
                if *points <= 1 {
                    return vec![*from];
                }
                (0..*points)
                    .map(|i| from + (to - from) * i as f64 / (*points - 1) as f64)
                    .collect()
            }
            Sweep::Log { from, to, points } => {
                if *points <= 1 {
                    return vec![*from];
                }
                let (la, lb) = (from.ln(), to.ln());
                (0..*points)
                    .map(|i| (la + (lb - la) * i as f64 / (*points - 1) as f64).exp())
                    .collect()
            }
        }
    }
}

/// A `vary` statement.
#[derive(Debug, Clone, PartialEq)]
pub struct Vary {
    /// What changes.
    pub target: VaryTarget,
    /// The values.
    pub sweep: Sweep,
    /// Where it was written.
    pub origin: Origin,
}

/// Tolerance distribution.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Distribution {
    /// Uniform over ±tolerance.
    #[default]
    Uniform,
    /// Gaussian with ±tolerance = 3σ.
    Gaussian,
}

/// A `tolerance` statement.
#[derive(Debug, Clone, PartialEq)]
pub struct Tolerance {
    /// The element whose main value varies.
    pub element: ElementId,
    /// Relative tolerance as a fraction (5% = 0.05).
    pub fraction: f64,
    /// Distribution.
    pub distribution: Distribution,
}

/// Study settings collected from the file.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct StudySpec {
    /// Sweeps, nested as a full grid in file order (first is outermost).
    pub vary: Vec<Vary>,
    /// Tolerances.
    pub tolerances: Vec<Tolerance>,
    /// `montecarlo runs=N seed=S`.
    pub montecarlo: Option<MonteCarlo>,
    /// `tune` statements.
    pub tune: Vec<Tune>,
}

/// Monte Carlo settings.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct MonteCarlo {
    /// Number of runs.
    pub runs: usize,
    /// Seed.
    pub seed: u64,
}

/// A `tune PARAM from A to B` statement: a parameter the tuner may move.
#[derive(Debug, Clone, PartialEq)]
pub struct Tune {
    /// Parameter name.
    pub param: String,
    /// Lower bound.
    pub from: f64,
    /// Upper bound.
    pub to: f64,
}

/// Overrides applied at elaboration to make a variant.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Overrides {
    /// Parameter values replacing `let` definitions (by name).
    pub params: BTreeMap<String, f64>,
    /// Element main-value replacements (by element name).
    pub element_values: BTreeMap<String, f64>,
    /// Element main-value multipliers (by element name), applied after replacements.
    pub element_factors: BTreeMap<String, f64>,
    /// The SI unit symbol written with a parameter value given from outside
    /// (`--set rl=5nF` gives `rl` → `F`; see [`crate::param_units::si_symbol`]),
    /// checked against the unit the stage file gives that parameter.
    pub param_units: BTreeMap<String, String>,
}

/// The `output` element when it is a resistor: the load a two-tone test
/// or a keying reads its powers in.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OutputResistor<'a> {
    /// The element's name.
    pub name: &'a str,
    /// Its first node.
    pub a: NodeId,
    /// Its second node.
    pub b: NodeId,
    /// Its resistance, Ω.
    pub r: f64,
}

impl Circuit {
    /// The `output` element as a resistor; `Err` says why it is not one
    /// ("the file has no `output`", "the output 'x' is not a resistor").
    pub fn output_resistor(&self) -> Result<OutputResistor<'_>, String> {
        let out = self
            .output
            .and_then(|o| self.elements.get(o.index()))
            .ok_or_else(|| "the file has no `output`".to_string())?;
        match out.kind {
            ElementKind::Resistor { a, b, r, .. } => Ok(OutputResistor {
                name: &out.name,
                a,
                b,
                r,
            }),
            _ => Err(format!("the output '{}' is not a resistor", out.name)),
        }
    }

    /// Look up a node by the name a person wrote (`gnd` gives [`NodeId::GROUND`]).
    pub fn node(&self, name: &str) -> Option<NodeId> {
        if name == "gnd" {
            return Some(NodeId::GROUND);
        }
        self.nodes.iter().position(|n| n == name).map(NodeId::node)
    }
    /// Look up an element by the name a person wrote.
    pub fn element(&self, name: &str) -> Option<ElementId> {
        self.elements
            .iter()
            .position(|e| e.name == name)
            .map(ElementId::new)
    }
    /// Display name of a node.
    pub fn node_name(&self, n: NodeId) -> &str {
        match n.index() {
            None => "gnd",
            Some(i) => self.nodes.get(i).map(|s| s.as_str()).unwrap_or("?"),
        }
    }
    /// Every element with its handle, in file order.
    pub fn element_ids(&self) -> impl Iterator<Item = (ElementId, &Element)> {
        self.elements
            .iter()
            .enumerate()
            .map(|(i, e)| (ElementId::new(i), e))
    }
}
