//! Krylov methods on a linear operator given only as `v ↦ A·v`.
//!
//! - [`gmres`]: restarted GMRES (Y. Saad, M. H. Schultz, "GMRES: a
//!   generalized minimal residual algorithm for solving nonsymmetric linear
//!   systems", SIAM J. Sci. Stat. Comput. 7(3), 1986): the Arnoldi process
//!   with modified Gram–Schmidt builds an orthonormal basis of the Krylov
//!   space `span{r₀, A r₀, …}`; Givens rotations keep the small least-squares
//!   problem `min ‖β e₁ − H̄ y‖` triangular, so the residual norm of every
//!   iterate is known without forming it; after `restart` vectors the
//!   iterate is formed and the process starts again from its residual.
//! - [`gcr`]: generalized conjugate residuals (S. C. Eisenstat, H. C. Elman,
//!   M. H. Schultz, "Variational iterative methods for nonsymmetric systems
//!   of linear equations", SIAM J. Numer. Anal. 20(2), 1983, from memory)
//!   with the directions kept for the next right-hand side with the same
//!   operator ([`Directions`]): each direction `p` is kept with `A p`, the
//!   `A p` orthonormal, so a new solve first takes the best combination of
//!   the kept ones (no product) and only then adds new ones. Without kept
//!   directions it minimises the residual over the same Krylov space as
//!   GMRES; the recycling is the one Telichevesky, Kundert and White
//!   describe for a shooting Newton method's chord steps (DAC 1995, from
//!   memory). [`gcr_preconditioned`] takes new directions `M⁻¹ r`;
//!   [`Recycled`] is such an `M`, built from the directions of earlier
//!   operators near the present one (the Newton periods before it).
//! - [`dominant_eigenvalues`]: the Arnoldi process alone (W. E. Arnoldi,
//!   "The principle of minimized iterations in the solution of the matrix
//!   eigenvalue problem", Q. Appl. Math. 9, 1951); the eigenvalues of the
//!   small Hessenberg matrix `H_m` (Ritz values) approach the eigenvalues of
//!   `A` of largest magnitude first when those are well separated from the
//!   rest, and are exact once the basis spans an invariant subspace
//!   (`m = n` at the latest).
//!
//! Neither ever forms `A`: a shooting solve uses them on the monodromy
//! operator `v ↦ Φv` of one period, which costs one pass of a vector
//! through the stored per-step factorizations (`periodic::shooting`).

use num_complex::Complex64;

/// Options of [`gmres`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GmresParams {
    /// Basis vectors kept before a restart (default 40).
    pub restart: usize,
    /// Operator applications before giving up (default 200).
    pub max_iter: usize,
    /// Stop when `‖b − A x‖ ≤ rel_tolerance · ‖b‖` (default 1e-8).
    pub rel_tolerance: f64,
}

impl Default for GmresParams {
    fn default() -> Self {
        Self {
            restart: 40,
            max_iter: 200,
            rel_tolerance: 1e-8,
        }
    }
}

/// How a [`gmres`] solve went.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GmresInfo {
    /// Operator applications (one per Krylov iteration, plus one per restart
    /// for the true residual).
    pub applications: usize,
    /// Restarts taken.
    pub restarts: usize,
    /// Final `‖b − A x‖ / ‖b‖` (0 when `b = 0`).
    pub residual: f64,
    /// `residual ≤ rel_tolerance`.
    pub converged: bool,
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

fn norm(a: &[f64]) -> f64 {
    dot(a, a).sqrt()
}

/// Solve `A x = b` by restarted GMRES from the initial guess in `x`
/// (overwritten with the solution). `apply(v, out)` writes `A·v` into `out`.
/// A non-finite residual stops the iteration (reported as not converged).
pub fn gmres<F>(mut apply: F, b: &[f64], x: &mut [f64], params: &GmresParams) -> GmresInfo
where
    F: FnMut(&[f64], &mut [f64]),
{
    let n = b.len();
    let m = params.restart.clamp(1, n.max(1));
    let bnorm = norm(b);
    let mut info = GmresInfo {
        applications: 0,
        restarts: 0,
        residual: 0.0,
        converged: true,
    };
    if n == 0 || bnorm == 0.0 {
        x.iter_mut().for_each(|v| *v = 0.0);
        return info;
    }
    let target = params.rel_tolerance * bnorm;
    let mut r = vec![0.0; n];
    let mut w = vec![0.0; n];
    loop {
        // true residual r = b − A x
        apply(x, &mut w);
        info.applications += 1;
        for i in 0..n {
            r[i] = b[i] - w[i];
        }
        let beta = norm(&r);
        info.residual = beta / bnorm;
        if !beta.is_finite() {
            info.converged = false;
            return info;
        }
        if beta <= target {
            info.converged = true;
            return info;
        }
        if info.applications >= params.max_iter {
            info.converged = false;
            return info;
        }
        // Arnoldi with modified Gram–Schmidt; H̄ column by column, rotated.
        let mut v: Vec<Vec<f64>> = vec![r.iter().map(|a| a / beta).collect()];
        let mut h: Vec<Vec<f64>> = Vec::with_capacity(m); // h[j][0..=j+1]
        let mut cs: Vec<(f64, f64)> = Vec::with_capacity(m);
        let mut g = vec![0.0; m + 1];
        g[0] = beta;
        let mut k = 0usize;
        while k < m && info.applications < params.max_iter {
            apply(&v[k], &mut w);
            info.applications += 1;
            let mut col = vec![0.0; k + 2];
            for (i, vi) in v.iter().enumerate() {
                let hij = dot(&w, vi);
                col[i] = hij;
                for (wl, vl) in w.iter_mut().zip(vi) {
                    *wl -= hij * vl;
                }
            }
            let hn = norm(&w);
            col[k + 1] = hn;
            // earlier rotations, then a new one that zeroes col[k+1]
            for (i, &(c, s)) in cs.iter().enumerate() {
                let (a, bb) = (col[i], col[i + 1]);
                col[i] = c * a + s * bb;
                col[i + 1] = -s * a + c * bb;
            }
            let (a, bb) = (col[k], col[k + 1]);
            let rho = a.hypot(bb);
            let (c, s) = if rho == 0.0 {
                (1.0, 0.0)
            } else {
                (a / rho, bb / rho)
            };
            col[k] = rho;
            col[k + 1] = 0.0;
            cs.push((c, s));
            g[k + 1] = -s * g[k];
            g[k] *= c;
            h.push(col);
            k += 1;
            let est = g[k].abs();
            if !est.is_finite() || est <= target || hn <= f64::EPSILON * bnorm {
                break;
            }
            v.push(w.iter().map(|a| a / hn).collect());
        }
        // back substitution R y = g, then x += V y
        let mut y = vec![0.0; k];
        for i in (0..k).rev() {
            let mut s = g[i];
            for (j, yj) in y.iter().enumerate().take(k).skip(i + 1) {
                s -= h[j][i] * yj;
            }
            y[i] = if h[i][i] != 0.0 { s / h[i][i] } else { 0.0 };
        }
        for (j, yj) in y.iter().enumerate() {
            for (xi, vi) in x.iter_mut().zip(&v[j]) {
                *xi += yj * vi;
            }
        }
        info.restarts += 1;
    }
}

/// Directions `p` with their images `A p`, kept between [`gcr`] solves
/// with one operator; the images are orthonormal in the units of the last
/// solve (a solve in other units makes them so again first).
#[derive(Debug, Clone, Default)]
pub struct Directions {
    /// Pairs `(p, A p)`.
    pub pairs: Vec<(Vec<f64>, Vec<f64>)>,
}

/// Directions of solves with earlier operators near the present one (the
/// Newton periods before it), kept as a preconditioner of [`gcr_preconditioned`]:
/// a sequence of sets, each the pairs `(p, A_j p)` of one earlier operator
/// `A_j` in the units of its last solve, where its images are orthonormal.
///
/// `M⁻¹ r` takes the newest set first: the part of `r` in the span of its
/// images is mapped back to the directions exactly (`A_j p ↦ p`), what is
/// left goes to the set before it, and so on; the rest, in no set's span,
/// is mapped by `−1`, the inverse of `Φ − I` along the modes that die out
/// within a period (`Φ ≈ 0`). Where the operator has changed little (a
/// shooting Newton period's `Φ − I` against the one before it), the new
/// directions GCR needs are those of the change alone, not again one per
/// slow Floquet multiplier (the recycling of Krylov subspaces across a
/// sequence of systems: M. L. Parks, E. de Sturler, G. Mackey, D. D. Johnson,
/// S. Maiti, "Recycling Krylov subspaces for sequences of linear systems",
/// SIAM J. Sci. Comput. 28(5), 2006, from memory; this is its simplest
/// form, the recycled space used as a preconditioner, not as a constraint).
#[derive(Debug, Clone, Default)]
pub struct Recycled {
    /// Oldest first.
    sets: Vec<RecycledSet>,
}

/// One operator's pairs in its own units (see [`Recycled`]).
#[derive(Debug, Clone)]
struct RecycledSet {
    /// Unknown `k` is `units[k]` times its entry in the pairs.
    units: Vec<f64>,
    pairs: Vec<(Vec<f64>, Vec<f64>)>,
}

impl Recycled {
    /// Pairs over every set.
    pub fn len(&self) -> usize {
        self.sets.iter().map(|s| s.pairs.len()).sum()
    }

    /// No pair kept.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Add the pairs of one more operator, newest, in `units` (unknown `k`
    /// is `units[k]` times its entry; every unit positive and finite, the
    /// images orthonormal in them, as [`gcr`] leaves its [`Directions`]).
    /// The oldest sets are dropped beyond `cap` pairs in all. Pairs of
    /// another length, or units that are not positive and finite, are not
    /// taken.
    pub fn push(&mut self, pairs: Vec<(Vec<f64>, Vec<f64>)>, units: Vec<f64>, cap: usize) {
        let n = units.len();
        let fine = units.iter().all(|u| *u > 0.0 && u.is_finite())
            && pairs.iter().all(|(p, v)| {
                p.len() == n && v.len() == n && p.iter().chain(v).all(|a| a.is_finite())
            });
        if !fine || pairs.is_empty() || self.sets.first().is_some_and(|s| s.units.len() != n) {
            return;
        }
        let mut pairs = pairs;
        pairs.truncate(cap);
        self.sets.push(RecycledSet { units, pairs });
        while self.len() > cap {
            self.sets.remove(0);
        }
    }

    /// `out = M⁻¹ r` (see [`Recycled`]) for `r` in `units` (unknown `k` is
    /// `units[k]` times its entry), `out` in the same units.
    pub fn apply(&self, r: &[f64], units: &[f64], out: &mut [f64]) {
        let n = r.len();
        let mut rem = r.to_vec();
        out.iter_mut().for_each(|v| *v = 0.0);
        let mut rl = vec![0.0; n];
        let mut xl = vec![0.0; n];
        for set in self.sets.iter().rev() {
            if set.units.len() != n || units.len() != n {
                continue;
            }
            for k in 0..n {
                rl[k] = rem[k] * units[k] / set.units[k];
            }
            xl.iter_mut().for_each(|v| *v = 0.0);
            for (p, v) in &set.pairs {
                let y = dot(&rl, v);
                for (a, b) in xl.iter_mut().zip(p) {
                    *a += y * b;
                }
                for (a, b) in rl.iter_mut().zip(v) {
                    *a -= y * b;
                }
            }
            for k in 0..n {
                let back = set.units[k] / units[k];
                out[k] += xl[k] * back;
                rem[k] = rl[k] * back;
            }
        }
        for (o, r) in out.iter_mut().zip(&rem) {
            *o -= r;
        }
    }
}

/// Options of [`gcr`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GcrParams {
    /// Most directions kept in a [`Directions`]; later ones are used and
    /// dropped (default 400).
    pub keep: usize,
    /// Operator applications in one solve before giving up (default 400).
    pub max_iter: usize,
    /// Stop when `‖b − A x‖ ≤ rel_tolerance · ‖b‖` (default 1e-8) …
    pub rel_tolerance: f64,
    /// … or when `‖b − A x‖ ≤ abs_tolerance` (default 0: never).
    pub abs_tolerance: f64,
}

impl Default for GcrParams {
    fn default() -> Self {
        Self {
            keep: 400,
            max_iter: 400,
            rel_tolerance: 1e-8,
            abs_tolerance: 0.0,
        }
    }
}

/// Make `v` orthogonal to the images of `kept` (modified Gram–Schmidt, two
/// passes, for orthogonality to rounding), applying the same combination to
/// `p`.
fn orthogonalize(kept: &[(Vec<f64>, Vec<f64>)], p: &mut [f64], v: &mut [f64]) {
    for _ in 0..2 {
        for (kp, kv) in kept {
            let beta = dot(v, kv);
            for (a, b) in v.iter_mut().zip(kv) {
                *a -= beta * b;
            }
            for (a, b) in p.iter_mut().zip(kp) {
                *a -= beta * b;
            }
        }
    }
}

/// Solve `A x = b` by generalized conjugate residuals from `x = 0`, first
/// with the directions in `kept` (made orthonormal in these units; those
/// that have become dependent are dropped), then with new ones, which are
/// kept up to `params.keep` (module overview). `apply(v, out)` writes `A·v`
/// into `out`. The residual reported is the recurrence's, `‖r‖/‖b‖`.
pub fn gcr<F>(
    apply: F,
    b: &[f64],
    x: &mut [f64],
    kept: &mut Directions,
    params: &GcrParams,
) -> GmresInfo
where
    F: FnMut(&[f64], &mut [f64]),
{
    gcr_preconditioned(apply, None, b, x, kept, params)
}

/// A preconditioner of [`gcr_preconditioned`]: `(r, out)` writes `M⁻¹ r`.
pub type Preconditioner<'a> = dyn FnMut(&[f64], &mut [f64]) + 'a;

/// [`gcr`] with each new direction `p = M⁻¹ r` instead of the residual `r`
/// itself, `precond(r, p)` writing `M⁻¹ r` (any map: GCR keeps the best
/// combination of whatever directions it is given, so `M` may even change
/// from one direction to the next). With `None` it is [`gcr`].
pub fn gcr_preconditioned<F>(
    mut apply: F,
    mut precond: Option<&mut Preconditioner<'_>>,
    b: &[f64],
    x: &mut [f64],
    kept: &mut Directions,
    params: &GcrParams,
) -> GmresInfo
where
    F: FnMut(&[f64], &mut [f64]),
{
    let n = b.len();
    x.iter_mut().for_each(|v| *v = 0.0);
    let bnorm = norm(b);
    let mut info = GmresInfo {
        applications: 0,
        restarts: 0,
        residual: 0.0,
        converged: true,
    };
    if n == 0 || bnorm == 0.0 {
        return info;
    }
    let target = (params.rel_tolerance * bnorm).max(params.abs_tolerance);
    let mut r = b.to_vec();
    // the kept directions, orthonormal again in these units
    let old = std::mem::take(&mut kept.pairs);
    for (mut p, mut v) in old {
        if p.len() != n || v.len() != n {
            continue;
        }
        let before = norm(&v);
        orthogonalize(&kept.pairs, &mut p, &mut v);
        let after = norm(&v);
        if !(after > 1e-8 * before) || !after.is_finite() {
            continue;
        }
        v.iter_mut().for_each(|a| *a /= after);
        p.iter_mut().for_each(|a| *a /= after);
        kept.pairs.push((p, v));
    }
    let step = |p: &[f64], v: &[f64], x: &mut [f64], r: &mut [f64]| {
        let alpha = dot(r, v);
        for (a, b) in x.iter_mut().zip(p) {
            *a += alpha * b;
        }
        for (a, b) in r.iter_mut().zip(v) {
            *a -= alpha * b;
        }
    };
    for (p, v) in &kept.pairs {
        step(p, v, x, &mut r);
    }
    // new directions beyond the kept ones, used but not kept
    let mut extra: Vec<(Vec<f64>, Vec<f64>)> = Vec::new();
    loop {
        let rn = norm(&r);
        info.residual = rn / bnorm;
        if !rn.is_finite() {
            info.converged = false;
            return info;
        }
        if rn <= target {
            return info;
        }
        if info.applications >= params.max_iter {
            info.converged = false;
            return info;
        }
        let mut p = match precond.as_deref_mut() {
            Some(m) => {
                let mut p = vec![0.0; n];
                m(&r, &mut p);
                p
            }
            None => r.clone(),
        };
        let mut v = vec![0.0; n];
        apply(&p, &mut v);
        info.applications += 1;
        let before = norm(&v);
        orthogonalize(&kept.pairs, &mut p, &mut v);
        orthogonalize(&extra, &mut p, &mut v);
        let vn = norm(&v);
        if !(vn > 1e-12 * before) || !vn.is_finite() {
            // A r lies in the span already: no new direction (breakdown)
            info.converged = false;
            return info;
        }
        v.iter_mut().for_each(|a| *a /= vn);
        p.iter_mut().for_each(|a| *a /= vn);
        step(&p, &v, x, &mut r);
        if kept.pairs.len() < params.keep {
            kept.pairs.push((p, v));
        } else {
            extra.push((p, v));
        }
    }
}

/// Options of [`dominant_eigenvalues`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ArnoldiParams {
    /// Eigenvalues wanted (of largest magnitude; default 4).
    pub wanted: usize,
    /// Basis vectors added between two looks at the Ritz values (default 10).
    pub block: usize,
    /// Largest basis (default 200; `n` at most, where the result is exact).
    pub max_basis: usize,
    /// Stop when the wanted Ritz values move by less than this, relative to
    /// the largest, between two looks (default 1e-10).
    pub rel_tolerance: f64,
}

impl Default for ArnoldiParams {
    fn default() -> Self {
        Self {
            wanted: 4,
            block: 10,
            max_basis: 200,
            rel_tolerance: 1e-10,
        }
    }
}

/// Eigenvalue estimates from [`dominant_eigenvalues`].
#[derive(Debug, Clone, PartialEq)]
pub struct Eigen {
    /// Ritz values, largest magnitude first (all of them, not only the wanted).
    pub values: Vec<Complex64>,
    /// Ritz vector of the first value when it is real (unit length), else empty.
    pub vector: Vec<f64>,
    /// Basis size reached.
    pub basis: usize,
    /// The basis spans an invariant subspace (breakdown or `basis = n`): the
    /// values are eigenvalues of `A` up to rounding.
    pub exact: bool,
    /// Largest change of a wanted value between the last two looks, relative
    /// to the largest magnitude (0 when exact).
    pub change: f64,
}

/// Eigenvalues of the square matrix `a` by its real Schur form, largest
/// magnitude first; `None` when the Schur iteration does not converge.
/// Shared by the Ritz values here and the dense Floquet multipliers
/// (`periodic::floquet`).
pub(crate) fn eigenvalues_by_magnitude(a: nalgebra::DMatrix<f64>) -> Option<Vec<Complex64>> {
    let m = a.nrows();
    let schur = nalgebra::linalg::Schur::try_new(a, f64::EPSILON, 100 * m.max(10))?;
    let mut mu: Vec<Complex64> = schur
        .complex_eigenvalues()
        .iter()
        .map(|c| Complex64::new(c.re, c.im))
        .collect();
    mu.sort_by(|a, b| b.norm().total_cmp(&a.norm()));
    Some(mu)
}

/// The null vector of `a − shift·I` (`a` square): the right singular vector
/// of its smallest singular value; `None` when the SVD fails. For a real
/// eigenvalue `shift` of `a` it is the eigenvector. Shared with
/// `periodic::floquet`, which names the unknowns a mode lives in.
pub(crate) fn null_vector(a: &nalgebra::DMatrix<f64>, shift: f64) -> Option<Vec<f64>> {
    let m = a.nrows();
    let shifted = a - nalgebra::DMatrix::<f64>::identity(m, m) * shift;
    let svd = nalgebra::linalg::SVD::try_new(shifted, false, true, f64::EPSILON, 200 * m)?;
    let vt = svd.v_t.as_ref()?;
    let imin = (0..m)
        .min_by(|i, j| svd.singular_values[*i].total_cmp(&svd.singular_values[*j]))
        .unwrap_or(0);
    Some((0..m).map(|j| vt[(imin, j)]).collect())
}

/// Eigenvalues of the small square matrix `h` (row-major `m×m`), largest
/// magnitude first, with the eigenvector of the first when it is real.
fn small_eigen(h: &[f64], m: usize) -> Option<(Vec<Complex64>, Vec<f64>)> {
    if m == 0 {
        return Some((Vec::new(), Vec::new()));
    }
    let a = nalgebra::DMatrix::<f64>::from_fn(m, m, |r, c| h[r * m + c]);
    let mu = eigenvalues_by_magnitude(a.clone())?;
    let top = mu[0];
    let mut y = Vec::new();
    if top.im.abs() <= 1e-12 * top.norm().max(1.0) {
        y = null_vector(&a, top.re).unwrap_or_default();
    }
    Some((mu, y))
}

/// The eigenvalues of largest magnitude of the `n×n` operator `apply`
/// (`apply(v, out)` writes `A·v`), by the Arnoldi process from `start`
/// (any vector with a component along the wanted eigenvectors; a fixed one
/// gives a reproducible result). The basis grows by `block` vectors until
/// the wanted Ritz values settle, the basis becomes invariant, or
/// `max_basis` is reached. `None` when the small eigenproblem fails or a
/// value is not finite.
pub fn dominant_eigenvalues<F>(mut apply: F, start: &[f64], params: &ArnoldiParams) -> Option<Eigen>
where
    F: FnMut(&[f64], &mut [f64]),
{
    let n = start.len();
    let s = norm(start);
    if n == 0 || !(s > 0.0 && s.is_finite()) {
        return Some(Eigen {
            values: Vec::new(),
            vector: Vec::new(),
            basis: 0,
            exact: true,
            change: 0.0,
        });
    }
    let cap = params.max_basis.clamp(1, n);
    let wanted = params.wanted.max(1);
    let mut v: Vec<Vec<f64>> = vec![start.iter().map(|a| a / s).collect()];
    // Hessenberg entries h[j] = column j (length j + 2)
    let mut h: Vec<Vec<f64>> = Vec::new();
    let mut w = vec![0.0; n];
    let mut last: Option<Vec<Complex64>> = None;
    let mut exact = false;
    loop {
        let k = h.len();
        apply(&v[k], &mut w);
        if w.iter().any(|a| !a.is_finite()) {
            return None;
        }
        let mut col = vec![0.0; k + 2];
        // modified Gram–Schmidt, twice (keeps the basis orthogonal to rounding)
        for _ in 0..2 {
            for (i, vi) in v.iter().enumerate() {
                let hij = dot(&w, vi);
                col[i] += hij;
                for (wl, vl) in w.iter_mut().zip(vi) {
                    *wl -= hij * vl;
                }
            }
        }
        let hn = norm(&w);
        col[k + 1] = hn;
        h.push(col);
        let m = h.len();
        let scale = h
            .iter()
            .flat_map(|c| c.iter())
            .fold(0.0f64, |a, b| a.max(b.abs()));
        if hn <= 1e-13 * scale.max(f64::MIN_POSITIVE) || m == n {
            exact = true;
        }
        if exact || m >= cap || m.is_multiple_of(params.block.max(1)) {
            let mut hm = vec![0.0; m * m];
            for (j, c) in h.iter().enumerate() {
                for (i, val) in c.iter().enumerate().take(m) {
                    hm[i * m + j] = *val;
                }
            }
            let (mu, y) = small_eigen(&hm, m)?;
            let big = mu.first().map(|z| z.norm()).unwrap_or(0.0);
            let change = match &last {
                Some(prev) if !exact => (0..wanted.min(mu.len()))
                    .map(|i| match prev.get(i) {
                        Some(p) => (mu[i] - p).norm() / big.max(f64::MIN_POSITIVE),
                        None => f64::INFINITY,
                    })
                    .fold(0.0f64, f64::max),
                _ if exact => 0.0,
                _ => f64::INFINITY,
            };
            if exact || m >= cap || change <= params.rel_tolerance {
                let mut vector = Vec::new();
                if y.len() == m {
                    vector = vec![0.0; n];
                    for (j, yj) in y.iter().enumerate() {
                        for (a, b) in vector.iter_mut().zip(&v[j]) {
                            *a += yj * b;
                        }
                    }
                    let vn = norm(&vector);
                    if vn > 0.0 {
                        vector.iter_mut().for_each(|a| *a /= vn);
                    }
                }
                return Some(Eigen {
                    values: mu,
                    vector,
                    basis: m,
                    exact,
                    change,
                });
            }
            last = Some(mu);
        }
        v.push(w.iter().map(|a| a / hn).collect());
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A fixed pseudo-random sequence (splitmix64), so the tests are reproducible.
    fn rng(seed: u64) -> impl FnMut() -> f64 {
        let mut s = seed;
        move || {
            s = s.wrapping_add(0x9E37_79B9_7F4A_7C15);
            let mut z = s;
            z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
            z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
            z ^= z >> 31;
            (z >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        }
    }

    fn matvec(a: &[f64], n: usize) -> impl Fn(&[f64], &mut [f64]) + '_ {
        move |v, out| {
            for r in 0..n {
                out[r] = (0..n).map(|c| a[r * n + c] * v[c]).sum();
            }
        }
    }

    /// `I − Φ` (row-major, `n×n`) with `Φ` a seeded random contraction plus
    /// a multiplier near 0.9 in unknown 0 (a slow mode): the shape of a
    /// shooting system.
    fn shooting_like(n: usize, r: &mut impl FnMut() -> f64) -> Vec<f64> {
        let mut a = vec![0.0; n * n];
        for v in a.iter_mut() {
            *v = -0.3 * r() / (n as f64).sqrt();
        }
        for i in 0..n {
            a[i * n + i] += 1.0;
        }
        a[0] -= 0.9;
        a
    }

    #[test]
    fn gmres_solves_a_seeded_nonsymmetric_system() {
        // I − Φ with Φ a random contraction plus two slow modes: the shape
        // of a shooting system.
        let n = 60;
        let mut r = rng(18);
        let a = shooting_like(n, &mut r);
        let x_true: Vec<f64> = (0..n).map(|_| r()).collect();
        let mut b = vec![0.0; n];
        matvec(&a, n)(&x_true, &mut b);
        for restart in [5, 20, 60] {
            let mut x = vec![0.0; n];
            let p = GmresParams {
                restart,
                max_iter: 2000,
                rel_tolerance: 1e-12,
            };
            let info = gmres(matvec(&a, n), &b, &mut x, &p);
            assert!(info.converged, "restart {restart}: {info:?}");
            // the true residual, recomputed here, is within the tolerance
            let mut ax = vec![0.0; n];
            matvec(&a, n)(&x, &mut ax);
            let res: f64 = ax.iter().zip(&b).map(|(u, v)| (u - v).powi(2)).sum::<f64>();
            assert!(res.sqrt() <= 1e-12 * norm(&b) * 1.0001, "restart {restart}");
            // and the solution error is at most κ times the residual (κ about
            // 10–20 here, the smallest singular value near 0.1)
            let err = x
                .iter()
                .zip(&x_true)
                .map(|(u, v)| (u - v).abs())
                .fold(0.0, f64::max);
            assert!(err < 1e-9, "restart {restart}: error {err:e}");
        }
        // a zero right-hand side gives the zero solution at once
        let mut x = vec![1.0; n];
        let info = gmres(
            matvec(&a, n),
            &vec![0.0; n],
            &mut x,
            &GmresParams::default(),
        );
        assert!(info.converged && x.iter().all(|v| *v == 0.0));
    }

    #[test]
    fn gcr_solves_like_gmres_and_recycles_its_directions() {
        // The system of the GMRES test. Without kept directions GCR
        // minimises over the same Krylov space as unrestarted GMRES, so it
        // needs no more products than GMRES's iterations (plus its final
        // true-residual product); with the directions of that solve kept, a
        // second right-hand side needs fewer; and a system given in other
        // units (D⁻¹ A D, D⁻¹ b) with the kept pairs scaled the same way
        // (the operator and its directions unchanged) still reaches the
        // tolerance, its true residual recomputed here (common practice:
        // the recurrence residual of GCR is exact up to rounding).
        let n = 60;
        let mut r = rng(18);
        let a = shooting_like(n, &mut r);
        let true_residual = |a: &[f64], x: &[f64], b: &[f64]| {
            let mut ax = vec![0.0; n];
            matvec(a, n)(x, &mut ax);
            let res: f64 = ax.iter().zip(b).map(|(u, v)| (u - v).powi(2)).sum();
            res.sqrt() / norm(b)
        };
        let tol = 1e-10;
        let p = GcrParams {
            rel_tolerance: tol,
            ..GcrParams::default()
        };
        let b1: Vec<f64> = (0..n).map(|_| r()).collect();
        let mut kept = Directions::default();
        let mut x = vec![0.0; n];
        let first = gcr(matvec(&a, n), &b1, &mut x, &mut kept, &p);
        assert!(first.converged, "{first:?}");
        assert!(true_residual(&a, &x, &b1) <= 1.01 * tol);
        let mut xg = vec![0.0; n];
        let g = gmres(
            matvec(&a, n),
            &b1,
            &mut xg,
            &GmresParams {
                restart: n,
                max_iter: 400,
                rel_tolerance: tol,
            },
        );
        assert!(first.applications <= g.applications, "{first:?} {g:?}");
        assert_eq!(kept.pairs.len(), first.applications);
        // a second right-hand side with the kept directions
        let b2: Vec<f64> = (0..n).map(|_| r()).collect();
        let second = gcr(matvec(&a, n), &b2, &mut x, &mut kept, &p);
        assert!(second.converged);
        assert!(second.applications < first.applications, "{second:?}");
        assert!(true_residual(&a, &x, &b2) <= 1.01 * tol);
        // other units: Ã = D⁻¹ A D, b̃ = D⁻¹ b2, kept p̃ = D⁻¹ p, Ã p̃ = D⁻¹ A p
        let d: Vec<f64> = (0..n).map(|i| 10f64.powi((i % 5) as i32 - 2)).collect();
        let mut at = vec![0.0; n * n];
        for i in 0..n {
            for j in 0..n {
                at[i * n + j] = a[i * n + j] * d[j] / d[i];
            }
        }
        let bt: Vec<f64> = b2.iter().zip(&d).map(|(v, s)| v / s).collect();
        for (p, v) in kept.pairs.iter_mut() {
            for i in 0..n {
                p[i] /= d[i];
                v[i] /= d[i];
            }
        }
        let third = gcr(matvec(&at, n), &bt, &mut x, &mut kept, &p);
        assert!(third.converged, "{third:?}");
        assert!(true_residual(&at, &x, &bt) <= 1.01 * tol);
        // nothing to solve: zero at once
        let none = gcr(matvec(&a, n), &vec![0.0; n], &mut x, &mut kept, &p);
        assert!(none.converged && none.applications == 0 && x.iter().all(|v| *v == 0.0));
    }

    #[test]
    fn recycled_directions_precondition_a_nearby_operator() {
        // Φ − I with Φ a seeded contraction plus twelve slow multipliers
        // (0.80 to 0.98, the shape of a shooting system of many slightly
        // detuned stages), then the same with every entry moved by a seeded
        // 1 % of the contraction's size (the next Newton period's operator).
        // Recycling the first operator's directions must take the second to
        // the same tolerance (true residual recomputed: common practice, the
        // recurrence residual of GCR is exact up to rounding) in fewer
        // products than GCR from nothing; the recycled set is handed over in
        // units of its own, unlike the second solve's, as a shooting solve
        // does.
        let n = 80;
        let slow = 12;
        let mut r = rng(1995);
        let mut a = vec![0.0; n * n];
        for v in a.iter_mut() {
            *v = 0.3 * r() / (n as f64).sqrt();
        }
        for i in 0..n {
            let lambda = if i < slow {
                0.80 + 0.18 * i as f64 / (slow - 1) as f64
            } else {
                0.0
            };
            a[i * n + i] += lambda - 1.0;
        }
        let a2: Vec<f64> = a
            .iter()
            .map(|v| v + 0.01 * 0.3 * r() / (n as f64).sqrt())
            .collect();
        let tol = 1e-8;
        let p = GcrParams {
            rel_tolerance: tol,
            ..GcrParams::default()
        };
        let true_residual = |a: &[f64], x: &[f64], b: &[f64]| {
            let mut ax = vec![0.0; n];
            matvec(a, n)(x, &mut ax);
            let res: f64 = ax.iter().zip(b).map(|(u, v)| (u - v).powi(2)).sum();
            res.sqrt() / norm(b)
        };
        // first operator, in units d (unknown k is d[k] times its entry)
        let d: Vec<f64> = (0..n).map(|i| 10f64.powi((i % 3) as i32 - 1)).collect();
        let in_d = |a: &[f64]| {
            let mut t = vec![0.0; n * n];
            for i in 0..n {
                for j in 0..n {
                    t[i * n + j] = a[i * n + j] * d[j] / d[i];
                }
            }
            t
        };
        let ad = in_d(&a);
        let b1: Vec<f64> = (0..n).map(|_| r()).collect();
        let mut kept = Directions::default();
        let mut x = vec![0.0; n];
        let first = gcr(matvec(&ad, n), &b1, &mut x, &mut kept, &p);
        assert!(first.converged, "{first:?}");
        let mut recycled = Recycled::default();
        recycled.push(kept.pairs.clone(), d.clone(), 400);
        assert_eq!(recycled.len(), kept.pairs.len());
        // exact on the first operator's images: A p ↦ p, in other units too
        let (p0, v0) = &kept.pairs[3];
        let mut out = vec![0.0; n];
        recycled.apply(v0, &d, &mut out);
        let err = out
            .iter()
            .zip(p0)
            .map(|(u, v)| (u - v).abs())
            .fold(0.0, f64::max);
        let size = p0.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        assert!(err <= 1e-10 * size, "{err} against {size}");
        let ones = vec![1.0; n];
        let v_plain: Vec<f64> = v0.iter().zip(&d).map(|(v, s)| v * s).collect();
        recycled.apply(&v_plain, &ones, &mut out);
        let err = out
            .iter()
            .zip(p0)
            .zip(&d)
            .map(|((u, v), s)| (u - v * s).abs())
            .fold(0.0, f64::max);
        assert!(err <= 1e-10 * size * 10.0, "{err}");
        // the second operator, in plain units: from nothing and recycled
        let b2: Vec<f64> = (0..n).map(|_| r()).collect();
        let mut fresh = Directions::default();
        let plain = gcr(matvec(&a2, n), &b2, &mut x, &mut fresh, &p);
        assert!(plain.converged, "{plain:?}");
        let mut fresh = Directions::default();
        let mut m = |v: &[f64], out: &mut [f64]| recycled.apply(v, &ones, out);
        let pre = gcr_preconditioned(matvec(&a2, n), Some(&mut m), &b2, &mut x, &mut fresh, &p);
        assert!(pre.converged, "{pre:?}");
        assert!(true_residual(&a2, &x, &b2) <= 1.01 * tol);
        assert!(
            pre.applications < plain.applications,
            "recycled {pre:?} against {plain:?}"
        );
        // bad units or lengths are not taken; the cap drops the oldest set
        let before = recycled.len();
        recycled.push(kept.pairs.clone(), vec![0.0; n], 400);
        recycled.push(vec![(vec![1.0; 3], vec![1.0; 3])], vec![1.0; 3], 400);
        assert_eq!(recycled.len(), before);
        recycled.push(kept.pairs[..5].to_vec(), d.clone(), before);
        assert_eq!(recycled.len(), 5);
    }

    #[test]
    fn gcr_stops_at_its_absolute_floor() {
        // The seeded system of the GCR test with a right-hand side of norm
        // 1e-2: with a floor of 1e-3 on ‖b − A x‖ GCR stops there (true
        // residual recomputed, at most the floor) in fewer products than
        // the relative 1e-8 alone asks for; a zero floor changes nothing.
        let n = 60;
        let mut r = rng(18);
        let a = shooting_like(n, &mut r);
        let mut b: Vec<f64> = (0..n).map(|_| r()).collect();
        let bn = norm(&b);
        b.iter_mut().for_each(|v| *v *= 1e-2 / bn);
        let run = |abs: f64| {
            let mut x = vec![0.0; n];
            let info = gcr(
                matvec(&a, n),
                &b,
                &mut x,
                &mut Directions::default(),
                &GcrParams {
                    abs_tolerance: abs,
                    ..GcrParams::default()
                },
            );
            let mut ax = vec![0.0; n];
            matvec(&a, n)(&x, &mut ax);
            let res: f64 = ax.iter().zip(&b).map(|(u, v)| (u - v).powi(2)).sum();
            (info, res.sqrt())
        };
        let (floored, res) = run(1e-3);
        assert!(floored.converged && res <= 1.01e-3, "{floored:?} {res}");
        let (plain, res) = run(0.0);
        assert!(plain.converged && res <= 1.01e-8 * 1e-2, "{plain:?} {res}");
        assert!(floored.applications < plain.applications);
    }

    #[test]
    fn gmres_reports_an_unreached_tolerance() {
        // a rotation: GMRES makes no progress with a one-vector basis
        let a = [0.0, -1.0, 1.0, 0.0];
        let mut x = [0.0; 2];
        let p = GmresParams {
            restart: 1,
            max_iter: 10,
            rel_tolerance: 1e-12,
        };
        let info = gmres(matvec(&a, 2), &[1.0, 0.0], &mut x, &p);
        assert!(!info.converged && info.residual > 0.5, "{info:?}");
    }

    #[test]
    fn arnoldi_finds_the_dominant_eigenvalues_of_a_seeded_matrix() {
        // Block diagonal with known eigenvalues: a complex pair 0.9 e^{±0.3j},
        // 0.7, −0.5, then a random block scaled below 0.1; then a random
        // similarity (well conditioned: I + 0.1·random) hides the structure.
        let n = 80;
        let mut r = rng(7);
        let mut d = vec![0.0; n * n];
        let (c, s) = (0.9 * 0.3f64.cos(), 0.9 * 0.3f64.sin());
        d[0] = c;
        d[1] = -s;
        d[n] = s;
        d[n + 1] = c;
        d[2 * n + 2] = 0.7;
        d[3 * n + 3] = -0.5;
        for i in 4..n {
            for j in 4..n {
                d[i * n + j] = 0.1 * r() / (n as f64).sqrt();
            }
        }
        let mut t = vec![0.0; n * n];
        for (k, v) in t.iter_mut().enumerate() {
            *v = 0.1 * r() / (n as f64).sqrt() + if k % (n + 1) == 0 { 1.0 } else { 0.0 };
        }
        // A = T D T⁻¹ applied as: solve T y = v, then T D y
        let tl = nalgebra::DMatrix::<f64>::from_row_slice(n, n, &t).lu();
        let tm = nalgebra::DMatrix::<f64>::from_row_slice(n, n, &t);
        let dm = nalgebra::DMatrix::<f64>::from_row_slice(n, n, &d);
        let apply = |v: &[f64], out: &mut [f64]| {
            let y = tl.solve(&nalgebra::DVector::from_column_slice(v)).unwrap();
            let z = &tm * (&dm * y);
            out.copy_from_slice(z.as_slice());
        };
        let start: Vec<f64> = (0..n).map(|_| 1.0 + r()).collect();
        let e = dominant_eigenvalues(apply, &start, &ArnoldiParams::default()).unwrap();
        assert!(e.basis < n, "settled before the full basis: {}", e.basis);
        let want = [
            Complex64::from_polar(0.9, 0.3),
            Complex64::from_polar(0.9, -0.3),
            Complex64::new(0.7, 0.0),
            Complex64::new(-0.5, 0.0),
        ];
        for w in want {
            let best = e
                .values
                .iter()
                .map(|m| (m - w).norm())
                .fold(f64::INFINITY, f64::min);
            assert!(best < 1e-8, "{w}: nearest Ritz value off by {best:e}");
        }
        assert!((e.values[0].norm() - 0.9).abs() < 1e-8);
        // the dominant value is complex: no real vector
        assert!(e.vector.is_empty());
    }

    #[test]
    fn arnoldi_on_a_small_matrix_is_exact_with_its_vector() {
        // upper triangular: eigenvalues on the diagonal, dominant 0.95 real
        let a = [0.95, 0.2, 0.1, 0.0, 0.5, 0.3, 0.0, 0.0, -0.2];
        let e = dominant_eigenvalues(matvec(&a, 3), &[1.0, 1.0, 1.0], &ArnoldiParams::default())
            .unwrap();
        assert!(e.exact && e.basis == 3);
        for (got, want) in e.values.iter().zip([0.95, 0.5, -0.2]) {
            assert!((got - Complex64::new(want, 0.0)).norm() < 1e-12, "{got}");
        }
        // its eigenvector is e₁
        assert!((e.vector[0].abs() - 1.0).abs() < 1e-10, "{:?}", e.vector);
    }
}
