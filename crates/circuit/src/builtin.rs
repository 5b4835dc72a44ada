//! Built-in emission masks from published regulations (names are the project's own).
//!
//! Each mask encodes the limit on every spurious emission (every harmonic
//! n ≥ 2 of the steady state) relative to the carrier, as [`Limit`] values.
//! The row that applies is chosen by the FUNDAMENTAL frequency
//! ([`MaskRule::carrier`]), never by the harmonic's own frequency. The limits
//! are on conducted mean power at the antenna port; for an unmodulated
//! carrier in periodic steady state, mean power, carrier power and peak
//! envelope power are the same number.
//!
//! See docs/masks.md for each mask's citation and whether its figures were
//! read from the regulation or recalled.

use crate::ir::{Limit, LimitExpr, Mask, MaskRange, MaskRule, Origin};

/// 30 MHz, the upper edge (exclusive) of the "below 30 MHz" rows.
const HF_TOP_HZ: f64 = 30e6;
/// The largest carrier frequency that still counts as "below 30 MHz".
///
/// Mask carrier ranges are inclusive, so the HF rows end one float below
/// 30 MHz and a carrier of exactly 30 MHz selects the 30–225 MHz row.
const HF_TOP_INCLUSIVE_HZ: f64 = HF_TOP_HZ * (1.0 - f64::EPSILON);
/// 225 MHz, the upper edge of the 47 CFR §97.307(e) row.
const VHF_TOP_HZ: f64 = 225e6;

/// Name of the 47 CFR §97.307(d) mask for stations installed after 2003-01-01 (below 30 MHz).
pub const US_AMATEUR_HF: &str = "us_amateur_hf";
/// Name of the 47 CFR §97.307(d) mask for stations installed on or before 2003-01-01 (below 30 MHz).
pub const US_AMATEUR_HF_PRE2003: &str = "us_amateur_hf_pre2003";
/// Name of the 47 CFR §97.307(e) mask (30–225 MHz), with its 25 W condition.
pub const US_AMATEUR_VHF: &str = "us_amateur_vhf";
/// Name of the ≤ 25 W branch of 47 CFR §97.307(e) on its own (30–225 MHz).
pub const US_AMATEUR_VHF_LOW_POWER: &str = "us_amateur_vhf_low_power";
/// Name of the combined US amateur mask (current HF row + 30–225 MHz row).
pub const US_AMATEUR: &str = "us_amateur";
/// Name of the combined US amateur mask with the pre-2003 HF row.
pub const US_AMATEUR_PRE2003: &str = "us_amateur_pre2003";
/// Name of the ITU Radio Regulations Appendix 3 amateur row below 30 MHz.
pub const ITU_AMATEUR_HF: &str = "itu_amateur_hf";
/// Name of the ITU Radio Regulations Appendix 3 general row (any fundamental).
pub const ITU_GENERAL: &str = "itu_general";
/// Name of the combined ITU amateur mask (amateur row below 30 MHz, general row above).
pub const ITU_AMATEUR: &str = "itu_amateur";

fn origin() -> Origin {
    Origin {
        file: "<built-in>".to_string(),
        line: 0,
        column: 0,
    }
}

fn dbc(v: f64) -> Limit {
    Limit::Dbc(LimitExpr::Const(v))
}

fn watts(v: f64) -> Limit {
    Limit::Watts(LimitExpr::Const(v))
}

fn every_spur(carrier: (f64, f64), limit: Limit) -> MaskRule {
    MaskRule {
        range: MaskRange::Any,
        carrier: Some(carrier),
        limit,
    }
}

/// 47 CFR §97.307(d), transmitters installed after 2003-01-01, fundamental
/// below 30 MHz: every spurious emission at least 43 dB below the
/// fundamental's mean power.
fn us_hf_rule() -> MaskRule {
    every_spur((0.0, HF_TOP_INCLUSIVE_HZ), dbc(-43.0))
}

/// 47 CFR §97.307(d), transmitters installed on or before 2003-01-01,
/// fundamental below 30 MHz: at most 50 mW and at least 40 dB below; for a
/// mean power below 5 W, at least 30 dB below.
fn us_hf_pre2003_rule() -> MaskRule {
    every_spur(
        (0.0, HF_TOP_INCLUSIVE_HZ),
        Limit::IfCarrierBelow {
            watts: 5.0,
            then: Box::new(dbc(-30.0)),
            otherwise: Box::new(Limit::All(vec![watts(50e-3), dbc(-40.0)])),
        },
    )
}

/// The ≤ 25 W branch of 47 CFR §97.307(e): at most 25 µW and at least
/// 40 dB below, but need not be reduced below 10 µW.
fn us_vhf_low_power_limit() -> Limit {
    Limit::Lenient(vec![
        Limit::All(vec![watts(25e-6), dbc(-40.0)]),
        watts(10e-6),
    ])
}

/// 47 CFR §97.307(e), fundamental 30–225 MHz: at least 60 dB below; for a
/// mean power of 25 W or less, the low-power branch. (At exactly 25 W both
/// branches give 25 µW = −60 dBc, so the strict "below" of
/// [`Limit::IfCarrierBelow`] matches "25 W or less".)
fn us_vhf_rule() -> MaskRule {
    every_spur(
        (HF_TOP_HZ, VHF_TOP_HZ),
        Limit::IfCarrierBelow {
            watts: 25.0,
            then: Box::new(us_vhf_low_power_limit()),
            otherwise: Box::new(dbc(-60.0)),
        },
    )
}

/// ITU RR Appendix 3 (ITU-R SM.329 category A), amateur services below
/// 30 MHz: 43 + 10 log10(PEP/1 W) dB below PEP, need not exceed 50 dB.
fn itu_amateur_hf_rule() -> MaskRule {
    every_spur(
        (0.0, HF_TOP_INCLUSIVE_HZ),
        Limit::Lenient(vec![
            Limit::Dbc(LimitExpr::LogCarrier { a: -43.0, b: -10.0 }),
            dbc(-50.0),
        ]),
    )
}

/// ITU RR Appendix 3 general row: 43 + 10 log10(P/1 W) dBc or 70 dBc,
/// whichever is less stringent, for the given carrier range.
fn itu_general_rule(carrier: (f64, f64)) -> MaskRule {
    every_spur(
        carrier,
        Limit::Lenient(vec![
            Limit::Dbc(LimitExpr::LogCarrier { a: -43.0, b: -10.0 }),
            dbc(-70.0),
        ]),
    )
}

fn mask(name: &str, rules: Vec<MaskRule>) -> Mask {
    Mask {
        name: name.to_string(),
        rules,
        origin: origin(),
    }
}

/// Every built-in mask.
pub fn builtin_masks() -> Vec<Mask> {
    vec![
        mask(US_AMATEUR_HF, vec![us_hf_rule()]),
        mask(US_AMATEUR_HF_PRE2003, vec![us_hf_pre2003_rule()]),
        mask(US_AMATEUR_VHF, vec![us_vhf_rule()]),
        mask(
            US_AMATEUR_VHF_LOW_POWER,
            vec![every_spur(
                (HF_TOP_HZ, VHF_TOP_HZ),
                us_vhf_low_power_limit(),
            )],
        ),
        mask(US_AMATEUR, vec![us_hf_rule(), us_vhf_rule()]),
        mask(
            US_AMATEUR_PRE2003,
            vec![us_hf_pre2003_rule(), us_vhf_rule()],
        ),
        mask(ITU_AMATEUR_HF, vec![itu_amateur_hf_rule()]),
        mask(ITU_GENERAL, vec![itu_general_rule((0.0, f64::MAX))]),
        mask(
            ITU_AMATEUR,
            vec![
                itu_amateur_hf_rule(),
                itu_general_rule((HF_TOP_HZ, f64::MAX)),
            ],
        ),
    ]
}

/// The built-in mask of this name, if there is one.
pub fn builtin_mask(name: &str) -> Option<Mask> {
    builtin_masks().into_iter().find(|m| m.name == name)
}

/// Names of the built-in masks (for name resolution and suggestions).
pub fn builtin_names() -> Vec<String> {
    builtin_masks().into_iter().map(|m| m.name).collect()
}
