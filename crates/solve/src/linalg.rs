//! Linear solvers for the Newton and small-signal systems.
//!
//! The matrices are assembled densely (a stage has 10–60 unknowns). Two
//! factorisations are offered, both from faer:
//! - [`LinearSolver::Dense`]: LU with partial pivoting of the dense matrix;
//! - [`LinearSolver::Sparse`]: sparse LU whose symbolic analysis (ordering and
//!   fill pattern) is computed once per sparsity pattern and reused for every
//!   later factorisation with the same pattern (Newton iterations, time steps).
//!
//! docs/analyses.md records the measured comparison that picked the default.

use faer::linalg::solvers::Solve;
use faer::sparse::linalg::solvers::{Lu, SymbolicLu};
use faer::sparse::{Pair, SparseColMat, SymbolicSparseColMat};
use faer::{Mat, MatMut};

/// Which LU factorisation the real-valued Newton systems use.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum LinearSolver {
    /// Dense below [`SPARSE_FROM`] unknowns, sparse from there on (default;
    /// the crossover measured in the criterion benches, see docs/analyses.md).
    #[default]
    Auto,
    /// Dense LU with partial pivoting.
    Dense,
    /// Sparse LU with the symbolic analysis reused while the pattern holds.
    Sparse,
}

/// Order from which [`LinearSolver::Auto`] picks the sparse LU.
pub const SPARSE_FROM: usize = 16;

impl LinearSolver {
    /// The concrete solver for a system of order `n`.
    pub fn resolve(self, n: usize) -> LinearSolver {
        match self {
            LinearSolver::Auto if n < SPARSE_FROM => LinearSolver::Dense,
            LinearSolver::Auto => LinearSolver::Sparse,
            other => other,
        }
    }
}

/// Pivots below this fraction of the largest matrix entry count as zero.
const PIVOT_FLOOR: f64 = 1e-14;

/// Order from which a dense factorisation and its solves use faer's
/// parallel kernels (rayon); below it they run on the calling thread. faer's
/// default is every thread for every size, and a small system then spends
/// its time in thread synchronisation (futex and sched_yield calls) rather
/// than arithmetic. Measured (docs/performance.md, `cargo bench -p
/// tankwave-solve --bench threads`).
pub const PARALLEL_FROM: usize = 4096;

/// The thread setting for a dense system of order `n`: one thread below
/// [`PARALLEL_FROM`], faer's global setting from there on.
pub fn par_for(n: usize) -> faer::Par {
    if n < PARALLEL_FROM {
        faer::Par::Seq
    } else {
        faer::get_global_parallelism()
    }
}

/// Dense LU with partial pivoting whose factorisation and solves run on the
/// threads [`par_for`] picks for its order (faer's own `partial_piv_lu`
/// always takes the global setting).
#[derive(Debug, Clone)]
pub struct DenseLu<T: faer::traits::ComplexField> {
    l: Mat<T>,
    u: Mat<T>,
    fwd: Vec<usize>,
    bwd: Vec<usize>,
    par: faer::Par,
}

impl<T: faer::traits::ComplexField> DenseLu<T> {
    /// Factor the square matrix `a` on the threads [`par_for`] picks.
    pub fn new(a: Mat<T>) -> Self {
        let par = par_for(a.nrows());
        Self::with_par(a, par)
    }

    /// Factor the square matrix `a` on the threads `par` (for measuring).
    pub fn with_par(mut a: Mat<T>, par: faer::Par) -> Self {
        use faer::dyn_stack::{MemBuffer, MemStack};
        use faer::linalg::lu::partial_pivoting::factor;
        let n = a.nrows();
        let mut fwd = vec![0usize; n];
        let mut bwd = vec![0usize; n];
        let mut mem = MemBuffer::new(factor::lu_in_place_scratch::<usize, T>(
            n,
            n,
            par,
            Default::default(),
        ));
        factor::lu_in_place(
            a.as_mut(),
            &mut fwd,
            &mut bwd,
            par,
            MemStack::new(&mut mem),
            Default::default(),
        );
        let l = Mat::<T>::from_fn(n, n, |i, j| {
            if i == j {
                T::one_impl()
            } else if i > j {
                a[(i, j)].clone()
            } else {
                T::zero_impl()
            }
        });
        let u = Mat::<T>::from_fn(n, n, |i, j| {
            if i <= j {
                a[(i, j)].clone()
            } else {
                T::zero_impl()
            }
        });
        Self {
            l,
            u,
            fwd,
            bwd,
            par,
        }
    }

    /// The upper factor `U` (its diagonal holds the pivots).
    #[allow(non_snake_case)]
    pub fn U(&self) -> faer::MatRef<'_, T> {
        self.u.as_ref()
    }

    /// Solve `A X = B` in place.
    pub fn solve_in_place(&self, rhs: MatMut<'_, T>) {
        use faer::dyn_stack::{MemBuffer, MemStack};
        use faer::linalg::lu::partial_pivoting::solve;
        let n = self.l.nrows();
        let k = rhs.ncols();
        let perm = faer::perm::PermRef::new_checked(&self.fwd, &self.bwd, n);
        let mut mem = MemBuffer::new(solve::solve_in_place_scratch::<usize, T>(n, k, self.par));
        solve::solve_in_place_with_conj(
            self.l.as_ref(),
            self.u.as_ref(),
            perm,
            faer::Conj::No,
            rhs,
            self.par,
            MemStack::new(&mut mem),
        );
    }
}

/// A factorisation of a square real matrix given row-major.
#[derive(Debug)]
pub struct RealLu {
    kind: LinearSolver,
    n: usize,
    dense: Option<DenseLu<f64>>,
    sparse: Option<SparseState>,
}

#[derive(Debug)]
struct SparseState {
    /// Structural pattern as (col, row) sorted by column then row.
    pattern: Vec<(usize, usize)>,
    /// Row-major map from (row, col) to the position in `pattern` (usize::MAX: outside).
    pos: Vec<usize>,
    symbolic_mat: SymbolicSparseColMat<usize>,
    argsort: faer::sparse::Argsort<usize>,
    symbolic: SymbolicLu<usize>,
    lu: Option<Lu<usize, f64>>,
    vals: Vec<f64>,
}

impl RealLu {
    /// A solver of order `n` using `kind`.
    pub fn new(kind: LinearSolver, n: usize) -> Self {
        Self {
            kind: kind.resolve(n),
            n,
            dense: None,
            sparse: None,
        }
    }

    /// Factor the row-major `n×n` matrix `a`. On a zero pivot returns the
    /// column (unknown) that has none.
    pub fn factor(&mut self, a: &[f64]) -> Result<(), usize> {
        let n = self.n;
        if a.len() != n * n {
            return Err(0);
        }
        let amax = a.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        if !amax.is_finite() {
            return Err(first_nonfinite_col(a, n));
        }
        if amax == 0.0 {
            return Err(0);
        }
        match self.kind {
            LinearSolver::Dense => {
                let m = Mat::<f64>::from_fn(n, n, |i, j| a[i * n + j]);
                let lu = DenseLu::new(m);
                let u = lu.U();
                for k in 0..n {
                    let p = u[(k, k)];
                    if !(p.abs() > PIVOT_FLOOR * amax) {
                        return Err(k);
                    }
                }
                self.dense = Some(lu);
                Ok(())
            }
            _ => self.factor_sparse(a, amax),
        }
    }

    fn factor_sparse(&mut self, a: &[f64], amax: f64) -> Result<(), usize> {
        let n = self.n;
        // Does the current pattern cover every nonzero (and the diagonal)?
        let covered = match &self.sparse {
            Some(s) => a
                .iter()
                .zip(&s.pos)
                .all(|(v, p)| *v == 0.0 || *p != usize::MAX),
            None => false,
        };
        if !covered {
            let mut pattern: Vec<(usize, usize)> = Vec::new();
            for c in 0..n {
                for r in 0..n {
                    if a[r * n + c] != 0.0 || r == c {
                        pattern.push((c, r));
                    }
                }
            }
            let idx: Vec<Pair<usize, usize>> =
                pattern.iter().map(|&(c, r)| Pair::new(r, c)).collect();
            let (symbolic_mat, argsort) =
                SymbolicSparseColMat::try_new_from_indices(n, n, &idx).map_err(|_| 0usize)?;
            let symbolic = SymbolicLu::try_new(symbolic_mat.as_ref()).map_err(|_| 0usize)?;
            let len = pattern.len();
            let mut pos = vec![usize::MAX; n * n];
            for (k, &(c, r)) in pattern.iter().enumerate() {
                pos[r * n + c] = k;
            }
            self.sparse = Some(SparseState {
                pattern,
                pos,
                symbolic_mat,
                argsort,
                symbolic,
                lu: None,
                vals: vec![0.0; len],
            });
        }
        let s = self.sparse.as_mut().ok_or(0usize)?;
        for (v, &(c, r)) in s.vals.iter_mut().zip(&s.pattern) {
            *v = a[r * n + c];
        }
        let mat = SparseColMat::new_from_argsort(s.symbolic_mat.clone(), &s.argsort, &s.vals)
            .map_err(|_| 0usize)?;
        match Lu::try_new_with_symbolic(s.symbolic.clone(), mat.as_ref()) {
            Ok(lu) => {
                // A numerically zero pivot does not fail the sparse factorisation:
                // probe with one solve and report the first unknown that blows up.
                let mut probe = Mat::<f64>::from_fn(n, 1, |_, _| 1.0);
                lu.solve_in_place(probe.as_mut());
                let limit = 1e15 * (n as f64) / (amax * PIVOT_FLOOR.sqrt());
                if let Some(k) = (0..n).find(|&k| !(probe[(k, 0)].abs() <= limit)) {
                    return Err(k);
                }
                s.lu = Some(lu);
            }
            Err(faer::sparse::linalg::LuError::SymbolicSingular { index }) => {
                return Err(index.min(n.saturating_sub(1)))
            }
            Err(_) => return Err(0),
        }
        Ok(())
    }

    /// Solve `A x = b` in place with the last factorisation.
    pub fn solve(&self, b: &mut [f64]) {
        let n = self.n;
        let mut col = Mat::<f64>::from_fn(n, 1, |i, _| b.get(i).copied().unwrap_or(0.0));
        self.solve_mat(col.as_mut());
        for (i, v) in b.iter_mut().enumerate().take(n) {
            *v = col[(i, 0)];
        }
    }

    /// Solve `A X = B` in place for a block of columns.
    pub fn solve_mat(&self, rhs: MatMut<'_, f64>) {
        match self.kind {
            LinearSolver::Dense => {
                if let Some(lu) = &self.dense {
                    lu.solve_in_place(rhs);
                }
            }
            _ => {
                if let Some(lu) = self.sparse.as_ref().and_then(|s| s.lu.as_ref()) {
                    lu.solve_in_place(rhs);
                }
            }
        }
    }
}

/// A copy of one factorisation, kept after the solver has moved on (the
/// per-step factors of a shooting period, reused by the matrix-free
/// monodromy operator).
#[derive(Debug, Clone)]
pub(crate) enum Factors {
    /// Dense LU with partial pivoting.
    Dense(DenseLu<f64>),
    /// Sparse LU.
    Sparse(Lu<usize, f64>),
}

impl Factors {
    /// Solve `A x = b` in place.
    pub(crate) fn solve_in_place(&self, b: &mut [f64]) {
        let n = b.len();
        self.solve_columns(b, n);
    }

    /// Solve `A X = B` in place for the `b.len() / n` columns of `B`,
    /// stored one after the other (column-major, `n` rows): one pass of
    /// the factors for the whole block.
    pub(crate) fn solve_columns(&self, b: &mut [f64], n: usize) {
        if n == 0 {
            return;
        }
        let cols = b.len() / n;
        let m = MatMut::from_column_major_slice_mut(&mut b[..n * cols], n, cols);
        match self {
            Factors::Dense(lu) => lu.solve_in_place(m),
            Factors::Sparse(lu) => lu.solve_in_place(m),
        }
    }
}

impl RealLu {
    /// A copy of the last factorisation (`None` before the first).
    pub(crate) fn snapshot(&self) -> Option<Factors> {
        match self.kind {
            LinearSolver::Dense => self.dense.clone().map(Factors::Dense),
            _ => self
                .sparse
                .as_ref()
                .and_then(|s| s.lu.clone())
                .map(Factors::Sparse),
        }
    }
}

/// A sparse matrix in compressed rows, for products with the matrices a
/// period keeps (charges and conductances per step).
#[derive(Debug, Clone, Default)]
pub(crate) struct Csr {
    ptr: Vec<usize>,
    col: Vec<usize>,
    val: Vec<f64>,
}

impl Csr {
    /// The nonzeros of the row-major `n×n` matrix `a`, rows where `keep`
    /// is false left empty.
    pub(crate) fn from_rows(a: &[f64], n: usize, keep: impl Fn(usize) -> bool) -> Self {
        let mut m = Csr {
            ptr: Vec::with_capacity(n + 1),
            ..Csr::default()
        };
        m.ptr.push(0);
        for r in 0..n {
            if keep(r) {
                for (c, &v) in a[r * n..(r + 1) * n].iter().enumerate() {
                    if v != 0.0 {
                        m.col.push(c);
                        m.val.push(v);
                    }
                }
            }
            m.ptr.push(m.col.len());
        }
        m
    }

    /// `out += alpha · A x`.
    pub(crate) fn mul_add(&self, alpha: f64, x: &[f64], out: &mut [f64]) {
        for (r, o) in out
            .iter_mut()
            .enumerate()
            .take(self.ptr.len().saturating_sub(1))
        {
            let mut s = 0.0;
            for k in self.ptr[r]..self.ptr[r + 1] {
                s += self.val[k] * x[self.col[k]];
            }
            *o += alpha * s;
        }
    }
}

fn first_nonfinite_col(a: &[f64], n: usize) -> usize {
    a.iter()
        .position(|v| !v.is_finite())
        .map(|k| k % n.max(1))
        .unwrap_or(0)
}

/// Solve a dense complex system `A x = b` (row-major `A`) by LU with partial
/// pivoting. Returns the column without a pivot on failure.
pub fn solve_complex(
    n: usize,
    a: &[num_complex::Complex64],
    b: &[num_complex::Complex64],
) -> Result<Vec<num_complex::Complex64>, usize> {
    if a.len() != n * n || b.len() != n {
        return Err(0);
    }
    let amax = a.iter().fold(0.0f64, |m, v| m.max(v.norm()));
    if !(amax > 0.0 && amax.is_finite()) {
        return Err(0);
    }
    let m = Mat::<faer::c64>::from_fn(n, n, |i, j| a[i * n + j]);
    let lu = m.partial_piv_lu();
    let u = lu.U();
    for k in 0..n {
        if !(u[(k, k)].norm() > PIVOT_FLOOR * amax) {
            return Err(k);
        }
    }
    let mut rhs = Mat::<faer::c64>::from_fn(n, 1, |i, _| b[i]);
    lu.solve_in_place(rhs.as_mut());
    Ok((0..n).map(|i| rhs[(i, 0)]).collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn check(kind: LinearSolver) {
        // A small nonsymmetric system with a known solution.
        let a = [4.0, 1.0, 0.0, 1.0, 3.0, 1.0, 0.0, 2.0, 5.0];
        let x = [1.0, -2.0, 3.0];
        let mut b = [0.0; 3];
        for r in 0..3 {
            for c in 0..3 {
                b[r] += a[r * 3 + c] * x[c];
            }
        }
        let mut lu = RealLu::new(kind, 3);
        lu.factor(&a).unwrap();
        lu.solve(&mut b);
        for k in 0..3 {
            assert!((b[k] - x[k]).abs() < 1e-12, "{kind:?} {b:?}");
        }
        // Same pattern, new values: reuses the symbolic work in the sparse case.
        let a2 = [2.0, 1.0, 0.0, 1.0, 6.0, 1.0, 0.0, 2.0, 7.0];
        let mut b2 = [0.0; 3];
        for r in 0..3 {
            for c in 0..3 {
                b2[r] += a2[r * 3 + c] * x[c];
            }
        }
        lu.factor(&a2).unwrap();
        lu.solve(&mut b2);
        for k in 0..3 {
            assert!((b2[k] - x[k]).abs() < 1e-12);
        }
        // A zero column is reported as singular.
        let s = [1.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0];
        assert!(lu.factor(&s).is_err());
    }

    #[test]
    fn dense_and_sparse_agree_on_a_known_system() {
        check(LinearSolver::Dense);
        check(LinearSolver::Sparse);
        check(LinearSolver::Auto);
        assert_eq!(
            LinearSolver::Auto.resolve(SPARSE_FROM - 1),
            LinearSolver::Dense
        );
        assert_eq!(
            LinearSolver::Auto.resolve(SPARSE_FROM),
            LinearSolver::Sparse
        );
    }
}
