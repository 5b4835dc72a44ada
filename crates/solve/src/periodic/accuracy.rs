//! The accuracy target of `method=auto` and the error estimate it is
//! checked against (docs/analyses.md, "Accuracy of the steady state").
//!
//! Auto solves by shooting on `N` steps per period, which solves the orbit
//! again on `N/2` for the numerical floor anyway, and compares the output
//! figures of the two grids: output power `P₁ = ½ Re(V₁ I₁*)` at the output
//! element and the level `10·log10(P_n/P₁)` of every harmonic above
//! [`AccuracyParams::harmonics_above_dbc`].
//!
//! TR-BDF2 is second order: once a grid is in the method's asymptotic range
//! the difference of two grids shrinks fourfold per doubling and the finer
//! grid's error is a third of it (Richardson extrapolation; e.g. Hairer,
//! Nørsett & Wanner I, ch. II.4, from memory). Whether the grids are in that
//! range is seen only from three grids, so:
//! - from the first pair the estimate is the whole difference (a margin of
//!   three over the asymptotic error, for a sharp pulse on a coarse grid);
//! - from a later pair, per figure: when the difference shrank at least
//!   threefold since the previous pair (second order showing), the estimate
//!   is a third of the larger of the difference and a quarter of the
//!   previous one (a difference that happens to cross zero does not pass as
//!   a small error); otherwise the whole difference.
//!
//! While the estimate misses the target, `N` doubles (the previous grid
//! becomes the coarse one), up to [`AccuracyParams::max_steps_per_period`].

use super::floor::phasors;
use super::PeriodicSolution;
use tankwave_circuit::Circuit;
use tankwave_devices::DeviceSet;

/// The accuracy `method=auto` refines its steady state to.
#[derive(Debug, Clone, PartialEq)]
pub struct AccuracyParams {
    /// Largest relative error of the output power P₁ (default 1e-4,
    /// `power_error=`).
    pub power_rel: f64,
    /// Largest error of a harmonic level, dB (default 0.05 dB, `level_error=`).
    pub harmonic_db: f64,
    /// Harmonics below this level relative to the fundamental are not held
    /// to `harmonic_db`, dBc (default −100 dBc).
    pub harmonics_above_dbc: f64,
    /// Steps per period auto refines to at most (default 4096); when the
    /// target is not met there, the result says so (`met = false`).
    pub max_steps_per_period: usize,
}

impl Default for AccuracyParams {
    /// The stage file's defaults (`power_error=`, `level_error=`, declared
    /// once in the option table), −100 dBc and 4096 steps.
    fn default() -> Self {
        let file = tankwave_circuit::ir::SteadyAccuracy::default();
        Self {
            power_rel: file.power_error,
            harmonic_db: file.level_error_db,
            harmonics_above_dbc: -100.0,
            max_steps_per_period: 4096,
        }
    }
}

/// The error a steady state is estimated to have, from two grids (three
/// once it has been refined).
#[derive(Debug, Clone, PartialEq)]
pub struct AccuracyEstimate {
    /// Estimated relative error of the output power P₁.
    pub power_rel: f64,
    /// Largest estimated error of a harmonic level above
    /// `harmonics_above_dbc`, dB (0 when there is none).
    pub harmonic_db: f64,
    /// The harmonic with that error (0 when there is none).
    pub worst_harmonic: usize,
    /// Harmonics that were compared (carried by both grids, above
    /// `harmonics_above_dbc`).
    pub harmonics_compared: usize,
    /// Steps per period of the solution.
    pub steps_per_period: usize,
    /// Steps per period of the grid it was compared with.
    pub compared_with: usize,
    /// Grids solved.
    pub grids: usize,
    /// The target it was held to.
    pub target: AccuracyParams,
    /// Whether both estimates are within the target.
    pub met: bool,
    /// The differences of the two grids: `[0]` the relative power
    /// difference, `[n − 1]` the level difference of harmonic `n`, dB
    /// (NaN where a harmonic was not compared); kept for the next pair's
    /// convergence test.
    pub(crate) differences: Vec<f64>,
}

/// Output power per harmonic 1..=k_max of a solution at the output
/// element (`None` without a two-terminal output element or its current).
fn output_powers(
    circuit: &Circuit,
    devices: &DeviceSet,
    s: &PeriodicSolution,
    k_max: usize,
) -> Option<Vec<f64>> {
    let id = circuit.output?;
    let el = circuit.elements.get(id.index())?;
    let terms = el.kind.terminals();
    if terms.len() != 2 {
        return None;
    }
    let wave = |n: tankwave_circuit::NodeId| -> Vec<f64> {
        match devices.voltage_of(n) {
            Some(u) => s.wave(u).to_vec(),
            None => vec![0.0; s.samples_per_period],
        }
    };
    let (a, b) = (wave(terms[0]), wave(terms[1]));
    let v: Vec<f64> = a.iter().zip(&b).map(|(x, y)| x - y).collect();
    let i = s.terminal_current(id.terminal(0))?;
    if v.len() != i.len() || v.is_empty() {
        return None;
    }
    let (pv, pi) = (phasors(&v, k_max), phasors(i, k_max));
    Some(
        (1..=k_max)
            .map(|n| 0.5 * (pv[n] * pi[n].conj()).re)
            .collect(),
    )
}

/// The estimate of one figure from the difference `d` of the last pair and
/// `prev`, the difference of the pair before (module overview).
fn from_difference(d: f64, prev: Option<f64>) -> f64 {
    match prev {
        Some(p) if p.is_finite() && p >= 3.0 * d => d.max(p / 4.0) / 3.0,
        _ => d,
    }
}

/// The error estimate of `fine` from its difference to `coarse` (and the
/// previous pair's `previous`); `None` when the circuit has no output
/// element whose power can be compared, or the fundamental power is not
/// positive on both grids.
pub(crate) fn estimate(
    circuit: &Circuit,
    devices: &DeviceSet,
    fine: &PeriodicSolution,
    coarse: &PeriodicSolution,
    target: &AccuracyParams,
    previous: Option<&AccuracyEstimate>,
) -> Option<AccuracyEstimate> {
    // harmonics both grids carry (the coarse grid has N/2 samples)
    let k_max = fine
        .harmonics
        .min(coarse.samples_per_period.saturating_sub(1) / 2)
        .min(fine.samples_per_period.saturating_sub(1) / 2);
    if k_max == 0 {
        return None;
    }
    let pf = output_powers(circuit, devices, fine, k_max)?;
    let pc = output_powers(circuit, devices, coarse, k_max)?;
    let (f1, c1) = (pf[0], pc[0]);
    if !(f1 > 0.0 && c1 > 0.0 && f1.is_finite() && c1.is_finite()) {
        return None;
    }
    let prev = |k: usize| previous.and_then(|p| p.differences.get(k).copied());
    let mut differences = vec![f64::NAN; k_max];
    differences[0] = (f1 - c1).abs() / f1;
    let power_rel = from_difference(differences[0], prev(0));
    let mut worst = (0.0f64, 0usize);
    let mut compared = 0;
    for n in 2..=k_max {
        let (a, b) = (pf[n - 1], pc[n - 1]);
        if !(a > 0.0 && b > 0.0) {
            continue;
        }
        let level = 10.0 * (a / f1).log10();
        if !(level >= target.harmonics_above_dbc) {
            continue;
        }
        compared += 1;
        let d = (level - 10.0 * (b / c1).log10()).abs();
        if !d.is_finite() {
            continue;
        }
        differences[n - 1] = d;
        let e = from_difference(d, prev(n - 1));
        if e > worst.0 {
            worst = (e, n);
        }
    }
    let met = power_rel <= target.power_rel && worst.0 <= target.harmonic_db;
    power_rel.is_finite().then(|| AccuracyEstimate {
        power_rel,
        harmonic_db: worst.0,
        worst_harmonic: worst.1,
        harmonics_compared: compared,
        steps_per_period: fine.samples_per_period,
        compared_with: coarse.samples_per_period,
        grids: previous.map_or(2, |p| p.grids + 1),
        target: target.clone(),
        met,
        differences,
    })
}

#[cfg(test)]
mod tests {
    use super::from_difference;

    #[test]
    fn the_first_pair_counts_its_whole_difference() {
        assert_eq!(from_difference(0.2, None), 0.2);
    }

    #[test]
    fn second_order_convergence_earns_a_third() {
        // differences 0.8 then 0.2: fourfold, as second order predicts; the
        // finer grid is off by about a third of the last difference
        // (Richardson, h² error: e_N = d/(4 − 1))
        let e = from_difference(0.2, Some(0.8));
        assert!((e - 0.2 / 3.0).abs() < 1e-15, "{e}");
    }

    #[test]
    fn slow_convergence_keeps_the_whole_difference() {
        // only halved: not yet second order, no credit
        assert_eq!(from_difference(0.4, Some(0.8)), 0.4);
    }

    #[test]
    fn a_difference_that_crosses_zero_is_not_taken_as_small() {
        // 0.8 then 1e-6: the expected difference is 0.2, so the estimate is
        // 0.2/3, not 1e-6/3
        let e = from_difference(1e-6, Some(0.8));
        assert!((e - 0.2 / 3.0).abs() < 1e-15, "{e}");
    }
}
