//! The per-variant work of studies and tuning runs: one variant elaborated
//! from the parsed stage with its overrides, its drive scaled, its steady
//! state solved (warm-started from a neighbour where given), measured and
//! evaluated; and the same laid out as a study record or as the figures a
//! tuning goal reads.

use std::collections::BTreeMap;

use tankwave_circuit::{Overrides, StageSource};
use tankwave_measure::{Metrics, Verdict};
use tankwave_study::{Outcome, TuneContext, TuneFigures, Variant, WarmStart};

use crate::{apply_context, record, solve, Scope, SolveOptions, StageError};

/// A solved variant: what was measured, the verdicts, and the warm start
/// for the next variant of its segment.
#[derive(Debug, Clone)]
pub struct VariantSolution {
    /// Figures measured on the steady state.
    pub metrics: Metrics,
    /// Requirement verdicts.
    pub verdicts: Vec<Verdict>,
    /// The state at the start of the period.
    pub warm: WarmStart,
}

/// Solve one variant: elaborate `source` with `overrides`, apply `ctx`
/// (scale the drive, pick the steady-state method; the default leaves the
/// stage alone), solve the steady state (warm-started from `warm` where
/// given), measure, evaluate.
pub fn solve_variant(
    source: &StageSource,
    overrides: &Overrides,
    ctx: &TuneContext,
    warm: Option<&WarmStart>,
) -> Result<VariantSolution, StageError> {
    let mut c = source
        .elaborate(overrides)
        .map_err(|diagnostics| StageError::Input {
            diagnostics,
            sources: source.sources().clone(),
        })?
        .circuit;
    apply_context(&mut c, ctx)?;
    let opts = SolveOptions {
        warm: warm.map(|w| w.as_slice()),
        ..SolveOptions::scope(Scope::Requirements)
    };
    let r = solve(&c, &opts)?;
    let s = r.steady.ok_or(StageError::NoSteady)?;
    Ok(VariantSolution {
        warm: s.warm_start(),
        metrics: s.metrics,
        verdicts: r.verdicts,
    })
}

/// The study work for variant `v`: its overrides over `base` (the `--set`
/// values, which a variant's own values win over), solved and laid out as
/// a study record. The error is the message the record keeps.
pub fn study_outcome(
    source: &StageSource,
    base: &Overrides,
    v: &Variant,
    warm: Option<&WarmStart>,
) -> Result<Outcome, String> {
    let mut o = v.overrides.clone();
    for (k, val) in &base.params {
        o.params.entry(k.clone()).or_insert(*val);
    }
    let s = solve_variant(source, &o, &TuneContext::default(), warm).map_err(|e| e.to_string())?;
    Ok(Outcome {
        metrics: record::record_metrics(&s.metrics),
        verdicts: record::record_verdicts(&s.verdicts),
        warm: Some(s.warm),
    })
}

/// The tuning work for one point: the parameters set to `values`, solved
/// at the drive and with the method of `ctx` (cold start), and the figures
/// the goal reads.
pub fn tune_figures(
    source: &StageSource,
    values: &BTreeMap<String, f64>,
    ctx: &TuneContext,
) -> Result<TuneFigures, String> {
    let o = Overrides {
        params: values.clone(),
        ..Overrides::default()
    };
    let s = solve_variant(source, &o, ctx, None).map_err(|e| e.to_string())?;
    Ok(record::objective_figures(&s.metrics))
}
