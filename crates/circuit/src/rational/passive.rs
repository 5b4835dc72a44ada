//! Passivity of a fitted admittance model: checked, and enforced by a small
//! change of its residues and constant term.
//!
//! A network built of passive parts absorbs power at every frequency: the
//! Hermitian part `G(ω) = (Y(jω) + Y(jω)ᴴ)/2` of its admittance matrix has
//! no negative eigenvalue (textbook; for a one-port, `Re Y(jω) ≥ 0`). A
//! fitted model can break this slightly between or beyond the measured
//! points, and a non-passive model can make a time-domain solution grow
//! without bound, so the fit is checked and, where needed, corrected.
//!
//! **Check.** (With at most [`super::MAX_FIT_POINTS`] of the file's points,
//! thinned evenly.) `G` is evaluated on a dense grid: 0 Hz, a logarithmic sweep
//! from a thousandth of the file's first frequency to a thousand times its
//! last, the file's points and the midpoints between them, and points
//! around every pole's resonance (`|Im p| / 2π` ± its bandwidth); each grid
//! minimum of the smallest eigenvalue is refined by golden-section search
//! between its neighbours. At infinite frequency `G` tends to the
//! symmetric part of `D`, which is checked as well.
//!
//! **Enforcement** (our simpler form of the residue perturbation of
//! B. Gustavsen, A. Semlyen, "Enforcing passivity for admittance matrices
//! approximated by rational functions", IEEE Trans. Power Systems 16(1),
//! 2001, from memory): the poles are kept; the residues and `D` change by
//! the least change, in the weighted least-squares sense of the fit at the
//! file's points, that lifts the smallest eigenvalue at every violating
//! frequency to a small margin, using its first-order change `vᴴ ΔG v`
//! (`v` its eigenvector). The equality-constrained problem is solved
//! through its optimality (KKT) system by SVD; check and correction repeat
//! until the grid shows no violation (an eigenvalue below −[`ROUNDING`]
//! times the largest sample's norm: smaller ones are the fit's rounding)
//! or [`MAX_PASSES`] passes. The
//! change's effect on the fit error is reported ([`PassivityInfo`]).

use super::{fit_error, frobenius, FitError, RationalModel};
use num_complex::Complex64;
use std::f64::consts::PI;

/// Eigenvalues down to `−ROUNDING` times the largest sample's norm count
/// as zero (rounding of the fit's arithmetic).
pub const ROUNDING: f64 = 1e-12;

/// The most check-and-correct passes.
pub const MAX_PASSES: usize = 30;

/// How the passivity check and enforcement went.
#[derive(Debug, Clone, PartialEq)]
pub struct PassivityInfo {
    /// The smallest eigenvalue of `G` found before any correction, S
    /// (negative: the fit was not passive).
    pub worst_before: f64,
    /// Where it was, Hz (`f64::INFINITY` for the limit at infinite frequency).
    pub worst_before_at: f64,
    /// The smallest eigenvalue after, S (at least −[`ROUNDING`] times the
    /// largest sample's norm).
    pub worst_after: f64,
    /// Correction passes run (0 if the fit was passive).
    pub passes: usize,
    /// Worst relative fit error at the file's points before the correction.
    pub error_before: f64,
    /// Worst relative fit error after it.
    pub error_after: f64,
}

/// The smallest eigenvalue of the Hermitian part of a 1×1 or 2×2 matrix
/// and its (unit) eigenvector.
fn smallest(y: &[Complex64]) -> (f64, [Complex64; 2]) {
    let one = Complex64::new(1.0, 0.0);
    let zero = Complex64::new(0.0, 0.0);
    if y.len() == 1 {
        return (y[0].re, [one, zero]);
    }
    let a = y[0].re;
    let c = y[3].re;
    let b = (y[1] + y[2].conj()) * 0.5;
    let h = 0.5 * (a - c);
    let lam = 0.5 * (a + c) - (h * h + b.norm_sqr()).sqrt();
    if b.norm() <= 1e-300 {
        return if a <= c {
            (lam, [one, zero])
        } else {
            (lam, [zero, one])
        };
    }
    // (G − λ) v = 0 with first row a − λ, b: v = (b, λ − a).
    let v = [b, Complex64::new(lam - a, 0.0)];
    let n = (v[0].norm_sqr() + v[1].norm_sqr()).sqrt();
    (lam, [v[0] / n, v[1] / n])
}

/// The smallest eigenvalue at `f` (Hz; infinite for the limit).
fn lambda_at(m: &RationalModel, f: f64) -> f64 {
    if f.is_infinite() {
        let d: Vec<Complex64> = m.d.iter().map(|v| Complex64::new(*v, 0.0)).collect();
        return smallest(&d).0;
    }
    smallest(&m.admittance(f)).0
}

/// The grid of the check (Hz), sorted, without the infinite limit.
fn grid(m: &RationalModel, freqs: &[f64]) -> Vec<f64> {
    let (lo, hi) = (freqs[0], freqs[freqs.len() - 1]);
    let mut g = vec![0.0];
    let (a, b) = ((lo / 1e3).ln(), (hi * 1e3).ln());
    let n = 600;
    g.extend((0..=n).map(|i| (a + (b - a) * i as f64 / n as f64).exp()));
    for w in freqs.windows(2) {
        g.push(w[0]);
        g.push(0.5 * (w[0] + w[1]));
    }
    g.push(hi);
    for t in &m.terms {
        let (fr, bw) = (t.pole.im.abs() / (2.0 * PI), t.pole.re.abs() / (2.0 * PI));
        for k in -4..=4 {
            let f = fr + 0.5 * k as f64 * bw;
            if f > 0.0 {
                g.push(f);
            }
        }
    }
    g.retain(|f| f.is_finite() && *f >= 0.0);
    g.sort_by(f64::total_cmp);
    g.dedup();
    g
}

/// The violations on the grid: (frequency, smallest eigenvalue) at every
/// refined local minimum below `margin`, and the infinite limit if it is.
fn violations(m: &RationalModel, freqs: &[f64], margin: f64) -> Vec<(f64, f64)> {
    let g = grid(m, freqs);
    let l: Vec<f64> = g.iter().map(|f| lambda_at(m, *f)).collect();
    let mut out = Vec::new();
    for i in 0..g.len() {
        let left = if i > 0 { l[i - 1] } else { f64::INFINITY };
        let right = l.get(i + 1).copied().unwrap_or(f64::INFINITY);
        if l[i] < margin && l[i] <= left && l[i] <= right {
            let (a, b) = (g[i.saturating_sub(1)], g[(i + 1).min(g.len() - 1)]);
            let f = golden(|f| lambda_at(m, f), a, b, g[i]);
            out.push((f, lambda_at(m, f).min(l[i])));
        }
    }
    let inf = lambda_at(m, f64::INFINITY);
    if inf < margin {
        out.push((f64::INFINITY, inf));
    }
    out
}

/// The minimiser of `h` on `[a, b]` by golden-section search (40 steps),
/// or `start` if that is lower.
fn golden(h: impl Fn(f64) -> f64, mut a: f64, mut b: f64, start: f64) -> f64 {
    let r = 0.5 * (5f64.sqrt() - 1.0);
    let mut c = b - r * (b - a);
    let mut d = a + r * (b - a);
    let (mut hc, mut hd) = (h(c), h(d));
    for _ in 0..40 {
        if hc < hd {
            b = d;
            d = c;
            hd = hc;
            c = b - r * (b - a);
            hc = h(c);
        } else {
            a = c;
            c = d;
            hc = hd;
            d = a + r * (b - a);
            hd = h(d);
        }
    }
    let f = 0.5 * (a + b);
    if h(f) <= h(start) {
        f
    } else {
        start
    }
}

/// The real basis of one entry's parameters at `s` (one per real pole, two
/// per pair, then 1 for `D`); at infinite frequency only `D`'s is non-zero.
fn basis(m: &RationalModel, f: f64, out: &mut Vec<Complex64>) {
    out.clear();
    let zero = Complex64::new(0.0, 0.0);
    let s = Complex64::new(0.0, 2.0 * PI * f);
    for t in &m.terms {
        if f.is_infinite() {
            out.push(zero);
            if t.is_pair() {
                out.push(zero);
            }
            continue;
        }
        let a = (s - t.pole).inv();
        if t.is_pair() {
            let b = (s - t.pole.conj()).inv();
            out.push(a + b);
            out.push(Complex64::i() * (a - b));
        } else {
            out.push(a);
        }
    }
    out.push(Complex64::new(1.0, 0.0));
}

/// [`basis`], or with `hold` the basis of the pole terms less their values
/// at 0 Hz, without D's (D then follows from the held value at 0 Hz).
fn held_basis(m: &RationalModel, f: f64, hold: bool, out: &mut Vec<Complex64>) {
    basis(m, f, out);
    if hold {
        let mut at0 = Vec::new();
        basis(m, 0.0, &mut at0);
        out.pop();
        for (v, z) in out.iter_mut().zip(&at0) {
            *v -= z;
        }
    }
}

/// Add a parameter change (per entry: the basis coefficients) to the model.
fn apply(m: &mut RationalModel, dx: &[f64], per: usize) {
    let n2 = m.ports * m.ports;
    for e in 0..n2 {
        let x = &dx[e * per..(e + 1) * per];
        let mut c = 0;
        for t in &mut m.terms {
            if t.is_pair() {
                t.residues[e] += Complex64::new(x[c], x[c + 1]);
                c += 2;
            } else {
                t.residues[e].re += x[c];
                c += 1;
            }
        }
        m.d[e] += x[c];
    }
}

/// Check the model's passivity and enforce it; the fit error is measured
/// against the samples before and after.
pub fn enforce(
    model: &RationalModel,
    freqs: &[f64],
    y: &[Complex64],
) -> Result<(RationalModel, PassivityInfo), FitError> {
    enforce_with(model, freqs, y, false)
}

/// [`enforce`]; with `hold_dc` every correction also keeps the model's
/// value at 0 Hz: D is then no free parameter but changes by minus the
/// pole terms' change at 0 Hz, and 0 Hz itself is not lifted to the
/// margin (a model held to a short there has its smallest eigenvalue at
/// 0 Hz exactly zero, the edge of passivity, which the rounding tolerance
/// accepts). A correction that cannot make such a model passive within
/// [`MAX_PASSES`] is the usual [`FitError::NotPassive`].
pub fn enforce_with(
    model: &RationalModel,
    freqs: &[f64],
    y: &[Complex64],
    hold_dc: bool,
) -> Result<(RationalModel, PassivityInfo), FitError> {
    let n2 = model.ports * model.ports;
    let scale = y
        .chunks(n2)
        .map(frobenius)
        .fold(0.0, f64::max)
        .max(f64::MIN_POSITIVE);
    // A violation is an eigenvalue below −ROUNDING·scale (smaller ones are
    // the rounding of the fit itself, e.g. a conductance of 1e-18 S where
    // the data's is exactly zero); a correction lifts it to a small margin
    // above zero so that rounding cannot leave it below.
    let tol = -ROUNDING * scale;
    let margin = 1e-7 * scale;
    let error_before = fit_error(model, freqs, y).1;
    // the check grid and the correction use at most MAX_FIT_POINTS of the
    // file's points (the errors are measured at all of them)
    let (all_f, all_y) = (freqs, y);
    let (freqs, y) = super::thin(model.ports, freqs, y, super::MAX_FIT_POINTS);
    let (freqs, y) = (&freqs[..], &y[..]);
    let first = violations(model, freqs, tol);
    let (worst_before, worst_before_at) = first
        .iter()
        .copied()
        .map(|(f, l)| (l, f))
        .fold((f64::INFINITY, 0.0), |a, b| if b.0 < a.0 { b } else { a });
    let mut m = model.clone();
    let dc0: Vec<f64> = model
        .eval_s(Complex64::new(0.0, 0.0))
        .iter()
        .map(|v| v.re)
        .collect();
    let mut passes = 0;
    let mut viol = first;
    while !viol.is_empty() {
        if passes == MAX_PASSES {
            let (l, f) = viol
                .iter()
                .map(|(f, l)| (*l, *f))
                .fold((f64::INFINITY, 0.0), |a, b| if b.0 < a.0 { b } else { a });
            return Err(FitError::NotPassive {
                passes,
                eigenvalue: l,
                at: f,
            });
        }
        passes += 1;
        let mut viol_m = violations(&m, freqs, margin);
        if hold_dc {
            viol_m.retain(|(f, _)| *f != 0.0);
        }
        correct(&mut m, freqs, y, &viol_m, margin, passes, hold_dc)?;
        if hold_dc {
            // The correction kept the value at 0 Hz by construction; D
            // takes up the rounding of the sums.
            let now = m.eval_s(Complex64::new(0.0, 0.0));
            for ((d, v), v0) in m.d.iter_mut().zip(&now).zip(&dc0) {
                *d -= v.re - v0;
            }
        }
        viol = violations(&m, freqs, tol);
    }
    let worst_after = grid(&m, freqs)
        .iter()
        .chain(&[f64::INFINITY])
        .map(|f| lambda_at(&m, *f))
        .fold(f64::INFINITY, f64::min);
    let error_after = fit_error(&m, all_f, all_y).1;
    let worst_before = if worst_before.is_finite() {
        worst_before
    } else {
        worst_after
    };
    Ok((
        m,
        PassivityInfo {
            worst_before,
            worst_before_at,
            worst_after,
            passes,
            error_before,
            error_after,
        },
    ))
}

/// One correction: the least weighted change at the samples that lifts the
/// smallest eigenvalue at each violation to `margin`, to first order.
fn correct(
    m: &mut RationalModel,
    freqs: &[f64],
    y: &[Complex64],
    viol: &[(f64, f64)],
    margin: f64,
    pass: usize,
    hold_dc: bool,
) -> Result<(), FitError> {
    let n2 = m.ports * m.ports;
    // with the value at 0 Hz held, D is no parameter (it follows)
    let per = m.order() + usize::from(!hold_dc);
    let nx = n2 * per;
    let w = super::weights(m.ports, y, super::Weighting::Relative);
    // Objective: Σ_k w_k² ‖ΔY(f_k)‖², the same basis for every entry.
    let k = freqs.len();
    let mut a = nalgebra::DMatrix::<f64>::zeros(2 * k, per);
    let mut phi = Vec::new();
    for (i, f) in freqs.iter().enumerate() {
        held_basis(m, *f, hold_dc, &mut phi);
        for (c, p) in phi.iter().enumerate() {
            a[(2 * i, c)] = w[i] * p.re;
            a[(2 * i + 1, c)] = w[i] * p.im;
        }
    }
    // Columns scaled to unit norm (pole terms and D differ by orders of magnitude).
    let col: Vec<f64> = (0..per).map(|c| a.column(c).norm().max(1e-300)).collect();
    for (c, s) in col.iter().enumerate() {
        a.column_mut(c).scale_mut(1.0 / s);
    }
    let h1 = a.transpose() * &a;
    let nc = viol.len();
    let mut kkt = nalgebra::DMatrix::<f64>::zeros(nx + nc, nx + nc);
    let mut rhs = nalgebra::DVector::<f64>::zeros(nx + nc);
    for e in 0..n2 {
        kkt.view_mut((e * per, e * per), (per, per)).copy_from(&h1);
    }
    for (j, (f, _)) in viol.iter().enumerate() {
        let ym: Vec<Complex64> = if f.is_infinite() {
            m.d.iter().map(|v| Complex64::new(*v, 0.0)).collect()
        } else {
            m.admittance(*f)
        };
        let (lam, v) = smallest(&ym);
        held_basis(m, *f, hold_dc, &mut phi);
        let ports = m.ports;
        for r in 0..ports {
            for c in 0..ports {
                let e = r * ports + c;
                let vv = v[r].conj() * v[c];
                for (q, p) in phi.iter().enumerate() {
                    let g = (vv * p).re / col[q];
                    kkt[(nx + j, e * per + q)] = g;
                    kkt[(e * per + q, nx + j)] = g;
                }
            }
        }
        rhs[nx + j] = margin - lam;
        if hold_dc {
            // With 0 Hz held, a violation near it has a row of the size of
            // the basis' change from 0 Hz, far below the objective's: the
            // row (and its multiplier's column) scaled to unit norm, so
            // that the solver's cut-off does not drop it.
            let rn = (0..nx)
                .map(|c| kkt[(nx + j, c)].powi(2))
                .sum::<f64>()
                .sqrt();
            if rn > 0.0 && rn.is_finite() {
                for c in 0..nx {
                    kkt[(nx + j, c)] /= rn;
                    kkt[(c, nx + j)] /= rn;
                }
                rhs[nx + j] /= rn;
            }
        }
    }
    let svd = nalgebra::linalg::SVD::try_new(kkt, true, true, f64::EPSILON, 0);
    let sol = svd.and_then(|s| {
        let tol = 1e-13 * s.singular_values.max();
        s.solve(&rhs, tol).ok()
    });
    let Some(sol) = sol.filter(|x| x.iter().all(|v| v.is_finite())) else {
        return Err(FitError::Numerical {
            order: m.order(),
            iteration: pass,
            what: "the passivity correction's least-squares problem",
        });
    };
    let dx: Vec<f64> = (0..nx).map(|i| sol[i] / col[i % per]).collect();
    if hold_dc {
        // D changes by minus the pole terms' change at 0 Hz
        let mut phi0 = Vec::new();
        basis(m, 0.0, &mut phi0);
        let mut full = Vec::with_capacity(n2 * (per + 1));
        for e in 0..n2 {
            let x = &dx[e * per..(e + 1) * per];
            full.extend_from_slice(x);
            full.push(-x.iter().zip(&phi0).map(|(x, p)| x * p.re).sum::<f64>());
        }
        apply(m, &full, per + 1);
    } else {
        apply(m, &dx, per);
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::super::{fit, FitParams, PoleTerm};
    use super::*;

    #[test]
    fn a_two_by_two_smallest_eigenvalue() {
        // [[2, 1],[1, 2]] has eigenvalues 1 and 3, eigenvector (1, −1)/√2.
        let c = |v| Complex64::new(v, 0.0);
        let (l, v) = smallest(&[c(2.0), c(1.0), c(1.0), c(2.0)]);
        assert!((l - 1.0).abs() < 1e-15);
        assert!((v[0] + v[1]).norm() < 1e-15);
    }

    #[test]
    fn a_passive_fit_is_left_alone() {
        // A series RLC (passive by construction): no correction.
        let f: Vec<f64> = (0..100).map(|i| 1e6 + 2e5 * i as f64).collect();
        let y: Vec<Complex64> = f
            .iter()
            .map(|&f| {
                let s = Complex64::new(0.0, 2.0 * PI * f);
                (s * 1e-6 + 10.0 + (s * 1e-9).inv()).inv()
            })
            .collect();
        let (m, _) = fit(1, &f, &y, &FitParams::default()).unwrap();
        let (m2, info) = enforce(&m, &f, &y).unwrap();
        assert_eq!(info.passes, 0);
        assert_eq!(m, m2);
        // Its conductance at DC is zero in the data; the fit's is zero to
        // rounding, which the check accepts.
        let scale = y.iter().map(|v| v.norm()).fold(0.0, f64::max);
        assert!(info.worst_after >= -ROUNDING * scale, "{info:?}");
    }

    #[test]
    fn a_non_passive_model_is_corrected() {
        // A one-port whose real part dips below zero near 5 MHz: a pair
        // with a residue whose imaginary part makes Re Y negative there,
        // plus a small conductance (invented values).
        let p = Complex64::new(-2e5, 2.0 * PI * 5e6);
        let bad = RationalModel {
            ports: 1,
            terms: vec![PoleTerm {
                pole: p,
                residues: vec![Complex64::new(1e3, 3e3)],
            }],
            d: vec![1e-3],
            e: vec![0.0],
        };
        let f: Vec<f64> = (0..120).map(|i| 3e6 + 4e6 * i as f64 / 119.0).collect();
        let y: Vec<Complex64> = f.iter().flat_map(|&f| bad.admittance(f)).collect();
        let (m, info) = enforce(&bad, &f, &y).unwrap();
        assert!(info.worst_before < 0.0 && info.passes > 0, "{info:?}");
        // Passive on the check grid and on an independent fine sweep (the
        // correction lifts to a margin above zero).
        assert!(info.worst_after >= 0.0);
        for i in 0..=20000 {
            let f = 1e3 + 2e7 * i as f64 / 20000.0;
            assert!(m.admittance(f)[0].re >= 0.0, "Re Y < 0 at {f} Hz");
        }
        // The data themselves were not passive: the correction costs some
        // fit error, reported.
        assert!(info.error_after > info.error_before);
    }

    #[test]
    fn a_held_value_at_dc_survives_the_correction() {
        // The model of the test above with D chosen so that its value at
        // 0 Hz is zero (D = 2·Re(R/p), since a pair gives R/(s − p) +
        // R̄/(s − p̄)): held, the correction keeps that zero to rounding
        // and still makes the model passive; not held, it moves it.
        let p = Complex64::new(-2e5, 2.0 * PI * 5e6);
        let r = Complex64::new(1e3, 3e3);
        let bad = RationalModel {
            ports: 1,
            terms: vec![PoleTerm {
                pole: p,
                residues: vec![r],
            }],
            d: vec![2.0 * (r / p).re],
            e: vec![0.0],
        };
        assert!(bad.eval_s(Complex64::new(0.0, 0.0))[0].norm() < 1e-15);
        let f: Vec<f64> = (0..120).map(|i| 3e6 + 4e6 * i as f64 / 119.0).collect();
        let y: Vec<Complex64> = f.iter().flat_map(|&f| bad.admittance(f)).collect();
        let scale = y.iter().map(|v| v.norm()).fold(0.0, f64::max);
        let (m, info) = enforce_with(&bad, &f, &y, true).unwrap();
        assert!(info.worst_before < 0.0 && info.passes > 0, "{info:?}");
        let dc = m.eval_s(Complex64::new(0.0, 0.0))[0];
        assert!(dc.norm() <= 1e-12 * scale, "Y(0) = {dc} S");
        for i in 0..=20000 {
            let f = 2e7 * i as f64 / 20000.0;
            let v = m.admittance(f)[0].re;
            assert!(v >= -ROUNDING * scale, "Re Y = {v} S at {f} Hz");
        }
        let (loose, _) = enforce(&bad, &f, &y).unwrap();
        let moved = loose.eval_s(Complex64::new(0.0, 0.0))[0];
        assert!(moved.norm() > 1e-9 * scale, "Y(0) = {moved} S");
    }

    #[test]
    fn a_two_port_violation_is_corrected() {
        // Y = [[g, y12],[y12, g]] with a pair in y12 large enough that the
        // Hermitian part has a negative eigenvalue near its resonance.
        let p = Complex64::new(-3e5, 2.0 * PI * 8e6);
        let bad = RationalModel {
            ports: 2,
            terms: vec![PoleTerm {
                pole: p,
                residues: vec![
                    Complex64::new(2e3, 0.0),
                    Complex64::new(4e3, 0.0),
                    Complex64::new(4e3, 0.0),
                    Complex64::new(2e3, 0.0),
                ],
            }],
            d: vec![2e-3, 0.0, 0.0, 2e-3],
            e: vec![0.0; 4],
        };
        let f: Vec<f64> = (0..150).map(|i| 4e6 + 8e6 * i as f64 / 149.0).collect();
        let y: Vec<Complex64> = f.iter().flat_map(|&f| bad.admittance(f)).collect();
        assert!(lambda_at(&bad, 8e6) < 0.0);
        let (m, info) = enforce(&bad, &f, &y).unwrap();
        assert!(info.passes > 0 && info.worst_after >= 0.0, "{info:?}");
        for i in 0..=5000 {
            let f = 1e4 + 3e7 * i as f64 / 5000.0;
            assert!(lambda_at(&m, f) >= 0.0, "negative eigenvalue at {f} Hz");
        }
    }
}
