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
//! * (complex matrices only) a free direction that the frequency-independent
//!   part alone would fix: the reactances cancel at this frequency, a
//!   resonance with nothing to damp it (a lossless series LC across a source,
//!   a lossless tank fed by a current).
//!
//! The same reading serves the complex matrices of AC analysis and of each
//! harmonic of harmonic balance's linear network ([`cause_complex`], through
//! the real system of twice the size), and harmonic balance's Newton matrix,
//! whose columns are the real harmonic coefficients of its port unknowns
//! ([`cause_mapped`]).
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
    if n == 0 || jac.len() != n * n || n > MAX_ANALYSED {
        return guess(devices, k);
    }
    let m = nalgebra::DMatrix::<f64>::from_row_slice(n, n, jac);
    classify(m, |j| j, None, devices).unwrap_or_else(|| guess(devices, k))
}

/// The cause of a singular complex `a` (`n`×`n`, row-major: the AC matrix
/// `G + jωC`, or one harmonic of the linear network) whose column `j`
/// belongs to unknown `unknown_of(j)`; `None` when the numbers say nothing
/// (too large to analyse, not finite, no SVD). The matrix is written as the real
/// system `[Re −Im; Im Re]` of twice the size, whose null space holds the
/// real and imaginary parts of the complex one; both halves map back to the
/// unknown they belong to.
pub fn cause_complex(
    a: &[num_complex::Complex64],
    n: usize,
    unknown_of: impl Fn(usize) -> usize,
    devices: &DeviceSet,
) -> Option<String> {
    if n == 0 || a.len() != n * n || 2 * n > MAX_ANALYSED {
        return None;
    }
    let m = nalgebra::DMatrix::<f64>::from_fn(2 * n, 2 * n, |r, c| {
        let v = a[(r % n) * n + c % n];
        match (r < n, c < n) {
            (true, true) | (false, false) => v.re,
            (true, false) => -v.im,
            (false, true) => v.im,
        }
    });
    // The frequency-independent part (G, in both halves): a free direction
    // that G alone does not leave free is one the reactances make free.
    let re = nalgebra::DMatrix::<f64>::from_fn(2 * n, 2 * n, |r, c| {
        if (r < n) == (c < n) {
            a[(r % n) * n + c % n].re
        } else {
            0.0
        }
    });
    classify(m, |j| unknown_of(j % n), Some(&re), devices)
}

/// The cause of a singular Newton matrix `jac` (`m`×`m`, row-major) whose
/// column `j` belongs to unknown `unknown_of(j)` (harmonic balance: each
/// port unknown has one column per real harmonic coefficient); `None` when
/// the numbers say nothing (too large to analyse, not finite, no SVD).
pub fn cause_mapped(
    jac: &[f64],
    m: usize,
    unknown_of: impl Fn(usize) -> usize,
    devices: &DeviceSet,
) -> Option<String> {
    if m == 0 || jac.len() != m * m || m > MAX_ANALYSED {
        return None;
    }
    classify(
        nalgebra::DMatrix::<f64>::from_row_slice(m, m, jac),
        unknown_of,
        None,
        devices,
    )
}

/// Largest matrix (rows) whose null space is computed for a message: the SVD
/// costs about `m³` operations, a fraction of a second here.
const MAX_ANALYSED: usize = 1200;

/// A free direction that the frequency-independent part of a complex matrix
/// moves by at least this fraction of the largest entry is made free by the
/// reactances (a resonance), not by the topology.
const RESONANT: f64 = 1e-6;

/// Name the cause from the null space of `m`, whose column `j` belongs to
/// unknown `unknown_of(j)`; `re` is the frequency-independent part of `m`
/// for a complex (realified) matrix.
fn classify(
    m: nalgebra::DMatrix<f64>,
    unknown_of: impl Fn(usize) -> usize,
    re: Option<&nalgebra::DMatrix<f64>>,
    devices: &DeviceSet,
) -> Option<String> {
    let n = m.ncols();
    if n == 0 || m.nrows() != n || m.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let scale = m.amax();
    let svd = nalgebra::linalg::SVD::try_new(m.clone(), false, true, f64::EPSILON, 200 * n)?;
    let vt = svd.v_t.as_ref()?;
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
        return None;
    }
    let member_cols: Vec<usize> = (0..n).filter(|j| v[*j].abs() >= PART * vmax).collect();
    // The unknowns taking part, each once, in order.
    let mut members: Vec<usize> = Vec::new();
    for &j in &member_cols {
        let u = unknown_of(j);
        if !members.contains(&u) {
            members.push(u);
        }
    }
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
    let vv = nalgebra::DVector::<f64>::from_column_slice(&v);
    if let Some(re) = re {
        if (re * &vv).amax() > RESONANT * scale * vmax {
            let mut all = voltages.clone();
            all.extend(&currents);
            return Some(format!(
                "a resonance with nothing to damp it: the reactances of the inductors and \
                 capacitors at {} cancel at this frequency (add the loss the real parts have, \
                 or move the frequency){numerically}",
                shown(&all)
            ));
        }
    }
    Some(if currents.is_empty() {
        let empty_col = |j: &usize| (0..n).all(|r| m[(r, *j)].abs() <= 1e-14 * scale);
        if member_cols.iter().all(empty_col) {
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
    })
}

/// The cause when only the unknown without a pivot is known (a matrix too
/// large to analyse, or not finite): by its kind.
pub fn guess(devices: &DeviceSet, k: usize) -> String {
    match devices.kinds.get(k) {
        Some(UnknownKind::Current) => {
            "a loop of voltage sources and inductors, or a zero-valued element, through that branch"
                .into()
        }
        _ => "a floating node, or a node fixed only through a zero-valued element".into(),
    }
}
