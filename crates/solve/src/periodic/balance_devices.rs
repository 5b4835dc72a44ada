//! The nonlinear devices' own coupling between harmonics, added to the
//! block-diagonal preconditioner of the GMRES Newton step.
//!
//! The block-diagonal preconditioner `P` (per harmonic `k` the linear
//! network plus the period average `Ĝ₀ + jω_k Ĉ₀` of the devices) leaves
//! out everything a device does between harmonics. For a transistor that
//! conducts for a third of the cycle that is most of it: `G(t)` and `C(t)`
//! are pulses, and `Ĝ₁`, `Ĝ₂`, ... are as large as `Ĝ₀`. Here that part is
//! put back, per group of ports that the devices couple (one transistor's
//! terminals and internal nodes, found from the devices' pattern):
//!
//! * `E_g`: the group's conversion-matrix terms (the Newton Jacobian's
//!   terms from its devices' `Ĝ_{k∓l}`, `Ĉ_{k∓l}`, in the real layout of
//!   the step) less the averages `P` already holds, over every harmonic but
//!   only within a band `|m| ≤ b` of the coefficient index `m`, each
//!   weighted by `1 − |m|/(b+1)`. The weights are those of a Fejér
//!   (triangular) window: the coefficients kept are those of `G(t)`, `C(t)`
//!   smoothed by a non-negative kernel, so a conductance that is never
//!   negative stays so (A. Zygmund, "Trigonometric Series", Cambridge
//!   University Press, ch. III, from memory). Cut off without the weights,
//!   a band of 2 to 8 made GMRES slower than no band at all on a class-C
//!   stage (docs/performance.md);
//! * `W_g = R_g P⁻¹ R_gᵀ`: what the group's ports see of `P⁻¹`, the rest of
//!   the circuit (the whole linear network, the other devices by their
//!   averages) — block diagonal over the harmonics, since `P` is;
//! * the preconditioner `M⁻¹ r = y − P⁻¹ Σ_g R_gᵀ u_g`, `y = P⁻¹ r`,
//!   `(I + E_g W_g) u_g = E_g R_g y`: the Sherman–Morrison–Woodbury form
//!   of `(P + R_gᵀ E_g R_g)⁻¹` (W. W. Hager, "Updating the inverse of a
//!   matrix", SIAM Review 31(2), 1989), applied to each group as if it were
//!   the only one.
//!
//! With one group and a band `b ≥ 2K` without weights this would be the
//! exact inverse of the Newton Jacobian; what it leaves out is the
//! coefficients past the band and how one group's departure from its
//! average reaches another through the network. Ordered by harmonic,
//! `I + E_g W_g` is a band matrix (half-width `(2b+2)·p_g`), factored once
//! per Newton step by a band LU with partial pivoting (G. H. Golub,
//! C. F. Van Loan, "Matrix Computations", 4th ed., §4.3, from memory):
//! linear in `K` and in the number of devices. Groups whose band storage
//! would pass [`MAX_STORED`] entries in all get no block.

use super::C64;

/// Most band entries stored over every group (`E_g` and the factors of
/// `I + E_g W_g`, 8 bytes each: 256 MB); groups past it get no block.
pub(super) const MAX_STORED: usize = 32 << 20;

/// The devices' conversion coefficients the blocks are built from (the
/// fields of the step's nonlinear evaluation).
pub(super) struct Conversion<'a> {
    /// The (row, column) port pairs the devices stamp.
    pub(super) pattern: &'a [(usize, usize)],
    /// `[m][e]`: coefficient `m = 0..=2K` of `G(t)` and of `C(t)` at pair `e`.
    pub(super) g: &'a [Vec<C64>],
    pub(super) c: &'a [Vec<C64>],
    /// Angular frequency of each harmonic slot `k = 0..=K`.
    pub(super) freqs: &'a [f64],
    /// The band `b`: coefficients `|m| ≤ b` are kept, weighted.
    pub(super) band: usize,
}

impl Conversion<'_> {
    /// Coefficient `m` (any sign: `X_{−m} = conj X_m`) of `src` at pair
    /// `e`, weighted by `1 − |m|/(b+1)`, zero past the band.
    fn coef(&self, src: &[Vec<C64>], m: isize, e: usize) -> C64 {
        let a = m.unsigned_abs();
        if a > self.band {
            return C64::default();
        }
        let v = src
            .get(a)
            .and_then(|row| row.get(e))
            .copied()
            .unwrap_or_default();
        let v = if m >= 0 { v } else { v.conj() };
        v * (1.0 - a as f64 / (self.band as f64 + 1.0))
    }

    /// The real-layout Jacobian terms of pair `e` from column harmonic `l`
    /// into row harmonic `k` (`∂R_k/∂Re X_l`, `∂R_k/∂Im X_l`; the second
    /// `None` at `l = 0`) from the weighted band, less the period average
    /// on the diagonal `k = l` (what the block-diagonal preconditioner
    /// holds, unweighted: the weight of `m = 0` is 1).
    fn terms(&self, e: usize, k: usize, l: usize) -> (C64, Option<C64>) {
        let j = C64::new(0.0, 1.0);
        let w = self.freqs.get(k).copied().unwrap_or(0.0);
        let avg = self.coef(self.g, 0, e) + j * w * self.coef(self.c, 0, e);
        if l == 0 {
            let da = self.coef(self.g, k as isize, e) + j * w * self.coef(self.c, k as isize, e);
            return (if k == 0 { da - avg } else { da }, None);
        }
        let (km, kp) = (k as isize - l as isize, (k + l) as isize);
        let (gm, gp) = (self.coef(self.g, km, e), self.coef(self.g, kp, e));
        let (cm, cp) = (self.coef(self.c, km, e), self.coef(self.c, kp, e));
        let mut da = gm + gp + j * w * (cm + cp);
        let mut db = j * (gm - gp) - w * (cm - cp);
        if k == l {
            da -= avg;
            db -= j * avg;
        }
        (da, Some(db))
    }
}

/// Position of (harmonic `k`, real part or not, port `a`) in the real
/// layout of `p` ports: `X₀` of every port, then `Re X_k`, `Im X_k`.
fn slot(p: usize, k: usize, imag: bool, a: usize) -> usize {
    if k == 0 {
        a
    } else if imag {
        2 * k * p + a
    } else {
        (2 * k - 1) * p + a
    }
}

/// A real band matrix of order `n` with `kl` diagonals below and `ku`
/// above the main one, stored by rows (row `i` holds the columns
/// `i − kl ..= i + ku + extra`, `extra` the room the LU's row interchanges
/// need, `kl` when factored, 0 otherwise).
#[derive(Debug, Clone)]
struct Band<T = f64> {
    n: usize,
    kl: usize,
    /// Width of a stored row.
    width: usize,
    a: Vec<T>,
}

impl<T: Copy + Into<f64>> Band<T> {
    /// Row `i` over the columns `cols`, which must lie in its band.
    fn row(&self, i: usize, cols: std::ops::Range<usize>) -> &[T] {
        let base = i * self.width + self.kl - i;
        &self.a[base + cols.start..base + cols.end]
    }

    /// Columns of row `i` inside the band (`ku + extra` to the right).
    fn cols(&self, i: usize) -> std::ops::Range<usize> {
        i.saturating_sub(self.kl)..(i + self.width - self.kl).min(self.n)
    }

    /// `out = A x`.
    fn apply(&self, x: &[f64], out: &mut Vec<f64>) {
        out.clear();
        out.extend((0..self.n).map(|i| {
            let c = self.cols(i);
            dot(self.row(i, c.clone()), &x[c])
        }));
    }
}

impl Band {
    fn zeros(n: usize, kl: usize, ku: usize, extra: usize) -> Self {
        let width = kl + ku + extra + 1;
        Self {
            n,
            kl,
            width,
            a: vec![0.0; n * width],
        }
    }

    /// Storage position of `(i, j)`, if inside the stored band.
    fn at(&self, i: usize, j: usize) -> Option<usize> {
        let d = (j + self.kl).checked_sub(i)?;
        (d < self.width && i < self.n && j < self.n).then_some(i * self.width + d)
    }

    fn add(&mut self, i: usize, j: usize, v: f64) {
        if let Some(q) = self.at(i, j) {
            self.a[q] += v;
        }
    }

    fn get(&self, i: usize, j: usize) -> f64 {
        self.at(i, j).map_or(0.0, |q| self.a[q])
    }
}

/// `Σ a_i b_i` over the shorter of the two, in four independent sums
/// (one chain of additions waits on each addition's latency; measured
/// with the band solves that dominate the preconditioner, docs/performance.md).
fn dot<T: Copy + Into<f64>>(a: &[T], b: &[f64]) -> f64 {
    let n = a.len().min(b.len());
    let (a, b) = (&a[..n], &b[..n]);
    let mut s = [0.0f64; 4];
    let (ca, cb) = (a.chunks_exact(4), b.chunks_exact(4));
    let (ra, rb) = (ca.remainder(), cb.remainder());
    for (x, y) in ca.zip(cb) {
        s[0] += x[0].into() * y[0];
        s[1] += x[1].into() * y[1];
        s[2] += x[2].into() * y[2];
        s[3] += x[3].into() * y[3];
    }
    let tail: f64 = ra.iter().zip(rb).map(|(x, y)| (*x).into() * y).sum();
    (s[0] + s[1]) + (s[2] + s[3]) + tail
}

/// The LU with partial pivoting of a [`Band`] (row interchanges and
/// eliminations kept step by step, as they happened).
#[derive(Debug, Clone)]
struct BandLu {
    /// `U` in the rows of the band (`kl + ku` above the diagonal).
    u: Band,
    /// `[k·kl + i]`: the multiplier of row `k + 1 + i` at step `k`.
    l: Vec<f64>,
    /// Row swapped with `k` at step `k`.
    piv: Vec<usize>,
}

impl BandLu {
    /// Factor `a` (stored with `extra = kl`); `None` on a pivot at or
    /// below 1e-14 of the largest entry (common practice) or a
    /// non-finite entry.
    fn factor(mut a: Band) -> Option<Self> {
        let (n, kl) = (a.n, a.kl);
        let amax = a.a.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        if !(amax.is_finite() && amax > 0.0) {
            return None;
        }
        let mut l = vec![0.0; n * kl];
        let mut piv = vec![0; n];
        for k in 0..n {
            let last = (k + kl).min(n - 1);
            let mut best = (k, a.get(k, k).abs());
            for i in k + 1..=last {
                let v = a.get(i, k).abs();
                if v > best.1 {
                    best = (i, v);
                }
            }
            if !(best.1 > 1e-14 * amax) {
                return None;
            }
            piv[k] = best.0;
            let (w, right) = (a.width, (k + a.width - a.kl).min(n));
            // row r over the columns k..right starts at r·w + k + kl − r
            let start = |r: usize| r * w + k + kl - r;
            let len = right - k;
            if best.0 != k {
                let (sk, sb) = (start(k), start(best.0));
                let (top, bottom) = a.a.split_at_mut(sb);
                top[sk..sk + len].swap_with_slice(&mut bottom[..len]);
            }
            let sk = start(k);
            let d = a.a[sk];
            for i in k + 1..=last {
                let si = start(i);
                let (top, bottom) = a.a.split_at_mut(si);
                let rk = &top[sk..sk + len];
                let ri = &mut bottom[..len];
                let m = ri[0] / d;
                ri[0] = 0.0;
                l[k * kl + (i - k - 1)] = m;
                if m != 0.0 {
                    for (x, y) in ri[1..].iter_mut().zip(&rk[1..]) {
                        *x -= m * y;
                    }
                }
            }
        }
        Some(Self { u: a, l, piv })
    }

    /// Solve `A x = b` in place.
    fn solve(&self, b: &mut [f64]) {
        let (n, kl) = (self.u.n, self.u.kl);
        if b.len() < n {
            return;
        }
        for k in 0..n {
            b.swap(k, self.piv[k]);
            let bk = b[k];
            if bk != 0.0 {
                for i in k + 1..=(k + kl).min(n.saturating_sub(1)) {
                    b[i] -= self.l[k * kl + (i - k - 1)] * bk;
                }
            }
        }
        for i in (0..n).rev() {
            let end = self.u.cols(i).end;
            let row = self.u.row(i, i..end);
            let s = b[i] - dot(&row[1..], &b[i + 1..end]);
            b[i] = s / row[0];
        }
    }
}

/// One group of ports the devices couple, and its factored block.
struct Group {
    /// `E_g` (group layout: the step's, restricted to the group's ports).
    e: Band,
    /// `[i]`: the position in the step's real layout of the group's slot `i`.
    index: Vec<usize>,
    /// LU of `I + E_g W_g`.
    lu: BandLu,
}

/// Position in the real layout of `p` ports of slot `i` of the group
/// layout of `ports`.
fn global(p: usize, ports: &[usize], i: usize) -> usize {
    let pg = ports.len().max(1);
    let (s, a) = (i / pg, i % pg);
    let k = s.div_ceil(2);
    slot(p, k, s > 0 && s % 2 == 0, ports[a])
}

/// The factored device blocks of one Newton step (module overview).
pub(super) struct DeviceBlocks {
    groups: Vec<Group>,
}

/// Groups of ports joined by the pairs of `pattern` (union–find), each
/// sorted, in the order of their smallest port; ports no pair touches are
/// left out.
fn port_groups(p: usize, pattern: &[(usize, usize)]) -> Vec<Vec<usize>> {
    let mut parent: Vec<usize> = (0..p).collect();
    fn root(parent: &mut [usize], mut a: usize) -> usize {
        while parent[a] != a {
            parent[a] = parent[parent[a]];
            a = parent[a];
        }
        a
    }
    let mut used = vec![false; p];
    for &(r, c) in pattern {
        if r >= p || c >= p {
            continue;
        }
        used[r] = true;
        used[c] = true;
        let (a, b) = (root(&mut parent, r), root(&mut parent, c));
        if a != b {
            parent[a.max(b)] = a.min(b);
        }
    }
    let mut index = vec![usize::MAX; p];
    let mut groups: Vec<Vec<usize>> = Vec::new();
    for a in 0..p {
        if !used[a] {
            continue;
        }
        let r = root(&mut parent, a);
        if index[r] == usize::MAX {
            index[r] = groups.len();
            groups.push(Vec::new());
        }
        groups[index[r]].push(a);
    }
    groups
}

impl DeviceBlocks {
    /// Build and factor the blocks of `conv` for `p` ports and `kmax`
    /// harmonics. `solve(k, z, scratch)` applies the block-diagonal
    /// preconditioner's harmonic `k` to the complex port vector `z` in
    /// place. `None` when the band is 0 (or `kmax` is), no group gets a
    /// block, or one of them has no LU (the caller keeps the block-diagonal
    /// preconditioner).
    pub(super) fn new(
        conv: &Conversion<'_>,
        p: usize,
        kmax: usize,
        solve: impl Fn(usize, &mut [C64], &mut Vec<C64>),
    ) -> Option<Self> {
        let b = conv.band.min(2 * kmax);
        if b == 0 {
            return None;
        }
        let mut local = vec![usize::MAX; p];
        let mut groups = Vec::new();
        let mut scratch = Vec::new();
        let mut z = vec![C64::default(); p];
        let mut stored = 0usize;
        for ports in port_groups(p, conv.pattern) {
            let pg = ports.len();
            let m = pg * (2 * kmax + 1);
            // harmonics k and l ≤ k + b lie within (2b + 2)·p_g of each other
            let hw = (2 * b + 2).saturating_mul(pg).min(m.saturating_sub(1));
            // E_g (2hw + 1 a row), I + E_g W_g with the room of the row
            // interchanges (3hw + 1), the multipliers (hw)
            let cost = m.saturating_mul(hw.saturating_mul(6).saturating_add(3));
            if stored.saturating_add(cost) > MAX_STORED {
                continue;
            }
            stored += cost;
            for (i, &a) in ports.iter().enumerate() {
                local[a] = i;
            }
            // E_g in the group's real layout
            let mut e = Band::zeros(m, hw, hw, 0);
            for (q, &(r, c)) in conv.pattern.iter().enumerate() {
                if r >= p || c >= p || ports.binary_search(&r).is_err() {
                    continue;
                }
                let (ri, ci) = (local[r], local[c]);
                for k in 0..=kmax {
                    for l in k.saturating_sub(b)..=(k + b).min(kmax) {
                        let (da, db) = conv.terms(q, k, l);
                        let rows: &[(bool, usize)] = if k == 0 {
                            &[(false, slot(pg, 0, false, ri))]
                        } else {
                            &[
                                (false, slot(pg, k, false, ri)),
                                (true, slot(pg, k, true, ri)),
                            ]
                        };
                        for &(imag, row) in rows {
                            let pick = |v: C64| if imag { v.im } else { v.re };
                            e.add(row, slot(pg, l, false, ci), pick(da));
                            if let Some(db) = db {
                                e.add(row, slot(pg, l, true, ci), pick(db));
                            }
                        }
                    }
                }
            }
            // I + E_g W_g, W_g block diagonal over the harmonics: per
            // harmonic l, P_l⁻¹ on the group's ports (a unit real part gives
            // the real-part column, j times it the imaginary one)
            let mut a = Band::zeros(m, hw, hw, hw);
            for i in 0..m {
                a.add(i, i, 1.0);
            }
            let width = 2 * pg;
            let mut wl = vec![0.0; width * width];
            for l in 0..=kmax {
                for (bi, &pb) in ports.iter().enumerate() {
                    z.iter_mut().for_each(|v| *v = C64::default());
                    z[pb] = C64::new(1.0, 0.0);
                    solve(l, &mut z, &mut scratch);
                    for (ai, &pa) in ports.iter().enumerate() {
                        let v = z[pa];
                        wl[ai * width + bi] = v.re;
                        wl[(pg + ai) * width + bi] = v.im;
                        wl[ai * width + pg + bi] = -v.im;
                        wl[(pg + ai) * width + pg + bi] = v.re;
                    }
                }
                let parts: &[bool] = if l == 0 { &[false] } else { &[false, true] };
                // the rows of E_g that reach harmonic l
                let lo = slot(pg, l.saturating_sub(b), false, 0).saturating_sub(pg);
                let hi = (slot(pg, (l + b).min(kmax), true, 0) + pg).min(m);
                // harmonic l's columns are contiguous: Re then Im of every
                // port, the order of W_l's rows and columns
                let c0 = slot(pg, l, false, 0);
                let nc = parts.len() * pg;
                for row in lo..hi {
                    let cols = e.cols(row);
                    if c0 < cols.start || c0 + nc > cols.end {
                        continue;
                    }
                    let er = e.row(row, c0..c0 + nc);
                    if er.iter().all(|v| *v == 0.0) {
                        continue;
                    }
                    for wc in 0..nc {
                        let s: f64 = er
                            .iter()
                            .enumerate()
                            .map(|(wr, ev)| ev * wl[wr * width + wc])
                            .sum();
                        if s != 0.0 {
                            a.add(row, c0 + wc, s);
                        }
                    }
                }
            }
            let lu = BandLu::factor(a)?;
            let index = (0..m).map(|i| global(p, &ports, i)).collect();
            groups.push(Group { e, index, lu });
        }
        if groups.is_empty() {
            return None;
        }
        Some(Self { groups })
    }

    /// `t = Σ_g R_gᵀ u_g` for `y = P⁻¹ r` (real layout, `t` as long as `y`).
    pub(super) fn correction(&self, y: &[f64], t: &mut [f64], buf: &mut Vec<f64>) {
        t.iter_mut().for_each(|v| *v = 0.0);
        let mut x = Vec::new();
        for g in &self.groups {
            x.clear();
            x.extend(g.index.iter().map(|&q| y.get(q).copied().unwrap_or(0.0)));
            g.e.apply(&x, buf);
            g.lu.solve(buf);
            for (&q, v) in g.index.iter().zip(buf.iter()) {
                if let Some(dst) = t.get_mut(q) {
                    *dst += v;
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Seeded uniform numbers in [−0.5, 0.5) (the crate's test generator).
    fn lcg(seed: u64) -> impl FnMut() -> f64 {
        let mut u = crate::linalg::tests::uniform(seed);
        move || u() - 0.5
    }

    /// A seeded problem: `p` ports, `kmax` harmonics, a dense complex
    /// `P_k` per harmonic (real at `k = 0`), and devices on the port pairs
    /// `pattern` with pulse-like coefficients (`|Ĝ_m|` falling as 1/(1+m)).
    struct Seeded {
        p: usize,
        kmax: usize,
        pk: Vec<Vec<C64>>,
        pattern: Vec<(usize, usize)>,
        g: Vec<Vec<C64>>,
        c: Vec<Vec<C64>>,
        freqs: Vec<f64>,
    }

    fn seeded(p: usize, kmax: usize, pattern: Vec<(usize, usize)>, seed: u64) -> Seeded {
        let mut r = lcg(seed);
        let w0 = 2.0 * std::f64::consts::PI * 1e7;
        let freqs: Vec<f64> = (0..=kmax).map(|k| k as f64 * w0).collect();
        let ne = pattern.len();
        let mut g = vec![vec![C64::default(); ne]; 2 * kmax + 1];
        let mut c = vec![vec![C64::default(); ne]; 2 * kmax + 1];
        for (m, (gm, cm)) in g.iter_mut().zip(c.iter_mut()).enumerate() {
            let f = 1.0 / (1.0 + m as f64);
            for (gv, cv) in gm.iter_mut().zip(cm.iter_mut()) {
                let im = if m == 0 { 0.0 } else { r() };
                *gv = C64::new(r(), im) * 0.4 * f;
                let im = if m == 0 { 0.0 } else { r() };
                *cv = C64::new(r(), im) * 4e-10 * f;
            }
        }
        // P_k: a network plus the devices' averages, diagonally heavy so
        // every block has an LU
        let mut pk = Vec::new();
        for (k, &w) in freqs.iter().enumerate() {
            let mut a = vec![C64::default(); p * p];
            for rr in 0..p {
                for cc in 0..p {
                    let im = if k == 0 { 0.0 } else { r() };
                    a[rr * p + cc] = C64::new(r(), im) * 0.3;
                }
                a[rr * p + rr] += C64::new(2.5, 0.0);
            }
            for (e, &(rr, cc)) in pattern.iter().enumerate() {
                a[rr * p + cc] += g[0][e] + C64::new(0.0, w) * c[0][e];
            }
            pk.push(a);
        }
        Seeded {
            p,
            kmax,
            pk,
            pattern,
            g,
            c,
            freqs,
        }
    }

    impl Seeded {
        fn conv(&self, band: usize) -> Conversion<'_> {
            Conversion {
                pattern: &self.pattern,
                g: &self.g,
                c: &self.c,
                freqs: &self.freqs,
                band,
            }
        }

        fn blocks(&self, band: usize) -> Option<DeviceBlocks> {
            DeviceBlocks::new(&self.conv(band), self.p, self.kmax, |k, z, _| {
                self.solve_k(k, z)
            })
        }

        fn solve_k(&self, k: usize, z: &mut [C64]) {
            if let Ok(x) = crate::linalg::solve_complex(self.p, &self.pk[k], z) {
                z.copy_from_slice(&x);
            }
        }

        fn len(&self) -> usize {
            self.p * (2 * self.kmax + 1)
        }

        /// `P⁻¹ v` in the real layout (as the step applies it).
        fn p_inv(&self, v: &[f64]) -> Vec<f64> {
            let p = self.p;
            let mut out = vec![0.0; v.len()];
            for k in 0..=self.kmax {
                let mut z: Vec<C64> = (0..p)
                    .map(|a| {
                        let im = if k == 0 { 0.0 } else { v[slot(p, k, true, a)] };
                        C64::new(v[slot(p, k, false, a)], im)
                    })
                    .collect();
                self.solve_k(k, &mut z);
                for a in 0..p {
                    out[slot(p, k, false, a)] = z[a].re;
                    if k > 0 {
                        out[slot(p, k, true, a)] = z[a].im;
                    }
                }
            }
            out
        }

        /// The preconditioner `M⁻¹ r` of the module overview.
        fn m_inv(&self, blocks: &DeviceBlocks, r: &[f64]) -> Vec<f64> {
            let y = self.p_inv(r);
            let mut t = vec![0.0; r.len()];
            blocks.correction(&y, &mut t, &mut Vec::new());
            let pt = self.p_inv(&t);
            y.iter().zip(&pt).map(|(a, b)| a - b).collect()
        }

        /// `A v`, `A = P + (conversion − average)` with the coefficients
        /// `|m| ≤ band` weighted by `1 − |m|/(band+1)`, written from the
        /// two-sided sums `δI_k = Σ_{l=−K..K} Ĝ_{k−l} V_l`,
        /// `δQ_k = Σ_l Ĉ_{k−l} V_l` (`V_{−l} = conj V_l`), independently
        /// of the real-layout formulas of the module.
        fn apply(&self, v: &[f64], band: usize) -> Vec<f64> {
            let (p, kmax) = (self.p, self.kmax);
            let x: Vec<Vec<C64>> = (0..=kmax)
                .map(|k| {
                    (0..p)
                        .map(|a| {
                            let im = if k == 0 { 0.0 } else { v[slot(p, k, true, a)] };
                            C64::new(v[slot(p, k, false, a)], im)
                        })
                        .collect()
                })
                .collect();
            let coef = |src: &Vec<Vec<C64>>, m: isize, e: usize| {
                let v = src[m.unsigned_abs()][e];
                let v = if m >= 0 { v } else { v.conj() };
                v * (1.0 - m.unsigned_abs() as f64 / (band as f64 + 1.0))
            };
            let mut out = vec![0.0; v.len()];
            for k in 0..=kmax {
                let w = self.freqs[k];
                let mut acc: Vec<C64> = (0..p)
                    .map(|a| (0..p).map(|b| self.pk[k][a * p + b] * x[k][b]).sum())
                    .collect();
                for (e, &(r, c)) in self.pattern.iter().enumerate() {
                    for l in -(kmax as isize)..=(kmax as isize) {
                        let m = k as isize - l;
                        if m == 0 || m.unsigned_abs() > band {
                            continue; // the average is in P; past the band
                        }
                        let vl = if l >= 0 {
                            x[l as usize][c]
                        } else {
                            x[(-l) as usize][c].conj()
                        };
                        let d = coef(&self.g, m, e) + C64::new(0.0, w) * coef(&self.c, m, e);
                        acc[r] += d * vl;
                    }
                }
                for a in 0..p {
                    out[slot(p, k, false, a)] = acc[a].re;
                    if k > 0 {
                        out[slot(p, k, true, a)] = acc[a].im;
                    }
                }
            }
            out
        }
    }

    fn max_diff(a: &[f64], b: &[f64]) -> f64 {
        a.iter()
            .zip(b)
            .fold(0.0f64, |m, (x, y)| m.max((x - y).abs()))
    }

    /// The band LU with row interchanges against nalgebra's dense LU of
    /// the same seeded band matrix (a small diagonal, so pivoting is
    /// needed): the same solution to 1e-10 relative (rounding in a
    /// well-conditioned system, common practice).
    #[test]
    fn band_lu_matches_a_dense_solve() {
        let (n, kl, ku) = (40, 3, 5);
        let mut r = lcg(17);
        let mut band = Band::zeros(n, kl, ku, kl);
        let mut dense = vec![0.0; n * n];
        for i in 0..n {
            for j in i.saturating_sub(kl)..=(i + ku).min(n - 1) {
                let v = if i == j { 0.05 * r() } else { r() };
                band.add(i, j, v);
                dense[i * n + j] = v;
            }
        }
        let b: Vec<f64> = (0..n).map(|_| r()).collect();
        let lu = BandLu::factor(band).expect("band LU");
        assert!(
            lu.piv.iter().enumerate().any(|(k, &q)| q != k),
            "no interchange"
        );
        let mut x = b.clone();
        lu.solve(&mut x);
        let want = nalgebra::DMatrix::from_row_slice(n, n, &dense)
            .lu()
            .solve(&nalgebra::DVector::from_column_slice(&b))
            .expect("dense LU");
        let size = want.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        for (a, w) in x.iter().zip(want.iter()) {
            assert!((a - w).abs() <= 1e-10 * size, "{a} vs {w}");
        }
        // a zero column has no LU
        let mut z = Band::zeros(4, 1, 1, 1);
        z.add(0, 0, 1.0);
        z.add(1, 1, 1.0);
        assert!(BandLu::factor(z).is_none());
    }

    /// One device (three ports coupled) among five ports, a band holding
    /// every coefficient (`b = 2K`): the Woodbury form is the exact inverse
    /// of `P` plus the weighted conversion terms, so `M⁻¹ (A x) = x` to
    /// rounding (1e-9 of a unit-size `x` in a well-conditioned system,
    /// common practice); and `P` alone is far from it.
    #[test]
    fn one_device_whole_band_is_the_exact_inverse() {
        let pattern = vec![(0, 0), (0, 2), (2, 0), (2, 2), (2, 3), (3, 3), (3, 0)];
        let s = seeded(5, 6, pattern, 11);
        let band = 2 * s.kmax;
        let blocks = s.blocks(band).expect("blocks");
        assert_eq!(blocks.groups.len(), 1);
        let mut r = lcg(5);
        let x: Vec<f64> = (0..s.len()).map(|_| r()).collect();
        let ax = s.apply(&x, band);
        let d = max_diff(&s.m_inv(&blocks, &ax), &x);
        assert!(d < 1e-9, "M⁻¹ A x − x: {d:e}");
        let d0 = max_diff(&s.p_inv(&ax), &x);
        assert!(d0 > 1e-2, "P⁻¹ A x − x: {d0:e}");
    }

    /// A narrow band (`b = 3` of `2K = 16`): `M` is the exact inverse of
    /// `P` plus the weighted terms within the band (built here by the
    /// two-sided sums), which is what the band LU of `I + E W` holds.
    #[test]
    fn narrow_band_is_the_exact_inverse_of_the_banded_matrix() {
        let pattern = vec![(1, 1), (1, 2), (2, 1), (2, 2)];
        let s = seeded(4, 8, pattern, 23);
        let blocks = s.blocks(3).expect("blocks");
        let mut r = lcg(9);
        let x: Vec<f64> = (0..s.len()).map(|_| r()).collect();
        let d = max_diff(&s.m_inv(&blocks, &s.apply(&x, 3)), &x);
        assert!(d < 1e-9, "M⁻¹ A x − x: {d:e}");
        assert!(s.blocks(0).is_none(), "band 0: no blocks");
        let dc_only = DeviceBlocks::new(&s.conv(3), s.p, 0, |k, z, _| s.solve_k(k, z));
        assert!(dc_only.is_none(), "K = 0: no coupling between harmonics");
    }

    /// Two devices on separate ports, each its own group. With `P` block
    /// diagonal over the two groups' ports the groups do not see each
    /// other and the sum of their corrections is again exact; with a `P`
    /// that couples them it is not, but it still leaves a smaller error
    /// than `P` alone.
    #[test]
    fn two_groups_exact_when_the_network_keeps_them_apart() {
        let pattern = vec![(0, 0), (0, 1), (1, 1), (2, 2), (3, 2), (3, 3)];
        let mut s = seeded(4, 5, pattern, 37);
        assert_eq!(port_groups(4, &s.pattern), vec![vec![0, 1], vec![2, 3]]);
        let band = 2 * s.kmax;
        let coupled = s.pk.clone();
        for a in s.pk.iter_mut() {
            for r in 0..2 {
                for c in 2..4 {
                    a[r * 4 + c] = C64::default();
                    a[c * 4 + r] = C64::default();
                }
            }
        }
        let mut rnd = lcg(3);
        let x: Vec<f64> = (0..s.len()).map(|_| rnd()).collect();
        let blocks = s.blocks(band).expect("blocks");
        assert_eq!(blocks.groups.len(), 2);
        let d = max_diff(&s.m_inv(&blocks, &s.apply(&x, band)), &x);
        assert!(d < 1e-9, "apart: {d:e}");
        s.pk = coupled;
        let blocks = s.blocks(band).expect("blocks");
        let ax = s.apply(&x, band);
        let with = max_diff(&s.m_inv(&blocks, &ax), &x);
        let without = max_diff(&s.p_inv(&ax), &x);
        assert!(
            with < without,
            "coupled: {with:e} against P alone {without:e}"
        );
    }

    /// A group whose band storage would pass [`MAX_STORED`] gets no block
    /// (a chain of 100 ports at K = 100 and b = 10: 20,100 rows of
    /// half-width 2,200), and so no preconditioner change at all.
    #[test]
    fn groups_past_the_storage_limit_get_no_block() {
        let (p, kmax) = (100, 100);
        let chain: Vec<(usize, usize)> = (0..p).map(|a| (a, (a + 1) % p)).collect();
        let zeros = vec![vec![C64::default(); chain.len()]; 2 * kmax + 1];
        let freqs: Vec<f64> = (0..=kmax).map(|k| k as f64).collect();
        let conv = Conversion {
            pattern: &chain,
            g: &zeros,
            c: &zeros,
            freqs: &freqs,
            band: 10,
        };
        assert!(p * (2 * kmax + 1) * (6 * 22 * p + 3) > MAX_STORED);
        let called = std::cell::Cell::new(false);
        let blocks = DeviceBlocks::new(&conv, p, kmax, |_, _, _| called.set(true));
        assert!(blocks.is_none());
        assert!(!called.get(), "no solve for a group without a block");
    }
}
