//! Low-pass LC ladders from the published prototype element values.
//!
//! Prototype g-values (G. L. Matthaei, L. Young, E. M. T. Jones, Microwave
//! Filters, Impedance-Matching Networks, and Coupling Structures, 1964,
//! §4.05; D. M. Pozar, Microwave Engineering, 4th ed., §8.3), normalised to
//! g0 = 1 and cutoff Ω = 1:
//! - Butterworth (maximally flat, 3.0103 dB at cutoff):
//!   `g_k = 2 sin((2k−1)π/(2n))`, `g_{n+1} = 1`.
//! - Chebyshev (equal ripple `LAr` dB in the passband):
//!   `β = ln coth(LAr/17.37)` (17.37 stands for 40/ln 10, used here exactly),
//!   `γ = sinh(β/(2n))`, `a_k = sin((2k−1)π/(2n))`,
//!   `b_k = γ² + sin²(kπ/n)`, `g1 = 2a1/γ`,
//!   `g_k = 4 a_{k−1} a_k / (b_{k−1} g_{k−1})`,
//!   `g_{n+1} = 1` for odd n, `coth²(β/4)` for even n (the even-order
//!   Chebyshev ladder needs unequal terminations; the load resistance is
//!   reported).
//!
//! Attenuation (power-loss ratio, available power over load power):
//! Butterworth `LA = 10 log10(1 + Ω^{2n})`; Chebyshev
//! `LA = 10 log10(1 + ε² T_n(Ω)²)`, `ε² = 10^{LAr/10} − 1`, with the
//! Chebyshev polynomial `T_n(Ω) = cos(n acos Ω)` for |Ω| ≤ 1 and
//! `cosh(n acosh Ω)` above.
//!
//! Scaling to cutoff fc and impedance R0 (same sources): a shunt g becomes
//! `C = g/(2π fc R0)`, a series g becomes `L = g R0/(2π fc)`. In the
//! shunt-first form g1 is a shunt capacitor and g0, g_{n+1} are resistances
//! when they face a shunt capacitor and conductances when they face a series
//! inductor; so the load is `g_{n+1}·R0` after a shunt capacitor and
//! `R0/g_{n+1}` after a series inductor.

use serde::Serialize;
use std::f64::consts::PI;

use crate::error::{finite, positive, DesignError};
use crate::network::{ElementStress, HarmonicGain, LadderBuilder, Naming, Network, Part};

/// Smallest supported order.
pub const MIN_ORDER: usize = 1;
/// Largest supported order.
pub const MAX_ORDER: usize = 20;
/// Largest supported Chebyshev ripple, dB.
pub const MAX_RIPPLE_DB: f64 = 10.0;

/// Response family.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "lowercase", tag = "kind")]
pub enum FilterKind {
    /// Maximally flat.
    Butterworth,
    /// Equal ripple in the passband.
    Chebyshev {
        /// Passband ripple LAr, dB (> 0).
        ripple_db: f64,
    },
}

/// Which element comes first at the source.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum FirstElement {
    /// Shunt capacitor first (fewer inductors for odd n).
    #[default]
    Shunt,
    /// Series inductor first.
    Series,
}

/// Normalised prototype values.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Prototype {
    /// g1 … gn.
    pub g: Vec<f64>,
    /// g_{n+1}, the normalised load (1 except for even-order Chebyshev).
    pub g_load: f64,
}

fn check_kind(kind: FilterKind, order: usize) -> Result<(), DesignError> {
    if !(MIN_ORDER..=MAX_ORDER).contains(&order) {
        return Err(DesignError::Order {
            order,
            min: MIN_ORDER,
            max: MAX_ORDER,
        });
    }
    if let FilterKind::Chebyshev { ripple_db } = kind {
        if !(ripple_db.is_finite() && ripple_db > 0.0 && ripple_db <= MAX_RIPPLE_DB) {
            return Err(DesignError::Ripple {
                ripple_db,
                max: MAX_RIPPLE_DB,
            });
        }
    }
    Ok(())
}

/// Prototype g-values of order `order` (Matthaei, Young, Jones 1964, §4.05;
/// Pozar, 4th ed., §8.3).
pub fn prototype(kind: FilterKind, order: usize) -> Result<Prototype, DesignError> {
    check_kind(kind, order)?;
    let n = order as f64;
    let a = |k: usize| ((2.0 * k as f64 - 1.0) * PI / (2.0 * n)).sin();
    let proto = match kind {
        FilterKind::Butterworth => Prototype {
            g: (1..=order).map(|k| 2.0 * a(k)).collect(),
            g_load: 1.0,
        },
        FilterKind::Chebyshev { ripple_db } => {
            let x = ripple_db * std::f64::consts::LN_10 / 40.0;
            let beta = (1.0 / x.tanh()).ln();
            let gamma = (beta / (2.0 * n)).sinh();
            let b = |k: usize| gamma * gamma + (k as f64 * PI / n).sin().powi(2);
            let mut g = Vec::with_capacity(order);
            g.push(2.0 * a(1) / gamma);
            for k in 2..=order {
                let prev = g[k - 2];
                g.push(4.0 * a(k - 1) * a(k) / (b(k - 1) * prev));
            }
            let g_load = if !order.is_multiple_of(2) {
                1.0
            } else {
                let c = 1.0 / (beta / 4.0).tanh();
                c * c
            };
            Prototype { g, g_load }
        }
    };
    for v in &proto.g {
        finite("prototype value", *v)?;
    }
    finite("prototype load", proto.g_load)?;
    Ok(proto)
}

/// Chebyshev polynomial of the first kind T_n(x) for x ≥ 0.
fn chebyshev_t(n: usize, x: f64) -> f64 {
    let nf = n as f64;
    if x.abs() <= 1.0 {
        (nf * x.acos()).cos()
    } else {
        (nf * x.acosh()).cosh()
    }
}

/// Prototype attenuation LA (dB) at normalised frequency `omega` (≥ 0).
pub fn attenuation_db(kind: FilterKind, order: usize, omega: f64) -> Result<f64, DesignError> {
    check_kind(kind, order)?;
    if !(omega.is_finite() && omega >= 0.0) {
        return Err(DesignError::Negative {
            what: "normalised frequency",
            value: omega,
        });
    }
    let la = match kind {
        FilterKind::Butterworth => 10.0 * (1.0 + omega.powi(2 * order as i32)).log10(),
        FilterKind::Chebyshev { ripple_db } => {
            let eps2 = 10f64.powf(ripple_db / 10.0) - 1.0;
            let t = chebyshev_t(order, omega);
            10.0 * (1.0 + eps2 * t * t).log10()
        }
    };
    finite("attenuation", la)
}

/// Options of [`design_lowpass`].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LowpassParams {
    /// Shunt-capacitor-first (default) or series-inductor-first.
    pub first: FirstElement,
    /// Operating (fundamental) frequency whose harmonics are reported, Hz;
    /// `None` uses the cutoff.
    pub fundamental: Option<f64>,
    /// Number of harmonics to report, clamped to 1..=50. Default 5.
    pub harmonics: u32,
    /// Power delivered to the load at the fundamental (W) for the element
    /// stress table; `None` skips it.
    pub power: Option<f64>,
    /// Node and element names of the fragment.
    pub naming: Naming,
}

impl Default for LowpassParams {
    fn default() -> Self {
        Self {
            first: FirstElement::Shunt,
            fundamental: None,
            harmonics: 5,
            power: None,
            naming: Naming {
                prefix: "f".into(),
                input: "in".into(),
                output: "out".into(),
            },
        }
    }
}

/// Attenuation at one harmonic of the fundamental.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicAttenuation {
    /// Harmonic number (1 = fundamental).
    pub harmonic: u32,
    /// Frequency, Hz.
    pub freq: f64,
    /// Normalised frequency Ω = f/fc.
    pub omega: f64,
    /// Prototype formula LA(Ω), dB (positive = loss).
    pub formula_db: f64,
    /// Loss of the scaled ladder by chain-matrix arithmetic, dB (−transducer gain).
    pub network_db: f64,
}

/// Result of [`design_lowpass`].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LowpassDesign {
    /// Response family.
    pub kind: FilterKind,
    /// Order n.
    pub order: usize,
    /// Cutoff frequency fc, Hz (−3.01 dB for Butterworth, end of the ripple band for Chebyshev).
    pub cutoff: f64,
    /// Source (system) impedance R0, Ω.
    pub impedance: f64,
    /// First element at the source.
    pub first: FirstElement,
    /// Prototype values.
    pub prototype: Prototype,
    /// Load resistance the ladder is designed for, Ω (R0 except for even-order Chebyshev).
    pub load_resistance: f64,
    /// The ladder.
    pub network: Network,
    /// Attenuation at harmonics of the fundamental.
    pub attenuation: Vec<HarmonicAttenuation>,
    /// Fundamental used for the harmonics, Hz.
    pub fundamental: f64,
    /// Element voltages and currents at the fundamental for
    /// [`LowpassParams::power`] into the load (empty if no power was given).
    pub stress: Vec<ElementStress>,
    /// Stage-file fragment ready to paste.
    pub fragment: String,
    /// Where the formulas come from.
    pub sources: Vec<String>,
}

impl LowpassDesign {
    /// Chain-matrix transducer gains at the harmonics, as [`HarmonicGain`]s.
    pub fn harmonic_gains(&self) -> Vec<HarmonicGain> {
        self.attenuation
            .iter()
            .map(|a| HarmonicGain {
                harmonic: a.harmonic,
                freq: a.freq,
                gain_db: -a.network_db,
            })
            .collect()
    }
}

/// Design a low-pass ladder of `order` with cutoff `cutoff` (Hz) between
/// `impedance` (Ω) terminations.
pub fn design_lowpass(
    kind: FilterKind,
    order: usize,
    cutoff: f64,
    impedance: f64,
    params: &LowpassParams,
) -> Result<LowpassDesign, DesignError> {
    positive("cutoff frequency", cutoff)?;
    positive("impedance", impedance)?;
    let fundamental = match params.fundamental {
        Some(f) => positive("fundamental frequency", f)?,
        None => cutoff,
    };
    let power = match params.power {
        Some(p) => Some(positive("output power", p)?),
        None => None,
    };
    params.naming.check()?;
    let proto = prototype(kind, order)?;
    let w = 2.0 * PI * cutoff;
    let mut b = LadderBuilder::new(&params.naming);
    // Is element k (0-based) a shunt capacitor?
    let shunt_at = |k: usize| match params.first {
        FirstElement::Shunt => k.is_multiple_of(2),
        FirstElement::Series => !k.is_multiple_of(2),
    };
    // Index of the last series element, which ends on the output node.
    let last_series = (0..order).filter(|&k| !shunt_at(k)).max();
    for (k, g) in proto.g.iter().enumerate() {
        if shunt_at(k) {
            b.shunt(Part::Capacitor, g / (w * impedance));
        } else {
            b.series(Part::Inductor, g * impedance / w, Some(k) == last_series);
        }
    }
    // A first-order shunt-first ladder is a lone capacitor across the line,
    // with no separate output node.
    if last_series.is_none() {
        return Err(DesignError::SingleShunt);
    }
    let last_is_shunt = shunt_at(order - 1);
    let load = if last_is_shunt {
        proto.g_load * impedance
    } else {
        impedance / proto.g_load
    };
    let network = b.finish(impedance, load);
    for e in &network.elements {
        finite("element value", e.value)?;
    }
    let attenuation = (1..=params.harmonics.clamp(1, 50))
        .map(|n| {
            let f = fundamental * n as f64;
            let omega = f / cutoff;
            Ok(HarmonicAttenuation {
                harmonic: n,
                freq: f,
                omega,
                formula_db: attenuation_db(kind, order, omega)?,
                network_db: finite("ladder loss", -network.transducer_gain_db(f))?,
            })
        })
        .collect::<Result<Vec<_>, DesignError>>()?;
    let kind_text = match kind {
        FilterKind::Butterworth => "Butterworth".to_string(),
        FilterKind::Chebyshev { ripple_db } => format!("Chebyshev {ripple_db} dB ripple"),
    };
    let title = format!(
        "{kind_text} low-pass, order {order}, cutoff {}, {} first, {} ohm in, {} ohm out",
        crate::si::format_si(cutoff, "Hz", 5),
        match params.first {
            FirstElement::Shunt => "shunt C",
            FirstElement::Series => "series L",
        },
        crate::si::format_si(impedance, "", 5),
        crate::si::format_si(load, "", 5),
    );
    // Print enough digits that the pasted values keep Zin at the fundamental
    // within 1e-4 (a tenth of the verification's acceptance).
    let fragment = network.fragment(&title, network.digits_needed(fundamental, 1e-4));
    let stress = match power {
        Some(p) => network.element_stress(fundamental, p),
        None => Vec::new(),
    };
    for s in &stress {
        finite("element voltage", s.v_peak)?;
        finite("element current", s.i_rms)?;
    }
    Ok(LowpassDesign {
        kind,
        order,
        cutoff,
        impedance,
        first: params.first,
        prototype: proto,
        load_resistance: load,
        network,
        attenuation,
        fundamental,
        stress,
        fragment,
        sources: vec![
            "prototype g-values and attenuation formulas: G. L. Matthaei, L. Young, E. M. T. Jones, Microwave Filters, Impedance-Matching Networks, and Coupling Structures, 1964, sec. 4.05; D. M. Pozar, Microwave Engineering, 4th ed., sec. 8.3".into(),
            "scaling C = g/(2 pi fc R0), L = g R0/(2 pi fc): same sources".into(),
        ],
    })
}
