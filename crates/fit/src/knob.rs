//! The model parameters a fit can move, their bounds and the transform
//! that keeps them inside.
//!
//! **Bounds by transform.** The least-squares solver works on unbounded
//! variables `u`; each parameter is `p = lo + (hi − lo)·s(u)` (linear
//! knobs) or `p = lo·(hi/lo)^s(u)` (knobs spanning decades), with the
//! logistic `s(u) = 1/(1 + e^(−u))`. Every `u` gives a parameter strictly
//! inside its bounds, and a parameter pressed against a bound shows as a
//! large |u| (reported as "at its bound"). The bounds are wide physical
//! ranges for silicon bipolar transistors (common practice), not limits
//! tuned to any data.

use tankwave_circuit::BjtParams;

/// A parameter of the bipolar model a fit can set.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Knob {
    /// C_jc0 (F).
    CapBc,
    /// φ_C (V).
    PotentialBc,
    /// m_C.
    GradingBc,
    /// C_je0 (F).
    CapBe,
    /// φ_E (V).
    PotentialBe,
    /// m_E.
    GradingBe,
    /// I_S (A).
    SatCurrent,
    /// n_F.
    Ideality,
    /// β_F.
    Beta,
    /// I_SE (A).
    LeakBe,
    /// n_E.
    LeakBeIdeality,
    /// V_A (V).
    Early,
    /// I_KF (A).
    Knee,
    /// τ_F (s).
    Transit,
    /// β_R.
    BetaReverse,
    /// r_C (Ω).
    RCollector,
    /// R_CO, the epitaxial collector's low-current resistance (Ω).
    REpi,
    /// γ, the epitaxial collector's doping factor.
    EpiGamma,
    /// BV_CBO of the avalanche multiplication law (V).
    Breakdown,
    /// n_av, the exponent of the multiplication law.
    AvalancheExponent,
}

impl Knob {
    /// The block and word of the stage file (`part … npn { BLOCK { WORD=… } }`).
    pub fn place(self) -> (&'static str, &'static str) {
        match self {
            Knob::CapBc => ("charge", "bc_capacitance"),
            Knob::PotentialBc => ("charge", "bc_potential"),
            Knob::GradingBc => ("charge", "bc_grading"),
            Knob::CapBe => ("charge", "be_capacitance"),
            Knob::PotentialBe => ("charge", "be_potential"),
            Knob::GradingBe => ("charge", "be_grading"),
            Knob::SatCurrent => ("transport", "sat_current"),
            Knob::Ideality => ("transport", "ideality"),
            Knob::Beta => ("transport", "beta"),
            Knob::LeakBe => ("leakage", "be_current"),
            Knob::LeakBeIdeality => ("leakage", "be_ideality"),
            Knob::Early => ("transport", "early_voltage"),
            Knob::Knee => ("transport", "knee_current"),
            Knob::Transit => ("charge", "transit"),
            Knob::BetaReverse => ("transport", "beta_reverse"),
            Knob::RCollector => ("resistance", "collector"),
            Knob::REpi => ("epi", "resistance"),
            Knob::EpiGamma => ("epi", "doping_factor"),
            Knob::Breakdown => ("avalanche", "cb_voltage"),
            Knob::AvalancheExponent => ("avalanche", "exponent"),
        }
    }

    /// Textbook symbol (docs/models.md).
    pub fn symbol(self) -> &'static str {
        match self {
            Knob::CapBc => "C_jc0",
            Knob::PotentialBc => "φ_C",
            Knob::GradingBc => "m_C",
            Knob::CapBe => "C_je0",
            Knob::PotentialBe => "φ_E",
            Knob::GradingBe => "m_E",
            Knob::SatCurrent => "I_S",
            Knob::Ideality => "n_F",
            Knob::Beta => "β_F",
            Knob::LeakBe => "I_SE",
            Knob::LeakBeIdeality => "n_E",
            Knob::Early => "V_A",
            Knob::Knee => "I_KF",
            Knob::Transit => "τ_F",
            Knob::BetaReverse => "β_R",
            Knob::RCollector => "r_C",
            Knob::REpi => "R_CO",
            Knob::EpiGamma => "γ",
            Knob::Breakdown => "BV_CBO",
            Knob::AvalancheExponent => "n_av",
        }
    }

    /// SI unit symbol ("" for a pure number).
    pub fn unit(self) -> &'static str {
        match self {
            Knob::CapBc | Knob::CapBe => "F",
            Knob::PotentialBc | Knob::PotentialBe | Knob::Early | Knob::Breakdown => "V",
            Knob::SatCurrent | Knob::LeakBe | Knob::Knee => "A",
            Knob::Transit => "s",
            Knob::RCollector | Knob::REpi => "Ω",
            _ => "",
        }
    }

    /// Lower and upper bound, and whether the knob spans decades (log transform).
    pub fn bounds(self) -> (f64, f64, bool) {
        match self {
            Knob::CapBc | Knob::CapBe => (1e-16, 1e-6, true),
            Knob::PotentialBc | Knob::PotentialBe => (0.2, 1.5, false),
            Knob::GradingBc | Knob::GradingBe => (0.1, 0.9, false),
            Knob::SatCurrent => (1e-20, 1e-6, true),
            Knob::Ideality => (0.9, 2.0, false),
            Knob::Beta => (1.0, 5000.0, true),
            Knob::LeakBe => (1e-22, 1e-4, true),
            Knob::LeakBeIdeality => (1.0, 4.0, false),
            Knob::Early => (2.0, 2000.0, true),
            Knob::Knee => (1e-6, 1e3, true),
            Knob::Transit => (1e-13, 1e-6, true),
            Knob::BetaReverse => (0.01, 500.0, true),
            Knob::RCollector => (1e-5, 1e3, true),
            Knob::REpi => (1e-4, 1e3, true),
            Knob::EpiGamma => (1e-18, 1e-3, true),
            Knob::Breakdown => (2.0, 5000.0, true),
            Knob::AvalancheExponent => (1.5, 12.0, false),
        }
    }

    /// Current value in `p`.
    pub fn get(self, p: &BjtParams) -> f64 {
        match self {
            Knob::CapBc => p.cj_bc,
            Knob::PotentialBc => p.vj_bc,
            Knob::GradingBc => p.grading_bc,
            Knob::CapBe => p.cj_be,
            Knob::PotentialBe => p.vj_be,
            Knob::GradingBe => p.grading_be,
            Knob::SatCurrent => p.sat_current,
            Knob::Ideality => p.emission_fwd,
            Knob::Beta => p.gain_fwd,
            Knob::LeakBe => p.leak_be,
            Knob::LeakBeIdeality => p.leak_be_emission,
            Knob::Early => p.early_fwd,
            Knob::Knee => p.knee_fwd,
            Knob::Transit => p.transit_fwd,
            Knob::BetaReverse => p.gain_rev,
            Knob::RCollector => p.r_collector,
            Knob::REpi => p.r_epi,
            Knob::EpiGamma => p.epi_gamma,
            Knob::Breakdown => p.bv_cbo,
            Knob::AvalancheExponent => p.avalanche_exp,
        }
    }

    /// Set the value in `p`.
    pub fn set(self, p: &mut BjtParams, v: f64) {
        let f = match self {
            Knob::CapBc => &mut p.cj_bc,
            Knob::PotentialBc => &mut p.vj_bc,
            Knob::GradingBc => &mut p.grading_bc,
            Knob::CapBe => &mut p.cj_be,
            Knob::PotentialBe => &mut p.vj_be,
            Knob::GradingBe => &mut p.grading_be,
            Knob::SatCurrent => &mut p.sat_current,
            Knob::Ideality => &mut p.emission_fwd,
            Knob::Beta => &mut p.gain_fwd,
            Knob::LeakBe => &mut p.leak_be,
            Knob::LeakBeIdeality => &mut p.leak_be_emission,
            Knob::Early => &mut p.early_fwd,
            Knob::Knee => &mut p.knee_fwd,
            Knob::Transit => &mut p.transit_fwd,
            Knob::BetaReverse => &mut p.gain_rev,
            Knob::RCollector => &mut p.r_collector,
            Knob::REpi => &mut p.r_epi,
            Knob::EpiGamma => &mut p.epi_gamma,
            Knob::Breakdown => &mut p.bv_cbo,
            Knob::AvalancheExponent => &mut p.avalanche_exp,
        };
        *f = v;
    }

    /// The parameter for the unbounded variable `u`.
    pub fn from_u(self, u: f64) -> f64 {
        let (lo, hi, log) = self.bounds();
        let s = 1.0 / (1.0 + (-u).exp());
        let p = if log {
            (lo.ln() + (hi.ln() - lo.ln()) * s).exp()
        } else {
            lo + (hi - lo) * s
        };
        // rounding of exp/ln can step a hair outside at the extremes
        p.clamp(lo, hi)
    }

    /// The unbounded variable for the parameter `p` (clamped just inside the bounds).
    pub fn to_u(self, p: f64) -> f64 {
        let (lo, hi, log) = self.bounds();
        let s = if log {
            (p.ln() - lo.ln()) / (hi.ln() - lo.ln())
        } else {
            (p - lo) / (hi - lo)
        };
        let s = if s.is_finite() {
            s.clamp(1e-9, 1.0 - 1e-9)
        } else {
            0.5
        };
        (s / (1.0 - s)).ln()
    }

    /// Whether `p` lies within 0.1 % (of the span, or of the decades) of a bound.
    pub fn at_bound(self, p: f64) -> bool {
        let (lo, hi, log) = self.bounds();
        let s = if log {
            (p.ln() - lo.ln()) / (hi.ln() - lo.ln())
        } else {
            (p - lo) / (hi - lo)
        };
        !(0.001..=0.999).contains(&s)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn transform_round_trips_and_stays_inside() {
        for k in [
            Knob::SatCurrent,
            Knob::PotentialBe,
            Knob::Beta,
            Knob::GradingBc,
        ] {
            let (lo, hi, _) = k.bounds();
            let mid = if k.bounds().2 {
                (lo * hi).sqrt()
            } else {
                0.5 * (lo + hi)
            };
            let back = k.from_u(k.to_u(mid));
            assert!(
                (back - mid).abs() <= 1e-12 * mid.abs(),
                "{k:?} {back} {mid}"
            );
            for u in [-800.0, -30.0, 0.0, 30.0, 800.0] {
                let p = k.from_u(u);
                assert!(p >= lo && p <= hi, "{k:?} {u} {p}");
            }
        }
    }
}
