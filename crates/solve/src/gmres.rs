//! Restarted GMRES for real systems given only as a product `v ↦ A v`.
//!
//! Method: Y. Saad, M. H. Schultz, "GMRES: a generalized minimal residual
//! algorithm for solving nonsymmetric linear systems", SIAM J. Sci. Stat.
//! Comput. 7(3), 1986 (from memory). Right preconditioning: GMRES is run on
//! `A M⁻¹ y = b` and `x = M⁻¹ y`, so the residual it minimises and reports
//! is the true residual `‖b − A x‖` (the preconditioner changes only how
//! fast it falls). The Arnoldi basis is built with modified Gram–Schmidt and
//! the small least-squares problem is solved by Givens rotations as the
//! basis grows; after `restart` vectors the iterate is formed and the
//! process starts again from its residual.
//!
//! Used by harmonic balance when the Newton system is large (see
//! `periodic/balance.rs`); faer offers no GMRES.

/// Options of [`gmres`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GmresParams {
    /// Stop when `‖b − A x‖ ≤ rel_tolerance · ‖b‖` (default 1e-8).
    pub rel_tolerance: f64,
    /// Krylov vectors kept before a restart (default 40).
    pub restart: usize,
    /// Most products with `A` in total (default 400).
    pub max_iter: usize,
}

impl Default for GmresParams {
    fn default() -> Self {
        Self {
            rel_tolerance: 1e-8,
            restart: 40,
            max_iter: 400,
        }
    }
}

/// What [`gmres`] did.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GmresInfo {
    /// Products with `A` (the iterations, over every restart).
    pub iterations: usize,
    /// `‖b − A x‖ / ‖b‖` at the end (0 for `b = 0`).
    pub residual: f64,
    /// Whether `residual ≤ rel_tolerance`.
    pub converged: bool,
}

fn norm(v: &[f64]) -> f64 {
    v.iter().map(|a| a * a).sum::<f64>().sqrt()
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Solve `A x = b` for `x` (its value on entry is the first guess).
///
/// `apply(v, out)` writes `A v` into `out`; `precond(v, out)` writes
/// `M⁻¹ v` (an approximate inverse; the identity is allowed). A non-finite
/// product stops the iteration with `converged = false` and `x` at the last
/// finite iterate.
pub fn gmres(
    mut apply: impl FnMut(&[f64], &mut [f64]),
    mut precond: impl FnMut(&[f64], &mut [f64]),
    b: &[f64],
    x: &mut [f64],
    params: &GmresParams,
) -> GmresInfo {
    let n = b.len();
    let bnorm = norm(b);
    if bnorm == 0.0 || n == 0 {
        x.fill(0.0);
        return GmresInfo {
            iterations: 0,
            residual: 0.0,
            converged: true,
        };
    }
    let m = params.restart.clamp(1, n.max(1));
    let target = params.rel_tolerance * bnorm;
    let mut iterations = 0usize;
    let mut r = vec![0.0; n];
    let mut w = vec![0.0; n];
    let mut z = vec![0.0; n];
    // Krylov basis V (m + 1 vectors), preconditioned directions are not kept:
    // x is updated as x + M⁻¹ (V y).
    let mut v: Vec<Vec<f64>> = vec![vec![0.0; n]; m + 1];
    let mut h = vec![vec![0.0; m]; m + 1];
    let (mut cs, mut sn, mut g) = (vec![0.0; m], vec![0.0; m], vec![0.0; m + 1]);
    let residual_of = |x: &[f64], r: &mut [f64], apply: &mut dyn FnMut(&[f64], &mut [f64])| {
        apply(x, r);
        for (ri, bi) in r.iter_mut().zip(b) {
            *ri = bi - *ri;
        }
    };
    residual_of(x, &mut r, &mut apply);
    let mut rnorm = norm(&r);
    loop {
        if !rnorm.is_finite() {
            return GmresInfo {
                iterations,
                residual: f64::INFINITY,
                converged: false,
            };
        }
        if rnorm <= target || iterations >= params.max_iter {
            return GmresInfo {
                iterations,
                residual: rnorm / bnorm,
                converged: rnorm <= target,
            };
        }
        for (vi, ri) in v[0].iter_mut().zip(&r) {
            *vi = ri / rnorm;
        }
        g.fill(0.0);
        g[0] = rnorm;
        let mut used = 0usize;
        for j in 0..m {
            precond(&v[j], &mut z);
            apply(&z, &mut w);
            iterations += 1;
            // modified Gram–Schmidt
            for i in 0..=j {
                let hij = dot(&w, &v[i]);
                h[i][j] = hij;
                for (wk, vk) in w.iter_mut().zip(&v[i]) {
                    *wk -= hij * vk;
                }
            }
            let wn = norm(&w);
            h[j + 1][j] = wn;
            if !wn.is_finite() {
                break;
            }
            if wn > 0.0 {
                for (vk, wk) in v[j + 1].iter_mut().zip(&w) {
                    *vk = wk / wn;
                }
            }
            // apply the earlier rotations to the new column, then a new one
            for i in 0..j {
                let t = cs[i] * h[i][j] + sn[i] * h[i + 1][j];
                h[i + 1][j] = -sn[i] * h[i][j] + cs[i] * h[i + 1][j];
                h[i][j] = t;
            }
            let d = h[j][j].hypot(h[j + 1][j]);
            if d == 0.0 {
                used = j;
                break;
            }
            cs[j] = h[j][j] / d;
            sn[j] = h[j + 1][j] / d;
            h[j][j] = d;
            h[j + 1][j] = 0.0;
            g[j + 1] = -sn[j] * g[j];
            g[j] *= cs[j];
            used = j + 1;
            if g[j + 1].abs() <= target || iterations >= params.max_iter || wn == 0.0 {
                break;
            }
        }
        if used == 0 {
            // no progress possible (a zero product or a breakdown at once)
            return GmresInfo {
                iterations,
                residual: rnorm / bnorm,
                converged: rnorm <= target,
            };
        }
        // back substitution for y, then x += M⁻¹ V y
        let mut y = vec![0.0; used];
        for i in (0..used).rev() {
            let s: f64 = (i + 1..used).map(|k| h[i][k] * y[k]).sum();
            y[i] = (g[i] - s) / h[i][i];
        }
        w.fill(0.0);
        for (yi, vi) in y.iter().zip(&v) {
            for (wk, vk) in w.iter_mut().zip(vi) {
                *wk += yi * vk;
            }
        }
        precond(&w, &mut z);
        if z.iter().any(|a| !a.is_finite()) {
            return GmresInfo {
                iterations,
                residual: rnorm / bnorm,
                converged: false,
            };
        }
        for (xi, zi) in x.iter_mut().zip(&z) {
            *xi += zi;
        }
        residual_of(x, &mut r, &mut apply);
        rnorm = norm(&r);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A fixed-seed generator (64-bit LCG, Knuth's MMIX constants, from
    /// memory): the same matrices on every run.
    struct Lcg(u64);
    impl Lcg {
        fn next(&mut self) -> f64 {
            self.0 = self
                .0
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            ((self.0 >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0
        }
    }

    fn matvec(a: &[f64], n: usize, v: &[f64], out: &mut [f64]) {
        for i in 0..n {
            out[i] = (0..n).map(|j| a[i * n + j] * v[j]).sum();
        }
    }

    /// Random nonsymmetric systems, diagonally weighted so they are well
    /// conditioned, against a dense LU solve (faer). GMRES in exact
    /// arithmetic solves an n×n system in n steps; with restarts and a
    /// tolerance of 1e-12 on the residual, the solution of a system with a
    /// condition number below ~1e2 agrees to ~1e-10 relative.
    #[test]
    fn random_systems_match_a_dense_solve() {
        let mut rng = Lcg(0x5eed_1234);
        for &(n, restart) in &[(1usize, 5usize), (7, 3), (40, 10), (90, 90), (120, 25)] {
            let mut a: Vec<f64> = (0..n * n).map(|_| rng.next()).collect();
            for i in 0..n {
                a[i * n + i] += 2.0 * (n as f64).sqrt();
            }
            let b: Vec<f64> = (0..n).map(|_| rng.next()).collect();
            let dense = faer::Mat::<f64>::from_fn(n, n, |i, j| a[i * n + j]);
            let lu = dense.partial_piv_lu();
            let mut rhs = faer::Mat::<f64>::from_fn(n, 1, |i, _| b[i]);
            use faer::linalg::solvers::Solve;
            lu.solve_in_place(rhs.as_mut());
            let mut x = vec![0.0; n];
            // Jacobi preconditioner for half the cases, none for the rest.
            let diag: Vec<f64> = (0..n).map(|i| a[i * n + i]).collect();
            let use_jacobi = n % 2 == 0;
            let info = gmres(
                |v, out| matvec(&a, n, v, out),
                |v, out| {
                    for i in 0..n {
                        out[i] = if use_jacobi { v[i] / diag[i] } else { v[i] };
                    }
                },
                &b,
                &mut x,
                &GmresParams {
                    rel_tolerance: 1e-12,
                    restart,
                    max_iter: 2000,
                },
            );
            assert!(info.converged, "n = {n}: {info:?}");
            let xn = (0..n).map(|i| rhs[(i, 0)].abs()).fold(0.0f64, f64::max);
            for i in 0..n {
                let e = (x[i] - rhs[(i, 0)]).abs();
                assert!(
                    e <= 1e-9 * xn,
                    "n = {n}, x[{i}]: {} vs {}",
                    x[i],
                    rhs[(i, 0)]
                );
            }
            // the reported residual is the true one
            let mut ax = vec![0.0; n];
            matvec(&a, n, &x, &mut ax);
            let r = ax
                .iter()
                .zip(&b)
                .map(|(p, q)| (p - q).powi(2))
                .sum::<f64>()
                .sqrt()
                / norm(&b);
            assert!((r - info.residual).abs() <= 1e-12 + 1e-6 * r);
        }
    }

    /// An iteration cap too small for the system ends unconverged with the
    /// residual it reached (and a zero right-hand side gives x = 0 at once).
    #[test]
    fn cap_and_zero_rhs() {
        let n = 30;
        let a: Vec<f64> = (0..n * n)
            .map(|e| {
                if e % (n + 1) == 0 {
                    1.0 + e as f64
                } else {
                    0.0
                }
            })
            .collect();
        let b = vec![1.0; n];
        let mut x = vec![0.0; n];
        let id = |v: &[f64], out: &mut [f64]| out.copy_from_slice(v);
        let info = gmres(
            |v, out| matvec(&a, n, v, out),
            id,
            &b,
            &mut x,
            &GmresParams {
                rel_tolerance: 1e-14,
                restart: 5,
                max_iter: 5,
            },
        );
        assert!(!info.converged && info.iterations == 5 && info.residual < 1.0);
        let mut x = vec![3.0; n];
        let info = gmres(
            |v, out| matvec(&a, n, v, out),
            id,
            &[0.0; 30],
            &mut x,
            &GmresParams::default(),
        );
        assert!(info.converged && x.iter().all(|v| *v == 0.0));
    }
}
