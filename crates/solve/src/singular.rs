//! What a singular matrix says about the circuit.
//!
//! When a factorisation finds no pivot, the message names the cause the
//! numbers point to rather than always guessing a floating node. The
//! Jacobian's null space (the right singular vector of its smallest
//! singular value, from nalgebra's SVD) is the combination of unknowns the
//! equations leave free; which unknowns take part, and of what kind, tells
//! the cause:
//!
//! * only node voltages, each with no entry in its column: nothing conducts
//!   to those nodes at all (a floating node);
//! * only node voltages, with entries: the nodes are tied to each other but
//!   to nothing that fixes their level (a group with no path to ground);
//! * only branch currents: a current can circulate with nothing to fix it (a
//!   loop of voltage sources and inductors, or perfectly coupled inductors);
//! * voltages and currents together: the free combination runs through a
//!   source or element whose value cancels another or is zero (a zero-valued
//!   element, or a source shorted by an element of no resistance).
//!
//! A matrix with an entry far below the others in the free direction is
//! reported with that scale (numerically floating: e.g. a node reached only
//! through a cut-off junction).

use tankwave_devices::{DeviceSet, UnknownKind};

/// Components of the null vector at least this fraction of its largest take part.
const PART: f64 = 0.1;

/// The cause of a singular `jac` (`n`×`n`, row-major), the factorisation
/// having found no pivot for unknown `k`.
pub fn cause(jac: &[f64], n: usize, k: usize, devices: &DeviceSet) -> String {
    if n == 0 || jac.len() != n * n || jac.iter().any(|v| !v.is_finite()) {
        return guess(devices, k);
    }
    let m = nalgebra::DMatrix::<f64>::from_row_slice(n, n, jac);
    let scale = m.amax();
    let Some(svd) = nalgebra::linalg::SVD::try_new(m.clone(), false, true, f64::EPSILON, 200 * n)
    else {
        return guess(devices, k);
    };
    let Some(vt) = svd.v_t.as_ref() else {
        return guess(devices, k);
    };
    let (imin, smin) =
        svd.singular_values
            .iter()
            .enumerate()
            .fold(
                (0, f64::INFINITY),
                |a, (i, s)| if *s < a.1 { (i, *s) } else { a },
            );
    let v: Vec<f64> = (0..n).map(|j| vt[(imin, j)]).collect();
    let vmax = v.iter().fold(0.0f64, |a, x| a.max(x.abs()));
    if vmax == 0.0 {
        return guess(devices, k);
    }
    let members: Vec<usize> = (0..n).filter(|j| v[*j].abs() >= PART * vmax).collect();
    let name = |j: usize| devices.names.get(j).cloned().unwrap_or_default();
    let shown = |js: &[usize]| {
        let mut s: Vec<String> = js.iter().take(6).map(|j| name(*j)).collect();
        if js.len() > 6 {
            s.push(format!("and {} more", js.len() - 6));
        }
        s.join(", ")
    };
    let is_current = |j: &usize| matches!(devices.kinds.get(*j), Some(UnknownKind::Current));
    let currents: Vec<usize> = members.iter().copied().filter(is_current).collect();
    let voltages: Vec<usize> = members.iter().copied().filter(|j| !is_current(j)).collect();
    let relative = if scale > 0.0 { smin / scale } else { 0.0 };
    let numerically = if relative > 0.0 {
        format!(" (the free direction is held by {relative:.1e} of the largest entry)")
    } else {
        String::new()
    };
    if currents.is_empty() {
        let empty_col = |j: &usize| (0..n).all(|r| m[(r, *j)].abs() <= 1e-14 * scale);
        if voltages.iter().all(empty_col) {
            format!(
                "floating node: nothing conducts to {}{numerically}",
                shown(&voltages)
            )
        } else {
            format!(
                "{} {} tied only to each other, with no path to ground that fixes their level{numerically}",
                shown(&voltages),
                if voltages.len() == 1 { "is" } else { "are" }
            )
        }
    } else if voltages.is_empty() {
        format!(
            "a loop of voltage sources and inductors (or perfectly coupled inductors): \
             the currents {} can circulate with nothing to fix them{numerically}",
            shown(&currents)
        )
    } else {
        format!(
            "the voltages {} and the currents {} are left free together: a zero-valued \
             element, or a source whose value another element cancels{numerically}",
            shown(&voltages),
            shown(&currents)
        )
    }
}

/// The cause when only the unknown without a pivot is known (complex or
/// harmonic systems): by its kind.
pub fn guess(devices: &DeviceSet, k: usize) -> String {
    match devices.kinds.get(k) {
        Some(UnknownKind::Current) => {
            "a loop of voltage sources and inductors, or a zero-valued element, through that branch"
                .into()
        }
        _ => "a floating node, or a node fixed only through a zero-valued element".into(),
    }
}
