//! Sparse assembly of the Newton systems on a fixed pattern.
//!
//! A device adds its entries of `G = ∂i/∂x` and `C = ∂q/∂x` one
//! `(row, column, value)` at a time through the [`Stamp`] contract.
//! [`SparseStamp`] keeps them in compressed-column storage on one
//! [`Pattern`]: the union of the positions `G` and `C` were ever stamped at
//! and the diagonal, each position held once, with `G`'s and `C`'s values in
//! two arrays in the pattern's order. The Newton Jacobian `G + αC` is then one
//! pass over the stored entries, already in the layout the sparse LU factors
//! ([`crate::linalg::RealLu::factor_pattern`]), and every other use of the
//! matrices (the residual test, the rows that carry charge, the sparse
//! products of shooting) costs the number of stored entries, not `n²`.
//!
//! A position is found through a table per row (its columns, sorted, and
//! their places in the storage), made once per pattern. An entry outside the
//! pattern (the first evaluation, or a device that skipped an entry while it
//! was exactly zero) is kept aside during the evaluation and the pattern
//! grows after it ([`SparseStamp::eval`]): the values are exact either way,
//! and the LU redoes its symbolic analysis once for the larger pattern.

use crate::linalg::Csr;
use tankwave_devices::{DeviceSet, EvalCtx, EvalInfo, Filter, Idx, Stamp};

/// The positions of a sparse `n×n` matrix, in compressed columns (rows
/// sorted within each column), with a table per row to find a position.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(crate) struct Pattern {
    n: usize,
    /// Column `c` holds the positions `col_ptr[c]..col_ptr[c + 1]`.
    col_ptr: Vec<usize>,
    /// Row of every position.
    row_idx: Vec<usize>,
    /// Row `r`'s entries are `row_ptr[r]..row_ptr[r + 1]` of `row_col`/`row_pos`.
    row_ptr: Vec<usize>,
    /// Their columns, sorted within each row.
    row_col: Vec<usize>,
    /// Their positions in the column storage.
    row_pos: Vec<usize>,
    /// Position of every diagonal entry.
    diag: Vec<usize>,
}

impl Pattern {
    /// The pattern of the given `(row, column)` positions and the diagonal
    /// (every index below `n`; duplicates are held once).
    pub(crate) fn from_positions(n: usize, mut rc: Vec<(usize, usize)>) -> Self {
        rc.extend((0..n).map(|k| (k, k)));
        // column-major order
        rc.sort_unstable_by_key(|&(r, c)| (c, r));
        rc.dedup();
        let nnz = rc.len();
        let mut col_ptr = vec![0usize; n + 1];
        let mut row_idx = Vec::with_capacity(nnz);
        for &(r, c) in &rc {
            col_ptr[c + 1] += 1;
            row_idx.push(r);
        }
        for c in 0..n {
            col_ptr[c + 1] += col_ptr[c];
        }
        // the row table: a counting sort of the positions by row, which keeps
        // the columns of a row in ascending order
        let mut row_ptr = vec![0usize; n + 1];
        for &r in &row_idx {
            row_ptr[r + 1] += 1;
        }
        for r in 0..n {
            row_ptr[r + 1] += row_ptr[r];
        }
        let mut next = row_ptr.clone();
        let mut row_col = vec![0usize; nnz];
        let mut row_pos = vec![0usize; nnz];
        let mut diag = vec![0usize; n];
        for c in 0..n {
            for p in col_ptr[c]..col_ptr[c + 1] {
                let r = row_idx[p];
                row_col[next[r]] = c;
                row_pos[next[r]] = p;
                next[r] += 1;
                if r == c {
                    diag[c] = p;
                }
            }
        }
        Self {
            n,
            col_ptr,
            row_idx,
            row_ptr,
            row_col,
            row_pos,
            diag,
        }
    }

    /// The pattern of the nonzeros of the row-major `n×n` matrix `a` and the diagonal.
    pub(crate) fn of_dense(a: &[f64], n: usize) -> Self {
        let rc = (0..n)
            .flat_map(|r| (0..n).map(move |c| (r, c)))
            .filter(|&(r, c)| a[r * n + c] != 0.0)
            .collect();
        Self::from_positions(n, rc)
    }

    /// Order of the matrix.
    pub(crate) fn order(&self) -> usize {
        self.n
    }

    /// Number of stored positions.
    pub(crate) fn len(&self) -> usize {
        self.row_idx.len()
    }

    /// Column pointers of the compressed-column storage.
    pub(crate) fn col_ptr(&self) -> &[usize] {
        &self.col_ptr
    }

    /// Row of every stored position.
    pub(crate) fn row_idx(&self) -> &[usize] {
        &self.row_idx
    }

    /// Position of diagonal entry `k`.
    pub(crate) fn diag(&self, k: usize) -> usize {
        self.diag[k]
    }

    /// Position of `(r, c)`, if stored.
    pub(crate) fn find(&self, r: usize, c: usize) -> Option<usize> {
        let (a, b) = (*self.row_ptr.get(r)?, *self.row_ptr.get(r + 1)?);
        let k = self.row_col[a..b].binary_search(&c).ok()?;
        Some(self.row_pos[a + k])
    }

    /// The stored entries of row `r`: (column, position), columns ascending.
    pub(crate) fn row(&self, r: usize) -> impl Iterator<Item = (usize, usize)> + '_ {
        let (a, b) = (self.row_ptr[r], self.row_ptr[r + 1]);
        self.row_col[a..b]
            .iter()
            .copied()
            .zip(self.row_pos[a..b].iter().copied())
    }

    /// Every stored position with its (row, column), column by column.
    pub(crate) fn entries(&self) -> impl Iterator<Item = (usize, usize, usize)> + '_ {
        (0..self.n).flat_map(move |c| {
            (self.col_ptr[c]..self.col_ptr[c + 1]).map(move |p| (p, self.row_idx[p], c))
        })
    }

    /// The row-major dense `n×n` matrix with `vals` at the stored positions.
    pub(crate) fn to_dense(&self, vals: &[f64]) -> Vec<f64> {
        let n = self.n;
        let mut a = vec![0.0; n * n];
        for (p, r, c) in self.entries() {
            a[r * n + c] = vals[p];
        }
        a
    }

    /// The nonzeros of `vals` in compressed rows, columns ascending, rows
    /// where `keep` is false left empty.
    pub(crate) fn to_csr(&self, vals: &[f64], keep: impl Fn(usize) -> bool) -> Csr {
        let mut m = Csr::with_rows(self.n);
        for r in 0..self.n {
            if keep(r) {
                for (c, p) in self.row(r) {
                    m.push(c, vals[p]);
                }
            }
            m.end_row();
        }
        m
    }
}

/// An entry stamped outside the pattern: row, column, value, of `C` (else `G`).
type Extra = (usize, usize, f64, bool);

/// A [`Stamp`] that keeps `i` and `q` densely (length `n`) and `G`, `C` on a
/// [`Pattern`] that grows to hold every position stamped (module overview).
#[derive(Debug, Clone)]
pub(crate) struct SparseStamp {
    /// Order of the system.
    pub(crate) n: usize,
    /// Resistive currents.
    pub(crate) i: Vec<f64>,
    /// Charges / fluxes.
    pub(crate) q: Vec<f64>,
    /// `∂i/∂x` at the pattern's positions.
    pub(crate) g: Vec<f64>,
    /// `∂q/∂x` at the pattern's positions.
    pub(crate) c: Vec<f64>,
    pat: Pattern,
    extra: Vec<Extra>,
    /// The positions found by the last evaluation of each [`Filter`]
    /// ([`Trace`]), for `G` and for `C`.
    traces: [[Trace; 2]; 3],
    /// The traces the current evaluation reads and records.
    active: usize,
}

/// The positions one evaluation's stamp calls found, in call order. The
/// devices stamp in the same order at every evaluation, so the next
/// evaluation compares each call's (row, column) with the one recorded at
/// its cursor and, when they agree, takes the recorded position without a
/// search; from the first call that differs it searches and records anew.
/// A recorded position is only used for the very (row, column) it was
/// found for, on the same pattern (the traces are emptied when the pattern
/// grows), so it is always the position [`Pattern::find`] would give.
#[derive(Debug, Clone, Default)]
struct Trace {
    calls: Vec<(usize, usize, usize)>,
    cursor: usize,
}

impl Trace {
    /// The position of `(r, c)` in `pat`, from the trace where it agrees.
    #[inline]
    fn position(&mut self, pat: &Pattern, r: usize, c: usize) -> Option<usize> {
        if let Some(&(tr, tc, p)) = self.calls.get(self.cursor) {
            if tr == r && tc == c {
                self.cursor += 1;
                return Some(p);
            }
        }
        let p = pat.find(r, c)?;
        self.calls.truncate(self.cursor);
        self.calls.push((r, c, p));
        self.cursor += 1;
        Some(p)
    }
}

impl SparseStamp {
    /// An all-zero stamp of order `n` on the diagonal pattern.
    pub(crate) fn new(n: usize) -> Self {
        Self {
            n,
            i: vec![0.0; n],
            q: vec![0.0; n],
            g: vec![0.0; n],
            c: vec![0.0; n],
            pat: Pattern::from_positions(n, Vec::new()),
            extra: Vec::new(),
            traces: Default::default(),
            active: 0,
        }
    }

    /// The pattern `G` and `C` are stored on.
    pub(crate) fn pattern(&self) -> &Pattern {
        &self.pat
    }

    /// Reset every value to zero (the pattern stays).
    pub(crate) fn clear(&mut self) {
        self.i.fill(0.0);
        self.q.fill(0.0);
        self.g.fill(0.0);
        self.c.fill(0.0);
        self.extra.clear();
        for t in self.traces.iter_mut().flatten() {
            t.cursor = 0;
        }
    }

    /// Evaluate the devices of `devices` (as [`DeviceSet::eval_all`]) into
    /// a cleared stamp, growing the pattern when an entry fell outside it.
    pub(crate) fn eval(
        &mut self,
        devices: &DeviceSet,
        x: &[f64],
        ctx: &EvalCtx,
        state: &mut [f64],
        filter: Filter,
    ) -> EvalInfo {
        self.clear();
        self.active = match filter {
            Filter::All => 0,
            Filter::Linear => 1,
            Filter::Nonlinear => 2,
        };
        let info = devices.eval_all(x, ctx, state, self, filter);
        self.grow();
        info
    }

    /// Take the entries kept aside into a larger pattern.
    fn grow(&mut self) {
        if self.extra.is_empty() {
            return;
        }
        let extra = std::mem::take(&mut self.extra);
        // positions move with the pattern: every trace is searched anew
        self.traces = Default::default();
        let mut rc: Vec<(usize, usize)> = self.pat.entries().map(|(_, r, c)| (r, c)).collect();
        rc.extend(extra.iter().map(|&(r, c, _, _)| (r, c)));
        let pat = Pattern::from_positions(self.n, rc);
        let mut g = vec![0.0; pat.len()];
        let mut c = vec![0.0; pat.len()];
        for (p, r, col) in self.pat.entries() {
            // every old position is in the new pattern
            if let Some(k) = pat.find(r, col) {
                g[k] = self.g[p];
                c[k] = self.c[p];
            }
        }
        // in the order they were stamped, as a dense stamp would sum them
        for (r, col, v, is_c) in extra {
            if let Some(k) = pat.find(r, col) {
                if is_c {
                    c[k] += v;
                } else {
                    g[k] += v;
                }
            }
        }
        self.pat = pat;
        self.g = g;
        self.c = c;
    }

    /// `G[r][c]` (0 where not stored).
    #[cfg(test)]
    pub(crate) fn g_at(&self, r: usize, c: usize) -> f64 {
        self.pat.find(r, c).map_or(0.0, |p| self.g[p])
    }

    /// `C[r][c]` (0 where not stored).
    #[cfg(test)]
    pub(crate) fn c_at(&self, r: usize, c: usize) -> f64 {
        self.pat.find(r, c).map_or(0.0, |p| self.c[p])
    }

    /// Rows whose charge depends on some unknown (a nonzero entry in that row of `C`).
    pub(crate) fn charged_rows(&self) -> Vec<bool> {
        let mut ch = vec![false; self.n];
        for (p, &r) in self.pat.row_idx().iter().enumerate() {
            if self.c[p] != 0.0 {
                ch[r] = true;
            }
        }
        ch
    }
}

impl Stamp for SparseStamp {
    fn add_i(&mut self, row: Idx, v: f64) {
        if let Some(r) = row {
            self.i[r] += v;
        }
    }
    fn add_q(&mut self, row: Idx, v: f64) {
        if let Some(r) = row {
            self.q[r] += v;
        }
    }
    fn add_g(&mut self, row: Idx, col: Idx, v: f64) {
        if let (Some(r), Some(c)) = (row, col) {
            match self.traces[self.active][0].position(&self.pat, r, c) {
                Some(p) => self.g[p] += v,
                None => self.extra.push((r, c, v, false)),
            }
        }
    }
    fn add_c(&mut self, row: Idx, col: Idx, v: f64) {
        if let (Some(r), Some(c)) = (row, col) {
            match self.traces[self.active][1].position(&self.pat, r, c) {
                Some(p) => self.c[p] += v,
                None => self.extra.push((r, c, v, true)),
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use tankwave_devices::DenseStamp;

    /// Stamp the same made-up entries (repeated positions, ground, a late
    /// entry outside the first pattern) into a dense and a sparse stamp.
    fn stamp_both(calls: &[(Idx, Idx, f64, bool)], d: &mut DenseStamp, s: &mut SparseStamp) {
        d.clear();
        s.clear();
        for &(r, c, v, is_c) in calls {
            if is_c {
                d.add_c(r, c, v);
                s.add_c(r, c, v);
            } else {
                d.add_g(r, c, v);
                s.add_g(r, c, v);
            }
            d.add_i(r, v);
            s.add_i(r, v);
        }
        s.grow();
    }

    #[test]
    fn the_sparse_stamp_holds_what_a_dense_one_does() {
        // The sparse stamp must hold, at every position, exactly the sum the
        // dense stamp of the device contract holds (the same additions in the
        // same order, so equal to the last bit), whether the position was in
        // the pattern before the evaluation or added after it, and whether
        // it came from the trace of the evaluation before or a search.
        let n = 4;
        let first = [
            (Some(0), Some(0), 1.5, false),
            (Some(0), Some(2), -0.25, false),
            (Some(0), Some(2), -0.5, false),
            (Some(3), Some(1), 2e-12, true),
            (None, Some(1), 7.0, false),
            (Some(2), None, 7.0, true),
            (Some(1), Some(1), 1e-9, true),
        ];
        let mut d = DenseStamp::new(n);
        let mut s = SparseStamp::new(n);
        stamp_both(&first, &mut d, &mut s);
        let second = [
            (Some(0), Some(2), 0.125, false),
            (Some(2), Some(3), 3.0, false), // outside the first pattern
            (Some(3), Some(1), 1e-12, true),
            (Some(2), Some(3), -1.0, false),
        ];
        // the first calls again in another order: the recorded positions
        // (Trace) are taken only where the call matches
        let mut shuffled = first;
        shuffled.swap(0, 3);
        shuffled.swap(1, 6);
        let order = [
            &first[..],
            &first[..],
            &shuffled[..],
            &first[..],
            &second[..],
            &second[..],
            &shuffled[..],
            &first[..],
        ];
        for calls in order {
            stamp_both(calls, &mut d, &mut s);
            for r in 0..n {
                assert_eq!(s.i[r], d.i[r]);
                for c in 0..n {
                    assert_eq!(s.g_at(r, c), d.g_at(r, c), "G[{r}][{c}]");
                    assert_eq!(s.c_at(r, c), d.c_at(r, c), "C[{r}][{c}]");
                }
            }
            assert_eq!(s.pattern().to_dense(&s.g), d.g);
            assert_eq!(s.pattern().to_dense(&s.c), d.c);
        }
        // the pattern kept every position once: 4 diagonal, (0,2), (3,1), (2,3)
        assert_eq!(s.pattern().len(), 7);
        assert_eq!(s.charged_rows(), vec![false, true, false, true]);
    }

    #[test]
    fn a_pattern_finds_its_positions_in_column_order() {
        let a = [
            1.0, 0.0, 2.0, //
            0.0, 0.0, 0.0, //
            3.0, 4.0, 0.0,
        ];
        let p = Pattern::of_dense(&a, 3);
        // (0,0) (2,0) | (1,1) (2,1) | (0,2) (2,2)
        assert_eq!(p.col_ptr(), &[0, 2, 4, 6]);
        assert_eq!(p.row_idx(), &[0, 2, 1, 2, 0, 2]);
        assert_eq!(p.find(2, 1), Some(3));
        assert_eq!(p.find(1, 0), None);
        assert_eq!(p.diag(1), 2);
        let vals: Vec<f64> = p.entries().map(|(_, r, c)| a[r * 3 + c]).collect();
        assert_eq!(p.to_dense(&vals), a.to_vec());
    }
}
