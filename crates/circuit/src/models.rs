//! Part parameters, declared once.
//!
//! Each table row ([`Param`]) gives a parameter's block and stage-file name,
//! the flat name it had before parts were grouped into blocks (for
//! `tankwave upgrade`), its unit slot and allowed range, what happens when it
//! is not given ([`Need`], with the source of any default), the value the old
//! language used when it was not given, its textbook symbol, its unit and
//! meaning for the docs, and the field of [`BjtParams`] or [`DiodeParams`] it
//! sets. The elaborator's setter, its "did you mean" suggestions, the upgrade
//! of old files and the parameter tables of docs/models.md (see
//! [`docs_table`]) are all derived from these tables.
//!
//! Defaults are given only where physics or a published source gives the
//! value; everything else is either required or "effect off" (an infinite
//! Early voltage, a zero capacitance, no rating).

use crate::ir::{BjtParams, DiodeParams};
use tankwave_netlist::Slot;

/// Allowed range of a part parameter.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Range {
    /// Any finite number.
    Any,
    /// > 0.
    Positive,
    /// ≥ 0.
    NonNegative,
    /// 0 ≤ x < 1.
    UnitInterval,
}

/// What a part gets when a parameter is not written.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Need {
    /// Must be given: no physical default exists.
    Required,
    /// Must be given whenever one of the parameters in [`Param::with`] is
    /// given (e.g. a built-in potential with its capacitance); otherwise unused.
    WithOthers,
    /// A default from physics or a published source: the value and the
    /// source, as docs/models.md prints it.
    Cited(f64, &'static str),
    /// Not given means the effect is off (this value turns it off: 0 or ∞).
    Off(f64),
}

/// One part parameter.
#[derive(Debug, Clone, Copy)]
pub struct Param<P: 'static> {
    /// The block it is written in, e.g. `transport`.
    pub block: &'static str,
    /// Its stage-file name inside the block, e.g. `beta`.
    pub name: &'static str,
    /// Its flat name in files written before parts had blocks (`gain_fwd`).
    pub old: &'static str,
    /// The unit slot of its value.
    pub slot: Slot,
    /// Its allowed range.
    pub range: Range,
    /// What a part gets when it is not written.
    pub need: Need,
    /// The parameters (same block or others, by name) without which this
    /// one has no effect; for [`Need::WithOthers`], the ones that make it required.
    pub with: &'static [&'static str],
    /// The value the old language used when it was not written (the upgrade
    /// writes it out where the new default differs, so results stay the same).
    pub old_default: f64,
    /// The textbook symbol (Gummel–Poon paper, circuit-design textbooks).
    pub symbol: &'static str,
    /// The unit as docs/models.md prints it (`—` for a plain number).
    pub unit: &'static str,
    /// One line: what it is.
    pub meaning: &'static str,
    /// The field it sets.
    pub field: fn(&mut P) -> &mut f64,
}

const INF: f64 = f64::INFINITY;

/// Source of the forward ideality factor 1.
pub const SRC_IDEAL: &str = "1: the ideal junction of W. Shockley, Bell System Technical Journal 28 (1949) 435 (from memory)";
/// Source of the recombination ideality factor 2.
pub const SRC_RECOMBINATION: &str = "2: recombination in the depletion region, C. T. Sah, R. N. Noyce and W. Shockley, Proc. IRE 45 (1957) 1228 (from memory)";
/// Source of the grading exponent 1/3.
pub const SRC_LINEAR_GRADED: &str =
    "1/3: linearly graded junction, S. M. Sze, Physics of Semiconductor Devices, ch. 2 (from memory)";
/// Source of the grading exponent 1/2.
pub const SRC_ABRUPT: &str =
    "1/2: abrupt (step) junction, S. M. Sze, Physics of Semiconductor Devices, ch. 2 (from memory)";
/// Source of the band gap 1.12 eV.
pub const SRC_GAP: &str =
    "1.12 eV: silicon at 300 K, S. M. Sze, Physics of Semiconductor Devices, ch. 1 (from memory)";
/// Source of the saturation-current temperature exponent 3.
pub const SRC_XTI: &str = "3: a diffusion-limited junction has I_S ∝ n_i² ∝ T³·exp(−E_g/kT), S. M. Sze, Physics of Semiconductor Devices, ch. 1–2 (from memory)";
/// Source of the default temperature exponent of the epitaxial collector's resistance.
pub const SRC_MOBILITY: &str = "2.42: the electron mobility of lightly doped silicon falls as T^−2.42 (lattice scattering), S. M. Sze, Physics of Semiconductor Devices, ch. 1 (from memory)";
/// Source of the measurement temperature 25 °C.
pub const SRC_T0: &str = "25 °C: device data are commonly given at 25 °C (common practice)";

macro_rules! table {
    ($P:ty; $( $block:literal $name:literal $old:literal $slot:ident $range:ident
        ($need:expr, with $with:expr, old $od:expr) $sym:literal $unit:literal $meaning:literal => $field:ident; )*) => {
        &[ $( Param::<$P> {
            block: $block,
            name: $name,
            old: $old,
            slot: Slot::$slot,
            range: Range::$range,
            need: $need,
            with: $with,
            old_default: $od,
            symbol: $sym,
            unit: $unit,
            meaning: $meaning,
            field: |p: &mut $P| &mut p.$field,
        }, )* ]
    };
}

use Need::{Cited, Off, Required, WithOthers};

/// Bipolar transistor (npn, pnp) parameters, block by block.
pub static BJT_PARAMS: &[Param<BjtParams>] = table! { BjtParams;
    "transport" "sat_current" "sat_current" Current Positive (Required, with &[], old 1e-15)
        "I_S" "A" "transport saturation current" => sat_current;
    "transport" "beta" "gain_fwd" Number Positive (Required, with &[], old 100.0)
        "β_F" "—" "ideal maximum forward current gain" => gain_fwd;
    "transport" "beta_reverse" "gain_rev" Number Positive (Required, with &[], old 1.0)
        "β_R" "—" "ideal maximum reverse current gain" => gain_rev;
    "transport" "ideality" "emission_fwd" Number Positive (Cited(1.0, SRC_IDEAL), with &[], old 1.0)
        "n_F" "—" "forward ideality factor of the transport current" => emission_fwd;
    "transport" "ideality_reverse" "emission_rev" Number Positive (Cited(1.0, SRC_IDEAL), with &[], old 1.0)
        "n_R" "—" "reverse ideality factor of the transport current" => emission_rev;
    "transport" "early_voltage" "early_fwd" Voltage Positive (Off(INF), with &[], old INF)
        "V_A" "V" "forward Early voltage (base-width modulation)" => early_fwd;
    "transport" "early_voltage_reverse" "early_rev" Voltage Positive (Off(INF), with &[], old INF)
        "V_B" "V" "reverse Early voltage" => early_rev;
    "transport" "knee_current" "knee_fwd" Current Positive (Off(INF), with &[], old INF)
        "I_KF" "A" "forward high-injection knee current" => knee_fwd;
    "transport" "knee_current_reverse" "knee_rev" Current Positive (Off(INF), with &[], old INF)
        "I_KR" "A" "reverse high-injection knee current" => knee_rev;
    "leakage" "be_current" "leak_be" Current NonNegative (Off(0.0), with &[], old 0.0)
        "I_SE" "A" "base–emitter recombination saturation current" => leak_be;
    "leakage" "be_ideality" "leak_be_emission" Number Positive (Cited(2.0, SRC_RECOMBINATION), with &["be_current"], old 1.5)
        "n_E" "—" "ideality factor of the base–emitter recombination current" => leak_be_emission;
    "leakage" "bc_current" "leak_bc" Current NonNegative (Off(0.0), with &[], old 0.0)
        "I_SC" "A" "base–collector recombination saturation current" => leak_bc;
    "leakage" "bc_ideality" "leak_bc_emission" Number Positive (Cited(2.0, SRC_RECOMBINATION), with &["bc_current"], old 2.0)
        "n_C" "—" "ideality factor of the base–collector recombination current" => leak_bc_emission;
    "charge" "be_capacitance" "cj_be" Capacitance NonNegative (Off(0.0), with &[], old 0.0)
        "C_je0" "F" "base–emitter depletion capacitance at zero bias" => cj_be;
    "charge" "be_potential" "vj_be" Voltage Positive (WithOthers, with &["be_capacitance"], old 0.75)
        "φ_E" "V" "base–emitter built-in potential" => vj_be;
    "charge" "be_grading" "grading_be" Number UnitInterval (Cited(1.0 / 3.0, SRC_LINEAR_GRADED), with &["be_capacitance"], old 0.33)
        "m_E" "—" "base–emitter grading exponent" => grading_be;
    "charge" "bc_capacitance" "cj_bc" Capacitance NonNegative (Off(0.0), with &[], old 0.0)
        "C_jc0" "F" "base–collector depletion capacitance at zero bias" => cj_bc;
    "charge" "bc_potential" "vj_bc" Voltage Positive (WithOthers, with &["bc_capacitance"], old 0.75)
        "φ_C" "V" "base–collector built-in potential" => vj_bc;
    "charge" "bc_grading" "grading_bc" Number UnitInterval (Cited(1.0 / 3.0, SRC_LINEAR_GRADED), with &["bc_capacitance"], old 0.33)
        "m_C" "—" "base–collector grading exponent" => grading_bc;
    "charge" "linear_from" "linear_from" Number UnitInterval (WithOthers, with &["be_capacitance", "bc_capacitance"], old 0.5)
        "k_lin" "—" "fraction of the built-in potential above which a depletion capacitance continues as a straight line" => linear_from;
    "charge" "transit" "transit_fwd" Time NonNegative (Off(0.0), with &[], old 0.0)
        "τ_F" "s" "forward transit time (diffusion charge τ_F·I_CC)" => transit_fwd;
    "charge" "transit_reverse" "transit_rev" Time NonNegative (Off(0.0), with &[], old 0.0)
        "τ_R" "s" "reverse transit time" => transit_rev;
    "charge" "excess_phase" "excess_phase" Angle NonNegative (Off(0.0), with &["transit"], old 0.0)
        "φ_F" "deg" "excess phase of the forward transport current at the frequency 1/(2π τ_F)" => excess_phase;
    "resistance" "base" "r_base" Resistance NonNegative (Off(0.0), with &[], old 0.0)
        "r_B" "Ω" "ohmic base resistance" => r_base;
    "resistance" "collector" "r_collector" Resistance NonNegative (Off(0.0), with &[], old 0.0)
        "r_C" "Ω" "ohmic collector resistance" => r_collector;
    "resistance" "emitter" "r_emitter" Resistance NonNegative (Off(0.0), with &[], old 0.0)
        "r_E" "Ω" "ohmic emitter resistance" => r_emitter;
    "resistance" "base_half_current" "base_half_current" Current Positive (Off(INF), with &["base"], old INF)
        "I_RB" "A" "base current at which current crowding has brought the base resistance halfway down to its minimum" => base_half_current;
    "resistance" "base_min" "base_min" Resistance NonNegative (WithOthers, with &["base_half_current"], old 0.0)
        "r_BM" "Ω" "base resistance at high current (current crowding)" => r_base_min;
    "resistance" "base_exponent" "base_exponent" Number Any (Off(0.0), with &["base"], old 0.0)
        "ξ_RB" "—" "exponent of T in the base resistances r_B(T) and r_BM(T) (majority-carrier mobility in the base)" => base_temp_exp;
    "epi" "resistance" "resistance" Resistance NonNegative (Off(0.0), with &[], old 0.0)
        "R_CO" "Ω" "resistance of the lightly doped epitaxial collector at low current (quasi-saturation)" => r_epi;
    "epi" "doping_factor" "doping_factor" Number Positive (WithOthers, with &["resistance"], old 1e-11)
        "γ" "—" "doping factor (2 n_i/N_epi)² of the epitaxial collector: how strongly injected carriers modulate its resistance" => epi_gamma;
    "epi" "stored_charge" "stored_charge" Number NonNegative (Off(0.0), with &["resistance"], old 0.0)
        "Q_CO" "C" "charge factor of the carriers stored in the epitaxial collector" => epi_charge;
    "epi" "resistance_exponent" "resistance_exponent" Number Any (Cited(2.42, SRC_MOBILITY), with &["resistance"], old 2.42)
        "ξ_RC" "—" "exponent of T in R_CO(T)" => epi_temp_exp;
    "avalanche" "cb_voltage" "cb_voltage" Voltage Positive (Off(INF), with &[], old INF)
        "BV_CBO" "V" "collector–base breakdown voltage of the avalanche multiplication law (emitter open)" => bv_cbo;
    "avalanche" "exponent" "exponent" Number Positive (WithOthers, with &["cb_voltage"], old 4.0)
        "n_av" "—" "exponent of the multiplication law M = 1/(1 − (V_CB/BV_CBO)^n_av), above 1" => avalanche_exp;
    "avalanche" "voltage_tempco" "voltage_tempco" Number Any (Off(0.0), with &["cb_voltage"], old 0.0)
        "α_BV" "1/K" "relative change of BV_CBO per kelvin from measured_at (avalanche breakdown rises with temperature)" => bv_tempco;
    "temperature" "band_gap" "gap" Number Positive (Cited(1.12, SRC_GAP), with &[], old 1.11)
        "E_g" "eV" "band gap, sets how I_S rises with temperature" => gap;
    "temperature" "sat_current_exponent" "sat_temp_exp" Number Any (Cited(3.0, SRC_XTI), with &[], old 3.0)
        "ξ_S" "—" "exponent of T in I_S(T) besides the band-gap term" => sat_temp_exp;
    "temperature" "beta_exponent" "gain_temp_exp" Number Any (Off(0.0), with &[], old 0.0)
        "ξ_β" "—" "exponent of T in β_F(T) and β_R(T)" => gain_temp_exp;
    "temperature" "measured_at" "t_measured" Temperature Positive (Cited(298.15, SRC_T0), with &[], old 298.15)
        "T_0" "K" "temperature the parameters were measured at (written in degC or K)" => t_measured;
    "thermal" "junction_ambient" "rth_ja" Number Positive (Off(INF), with &[], old INF)
        "θ_JA" "K/W" "thermal resistance junction to ambient" => rth_ja;
    "thermal" "junction_case" "rth_jc" Number Positive (Off(INF), with &[], old INF)
        "θ_JC" "K/W" "thermal resistance junction to case" => rth_jc;
    "thermal" "case_ambient" "rth_sink" Number Positive (Off(INF), with &[], old INF)
        "θ_CA" "K/W" "thermal resistance case to ambient, through the heatsink" => rth_sink;
    "thermal" "junction_heat" "junction_heat" Number NonNegative (Off(0.0), with &[], old 0.0)
        "C_J" "J/K" "heat capacity of the die, between junction and case (for heating over time)" => heat_junction;
    "thermal" "case_heat" "case_heat" Number NonNegative (Off(0.0), with &[], old 0.0)
        "C_C" "J/K" "heat capacity of the case (for heating over time)" => heat_case;
    "thermal" "case_sink" "case_sink" Number Positive (Off(INF), with &[], old INF)
        "θ_CS" "K/W" "thermal resistance case to a shared heatsink (the mounting)" => rth_cs;
    "thermal" "foster_r1" "foster_r1" Number NonNegative (Off(0.0), with &[], old 0.0)
        "R_1" "K/W" "junction to case as a Foster ladder from data: resistance of term 1" => foster_r1;
    "thermal" "foster_tau1" "foster_tau1" Time NonNegative (Off(0.0), with &["foster_r1"], old 0.0)
        "τ_1" "s" "junction to case as a Foster ladder from data: time constant of term 1" => foster_tau1;
    "thermal" "foster_r2" "foster_r2" Number NonNegative (Off(0.0), with &[], old 0.0)
        "R_2" "K/W" "junction to case as a Foster ladder from data: resistance of term 2" => foster_r2;
    "thermal" "foster_tau2" "foster_tau2" Time NonNegative (Off(0.0), with &["foster_r2"], old 0.0)
        "τ_2" "s" "junction to case as a Foster ladder from data: time constant of term 2" => foster_tau2;
    "thermal" "foster_r3" "foster_r3" Number NonNegative (Off(0.0), with &[], old 0.0)
        "R_3" "K/W" "junction to case as a Foster ladder from data: resistance of term 3" => foster_r3;
    "thermal" "foster_tau3" "foster_tau3" Time NonNegative (Off(0.0), with &["foster_r3"], old 0.0)
        "τ_3" "s" "junction to case as a Foster ladder from data: time constant of term 3" => foster_tau3;
    "ratings" "vce_max" "max_vce" Voltage Positive (Off(INF), with &[], old INF)
        "V_CE,max" "V" "collector–emitter voltage rating" => max_vce;
    "ratings" "ic_max" "max_ic" Current Positive (Off(INF), with &[], old INF)
        "I_C,max" "A" "collector current rating" => max_ic;
    "ratings" "power_max" "max_power" Power Positive (Off(INF), with &[], old INF)
        "P_max" "W" "dissipation rating" => max_power;
    "ratings" "tj_max" "max_tj" Temperature Positive (Off(INF), with &[], old INF)
        "T_J,max" "K" "junction temperature rating (written in degC or K)" => max_tj;
    "ratings" "vbe_reverse_max" "max_vbe_reverse" Voltage Positive (Off(INF), with &[], old INF)
        "V_EB,max" "V" "reverse base–emitter voltage rating" => max_vbe_reverse;
    "ratings" "vce_resistor_max" "vce_resistor_max" Voltage Positive (Off(INF), with &[], old INF)
        "V_CER,max" "V" "collector–emitter voltage rating with a resistor from base to emitter" => max_vce_resistor;
    "ratings" "vce_resistor_at" "vce_resistor_at" Resistance Positive (WithOthers, with &["vce_resistor_max"], old INF)
        "R_BE" "Ω" "the base–emitter resistance the resistor rating is given at" => vce_resistor_ohm;
    "ratings" "vce_short_max" "vce_short_max" Voltage Positive (Off(INF), with &[], old INF)
        "V_CES,max" "V" "collector–emitter voltage rating with the base shorted to the emitter" => max_vce_short;
    "ratings" "vcb_max" "vcb_max" Voltage Positive (Off(INF), with &[], old INF)
        "V_CB,max" "V" "collector–base voltage rating" => max_vcb;
};

/// Junction diode parameters, block by block.
pub static DIODE_PARAMS: &[Param<DiodeParams>] = table! { DiodeParams;
    "junction" "sat_current" "sat_current" Current Positive (Required, with &[], old 1e-14)
        "I_S" "A" "saturation current" => sat_current;
    "junction" "ideality" "emission" Number Positive (Cited(1.0, SRC_IDEAL), with &[], old 1.0)
        "n" "—" "ideality factor" => emission;
    "resistance" "series" "r_series" Resistance NonNegative (Off(0.0), with &[], old 0.0)
        "r_S" "Ω" "ohmic series resistance" => r_series;
    "charge" "capacitance" "cj0" Capacitance NonNegative (Off(0.0), with &[], old 0.0)
        "C_j0" "F" "depletion capacitance at zero bias" => cj0;
    "charge" "potential" "v_junction" Voltage Positive (WithOthers, with &["capacitance"], old 0.7)
        "φ" "V" "built-in potential" => v_junction;
    "charge" "grading" "grading" Number UnitInterval (Cited(0.5, SRC_ABRUPT), with &["capacitance"], old 0.5)
        "m" "—" "grading exponent" => grading;
    "charge" "linear_from" "linear_from" Number UnitInterval (WithOthers, with &["capacitance"], old 0.5)
        "k_lin" "—" "fraction of the built-in potential above which the depletion capacitance continues as a straight line" => linear_from;
    "charge" "transit" "transit" Time NonNegative (Off(0.0), with &[], old 0.0)
        "τ_T" "s" "transit time (diffusion charge τ_T·I_D)" => transit;
    "breakdown" "voltage" "breakdown" Voltage Positive (Off(INF), with &[], old INF)
        "V_BR" "V" "reverse breakdown voltage" => breakdown;
    "breakdown" "current" "breakdown_current" Current Positive (WithOthers, with &["voltage"], old 1e-10)
        "I_BR" "A" "reverse current at the breakdown voltage" => breakdown_current;
    "temperature" "band_gap" "gap" Number Positive (Cited(1.12, SRC_GAP), with &[], old 1.11)
        "E_g" "eV" "band gap, sets how I_S rises with temperature" => gap;
    "temperature" "sat_current_exponent" "sat_temp_exp" Number Any (Cited(3.0, SRC_XTI), with &[], old 3.0)
        "ξ_S" "—" "exponent of T in I_S(T) besides the band-gap term" => sat_temp_exp;
    "temperature" "measured_at" "t_measured" Temperature Positive (Cited(298.15, SRC_T0), with &[], old 298.15)
        "T_0" "K" "temperature the parameters were measured at (written in degC or K)" => t_measured;
};

/// The block names of a table, in table order, each once.
pub fn blocks<P>(table: &[Param<P>]) -> Vec<&'static str> {
    let mut v: Vec<&'static str> = Vec::new();
    for p in table {
        if !v.contains(&p.block) {
            v.push(p.block);
        }
    }
    v
}

/// The row for `block`/`name`.
pub fn find<'t, P>(table: &'t [Param<P>], block: &str, name: &str) -> Option<&'t Param<P>> {
    table.iter().find(|p| p.block == block && p.name == name)
}

/// The value a part gets when `p` is not written and is not required: the
/// cited default or the value that turns the effect off.
pub fn default_value<P>(p: &Param<P>) -> Option<f64> {
    match p.need {
        Need::Cited(v, _) | Need::Off(v) => Some(v),
        Need::Required | Need::WithOthers => None,
    }
}

fn fmt_default<P>(p: &Param<P>) -> String {
    match p.need {
        Need::Required => "required".into(),
        Need::WithOthers => format!("required with {}", p.with.join(" or ")),
        Need::Cited(_, src) => src.to_string(),
        Need::Off(v) if v.is_infinite() => "off (∞)".into(),
        Need::Off(_) => "off (0)".into(),
    }
}

/// The markdown table of a part table, as docs/models.md prints it (a test
/// compares the two).
pub fn docs_table<P>(table: &[Param<P>]) -> String {
    let mut s = String::from(
        "| block | name | symbol | unit | when not given | meaning |\n| --- | --- | --- | --- | --- | --- |\n",
    );
    for p in table {
        s.push_str(&format!(
            "| `{}` | `{}` | {} | {} | {} | {} |\n",
            p.block,
            p.name,
            p.symbol,
            p.unit,
            fmt_default(p),
            p.meaning
        ));
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_row_sets_its_own_field() {
        // Each row must set a field no other row sets: set all to distinct
        // values and read them back through the same accessors.
        let mut b = BjtParams::default();
        for (i, p) in BJT_PARAMS.iter().enumerate() {
            *(p.field)(&mut b) = i as f64 + 0.5;
        }
        for (i, p) in BJT_PARAMS.iter().enumerate() {
            assert_eq!(*(p.field)(&mut b), i as f64 + 0.5, "{}", p.name);
        }
        let mut d = DiodeParams::default();
        for (i, p) in DIODE_PARAMS.iter().enumerate() {
            *(p.field)(&mut d) = i as f64 + 0.5;
        }
        for (i, p) in DIODE_PARAMS.iter().enumerate() {
            assert_eq!(*(p.field)(&mut d), i as f64 + 0.5, "{}", p.name);
        }
    }

    #[test]
    fn names_are_unique_and_with_names_exist() {
        fn check<P>(t: &[Param<P>]) {
            for (i, p) in t.iter().enumerate() {
                assert!(
                    t[..i].iter().all(|q| q.name != p.name),
                    "{} declared twice",
                    p.name
                );
                assert!(t[..i].iter().all(|q| q.old != p.old), "{}", p.old);
                for w in p.with {
                    assert!(t.iter().any(|q| q.name == *w), "{w}");
                }
                if p.need == Need::WithOthers {
                    assert!(!p.with.is_empty(), "{}", p.name);
                }
            }
        }
        check(BJT_PARAMS);
        check(DIODE_PARAMS);
    }
}
