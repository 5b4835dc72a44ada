//! Multi-tone harmonic balance: the quasi-periodic steady state under two to
//! four incommensurate (or commensurate) input tones.
//!
//! Method: artificial frequency mapping of a box-truncated set of mixing
//! products onto the harmonics of one artificial fundamental (K. S. Kundert,
//! J. K. White, A. Sangiovanni-Vincentelli, "Steady-State Methods for
//! Simulating Analog and Microwave Circuits", Kluwer, 1990, the chapter on
//! quasi-periodic harmonic balance; from memory), so the single-tone
//! machinery of [`mod@super::balance`] (Newton, the reduced linear network per
//! slot, GMRES with the block-diagonal preconditioner, drive continuation)
//! solves it unchanged; only the frequency of each slot differs.
//!
//! # Mixing products and box truncation
//! With tones `f_1..f_d` (`d ≤ 4`) every unknown is written
//! `x(t) = Σ_m X_m e^{j2π(m·f)t}` over the integer vectors `m` with
//! `|m_i| ≤ K` for every tone (box truncation of order `K`,
//! [`ToneParams::order`]), `X_{−m} = conj X_m`. Only one of `m`, `−m` is kept
//! (the one the mapping below sends to a slot `≥ 0`), so there are
//! `((2K+1)^d + 1)/2` complex coefficients per unknown, the product at `m = 0`
//! being the DC term.
//!
//! # Artificial frequency mapping
//! `λ(m) = Σ_i m_i (2K+1)^{i−1}` is a bijection from the box onto the
//! integers `−Λ..Λ`, `Λ = ((2K+1)^d − 1)/2` (balanced base-(2K+1) digits);
//! the kept half is `λ ≥ 0`, slot `λ` of the single-tone problem. Sums and
//! differences of two products that stay inside the box map to the sum and
//! difference of their slots, so a memoryless nonlinearity evaluated on the
//! artificial waveform `x̃(τ) = Σ X_m e^{jλ(m)τ}` (`N ≥ 4Λ` samples, the
//! single-tone FFT) has the coefficients of the true one at every product
//! whose generating products stay inside the box; the products of the true
//! spectrum outside the box fold onto products inside it (the method's
//! truncation error, the size of what lies outside the box: reported as
//! [`ToneInfo::edge`], the largest product on the box's edge relative to
//! the largest tone). The time derivative of the charges is taken at the
//! true frequency of each slot, `j2π(m·f)·Q_m`, and the linear network is
//! solved at `m·f` (negative frequencies as the conjugate of positive ones),
//! so nothing in the cost depends on the tone spacing: closely spaced tones
//! (a spacing of 1e-5 of the carrier or less) cost what widely spaced ones do.
//!
//! # Sources
//! Every time-varying source must be a sine at one of the tones (its offset
//! goes to DC); its phasor is placed at the slot of that tone. Time is
//! counted from `t0`, the latest end of any source's start and rise, so all
//! tones share one time origin. A source given tones in
//! [`ToneParams::drives`] (a two-tone test splitting the input) takes them
//! instead of its own sine: each is placed at its tone's slot through the
//! source's unit excitation (the right-hand side the AC analysis uses).

use super::balance::{
    check_params, check_size, fft_size, reduce, reduce_growing, run_levels, zero_drive,
    BalanceParams, Fft, Linear, Problem, ReduceFail,
};
use super::SteadyParams;
use crate::error::When;
use crate::linalg::LinearSolver;
use crate::newton::Tolerances;
use crate::SolveError;
use num_complex::Complex64 as C64;
use std::collections::HashMap;
use tankwave_circuit::ir::{ElementKind, Shape};
use tankwave_circuit::{Circuit, ElementId};
use tankwave_devices::{
    DenseStamp, DeviceSet, EvalCtx, Filter, Idx, Stamp, UnknownId, UnknownKind,
};

const ZERO: C64 = C64 { re: 0.0, im: 0.0 };
/// Most tones.
pub const MAX_TONES: usize = 4;
/// Relative difference within which a source's frequency is that of a tone
/// (common practice: far above the rounding of a frequency written in a
/// file, far below any real spacing; 1e-5 of the carrier is 1e-5).
const SAME_FREQ: f64 = 1e-12;

/// Options of a multi-tone solve.
#[derive(Debug, Clone, PartialEq)]
pub struct ToneParams {
    /// Tone frequencies, Hz: 1 to [`MAX_TONES`], positive, distinct.
    pub tones: Vec<f64>,
    /// Box truncation order K: every product `m` with `|m_i| ≤ K` (default 7).
    pub order: usize,
    /// Newton tolerances.
    pub tol: Tolerances,
    /// Linear solver of the operating point.
    pub linear_solver: LinearSolver,
    /// Harmonic-balance options (oversampling, continuation, junction leak,
    /// limiting, GMRES threshold; the harmonic raise is not used: the order
    /// is fixed).
    pub balance: BalanceParams,
    /// Tones given to sources here instead of their own sine (a two-tone
    /// test splits the input's drive into two tones): a source named here
    /// keeps its `dc=` and its sine's offset, and its sine is replaced by
    /// the tones listed for it.
    pub drives: Vec<ToneDrive>,
}

/// One tone given to a source in place of its own sine:
/// `amp·sin(2π f_tone (t − t0) + phase)`.
#[derive(Debug, Clone, PartialEq)]
pub struct ToneDrive {
    /// The voltage or current source.
    pub source: ElementId,
    /// Index into [`ToneParams::tones`].
    pub tone: usize,
    /// Peak amplitude, V or A.
    pub amp: f64,
    /// Phase, rad.
    pub phase: f64,
}

impl Default for ToneParams {
    fn default() -> Self {
        Self {
            tones: Vec::new(),
            order: 7,
            tol: Tolerances::default(),
            linear_solver: LinearSolver::default(),
            balance: BalanceParams::default(),
            drives: Vec::new(),
        }
    }
}

/// One mixing product: `Σ orders[i]·tones[i]`.
#[derive(Debug, Clone, PartialEq)]
pub struct Product {
    /// The integer multiple of each tone.
    pub orders: Vec<i32>,
    /// Its frequency, Hz (signed: the coefficient multiplies `e^{j2πft}`).
    pub freq: f64,
}

impl Product {
    /// Order of the product, `Σ|m_i|` (3 for the third-order products `2f₁ − f₂`).
    pub fn order(&self) -> u32 {
        self.orders.iter().map(|m| m.unsigned_abs()).sum()
    }
}

/// Details of a multi-tone solve.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ToneInfo {
    /// Newton iterations over every drive level.
    pub iterations: usize,
    /// Final residual relative to the size of each equation's terms (as [`super::SteadyInfo::residual`]).
    pub residual: f64,
    /// The relative tolerance it was held to.
    pub tolerance: f64,
    /// Order of the real Newton system.
    pub system_size: usize,
    /// Unknowns kept in the Newton system.
    pub ports: usize,
    /// Samples of the artificial period (FFT size of the nonlinear evaluation).
    pub fft_size: usize,
    /// Drive levels solved by continuation (0: solved at full drive directly).
    pub continuation_steps: usize,
    /// Line-search step halvings in total.
    pub line_search_cuts: usize,
    /// GMRES products over every Newton step (0: dense LU throughout).
    pub krylov_iterations: usize,
    /// Largest amplitude of a voltage at a product on the box's edge (some
    /// `|m_i| = K`) over the largest voltage amplitude at a tone: the size of
    /// what the truncation leaves out.
    pub edge: f64,
}

/// A multi-tone steady state: the complex coefficient of every unknown at
/// every kept mixing product.
#[derive(Debug, Clone, PartialEq)]
pub struct ToneSolution {
    /// The tones, Hz.
    pub tones: Vec<f64>,
    /// Box truncation order.
    pub order: usize,
    /// The kept products, slot by slot (slot 0 is DC).
    pub products: Vec<Product>,
    /// `x[slot][unknown]`: coefficient of `e^{j2π f t}` (`f` the slot's
    /// signed frequency, `t` from the common time origin); the real
    /// waveform is `X₀ + Σ_{slot ≥ 1} 2·Re(X e^{j2πft})`.
    pub x: Vec<Vec<C64>>,
    /// How it was obtained.
    pub info: ToneInfo,
}

impl ToneSolution {
    /// The coefficient of `e^{j2π(m·f)t}` of unknown `u` for the product `m`
    /// (`None` outside the box or for an unknown not of this solution).
    pub fn coefficient(&self, orders: &[i32], u: UnknownId) -> Option<C64> {
        let (slot, conj) = slot_of(orders, self.order, self.tones.len())?;
        let v = *self.x.get(slot)?.get(u.index())?;
        Some(if conj { v.conj() } else { v })
    }

    /// Peak amplitude of unknown `u` at product `m`: `2|X_m|`, or `|X₀|` at DC.
    /// Products of the same frequency (commensurate tones) are not summed.
    pub fn amplitude(&self, orders: &[i32], u: UnknownId) -> Option<f64> {
        let c = self.coefficient(orders, u)?;
        let dc = orders.iter().all(|m| *m == 0);
        Some(if dc { c.norm() } else { 2.0 * c.norm() })
    }
}

/// Slot of product `m` and whether the kept coefficient is that of `−m`.
fn slot_of(orders: &[i32], k: usize, d: usize) -> Option<(usize, bool)> {
    if orders.len() != d || orders.iter().any(|m| m.unsigned_abs() as usize > k) {
        return None;
    }
    let base = (2 * k + 1) as i64;
    let mut lam = 0i64;
    let mut w = 1i64;
    for m in orders {
        lam += *m as i64 * w;
        w *= base;
    }
    let slot = usize::try_from(lam.unsigned_abs()).ok()?;
    Some((slot, lam < 0))
}

/// The product at artificial slot `lam ≥ 0` (balanced base-(2K+1) digits).
fn product_of(mut lam: i64, k: usize, tones: &[f64]) -> Product {
    let base = (2 * k + 1) as i64;
    let kk = k as i64;
    let mut orders = Vec::with_capacity(tones.len());
    for _ in tones {
        let mut r = lam.rem_euclid(base);
        if r > kk {
            r -= base;
        }
        orders.push(r as i32);
        lam = (lam - r) / base;
    }
    let freq = orders.iter().zip(tones).map(|(m, f)| *m as f64 * f).sum();
    Product { orders, freq }
}

/// Number of slots `Λ + 1` for `d` tones at order `k`, if it fits a usize.
fn slot_count(k: usize, d: usize) -> Option<usize> {
    let base = 2usize.checked_mul(k)?.checked_add(1)?;
    let mut full = 1usize;
    for _ in 0..d {
        full = full.checked_mul(base)?;
    }
    Some(full.div_ceil(2))
}

fn check(tp: &ToneParams) -> Result<(), SolveError> {
    let bad = |m: String| Err(SolveError::BadParams(format!("multi-tone balance: {m}")));
    let d = tp.tones.len();
    if d == 0 || d > MAX_TONES {
        return bad(format!("1 to {MAX_TONES} tones, got {d}"));
    }
    if let Some(f) = tp.tones.iter().find(|f| !(f.is_finite() && **f > 0.0)) {
        return bad(format!(
            "every tone must be a positive frequency, got {f} Hz"
        ));
    }
    for (i, a) in tp.tones.iter().enumerate() {
        for b in &tp.tones[i + 1..] {
            if (a - b).abs() <= SAME_FREQ * a.max(*b) {
                return bad(format!("two tones at the same frequency {a:.9e} Hz"));
            }
        }
    }
    for dr in &tp.drives {
        if dr.tone >= d {
            return bad(format!("a drive names tone {} of {d}", dr.tone + 1));
        }
        if !(dr.amp.is_finite() && dr.phase.is_finite()) {
            return bad(format!(
                "a drive's amplitude {} or phase {} is not finite",
                dr.amp, dr.phase
            ));
        }
    }
    if tp.order == 0 || tp.order > 64 {
        return bad(format!("order must be 1..64, got {}", tp.order));
    }
    check_params(&tp.balance)
}

/// Collects only the resistive currents of a stamp.
struct Currents {
    i: Vec<f64>,
}

impl Stamp for Currents {
    fn add_i(&mut self, row: Idx, v: f64) {
        if let Some(r) = row {
            self.i[r] += v;
        }
    }
    fn add_q(&mut self, _row: Idx, _v: f64) {}
    fn add_g(&mut self, _row: Idx, _col: Idx, _v: f64) {}
    fn add_c(&mut self, _row: Idx, _col: Idx, _v: f64) {}
}

/// The time origin: the latest end of a source's start and rise.
fn origin(circuit: &Circuit) -> f64 {
    let mut t = 0.0f64;
    for el in &circuit.elements {
        if let ElementKind::VoltageSource { wave, .. } | ElementKind::CurrentSource { wave, .. } =
            &el.kind
        {
            if let Some(Shape::Sine { delay, rise, .. }) = &wave.shape {
                let end = delay + rise;
                if end.is_finite() {
                    t = t.max(end);
                }
            }
        }
    }
    t
}

/// The linear network over the products: constant Jacobians, the DC
/// sources, each sine source's phasor at its tone's slot, and the measured
/// networks at each product's frequency.
fn tone_network(
    circuit: &Circuit,
    devices: &DeviceSet,
    tp: &ToneParams,
    products: &[Product],
    t0: f64,
) -> Result<Linear, SolveError> {
    let n = devices.n_unknowns;
    let d = tp.tones.len();
    let x0 = vec![0.0; n];
    let mut state = devices.initial_state();
    let leak = tp.balance.junction_leak;
    let ctx = |t: f64, s: f64| EvalCtx {
        time: t,
        dc_scale: 1.0,
        wave_scale: s,
        junction_leak: leak,
        limit: false,
    };
    let mut st = DenseStamp::new(n);
    devices.eval_all(&x0, &ctx(t0, 0.0), &mut state, &mut st, Filter::Linear);
    let slots = products.len();
    let mut src_wave = vec![vec![ZERO; n]; slots];
    // A sine's samples over one of its periods: offset and fundamental only,
    // so 8 samples give both exactly.
    const NS: usize = 8;
    let mut fft = Fft::new(NS);
    let mut coef = [ZERO; 2];
    for (dev, &off) in devices.devices.iter().zip(&devices.state_offsets) {
        if !dev.is_linear() {
            continue;
        }
        let Some(el) = circuit.elements.get(dev.element().index()) else {
            continue;
        };
        let wave = match &el.kind {
            ElementKind::VoltageSource { wave, .. } | ElementKind::CurrentSource { wave, .. } => {
                wave
            }
            _ => continue,
        };
        let replaced: Vec<&ToneDrive> = tp
            .drives
            .iter()
            .filter(|dr| dr.source == dev.element())
            .collect();
        if !replaced.is_empty() {
            // The unit excitation b of the source ((G + jωC)X = b) is the
            // negative of its term in the residual i(x, t) + dq/dt.
            let mut b = vec![0.0; n];
            dev.ac_excitation(&mut |r, v| {
                if let Some(e) = b.get_mut(r) {
                    *e += v;
                }
            });
            let offset = match &wave.shape {
                Some(Shape::Sine { offset, .. }) => *offset,
                _ => 0.0,
            };
            for dr in replaced {
                let mut m = vec![0i32; d];
                m[dr.tone] = 1;
                let Some((slot, _)) = slot_of(&m, tp.order, d) else {
                    continue;
                };
                // amp·sin(ωt + φ) = 2·Re(c e^{jωt}) with c = amp·e^{jφ}/(2j)
                let c = C64::from_polar(dr.amp, dr.phase) / C64::new(0.0, 2.0);
                for (r, bv) in b.iter().enumerate() {
                    src_wave[slot][r] -= c * *bv;
                }
            }
            for (r, bv) in b.iter().enumerate() {
                src_wave[0][r] -= C64::new(offset * bv, 0.0);
            }
            continue;
        }
        let (freq, amp) = match &wave.shape {
            None => continue,
            Some(Shape::Sine { freq, amp, .. }) => (*freq, *amp),
            Some(_) => {
                return Err(SolveError::BadParams(format!(
                    "multi-tone balance: source '{}' has a waveform other than a sine; \
                     every source of a multi-tone solve is DC or a sine at one of the tones",
                    el.name
                )))
            }
        };
        let tone = tp
            .tones
            .iter()
            .position(|f| (f - freq).abs() <= SAME_FREQ * f.max(freq));
        let slot = match tone {
            Some(i) => {
                let mut m = vec![0i32; d];
                m[i] = 1;
                slot_of(&m, tp.order, d).map(|s| s.0)
            }
            None if amp == 0.0 => None,
            None => {
                return Err(SolveError::BadParams(format!(
                    "multi-tone balance: source '{}' is a sine at {freq:.9e} Hz, which is none \
                     of the tones ({})",
                    el.name,
                    tp.tones
                        .iter()
                        .map(|f| format!("{f:.9e} Hz"))
                        .collect::<Vec<_>>()
                        .join(", ")
                )))
            }
        };
        let len = dev.state_len();
        let dstate = &mut state[off..off + len];
        let mut base = Currents { i: vec![0.0; n] };
        dev.eval(&x0, &ctx(t0, 0.0), dstate, &mut base);
        let mut wave_rows = vec![vec![0.0; NS]; n];
        for s in 0..NS {
            let t = t0 + s as f64 / (NS as f64 * freq);
            let mut cur = Currents { i: vec![0.0; n] };
            dev.eval(&x0, &ctx(t, 1.0), dstate, &mut cur);
            for r in 0..n {
                wave_rows[r][s] = cur.i[r] - base.i[r];
            }
        }
        for (r, w) in wave_rows.iter().enumerate() {
            if w.iter().all(|v| *v == 0.0) {
                continue;
            }
            if let Some(v) = w.iter().find(|v| !v.is_finite()) {
                return Err(SolveError::BadParams(format!(
                    "multi-tone balance: source '{}' gives {v} in the equation of {}",
                    el.name,
                    devices.names.get(r).cloned().unwrap_or_default()
                )));
            }
            fft.forward(w, &mut coef);
            src_wave[0][r] += coef[0];
            if let Some(s) = slot {
                src_wave[s][r] += coef[1];
            }
        }
    }
    for row in &mut src_wave[0] {
        row.im = 0.0;
    }
    let mut extra = vec![HashMap::new(); slots];
    for (slot, e) in extra.iter_mut().enumerate().skip(1) {
        let f = products[slot].freq;
        if f == 0.0 {
            continue;
        }
        for dev in &devices.devices {
            let Some(entries) = dev.frequency_admittance(f.abs()) else {
                return Err(SolveError::BadParams(format!(
                    "multi-tone balance: measured network #{} is not defined at {:.6e} Hz \
                     (mixing product {}), outside its file's band",
                    dev.element().index(),
                    f.abs(),
                    product_name(&products[slot])
                )));
            };
            for (r, col, y) in entries {
                let y = if f < 0.0 { y.conj() } else { y };
                *e.entry((r, col)).or_insert(ZERO) += y;
            }
        }
    }
    Ok(Linear {
        n,
        g: st.g,
        c: st.c,
        src_dc: st.i,
        src_wave,
        extra,
    })
}

/// How a person reads a product: `(2, −1)`.
pub fn product_name(p: &Product) -> String {
    let inner: Vec<String> = p.orders.iter().map(|m| m.to_string()).collect();
    format!("({})", inner.join(", "))
}

/// The multi-tone steady state by harmonic balance over box-truncated mixing
/// products (see the module docs).
pub fn multitone(
    circuit: &Circuit,
    devices: &DeviceSet,
    tp: &ToneParams,
) -> Result<ToneSolution, SolveError> {
    check(tp)?;
    let d = tp.tones.len();
    let bp = &tp.balance;
    let n = devices.n_unknowns;
    let slots = slot_count(tp.order, d).ok_or_else(|| {
        SolveError::BadParams("multi-tone balance: too many mixing products".into())
    })?;
    let kmax = slots - 1;
    let products: Vec<Product> = (0..slots)
        .map(|s| product_of(s as i64, tp.order, &tp.tones))
        .collect();
    let omega: Vec<f64> = products
        .iter()
        .map(|p| 2.0 * std::f64::consts::PI * p.freq)
        .collect();
    let t0 = origin(circuit);
    let (x_op, structural) = zero_drive(devices, tp.tol, tp.linear_solver, bp)?;
    check_size(structural.len(), kmax, bp)?;
    let lin = tone_network(circuit, devices, tp, &products, t0)?;
    let singular = |f: ReduceFail| {
        let at = format!(
            "mixing product {}",
            products
                .get(f.harmonic)
                .map(product_name)
                .unwrap_or_default()
        );
        f.into_error(devices, "multi-tone balance", &at)
    };
    let all: Vec<usize> = (0..n).collect();
    let red = match reduce_growing(&lin, &structural, kmax, &omega) {
        Ok(r) => r,
        Err(_) => {
            check_size(n, kmax, bp)?;
            reduce(&lin, &all, kmax, &omega).map_err(singular)?
        }
    };
    check_size(red.ports.len(), kmax, bp)?;
    let nfft = fft_size(kmax, bp.oversample);
    // The single-tone machinery reads its options from SteadyParams; the
    // frequency only sets the (unused) time stamps of the nonlinear samples.
    let sp = SteadyParams {
        freq: tp.tones[0],
        harmonics: kmax,
        tol: tp.tol,
        balance: bp.clone(),
        linear_solver: tp.linear_solver,
        ..SteadyParams::default()
    };
    let names: Vec<String> = products
        .iter()
        .map(|p| format!("mixing product {}", product_name(p)))
        .collect();
    let build = |red| {
        let mut prob = Problem::new(devices, red, kmax, nfft, omega.clone(), t0, &sp);
        prob.krylov = prob.size() >= bp.krylov_from;
        prob.slot_names.clone_from(&names);
        prob
    };
    let reduced = !red.others.is_empty();
    let mut prob = build(red);
    let mut attempt = run_levels(&mut prob, &sp, &x_op, None);
    if reduced && matches!(attempt, Err((super::balance::Fail::Escaped { .. }, _, _))) {
        check_size(n, kmax, bp)?;
        prob = build(reduce(&lin, &all, kmax, &omega).map_err(singular)?);
        attempt = run_levels(&mut prob, &sp, &x_op, None);
    }
    let (xp, iterations, cuts, ratio, steps) =
        attempt.map_err(|(f, s, _)| prob.fail_to_error(f, s))?;
    let x = prob.full_solution(&xp);
    if let Some((k, u)) = x
        .iter()
        .enumerate()
        .find_map(|(k, row)| row.iter().position(|v| !v.is_finite()).map(|u| (k, u)))
    {
        return Err(SolveError::NonFinite {
            analysis: format!(
                "multi-tone balance (mixing product {})",
                product_name(&products[k])
            ),
            unknown: devices.names.get(u).cloned().unwrap_or_default(),
            when: When(None),
        });
    }
    let edge = edge_ratio(devices, &x, &products, tp.order);
    Ok(ToneSolution {
        tones: tp.tones.clone(),
        order: tp.order,
        info: ToneInfo {
            iterations,
            residual: ratio * tp.tol.rel_tolerance,
            tolerance: tp.tol.rel_tolerance,
            system_size: prob.size(),
            ports: prob.p(),
            fft_size: nfft,
            continuation_steps: steps,
            line_search_cuts: cuts,
            krylov_iterations: prob.krylov_iterations,
            edge,
        },
        products,
        x,
    })
}

/// Largest voltage amplitude on the box's edge over the largest at a tone.
fn edge_ratio(devices: &DeviceSet, x: &[Vec<C64>], products: &[Product], k: usize) -> f64 {
    let volts: Vec<usize> = (0..devices.n_unknowns)
        .filter(|&u| devices.kinds.get(u) != Some(&UnknownKind::Current))
        .collect();
    let largest = |pick: &dyn Fn(&Product) -> bool| {
        products
            .iter()
            .zip(x)
            .filter(|(p, _)| pick(p))
            .flat_map(|(_, row)| volts.iter().map(move |&u| row[u].norm()))
            .fold(0.0f64, f64::max)
    };
    let tone = largest(&|p| p.order() == 1);
    let edge = largest(&|p| p.orders.iter().any(|m| m.unsigned_abs() as usize == k));
    if tone > 0.0 {
        edge / tone
    } else {
        0.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_mapping_is_a_bijection_of_the_box_onto_its_slots() {
        for (k, d) in [(1usize, 2usize), (3, 2), (7, 2), (2, 3), (1, 4)] {
            let tones: Vec<f64> = (0..d).map(|i| 1.0 + 0.1 * i as f64).collect();
            let slots = slot_count(k, d).unwrap();
            let mut seen = vec![false; slots];
            for s in 0..slots {
                let p = product_of(s as i64, k, &tones);
                assert!(p.orders.iter().all(|m| m.unsigned_abs() as usize <= k));
                let (back, conj) = slot_of(&p.orders, k, d).unwrap();
                assert_eq!((back, conj), (s, false), "k={k} d={d} slot {s}");
                assert!(!seen[s]);
                seen[s] = true;
                let neg: Vec<i32> = p.orders.iter().map(|m| -m).collect();
                assert_eq!(slot_of(&neg, k, d), Some((s, s != 0)));
            }
            // (2K+1)^d products in all, each with its negative in one slot
            assert_eq!(2 * slots - 1, (2 * k + 1).pow(d as u32));
        }
    }

    #[test]
    fn sums_inside_the_box_map_to_sums_of_slots() {
        let (k, d) = (3usize, 2usize);
        let base = (2 * k + 1) as i64;
        let lam = |m: &[i32]| m[0] as i64 + m[1] as i64 * base;
        for a in -3i32..=3 {
            for b in -3i32..=3 {
                let (s, c) = slot_of(&[a, b], k, d).unwrap();
                let signed = if c { -(s as i64) } else { s as i64 };
                assert_eq!(signed, lam(&[a, b]));
            }
        }
        assert_eq!(slot_of(&[4, 0], k, d), None);
    }
}
