//! Linear solvers for the Newton and small-signal systems.
//!
//! The Newton systems of the time-domain analyses are assembled on a sparse
//! pattern (the `assemble` module) and factored from it
//! (`RealLu::factor_pattern`); other callers hand a dense row-major matrix
//! ([`RealLu::factor`]). Two factorisations are offered:
//! - [`LinearSolver::Dense`]: LU with partial pivoting of the dense matrix,
//!   by nalgebra's unblocked LU below [`SMALL_DENSE_BELOW`] unknowns and by
//!   faer's blocked LU from there on (measured crossover);
//! - [`LinearSolver::Sparse`]: sparse LU whose symbolic analysis (ordering and
//!   fill pattern) is computed once per sparsity pattern and reused for every
//!   later factorisation with the same pattern (Newton iterations, time
//!   steps), its numeric factors refactored in place, on the calling thread.
//!
//! docs/analyses.md records the measured comparison that picked the default.

use crate::assemble::Pattern;
use faer::dyn_stack::{MemBuffer, MemStack};
use faer::linalg::solvers::Solve;
use faer::sparse::linalg::lu::simplicial::{
    factorize_simplicial_numeric_lu, factorize_simplicial_numeric_lu_scratch, SimplicialLu,
};
use faer::sparse::linalg::lu::{factorize_symbolic_lu, SymbolicLu};
use faer::sparse::{SparseColMatRef, SymbolicSparseColMatRef};
use faer::{Mat, MatMut};
use std::sync::Arc;

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

/// Order from which [`LinearSolver::Auto`] picks the sparse LU: since it
/// refactors on its kept pivot order it is faster than the
/// dense LU from 8 unknowns on in `cargo bench -p tankwave-solve --bench
/// solve` (which also pays a scan of the dense input; dense faster at 4,
/// about level at 6), and the 7-unknown sharp-pulse stage, which factors
/// on its assembled pattern without that scan, ran its whole process in
/// 0.75 of the time on it (docs/performance.md, "Linear algebra").
pub const SPARSE_FROM: usize = 7;

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

/// Order below which a real dense system is factored by nalgebra's
/// unblocked LU instead of faer's blocked, recursive one: on the systems of
/// a single stage (13 to 20 unknowns) faer's set-up (scratch buffers, the
/// split into `L` and `U`, its dispatch to vector kernels) costs more than
/// the arithmetic. Measured, factor and one solve on one thread
/// (`cargo bench -p tankwave-solve --bench threads`, docs/performance.md):
/// faer takes 7× as long at 14 unknowns, 1.9× at 20, the same at 32, and
/// 0.85× at 64.
pub const SMALL_DENSE_BELOW: usize = 32;

/// A small real dense LU (nalgebra's, partial pivoting), below
/// [`SMALL_DENSE_BELOW`] unknowns.
#[derive(Debug, Clone)]
pub(crate) struct SmallLu(nalgebra::linalg::LU<f64, nalgebra::Dyn, nalgebra::Dyn>);

impl SmallLu {
    /// Factor the row-major `n×n` matrix `a`; on a pivot at or below
    /// `floor`, the column that has it.
    fn factor(a: &[f64], n: usize, floor: f64) -> Result<Self, usize> {
        let lu = nalgebra::DMatrix::from_row_slice(n, n, a).lu();
        let u = lu.u();
        for k in 0..n {
            if !(u[(k, k)].abs() > floor) {
                return Err(k);
            }
        }
        Ok(SmallLu(lu))
    }

    /// Solve `A X = B` in place for the columns of `b` (column-major, `n` rows).
    fn solve_columns(&self, b: &mut [f64], n: usize) {
        if n == 0 {
            return;
        }
        let cols = b.len() / n;
        let mut m = nalgebra::DMatrixViewMut::from_slice(&mut b[..n * cols], n, cols);
        self.0.solve_mut(&mut m);
    }
}

/// The dense factors of a real system, by its order ([`SMALL_DENSE_BELOW`]).
#[derive(Debug, Clone)]
pub(crate) enum RealDense {
    /// nalgebra's unblocked LU (small systems).
    Small(SmallLu),
    /// faer's blocked LU.
    Large(DenseLu<f64>),
}

impl RealDense {
    /// Solve `A X = B` in place for the columns of `b` (column-major, `n` rows).
    fn solve_columns(&self, b: &mut [f64], n: usize) {
        if n == 0 {
            return;
        }
        match self {
            RealDense::Small(lu) => lu.solve_columns(b, n),
            RealDense::Large(lu) => {
                let cols = b.len() / n;
                lu.solve_in_place(MatMut::from_column_major_slice_mut(
                    &mut b[..n * cols],
                    n,
                    cols,
                ))
            }
        }
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

/// A factorisation of a square real matrix, given row-major
/// ([`RealLu::factor`]) or on a sparse pattern (`RealLu::factor_pattern`).
#[derive(Debug)]
pub struct RealLu {
    kind: LinearSolver,
    n: usize,
    dense: Option<RealDense>,
    sparse: Option<SparseState>,
}

/// The sparse LU of one pattern: its fill-reducing column ordering (faer's
/// symbolic analysis), made once per pattern, and the numeric factors of
/// the last matrix, refactored in place by faer's left-looking (simplicial)
/// LU with partial pivoting. Factorisation and solves run on the calling
/// thread ([`par_for`]: the systems of a stage are far below
/// [`PARALLEL_FROM`]; faer's own `Lu` takes the global setting), and the
/// solves are our own loops over the factors ([`LuView`]).
/// Real (the time-domain Newton systems) or complex (harmonic balance's
/// linear network, [`ComplexSparseLu`]): one code for both.
#[derive(Debug)]
struct SparseState<T: SparseScalar = f64> {
    /// The pattern factored (compressed columns).
    pattern: Pattern,
    /// The column ordering: `inv` (shared with the kept factors).
    col_inv: Arc<Vec<usize>>,
    symbolic: SymbolicLu<usize>,
    lu: SimplicialLu<usize, T>,
    row_fwd: Vec<usize>,
    row_inv: Vec<usize>,
    /// `lu` holds the factors of the last matrix.
    factored: bool,
    /// Scratch of the numeric factorisation, kept between factorisations.
    scratch: Scratch,
    /// Values on `pattern` of the last row-major matrix ([`RealLu::factor`]).
    vals: Vec<T>,
    /// The factors of the last matrix, on the pivot order of the last full
    /// factorisation (`None` before the first): refactored in place
    /// ([`Kept`]).
    kept: Option<Kept<T>>,
    /// The column order forwards: factor column `j` is column `col_fwd[j]`.
    col_fwd: Vec<usize>,
    /// Zeroed work column of the refactorisation.
    work: Vec<T>,
    /// Factorisations with partial pivoting so far (the others were
    /// refactorisations on the kept orders).
    fresh: usize,
}

/// Sparse factors `P A Q = L U` kept as compressed columns (faer's layout:
/// `L` unit lower with its diagonal first in each column, `U` upper with
/// its diagonal last) together with each `U` column's entries in
/// increasing row order, so that a matrix of the same pattern is factored
/// again on the same row and column orders without faer's symbolic reach
/// and pivot search: a left-looking column by column elimination on the
/// known patterns (the refactorisation of sparse circuit solvers, e.g.
/// T. A. Davis, E. Palamadai Natarajan, "Algorithm 907: KLU", ACM TOMS
/// 37(3), 2010, from memory). A pivot smaller than [`REFACTOR_PIVOT`]
/// times the largest entry of its column of `L` refuses the old order, and
/// the matrix is factored afresh with partial pivoting.
/// The orders and patterns are shared ([`FactorShape`]): a copy of the
/// factors (a shooting period keeps two a step) copies only their values.
#[derive(Debug, Clone)]
struct Kept<T> {
    shape: Arc<FactorShape>,
    l_val: Vec<T>,
    u_val: Vec<T>,
}

/// What a fresh factorisation fixes and its refactorisations keep: the row
/// order (`(P b)[i] = b[row_fwd[i]]`), the column order (`col_inv`) and the
/// compressed-column patterns of `L` and `U`.
#[derive(Debug)]
struct FactorShape {
    row_fwd: Vec<usize>,
    col_inv: Arc<Vec<usize>>,
    l_ptr: Vec<usize>,
    l_idx: Vec<usize>,
    u_ptr: Vec<usize>,
    u_idx: Vec<usize>,
    /// Positions of each `U` column's off-diagonal entries, by increasing row.
    u_order: Vec<usize>,
}

/// Smallest pivot a refactorisation on a kept pivot order accepts,
/// relative to the largest entry of its column below the diagonal
/// (threshold partial pivoting, common practice: multipliers stay below
/// 10, where the fresh factorisation's partial pivoting keeps them below
/// 1; a matrix whose values moved that far is factored afresh).
const REFACTOR_PIVOT: f64 = 0.1;

impl<T: SparseScalar> Kept<T> {
    /// A copy of faer's factors with their row order `row_fwd` and column
    /// order `col_inv`.
    fn of(lu: &SimplicialLu<usize, T>, row_fwd: &[usize], col_inv: &Arc<Vec<usize>>) -> Self {
        let l = lu.l_factor_unsorted();
        let u = lu.u_factor_unsorted();
        let u_ptr = u.symbolic().col_ptr().to_vec();
        let u_idx = u.symbolic().row_idx().to_vec();
        let mut u_order: Vec<usize> = (0..u_idx.len()).collect();
        for j in 0..u_ptr.len().saturating_sub(1) {
            let (a, e) = (u_ptr[j], u_ptr[j + 1]);
            if e > a + 1 {
                u_order[a..e - 1].sort_unstable_by_key(|&p| u_idx[p]);
            }
        }
        Kept {
            shape: Arc::new(FactorShape {
                row_fwd: row_fwd.to_vec(),
                col_inv: Arc::clone(col_inv),
                l_ptr: l.symbolic().col_ptr().to_vec(),
                l_idx: l.symbolic().row_idx().to_vec(),
                u_ptr,
                u_idx,
                u_order,
            }),
            l_val: l.val().to_vec(),
            u_val: u.val().to_vec(),
        }
    }

    /// The factors to solve with.
    fn view(&self) -> LuView<'_, T> {
        let k = &*self.shape;
        LuView {
            n: k.row_fwd.len(),
            row_fwd: &k.row_fwd,
            col_inv: &k.col_inv,
            l_ptr: &k.l_ptr,
            l_idx: &k.l_idx,
            l_val: &self.l_val,
            u_ptr: &k.u_ptr,
            u_idx: &k.u_idx,
            u_val: &self.u_val,
        }
    }
}

/// The scalars the sparse LU factors and solves with.
pub(crate) trait SparseScalar:
    faer::traits::ComplexField
    + Copy
    + PartialEq
    + std::ops::SubAssign
    + std::ops::Mul<Output = Self>
    + std::ops::Div<Output = Self>
{
    /// 0.
    const ZERO: Self;
    /// 1.
    const ONE: Self;
    /// `|self|`.
    fn modulus(self) -> f64;
}

impl SparseScalar for f64 {
    const ZERO: Self = 0.0;
    const ONE: Self = 1.0;
    fn modulus(self) -> f64 {
        self.abs()
    }
}

impl SparseScalar for faer::c64 {
    const ZERO: Self = faer::c64::new(0.0, 0.0);
    const ONE: Self = faer::c64::new(1.0, 0.0);
    fn modulus(self) -> f64 {
        self.norm()
    }
}

/// A scratch buffer (faer's has no `Debug`).
struct Scratch(MemBuffer);

impl std::fmt::Debug for Scratch {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str("Scratch")
    }
}

impl<T: SparseScalar> SparseState<T> {
    fn new(pattern: Pattern) -> Result<Self, usize> {
        let n = pattern.order();
        let sym =
            SymbolicSparseColMatRef::new_checked(n, n, pattern.col_ptr(), None, pattern.row_idx());
        let symbolic = factorize_symbolic_lu(sym, Default::default()).map_err(|_| 0usize)?;
        let col_fwd = symbolic.col_perm().arrays().0.to_vec();
        let scratch = Scratch(
            MemBuffer::try_new(factorize_simplicial_numeric_lu_scratch::<usize, T>(n, n))
                .map_err(|_| 0usize)?,
        );
        Ok(Self {
            vals: vec![T::ZERO; pattern.len()],
            pattern,
            col_inv: Arc::new(symbolic.col_perm().arrays().1.to_vec()),
            symbolic,
            lu: SimplicialLu::new(),
            row_fwd: vec![0; n],
            row_inv: vec![0; n],
            factored: false,
            scratch,
            kept: None,
            col_fwd,
            work: vec![T::ZERO; n],
            fresh: 0,
        })
    }

    /// Factor `vals` on the kept row and column orders ([`Kept`]); false
    /// when there are none, or a pivot is refused (the kept factors are
    /// then no longer valid, and the work column is zeroed again).
    fn refactor(&mut self, vals: &[T]) -> bool {
        let n = self.pattern.order();
        let Some(kept) = self.kept.as_mut() else {
            return false;
        };
        let k = &*kept.shape;
        let (l_val, u_val) = (&mut kept.l_val, &mut kept.u_val);
        let x = &mut self.work;
        let (cp, ri) = (self.pattern.col_ptr(), self.pattern.row_idx());
        for j in 0..n {
            let c = self.col_fwd[j];
            for p in cp[c]..cp[c + 1] {
                x[self.row_inv[ri[p]]] = vals[p];
            }
            // U's column above the diagonal: the sparse lower solve
            // L₀₀ u = x₀ in increasing row order (a topological order of L)
            let (ua, ue) = (k.u_ptr[j], k.u_ptr[j + 1]);
            for &pos in &k.u_order[ua..ue.saturating_sub(1).max(ua)] {
                let r = k.u_idx[pos];
                let xr = x[r];
                x[r] = T::ZERO;
                u_val[pos] = xr;
                if xr != T::ZERO {
                    for q in k.l_ptr[r] + 1..k.l_ptr[r + 1] {
                        x[k.l_idx[q]] -= l_val[q] * xr;
                    }
                }
            }
            let piv = x[j];
            x[j] = T::ZERO;
            let (la, le) = (k.l_ptr[j], k.l_ptr[j + 1]);
            let below = k.l_idx[la + 1..le]
                .iter()
                .fold(0.0f64, |m, &i| m.max(x[i].modulus()));
            if ue == ua || !(piv.modulus() > 0.0 && piv.modulus() >= REFACTOR_PIVOT * below) {
                for &i in &k.l_idx[la + 1..le] {
                    x[i] = T::ZERO;
                }
                self.kept = None;
                return false;
            }
            u_val[ue - 1] = piv;
            for q in la + 1..le {
                let i = k.l_idx[q];
                l_val[q] = x[i] / piv;
                x[i] = T::ZERO;
            }
        }
        true
    }

    /// Factor the matrix with `vals` (largest modulus `amax`) at the
    /// pattern's positions. On a zero pivot (structural, or numerical: a
    /// probe solve that blows up) returns the column that has none.
    fn factor(&mut self, vals: &[T], amax: f64) -> Result<(), usize> {
        let n = self.pattern.order();
        self.factored = false;
        // A numerically zero pivot does not fail the sparse factorisation:
        // probe with one solve and report the first unknown that blows up.
        let limit = 1e15 * (n as f64) / (amax * PIVOT_FLOOR.sqrt());
        let blows_up = |s: &Self| {
            let mut probe = vec![T::ONE; n];
            match &s.kept {
                Some(k) => k.view().solve_columns(&mut probe),
                None => return Some(0),
            }
            (0..n).find(|&k| !(probe[k].modulus() <= limit))
        };
        // on the kept orders first; a probe that blows up there is tried
        // again with partial pivoting before the matrix is called singular
        if self.refactor(vals) && blows_up(self).is_none() {
            self.factored = true;
            return Ok(());
        }
        self.factor_fresh(vals)?;
        if let Some(k) = blows_up(self) {
            // the next matrix starts afresh too
            self.kept = None;
            return Err(k);
        }
        self.factored = true;
        Ok(())
    }

    /// Factor `vals` by faer's left-looking LU with partial pivoting, and
    /// keep the factors ([`Kept`]).
    fn factor_fresh(&mut self, vals: &[T]) -> Result<(), usize> {
        let n = self.pattern.order();
        self.kept = None;
        self.fresh += 1;
        let sym = SymbolicSparseColMatRef::new_checked(
            n,
            n,
            self.pattern.col_ptr(),
            None,
            self.pattern.row_idx(),
        );
        let mat = SparseColMatRef::new(sym, vals);
        let res = factorize_simplicial_numeric_lu(
            &mut self.row_fwd,
            &mut self.row_inv,
            &mut self.lu,
            mat,
            self.symbolic.col_perm(),
            MemStack::new(&mut self.scratch.0),
        );
        match res {
            Ok(()) => {}
            Err(faer::sparse::linalg::LuError::SymbolicSingular { index }) => {
                return Err(index.min(n.saturating_sub(1)))
            }
            Err(_) => return Err(0),
        }
        self.kept = Some(Kept::of(&self.lu, &self.row_fwd, &self.col_inv));
        Ok(())
    }

    /// The factors of the last matrix, once factored.
    fn view(&self) -> Option<LuView<'_, T>> {
        self.kept.as_ref().filter(|_| self.factored).map(Kept::view)
    }
}

/// Sparse LU factors `P A Q = L U` as compressed columns (`L` unit lower
/// with its diagonal first in each column, `U` upper with its diagonal
/// last, as faer's simplicial LU stores them), `P` given by `row_fwd`
/// (`(P b)[i] = b[row_fwd[i]]`) and `Q` by its inverse `col_inv`.
#[derive(Debug, Clone, Copy)]
struct LuView<'a, T = f64> {
    n: usize,
    row_fwd: &'a [usize],
    col_inv: &'a [usize],
    l_ptr: &'a [usize],
    l_idx: &'a [usize],
    l_val: &'a [T],
    u_ptr: &'a [usize],
    u_idx: &'a [usize],
    u_val: &'a [T],
}

impl<T: SparseScalar> LuView<'_, T> {
    /// Solve `A X = B` in place for the `b.len() / n` columns of `B`,
    /// stored one after the other.
    fn solve_columns(&self, b: &mut [T]) {
        let n = self.n;
        if n == 0 {
            return;
        }
        let mut y = vec![T::ZERO; n];
        for col in b.chunks_exact_mut(n) {
            for (yi, &k) in y.iter_mut().zip(self.row_fwd) {
                *yi = col[k];
            }
            // L y' = y (unit diagonal, first in each column)
            for j in 0..n {
                let yj = y[j];
                if yj != T::ZERO {
                    for k in self.l_ptr[j] + 1..self.l_ptr[j + 1] {
                        y[self.l_idx[k]] -= self.l_val[k] * yj;
                    }
                }
            }
            // U z = y' (diagonal last in each column)
            for j in (0..n).rev() {
                let (a, e) = (self.u_ptr[j], self.u_ptr[j + 1]);
                if e == a {
                    continue;
                }
                let yj = y[j] / self.u_val[e - 1];
                y[j] = yj;
                if yj != T::ZERO {
                    for k in a..e - 1 {
                        y[self.u_idx[k]] -= self.u_val[k] * yj;
                    }
                }
            }
            for (c, &k) in col.iter_mut().zip(self.col_inv) {
                *c = y[k];
            }
        }
    }
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
    /// column (unknown) that has none. The sparse LU keeps its pattern
    /// (and symbolic analysis) while it covers every nonzero of `a`.
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
            LinearSolver::Dense => self.factor_dense(a, amax),
            _ => {
                // Does the current pattern cover every nonzero (and the diagonal)?
                let covered = self.sparse.as_ref().is_some_and(|s| {
                    (0..n).all(|r| {
                        (0..n).all(|c| a[r * n + c] == 0.0 || s.pattern.find(r, c).is_some())
                    })
                });
                if !covered {
                    self.sparse = Some(SparseState::new(Pattern::of_dense(a, n))?);
                }
                let s = self.sparse.as_mut().ok_or(0usize)?;
                let mut vals = std::mem::take(&mut s.vals);
                for (p, r, c) in s.pattern.entries() {
                    vals[p] = a[r * n + c];
                }
                let res = s.factor(&vals, amax);
                s.vals = vals;
                res
            }
        }
    }

    /// Factor the matrix with the values `vals` at the positions of
    /// `pattern` (an assembled Jacobian, [`crate::assemble`]): no `n×n`
    /// pass for the sparse LU, whose symbolic analysis is redone only when
    /// the pattern changes. On a zero pivot returns the column (unknown)
    /// that has none.
    pub(crate) fn factor_pattern(&mut self, pattern: &Pattern, vals: &[f64]) -> Result<(), usize> {
        let n = self.n;
        if pattern.order() != n || vals.len() != pattern.len() {
            return Err(0);
        }
        let amax = vals.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        if !amax.is_finite() {
            return Err(pattern
                .entries()
                .find(|&(p, _, _)| !vals[p].is_finite())
                .map_or(0, |(_, _, c)| c));
        }
        if amax == 0.0 {
            return Err(0);
        }
        match self.kind {
            LinearSolver::Dense => self.factor_dense(&pattern.to_dense(vals), amax),
            _ => {
                if self.sparse.as_ref().is_none_or(|s| s.pattern != *pattern) {
                    self.sparse = Some(SparseState::new(pattern.clone())?);
                }
                let s = self.sparse.as_mut().ok_or(0usize)?;
                s.factor(vals, amax)
            }
        }
    }

    fn factor_dense(&mut self, a: &[f64], amax: f64) -> Result<(), usize> {
        let n = self.n;
        self.dense = None;
        if n < SMALL_DENSE_BELOW {
            self.dense = Some(RealDense::Small(SmallLu::factor(a, n, PIVOT_FLOOR * amax)?));
            return Ok(());
        }
        let m = Mat::<f64>::from_fn(n, n, |i, j| a[i * n + j]);
        let lu = DenseLu::new(m);
        let u = lu.U();
        for k in 0..n {
            let p = u[(k, k)];
            if !(p.abs() > PIVOT_FLOOR * amax) {
                return Err(k);
            }
        }
        self.dense = Some(RealDense::Large(lu));
        Ok(())
    }

    /// Solve `A x = b` in place with the last factorisation.
    pub fn solve(&self, b: &mut [f64]) {
        let n = self.n;
        if b.len() < n {
            return;
        }
        match self.kind {
            LinearSolver::Dense => {
                if let Some(lu) = &self.dense {
                    lu.solve_columns(&mut b[..n], n);
                }
            }
            _ => {
                if let Some(v) = self.sparse.as_ref().and_then(SparseState::view) {
                    v.solve_columns(&mut b[..n]);
                }
            }
        }
    }

    /// Solve `A X = B` in place for the `b.len() / n` columns of `B`,
    /// stored one after the other (column-major, `n` rows).
    pub fn solve_columns(&self, b: &mut [f64]) {
        let n = self.n;
        if n == 0 {
            return;
        }
        let cols = b.len() / n;
        let b = &mut b[..n * cols];
        match self.kind {
            LinearSolver::Dense => {
                if let Some(lu) = &self.dense {
                    lu.solve_columns(b, n);
                }
            }
            _ => {
                if let Some(v) = self.sparse.as_ref().and_then(SparseState::view) {
                    v.solve_columns(b);
                }
            }
        }
    }

    /// Solve `A X = B` in place for a block of columns.
    pub fn solve_mat(&self, rhs: MatMut<'_, f64>) {
        match self.kind {
            LinearSolver::Dense => match &self.dense {
                Some(RealDense::Large(lu)) => lu.solve_in_place(rhs),
                Some(RealDense::Small(lu)) => {
                    let n = self.n;
                    solve_mat_with(rhs, |b| lu.solve_columns(b, n))
                }
                None => {}
            },
            _ => {
                if let Some(v) = self.sparse.as_ref().and_then(SparseState::view) {
                    solve_mat_with(rhs, |b| v.solve_columns(b));
                }
            }
        }
    }
}

/// Apply `solve` (on columns stored one after the other) to `rhs`, through
/// a copy when `rhs` is not stored that way.
fn solve_mat_with(mut rhs: MatMut<'_, f64>, solve: impl Fn(&mut [f64])) {
    let (n, k) = (rhs.nrows(), rhs.ncols());
    let mut b = vec![0.0; n * k];
    for j in 0..k {
        for i in 0..n {
            b[j * n + i] = rhs[(i, j)];
        }
    }
    solve(&mut b);
    for j in 0..k {
        for i in 0..n {
            rhs[(i, j)] = b[j * n + i];
        }
    }
}

/// Sparse LU factors kept after the solver has moved on: a copy of the
/// factors' values, their orders and patterns shared ([`Kept`]).
#[derive(Debug, Clone)]
pub(crate) struct SparseFactors(Kept<f64>);

impl SparseFactors {
    fn solve_columns(&self, b: &mut [f64]) {
        self.0.view().solve_columns(b)
    }
}

/// A copy of one factorisation, kept after the solver has moved on (the
/// per-step factors of a shooting period, reused by the matrix-free
/// monodromy operator).
#[derive(Debug, Clone)]
pub(crate) enum Factors {
    /// Dense LU with partial pivoting.
    Dense(RealDense),
    /// Sparse LU.
    Sparse(SparseFactors),
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
        match self {
            Factors::Dense(lu) => lu.solve_columns(b, n),
            Factors::Sparse(lu) => lu.solve_columns(b),
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
                .filter(|s| s.factored)
                .and_then(|s| s.kept.clone())
                .map(|k| Factors::Sparse(SparseFactors(k))),
        }
    }
}

/// The sparse LU of a complex matrix on a fixed pattern (harmonic balance's
/// linear network per harmonic): the same factorisation and solves as
/// [`RealLu`]'s sparse one, with complex values.
pub(crate) struct ComplexSparseLu(SparseState<faer::c64>);

impl ComplexSparseLu {
    /// The symbolic analysis of `pattern` (`None` when faer refuses it).
    pub(crate) fn new(pattern: Pattern) -> Option<Self> {
        SparseState::new(pattern).ok().map(ComplexSparseLu)
    }

    /// The pattern it factors.
    pub(crate) fn pattern(&self) -> &Pattern {
        &self.0.pattern
    }

    /// Factor the matrix with `vals` at the pattern's positions. On a zero
    /// pivot (structural, or numerical: a probe solve that blows up, as in
    /// [`RealLu`]) returns the column that has none.
    pub(crate) fn factor(&mut self, vals: &[faer::c64]) -> Result<(), usize> {
        self.0.factored = false;
        if vals.len() != self.0.pattern.len() {
            return Err(0);
        }
        let amax = vals.iter().fold(0.0f64, |m, v| m.max(v.norm()));
        if !(amax > 0.0 && amax.is_finite()) {
            return Err(0);
        }
        self.0.factor(vals, amax)
    }

    /// Stored entries of the factors (one complex multiply-add each per solve).
    pub(crate) fn factor_len(&self) -> usize {
        self.0.view().map_or(0, |v| v.l_val.len() + v.u_val.len())
    }

    /// Solve `A x = b` in place with the last factors (nothing before them).
    pub(crate) fn solve(&self, b: &mut [faer::c64]) {
        if let Some(v) = self.0.view().filter(|v| v.n == b.len()) {
            v.solve_columns(b);
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
    /// An empty matrix to be filled row by row ([`Csr::push`], [`Csr::end_row`]).
    pub(crate) fn with_rows(n: usize) -> Self {
        let mut ptr = Vec::with_capacity(n + 1);
        ptr.push(0);
        Csr {
            ptr,
            ..Csr::default()
        }
    }

    /// Add `v` at column `c` of the current row, if nonzero.
    pub(crate) fn push(&mut self, c: usize, v: f64) {
        if v != 0.0 {
            self.col.push(c);
            self.val.push(v);
        }
    }

    /// Close the current row.
    pub(crate) fn end_row(&mut self) {
        self.ptr.push(self.col.len());
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
pub(crate) mod tests {
    use super::*;

    /// Fixed-seed uniform numbers in [0, 1) (64-bit LCG, Knuth's MMIX
    /// constants, from memory); the one seeded generator of the crate's
    /// unit tests.
    pub(crate) fn uniform(mut seed: u64) -> impl FnMut() -> f64 {
        move || {
            seed = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (seed >> 11) as f64 / (1u64 << 53) as f64
        }
    }

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

    /// A seeded `n×n` nonsymmetric sparse matrix, row-major: a diagonal, a
    /// coupling to the next unknown and a far entry per row, every seventh
    /// diagonal small (so partial pivoting swaps rows).
    fn seeded_sparse(n: usize, next: &mut impl FnMut() -> f64) -> Vec<f64> {
        let mut a = vec![0.0; n * n];
        for i in 0..n {
            a[i * n + i] = if i % 7 == 3 { 1e-3 } else { 4.0 + next() };
            a[i * n + (i + 1) % n] = 5.0 * (next() - 0.5);
            a[((i + 1) % n) * n + i] = 3.0 + next();
            let j = (i * 13 + 5) % n;
            a[i * n + j] += next() - 0.5;
        }
        a
    }

    #[test]
    fn sparse_factors_solve_a_seeded_system_on_its_pattern() {
        // A 40×40 nonsymmetric sparse matrix (a diagonal, a coupling to the
        // next unknown and a seeded far entry per row; every seventh
        // diagonal small, so partial pivoting swaps rows) with a known solution,
        // factored on its pattern: the solve, the kept factors and a block
        // of three columns all give it back to 1e-12 (the matrix is well
        // conditioned, so rounding leaves about 1e-14; common practice).
        let n = 40;
        let a = seeded_sparse(n, &mut uniform(7));
        let pattern = Pattern::of_dense(&a, n);
        let vals: Vec<f64> = pattern.entries().map(|(_, r, c)| a[r * n + c]).collect();
        let mut lu = RealLu::new(LinearSolver::Sparse, n);
        lu.factor_pattern(&pattern, &vals).expect("factors");
        let xs: Vec<Vec<f64>> = (0..3)
            .map(|k| (0..n).map(|i| ((i * (k + 2)) % 9) as f64 - 4.0).collect())
            .collect();
        let rhs = |x: &[f64]| -> Vec<f64> {
            (0..n)
                .map(|r| (0..n).map(|c| a[r * n + c] * x[c]).sum())
                .collect()
        };
        let close = |got: &[f64], want: &[f64]| {
            got.iter()
                .zip(want)
                .all(|(g, w)| (g - w).abs() <= 1e-12 * (1.0 + w.abs()))
        };
        let mut b = rhs(&xs[0]);
        lu.solve(&mut b);
        assert!(close(&b, &xs[0]), "{b:?}");
        let kept = lu.snapshot().expect("kept factors");
        let mut block: Vec<f64> = xs.iter().flat_map(|x| rhs(x)).collect();
        kept.solve_columns(&mut block, n);
        for (k, x) in xs.iter().enumerate() {
            assert!(close(&block[k * n..(k + 1) * n], x), "column {k}");
        }
        // the same matrix row-major through `factor`
        let mut dense_in = RealLu::new(LinearSolver::Sparse, n);
        dense_in.factor(&a).expect("factors");
        let mut b = rhs(&xs[1]);
        dense_in.solve(&mut b);
        assert!(close(&b, &xs[1]));
    }

    #[test]
    fn a_refactorisation_on_the_kept_orders_solves_and_a_lost_pivot_starts_afresh() {
        // The seeded 40×40 system of the test above, its values then moved
        // by up to ±20 % on the same pattern, factored twenty times: each
        // refactored on the first factorisation's row and column orders
        // (no second partial-pivoting factorisation), each solve within
        // 1e-12 as above. Then a matrix whose old pivots become zero
        // (every diagonal of the rows partial pivoting chose first
        // zeroed): the kept orders refuse it, and a fresh factorisation
        // with partial pivoting solves it.
        let n = 40;
        let mut next = uniform(11);
        let a = seeded_sparse(n, &mut next);
        let pattern = Pattern::of_dense(&a, n);
        let x: Vec<f64> = (0..n).map(|i| (i % 5) as f64 - 2.0).collect();
        let mut lu = RealLu::new(LinearSolver::Sparse, n);
        let solve_moved = |lu: &mut RealLu, m: &[f64]| -> f64 {
            let vals: Vec<f64> = pattern.entries().map(|(_, r, c)| m[r * n + c]).collect();
            lu.factor_pattern(&pattern, &vals).expect("factors");
            let mut b: Vec<f64> = (0..n)
                .map(|r| (0..n).map(|c| m[r * n + c] * x[c]).sum())
                .collect();
            lu.solve(&mut b);
            b.iter()
                .zip(&x)
                .fold(0.0f64, |w, (g, e)| w.max((g - e).abs() / (1.0 + e.abs())))
        };
        assert!(solve_moved(&mut lu, &a) <= 1e-12);
        let fresh = |lu: &RealLu| lu.sparse.as_ref().map_or(0, |s| s.fresh);
        assert_eq!(fresh(&lu), 1);
        for _ in 0..20 {
            let m: Vec<f64> = a.iter().map(|v| v * (1.0 + 0.4 * (next() - 0.5))).collect();
            let err = solve_moved(&mut lu, &m);
            assert!(err <= 1e-12, "refactored solve off by {err:e}");
        }
        assert_eq!(
            fresh(&lu),
            1,
            "every moved matrix refactored on the kept orders"
        );
        // zero the pivots the kept orders rely on: the diagonal of U
        let pivots: Vec<(usize, usize)> = {
            let s = lu.sparse.as_ref().expect("sparse");
            (0..n).map(|j| (s.row_fwd[j], s.col_fwd[j])).collect()
        };
        let mut m = a.clone();
        for &(r, c) in pivots.iter().step_by(3) {
            m[r * n + c] = 0.0;
        }
        let err = solve_moved(&mut lu, &m);
        assert!(err <= 1e-10, "fresh solve off by {err:e}");
        assert_eq!(
            fresh(&lu),
            2,
            "the lost pivots sent it back to partial pivoting"
        );
    }

    #[test]
    fn complex_sparse_factors_solve_a_seeded_system_and_report_a_missing_pivot() {
        // A 30×30 complex sparse matrix (diagonal, a coupling to the next
        // unknown both ways, a seeded far entry per row; every fifth
        // diagonal small, so partial pivoting swaps rows) with a known
        // solution: the solve gives it back to 1e-12 (well conditioned,
        // rounding leaves about 1e-14; common practice), refactored with
        // new values on the same pattern too; a matrix with an empty
        // column is refused at that column.
        let n = 30;
        let mut unit = uniform(11);
        let mut next = move || unit() - 0.5;
        let mut entries: Vec<(usize, usize, faer::c64)> = Vec::new();
        for i in 0..n {
            let d = if i % 5 == 2 { 1e-3 } else { 4.0 + next() };
            entries.push((i, i, faer::c64::new(d, next())));
            entries.push((i, (i + 1) % n, faer::c64::new(3.0 * next(), next())));
            entries.push(((i + 1) % n, i, faer::c64::new(3.0 + next(), 0.5)));
            entries.push((i, (i * 7 + 4) % n, faer::c64::new(next(), next())));
        }
        let pattern = Pattern::from_positions(n, entries.iter().map(|&(r, c, _)| (r, c)).collect());
        let mut lu = ComplexSparseLu::new(pattern.clone()).expect("symbolic");
        let x: Vec<faer::c64> = (0..n)
            .map(|i| faer::c64::new((i % 7) as f64 - 3.0, (i % 3) as f64))
            .collect();
        for scale in [1.0, 2.5] {
            let mut vals = vec![faer::c64::new(0.0, 0.0); pattern.len()];
            let mut b = vec![faer::c64::new(0.0, 0.0); n];
            for &(r, c, v) in &entries {
                let v = if r == c { v * scale } else { v };
                vals[pattern.find(r, c).expect("stored")] += v;
                b[r] += v * x[c];
            }
            lu.factor(&vals).expect("factors");
            assert!(lu.factor_len() >= pattern.len() - n);
            lu.solve(&mut b);
            for (g, w) in b.iter().zip(&x) {
                assert!((g - w).norm() <= 1e-12 * (1.0 + w.norm()), "{g} vs {w}");
            }
        }
        // column 3 empty: only the diagonal is stored there, set to zero
        let mut vals = vec![faer::c64::new(0.0, 0.0); pattern.len()];
        for &(r, c, v) in &entries {
            if c != 3 {
                vals[pattern.find(r, c).expect("stored")] += v;
            }
        }
        assert!(lu.factor(&vals).is_err());
        assert_eq!(lu.factor_len(), 0);
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

    #[test]
    fn small_and_blocked_dense_factors_solve_seeded_systems() {
        // Orders either side of SMALL_DENSE_BELOW (nalgebra's LU below it,
        // faer's from it), fixed-seed nonsymmetric matrices, three
        // right-hand sides through `solve_columns` and the kept factors.
        // Partial pivoting is backward stable: the residual is bounded by a
        // small multiple of n·ε·‖A‖·‖x‖ (Golub & Van Loan, ch. 3.4, from
        // memory); 1e-12 relative covers n ≤ 40 with a wide margin.
        let mut unit = uniform(0x5eed);
        let mut next = move || 2.0 * unit() - 1.0;
        for n in [3usize, 17, SMALL_DENSE_BELOW - 1, SMALL_DENSE_BELOW, 40] {
            let a: Vec<f64> = (0..n * n).map(|_| next()).collect();
            let xs: Vec<Vec<f64>> = (0..3).map(|_| (0..n).map(|_| next()).collect()).collect();
            let mut block: Vec<f64> = xs
                .iter()
                .flat_map(|x| (0..n).map(|r| (0..n).map(|c| a[r * n + c] * x[c]).sum::<f64>()))
                .collect();
            let mut lu = RealLu::new(LinearSolver::Dense, n);
            lu.factor(&a).expect("a random matrix is regular");
            let kept = lu.snapshot().expect("kept factors");
            let mut again = block.clone();
            lu.solve_columns(&mut block);
            kept.solve_columns(&mut again, n);
            let amax = a.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            for (k, x) in xs.iter().enumerate() {
                let xmax = x.iter().fold(0.0f64, |m, v| m.max(v.abs()));
                for r in 0..n {
                    let ax: f64 = (0..n).map(|c| a[r * n + c] * block[k * n + c]).sum();
                    let b: f64 = (0..n).map(|c| a[r * n + c] * x[c]).sum();
                    assert!(
                        (ax - b).abs() <= 1e-12 * amax * xmax * n as f64,
                        "n = {n}, column {k}, row {r}: residual {}",
                        (ax - b).abs()
                    );
                    assert_eq!(block[k * n + r], again[k * n + r], "n = {n}: kept factors");
                }
            }
            // a column of zeros has no pivot: reported by its index
            let mut z = a.clone();
            let dead = n / 2;
            for r in 0..n {
                z[r * n + dead] = 0.0;
            }
            assert_eq!(lu.factor(&z), Err(dead), "n = {n}");
        }
    }
}
