//! Evaluating an emission mask against the output harmonics.
//!
//! For each harmonic n ≥ 2 the rules that apply are those whose carrier
//! condition holds for the FUNDAMENTAL frequency f0 and whose range covers
//! the harmonic (by number, or by its frequency n·f0). All applicable rules
//! must hold, so the allowed level is the most stringent (lowest) of their
//! `Limit::allowed_dbc` at the measured carrier power P_1. The margin is
//! allowed − measured in dB: positive passes.

use serde::Serialize;
use tankwave_circuit::{Mask, MaskRange, MaskRule};
use thiserror::Error;

use crate::metrics::OutputMetrics;

/// Why a mask could not be evaluated.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum MaskError {
    /// No positive carrier power to refer the limits to.
    #[error("fundamental output power is {p1_w:e} W: no carrier to refer the mask to")]
    NoCarrier {
        /// The fundamental power, W.
        p1_w: f64,
    },
    /// No rule of the mask covers any harmonic at this fundamental.
    #[error("mask {mask} has no rule for a fundamental of {f0_hz} Hz")]
    NotCovered {
        /// Mask name.
        mask: String,
        /// Fundamental frequency, Hz.
        f0_hz: f64,
    },
    /// No `offset` rule of the mask covers any keying sideband computed.
    #[error("mask {mask} has no offset rule covering the keying sidebands computed")]
    NoSideband {
        /// Mask name.
        mask: String,
    },
    /// A rule gives an allowed level that is NaN or −∞.
    #[error("mask {mask} gives an unusable allowed level {value} dBc at harmonic {n}")]
    BadLimit {
        /// Mask name.
        mask: String,
        /// Harmonic number.
        n: usize,
        /// The level.
        value: f64,
    },
}

/// One harmonic checked against a limit.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicRow {
    /// Harmonic number n.
    pub n: usize,
    /// Frequency n·f0, Hz.
    pub freq_hz: f64,
    /// Power at the output element, W.
    pub power_w: f64,
    /// The measured level, dBc; `None` when the harmonic is not resolved
    /// (below the numerical floor: the method cannot tell its level).
    pub measured_dbc: Option<f64>,
    /// The numerical floor at the output, dBc ([`OutputMetrics::floor_dbc`]);
    /// `None` when the solver gave no floor.
    pub floor_dbc: Option<f64>,
    /// The level judged, dBc: the measured level when `resolved`, else the
    /// floor (an upper bound on the true level; a limit passes only when
    /// the floor itself meets it). Not written to JSON, where it would read
    /// as a measurement: `measured_dbc` and `floor_dbc` say it.
    #[serde(skip)]
    pub judged_dbc: f64,
    /// Whether the harmonic is above the numerical floor; when not, the
    /// method cannot tell its level, only that it is below `judged_dbc`.
    pub resolved: bool,
    /// Allowed level, dBc; `None` where no rule covers this harmonic.
    pub allowed_dbc: Option<f64>,
    /// Allowed − measured, dB (positive passes); `None` where unconstrained.
    pub margin_db: Option<f64>,
    /// Whether this harmonic meets its limit (true where unconstrained).
    pub pass: bool,
}

/// The result of checking every harmonic against a mask.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MaskEvaluation {
    /// Mask name.
    pub mask: String,
    /// Fundamental frequency, Hz.
    pub f0_hz: f64,
    /// Carrier (fundamental) power the limits were evaluated at, W.
    pub carrier_w: f64,
    /// Harmonics 2..=K.
    pub rows: Vec<HarmonicRow>,
    /// Index into `rows` of the smallest margin, if any row is constrained.
    pub worst: Option<usize>,
    /// Whether every harmonic passes.
    pub pass: bool,
}

impl MaskEvaluation {
    /// The row with the smallest margin.
    pub fn worst_row(&self) -> Option<&HarmonicRow> {
        self.worst.and_then(|w| self.rows.get(w))
    }
}

/// Does `rule` apply to harmonic `n` of a carrier at `f0_hz`?
pub fn rule_applies(rule: &MaskRule, n: usize, f0_hz: f64) -> bool {
    if let Some((lo, hi)) = rule.carrier {
        if !(f0_hz >= lo && f0_hz <= hi) {
            return false;
        }
    }
    match &rule.range {
        MaskRange::Harmonics { from, to } => {
            n >= *from as usize && to.is_none_or(|t| n <= t as usize)
        }
        MaskRange::Frequency { from, to } => {
            let f = n as f64 * f0_hz;
            f >= *from && f <= *to
        }
        // keying sidebands are judged by `require sidebands`
        MaskRange::Offset { .. } => false,
        MaskRange::Any => true,
    }
}

/// The allowed level (dBc) for harmonic `n`, or `None` if no rule applies.
pub fn allowed_dbc(
    mask: &Mask,
    n: usize,
    f0_hz: f64,
    carrier_w: f64,
) -> Result<Option<f64>, MaskError> {
    let mut allowed: Option<f64> = None;
    for rule in mask.rules.iter().filter(|r| rule_applies(r, n, f0_hz)) {
        let a = rule.limit.allowed_dbc(carrier_w);
        if a.is_nan() || a == f64::NEG_INFINITY {
            return Err(MaskError::BadLimit {
                mask: mask.name.clone(),
                n,
                value: a,
            });
        }
        if a == f64::INFINITY {
            continue;
        }
        allowed = Some(allowed.map_or(a, |x: f64| x.min(a)));
    }
    Ok(allowed)
}

/// One keying sideband judged against a mask's `offset` rules.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct SidebandRow {
    /// Offset from the carrier, Hz (negative below it).
    pub offset_hz: f64,
    /// Level, dBc against the key-down carrier.
    pub dbc: f64,
    /// The allowed level, dBc (the most stringent rule covering |offset|).
    pub allowed_dbc: f64,
    /// allowed − level, dB; positive passes.
    pub margin_db: f64,
}

/// The keying sidebands (`offsets_hz`, `dbc`, dBc against a key-down carrier
/// of `carrier_w`) against the `offset` rules of `mask` (a rule covers
/// `|offset|` within its range; every covering rule must hold). Returns
/// the judged rows (sidebands no rule covers are left out) in offset order;
/// an error when no rule covers any sideband, or without a carrier.
pub fn evaluate_sidebands(
    mask: &Mask,
    offsets_hz: &[f64],
    dbc: &[f64],
    carrier_w: f64,
) -> Result<Vec<SidebandRow>, MaskError> {
    if !(carrier_w.is_finite() && carrier_w > 0.0) {
        return Err(MaskError::NoCarrier { p1_w: carrier_w });
    }
    let mut rows = Vec::new();
    for (&off, &level) in offsets_hz.iter().zip(dbc) {
        let d = off.abs();
        let mut allowed: Option<f64> = None;
        for rule in &mask.rules {
            let MaskRange::Offset { from, to } = rule.range else {
                continue;
            };
            if !(d >= from && d <= to) {
                continue;
            }
            let a = rule.limit.allowed_dbc(carrier_w);
            if a.is_nan() || a == f64::NEG_INFINITY {
                return Err(MaskError::BadLimit {
                    mask: mask.name.clone(),
                    n: 1,
                    value: a,
                });
            }
            if a.is_finite() {
                allowed = Some(allowed.map_or(a, |x: f64| x.min(a)));
            }
        }
        if let (Some(a), true) = (allowed, level.is_finite()) {
            rows.push(SidebandRow {
                offset_hz: off,
                dbc: level,
                allowed_dbc: a,
                margin_db: a - level,
            });
        }
    }
    if rows.is_empty() {
        return Err(MaskError::NoSideband {
            mask: mask.name.clone(),
        });
    }
    Ok(rows)
}

/// Check the harmonics 2..=K of `output` against `mask` for a fundamental at `f0_hz`.
pub fn evaluate_mask(
    mask: &Mask,
    output: &OutputMetrics,
    f0_hz: f64,
) -> Result<MaskEvaluation, MaskError> {
    let p1 = output.p1_w;
    if !(p1.is_finite() && p1 > 0.0) {
        return Err(MaskError::NoCarrier { p1_w: p1 });
    }
    let mut rows = Vec::new();
    let mut covered = false;
    for h in output.harmonics.iter().filter(|h| h.n >= 2) {
        let measured = output
            .judged_dbc(h)
            .ok_or(MaskError::NoCarrier { p1_w: p1 })?;
        let allowed = allowed_dbc(mask, h.n, f0_hz, p1)?;
        covered |= allowed.is_some();
        let margin = allowed.map(|a| a - measured);
        rows.push(HarmonicRow {
            n: h.n,
            freq_hz: h.freq_hz,
            power_w: h.power_w,
            measured_dbc: h.dbc.filter(|_| h.resolved),
            floor_dbc: output.floor_dbc,
            judged_dbc: measured,
            resolved: h.resolved,
            allowed_dbc: allowed,
            margin_db: margin,
            pass: margin.is_none_or(|m| m >= 0.0),
        });
    }
    if !covered {
        return Err(MaskError::NotCovered {
            mask: mask.name.clone(),
            f0_hz,
        });
    }
    let worst = rows
        .iter()
        .enumerate()
        .filter_map(|(i, r)| r.margin_db.map(|m| (i, m)))
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .map(|(i, _)| i);
    let pass = rows.iter().all(|r| r.pass);
    Ok(MaskEvaluation {
        mask: mask.name.clone(),
        f0_hz,
        carrier_w: p1,
        rows,
        worst,
        pass,
    })
}
