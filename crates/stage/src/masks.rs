//! The emission masks a stage's requirements name, evaluated on the output
//! harmonics of its steady state. A mask that cannot be evaluated is kept
//! as a [`MaskFailure`], not dropped: the caller decides how to show it.

use tankwave_circuit::{builtin, About, Bound, Circuit};
use tankwave_measure::{evaluate_mask, MaskError, MaskEvaluation, Metrics};

/// A mask a requirement names that could not be evaluated.
#[derive(Debug, Clone)]
pub struct MaskFailure {
    /// The mask's name.
    pub mask: String,
    /// Why it could not be evaluated.
    pub error: MaskError,
}

/// The masks of a stage, evaluated.
#[derive(Debug, Clone, Default)]
pub struct MaskEvaluations {
    /// Each mask that could be evaluated, in the order the requirements name them.
    pub evaluated: Vec<MaskEvaluation>,
    /// Each mask that could not be.
    pub failed: Vec<MaskFailure>,
}

/// Every mask a requirement on the harmonics names (a mask of the file or a
/// built-in one), evaluated on the output harmonics at fundamental `f0`;
/// each mask once, in the order the requirements name them. Empty without
/// output figures.
pub fn mask_evaluations(c: &Circuit, m: &Metrics, f0: f64) -> MaskEvaluations {
    let mut out = MaskEvaluations::default();
    let Some(output) = &m.output else {
        return out;
    };
    for r in &c.requirements {
        if !matches!(r.metric.figure.about(), About::Mask | About::Harmonic) {
            continue;
        }
        let mask = match &r.bound {
            Bound::Mask(i) => c.masks.get(*i).cloned(),
            Bound::BuiltinMask(name) => builtin::builtin_mask(name),
            Bound::Value(_) => None,
        };
        let Some(mask) = mask else {
            continue;
        };
        let seen = out.evaluated.iter().any(|e| e.mask == mask.name)
            || out.failed.iter().any(|f| f.mask == mask.name);
        if seen {
            continue;
        }
        match evaluate_mask(&mask, output, f0) {
            Ok(e) => out.evaluated.push(e),
            Err(error) => out.failed.push(MaskFailure {
                mask: mask.name.clone(),
                error,
            }),
        }
    }
    out
}
