//! Bipolar transistor stamps: finite-difference checks of the full G and C
//! matrices (with internal resistances), the pnp mirror, junction limiting,
//! and operating points found from a zero start by a small Newton iteration
//! with limiting (L. W. Nagel, ERL M520, 1975).

use tankwave_circuit::BjtParams;
use tankwave_devices::bjt::{Bjt, BjtNodes};
use tankwave_devices::{DenseStamp, Device, EvalCtx};

fn full_params(pnp: bool) -> BjtParams {
    // An invented HF power transistor exercising every term.
    BjtParams {
        pnp,
        sat_current: 5e-13,
        gain_fwd: 60.0,
        gain_rev: 3.0,
        emission_fwd: 1.02,
        emission_rev: 1.05,
        early_fwd: 80.0,
        early_rev: 8.0,
        knee_fwd: 3.0,
        knee_rev: 0.5,
        leak_be: 2e-11,
        leak_be_emission: 1.7,
        leak_bc: 1e-11,
        leak_bc_emission: 1.9,
        r_base: 1.5,
        r_collector: 0.2,
        r_emitter: 0.05,
        cj_be: 2e-9,
        vj_be: 0.8,
        grading_be: 0.35,
        cj_bc: 300e-12,
        vj_bc: 0.55,
        grading_bc: 0.45,
        linear_from: 0.6,
        transit_fwd: 0.5e-9,
        transit_rev: 50e-9,
        ..BjtParams::default()
    }
}

/// Six unknowns: c b e ci bi ei (internal nodes separate).
fn six_node(p: &BjtParams) -> Bjt {
    let nodes = BjtNodes {
        c: Some(0),
        b: Some(1),
        e: Some(2),
        ci: Some(3),
        cj: Some(3),
        bi: Some(4),
        ei: Some(5),
        phase: [None, None],
    };
    Bjt::new(tankwave_circuit::ElementId::new(0), nodes, p, 1.0, 320.0)
}

fn exact() -> EvalCtx {
    EvalCtx {
        limit: false,
        ..EvalCtx::default()
    }
}

fn stamp(q: &Bjt, x: &[f64], ctx: &EvalCtx) -> DenseStamp {
    let mut st = DenseStamp::new(x.len());
    let mut s = [0.0; 2];
    q.eval(x, ctx, &mut s, &mut st);
    st
}

/// Bias points (external c, b, e and internal ci, bi, ei) across all regions.
fn bias_points() -> Vec<[f64; 6]> {
    let mut v = Vec::new();
    for &(vbe, vbc) in &[
        (0.0, 0.0),
        (-2.0, -10.0),
        (0.3, -1.0),
        (0.65, -5.0),
        (0.72, -0.2),
        (0.78, 0.6),
        (0.85, 0.7),
        (-3.0, 0.7),
        (0.45, 0.3),
        (0.95, -2.0),
        (0.5, 0.33),   // BC exactly at FC·VJC
        (0.48, -20.0), // BE exactly at FC·VJE
    ] {
        let vei = 0.1;
        let vbi = vei + vbe;
        let vci = vbi - vbc;
        // external nodes displaced from the internal ones by a few mV
        v.push([vci + 0.013, vbi + 0.007, vei - 0.002, vci, vbi, vei]);
    }
    v
}

/// G = ∂i/∂x and C = ∂q/∂x against central differences of i and q. Step
/// h = 1e-7 V: truncation error ~ h²/(6 (n Vt)²) ≈ 3e-12 relative, rounding
/// ~ 1e-16·|i|/h·nVt ≈ 3e-11 relative to the row's conductance scale; the
/// tolerance 1e-6 of the row's largest entry leaves margin for the
/// steepest terms.
#[test]
fn jacobians_match_finite_differences() {
    for pnp in [false, true] {
        let q = six_node(&full_params(pnp));
        for xb in bias_points() {
            assert_fd(&q, pnp, xb);
        }
    }
}

/// The same check with avalanche multiplication on (BV_CBO = 30 V at
/// 300.15 K, 30.60 V at 320 K with α_BV = 1e-3/K, n_av = 4), at reverse
/// collector–base voltages up to, across and past the point where M − 1
/// continues along its tangent (30.52 V). The law is C¹ there, so the
/// central difference's error stays O(h²) on each side.
#[test]
fn avalanche_jacobians_match_finite_differences() {
    for pnp in [false, true] {
        let p = BjtParams {
            bv_cbo: 30.0,
            avalanche_exp: 4.0,
            bv_tempco: 1e-3,
            t_measured: 300.15,
            ..full_params(pnp)
        };
        let q = six_node(&p);
        for &(vbe, vbc) in &[
            (0.65, -10.0),
            (0.72, -25.0),
            (0.72, -29.0),
            (0.6, -30.5),
            (0.7, -31.5),
            (0.3, -33.0),
            (0.78, -0.5),
        ] {
            let vei = 0.1;
            let vbi = vei + vbe;
            let vci = vbi - vbc;
            assert_fd(
                &q,
                pnp,
                [vci + 0.013, vbi + 0.007, vei - 0.002, vci, vbi, vei],
            );
        }
    }
}

/// G and C of `q` at the (npn-sense) bias `xb` against central differences,
/// and KCL on currents and charges.
fn assert_fd(q: &Bjt, pnp: bool, xb: [f64; 6]) {
    let sgn = if pnp { -1.0 } else { 1.0 };
    let x: Vec<f64> = xb.iter().map(|v| sgn * v).collect();
    assert_fd_at(q, &x, 6, &format!("pnp {pnp} at {xb:?}"));
}

/// G and C of `q` at the unknowns `x` (any number of them) against central
/// differences, and KCL over the first `terminal_rows` rows (the node rows;
/// state rows of internal quantities balance among themselves).
fn assert_fd_at(q: &Bjt, x: &[f64], terminal_rows: usize, at: &str) {
    let n = x.len();
    let st = stamp(q, x, &exact());
    let h = 1e-7;
    for col in 0..n {
        let mut xp = x.to_vec();
        let mut xm = x.to_vec();
        xp[col] += h;
        xm[col] -= h;
        let (sp, sm) = (stamp(q, &xp, &exact()), stamp(q, &xm, &exact()));
        for row in 0..n {
            let g_scale = (0..n).map(|c| st.g_at(row, c).abs()).fold(1e-12, f64::max);
            let c_scale = (0..n).map(|c| st.c_at(row, c).abs()).fold(1e-18, f64::max);
            let g_fd = (sp.i[row] - sm.i[row]) / (2.0 * h);
            let c_fd = (sp.q[row] - sm.q[row]) / (2.0 * h);
            assert!(
                (g_fd - st.g_at(row, col)).abs() <= 1e-6 * g_scale,
                "G[{row}][{col}] {} vs fd {g_fd}, {at}",
                st.g_at(row, col)
            );
            assert!(
                (c_fd - st.c_at(row, col)).abs() <= 1e-6 * c_scale,
                "C[{row}][{col}] {} vs fd {c_fd}, {at}",
                st.c_at(row, col)
            );
        }
    }
    // KCL: the device neither creates nor destroys current or charge.
    let rows = &st.i[..terminal_rows];
    let isum: f64 = rows.iter().sum();
    let iscale = rows.iter().fold(1e-15f64, |a, v| a.max(v.abs()));
    assert!(isum.abs() <= 1e-12 * iscale, "{at}");
    let qrows = &st.q[..terminal_rows];
    let qsum: f64 = qrows.iter().sum();
    let qscale = qrows.iter().fold(1e-21f64, |a, v| a.max(v.abs()));
    assert!(qsum.abs() <= 1e-12 * qscale, "{at}");
}

/// A pnp is the mirror of the npn (common practice; Getreu 1976): at negated
/// node voltages it stamps negated currents and charges and the same G and C.
/// Both evaluate identical arithmetic on negated inputs, so equality is exact
/// to rounding (1e-14 relative).
#[test]
fn pnp_mirrors_npn() {
    let n = six_node(&full_params(false));
    let p = six_node(&full_params(true));
    for xb in bias_points() {
        let xn = xb.to_vec();
        let xp: Vec<f64> = xb.iter().map(|v| -v).collect();
        let (sn, sp) = (stamp(&n, &xn, &exact()), stamp(&p, &xp, &exact()));
        let eq = |a: f64, b: f64| (a - b).abs() <= 1e-14 * a.abs().max(b.abs()) + 1e-30;
        for k in 0..6 {
            assert!(eq(sn.i[k], -sp.i[k]), "i[{k}] at {xb:?}");
            assert!(eq(sn.q[k], -sp.q[k]), "q[{k}] at {xb:?}");
        }
        for k in 0..36 {
            assert!(eq(sn.g[k], sp.g[k]), "g[{k}] at {xb:?}");
            assert!(eq(sn.c[k], sp.c[k]), "c[{k}] at {xb:?}");
        }
        // op_info in physical signs: voltages and currents flip, the rest not.
        let on = n.op_info(&xn, &exact());
        let op = p.op_info(&xp, &exact());
        assert_eq!(on.len(), 12);
        for ((name, a), (_, b)) in on.iter().zip(&op) {
            let flips = matches!(name.key(), "v_be" | "v_bc" | "v_ce" | "i_c" | "i_b" | "i_e");
            let b = if flips { -b } else { *b };
            assert!(eq(*a, b), "{name:?}: {a} vs {b}");
        }
    }
}

/// Junction limiting (L. W. Nagel, ERL M520, 1975; check-values.md): the BE
/// junction of a transistor with IS = 1e-14 A, NF = 1 at 300.15 K, stepping
/// from 0.6 V to 5 V, is limited to 0.733006066 V. The stamp is then the
/// linearisation about the limited point, i(v_lim) + G (v − v_lim).
#[test]
fn limiting_both_junctions_and_linearisation() {
    let p = BjtParams {
        sat_current: 1e-14,
        early_fwd: 40.0,
        knee_fwd: 0.5,
        t_measured: 300.15,
        ..BjtParams::default()
    };
    let nodes = BjtNodes {
        c: Some(0),
        b: Some(1),
        e: None,
        ci: Some(0),
        cj: Some(0),
        bi: Some(1),
        ei: None,
        phase: [None, None],
    };
    let q = Bjt::new(tankwave_circuit::ElementId::new(0), nodes, &p, 1.0, 300.15);
    let lim = EvalCtx {
        limit: true,
        junction_leak: 0.0,
        ..EvalCtx::default()
    };
    // VBE 0.6 → 5.0 with VBC held at −1 V: only BE is limited.
    let x = [5.0 - (-1.0), 5.0];
    let mut s = [0.6, -1.0];
    let mut st = DenseStamp::new(2);
    let info = q.eval(&x, &lim, &mut s, &mut st);
    assert!(info.limited);
    assert!((s[0] - 0.733006066).abs() < 1e-9, "limited VBE {}", s[0]);
    assert_eq!(s[1], -1.0, "VBC below Vcrit is not limited");
    // Linearisation: exact stamp at the limited point plus G·(x − x_lim).
    let xl = [s[0] - s[1], s[0]];
    let ex = EvalCtx {
        limit: false,
        ..lim
    };
    let at = stamp(&q, &xl, &ex);
    for r in 0..2 {
        let lin = at.i[r] + (0..2).map(|c| at.g_at(r, c) * (x[c] - xl[c])).sum::<f64>();
        assert!((st.i[r] - lin).abs() <= 1e-12 * lin.abs(), "row {r}");
        for c in 0..2 {
            assert_eq!(st.g_at(r, c), at.g_at(r, c));
        }
    }
    // Both junctions: reverse-active step, BC jumps from 0 to 3 V.
    let mut s = [-1.0, 0.0];
    let vb = -1.0;
    let x = [vb - 3.0, vb]; // VBE = −1 (unchanged), VBC = 3

    let info = q.eval(&x, &lim, &mut s, &mut DenseStamp::new(2));
    assert!(info.limited);
    let vt: f64 = 0.025864925786;
    assert!(
        (s[1] - vt * (3.0 / vt).ln()).abs() < 1e-9,
        "limited VBC {}",
        s[1]
    );
    // Without ctx.limit the same step is evaluated exactly.
    let mut s = [0.6, -1.0];
    let info = q.eval(&[6.0, 5.0], &ex, &mut s, &mut DenseStamp::new(2));
    assert!(!info.limited);
    assert_eq!(s, [5.0, -1.0]);
}

/// Dense Gaussian elimination with partial pivoting (test helper).
fn solve(mut a: Vec<f64>, mut b: Vec<f64>) -> Vec<f64> {
    let n = b.len();
    for k in 0..n {
        let p = (k..n)
            .max_by(|&i, &j| a[i * n + k].abs().total_cmp(&a[j * n + k].abs()))
            .expect("rows");
        for c in 0..n {
            a.swap(k * n + c, p * n + c);
        }
        b.swap(k, p);
        for i in k + 1..n {
            let f = a[i * n + k] / a[k * n + k];
            for c in k..n {
                a[i * n + c] -= f * a[k * n + c];
            }
            b[i] -= f * b[k];
        }
    }
    let mut x = vec![0.0; n];
    for k in (0..n).rev() {
        let s: f64 = (k + 1..n).map(|c| a[k * n + c] * x[c]).sum();
        x[k] = (b[k] - s) / a[k * n + k];
    }
    x
}

/// A Norton source: node `node` tied through `r` to a fixed potential `v`.
struct Tie {
    node: usize,
    r: f64,
    v: f64,
}

/// Newton from x = 0 with limiting; returns the solution and iterations.
fn newton(q: &Bjt, n: usize, ties: &[Tie]) -> (Vec<f64>, usize) {
    let mut x = vec![0.0; n];
    let mut s = [0.0; 2];
    q.init_state(&mut s);
    let ctx = EvalCtx {
        limit: true,
        ..EvalCtx::default()
    };
    for it in 1..=200 {
        let mut st = DenseStamp::new(n);
        let info = q.eval(&x, &ctx, &mut s, &mut st);
        for t in ties {
            st.i[t.node] += (x[t.node] - t.v) / t.r;
            st.g[t.node * n + t.node] += 1.0 / t.r;
        }
        let dx = solve(st.g.clone(), st.i.iter().map(|v| -v).collect());
        let step = dx.iter().fold(0.0f64, |a, v| a.max(v.abs()));
        for (xi, d) in x.iter_mut().zip(&dx) {
            *xi += d;
        }
        assert!(
            x.iter().all(|v| v.is_finite()),
            "diverged at iteration {it}"
        );
        if step < 1e-10 && !info.limited {
            return (x, it);
        }
    }
    panic!("no convergence in 200 iterations");
}

/// Residual of KCL at the solution, evaluated exactly.
fn residual(q: &Bjt, x: &[f64], ties: &[Tie]) -> f64 {
    let mut st = stamp(q, x, &exact());
    for t in ties {
        st.i[t.node] += (x[t.node] - t.v) / t.r;
    }
    st.i.iter().fold(0.0f64, |a, v| a.max(v.abs()))
}

fn op(q: &Bjt, x: &[f64], name: &str) -> f64 {
    q.op_info(x, &exact())
        .into_iter()
        .find(|(n, _)| n.key() == name)
        .map(|(_, v)| v)
        .expect("figure")
}

/// Operating points in every region converge from a zero start (Newton with
/// limiting on both junctions). Unknowns: c b e ci bi ei; the emitter is
/// tied to 0 V (or the supply) through 1 mΩ, the collector and base through
/// their load and bias resistors. Region checks use first-order facts:
/// forward active IC ≈ βF·IB, saturation VCE < VBE, cut-off IC ≈ 0, reverse
/// active IE ≈ −βR·IB... (signs as currents into the terminals).
#[test]
fn operating_points_converge_from_zero() {
    for pnp in [false, true] {
        let s = if pnp { -1.0 } else { 1.0 };
        let mut p = full_params(pnp);
        p.early_fwd = f64::INFINITY;
        p.early_rev = f64::INFINITY;
        let q = six_node(&p);
        let vcc = 24.0 * s;
        let cases: [(&str, f64, f64, f64, f64); 4] = [
            // (region, Vbb, Rb, collector R, emitter supply)
            ("forward", 3.0 * s, 2e3, 20.0, 0.0),
            ("saturation", 5.0 * s, 50.0, 20.0, 0.0),
            ("cutoff", -3.0 * s, 2e3, 20.0, 0.0),
            ("reverse", 3.0 * s, 2e3, 0.0, vcc),
        ];
        for (region, vbb, rb, rc, ve) in cases {
            let ties = if region == "reverse" {
                // collector grounded, emitter through 20 Ω to the supply
                vec![
                    Tie {
                        node: 0,
                        r: 1e-3,
                        v: 0.0,
                    },
                    Tie {
                        node: 1,
                        r: rb,
                        v: vbb,
                    },
                    Tie {
                        node: 2,
                        r: 20.0,
                        v: ve,
                    },
                ]
            } else {
                vec![
                    Tie {
                        node: 0,
                        r: rc,
                        v: vcc,
                    },
                    Tie {
                        node: 1,
                        r: rb,
                        v: vbb,
                    },
                    Tie {
                        node: 2,
                        r: 1e-3,
                        v: 0.0,
                    },
                ]
            };
            let (x, its) = newton(&q, 6, &ties);
            assert!(residual(&q, &x, &ties) < 1e-9, "{region} pnp {pnp}: KCL");
            assert!(its < 100, "{region}: {its} iterations");
            let (vbe, vbc) = (s * op(&q, &x, "v_be"), s * op(&q, &x, "v_bc"));
            let (ic, ib) = (s * op(&q, &x, "i_c"), s * op(&q, &x, "i_b"));
            match region {
                "forward" => {
                    assert!(vbe > 0.5 && vbc < -1.0, "forward: {vbe} {vbc}");
                    // βF = 60 reduced by leakage, knee and temperature (XTB = 0): 40..60
                    assert!(ic / ib > 40.0 && ic / ib < 60.5, "beta {}", ic / ib);
                }
                "saturation" => {
                    assert!(vbe > 0.5 && vbc > 0.4, "saturation: {vbe} {vbc}");
                    // forced beta well below βF = 60 (common practice criterion)
                    assert!(ic / ib < 30.0, "forced beta {}", ic / ib);
                    // IC set by the load: (Vcc − VCE)/RC
                    let vce = vbe - vbc;
                    assert!((ic - (vcc * s - vce) / rc).abs() < 1e-3 * ic);
                }
                "cutoff" => {
                    assert!(vbe < 0.0 && vbc < 0.0);
                    assert!(ic.abs() < 1e-8 && ib.abs() < 1e-8, "{ic} {ib}");
                }
                "reverse" => {
                    assert!(vbc > 0.5 && vbe < -1.0, "reverse: {vbe} {vbc}");
                    let ie = s * op(&q, &x, "i_e");
                    // emitter acts as collector: IE into the emitter ≈ βR·IB.
                    assert!(ie > 0.0 && ie / ib > 1.5 && ie / ib < 3.01, "{}", ie / ib);
                }
                _ => unreachable!(),
            }
        }
    }
}

proptest::proptest! {
    /// No input voltages, however wild, produce a non-finite stamp or
    /// operating-point figure (project rule: never a NaN), with and without
    /// limiting, npn and pnp. Common practice for a robust device model.
    #[test]
    fn stamps_are_finite_everywhere(
        v in proptest::collection::vec(-1e3f64..1e3, 6),
        old in proptest::collection::vec(-50f64..50.0, 2),
        pnp in proptest::bool::ANY,
        limit in proptest::bool::ANY,
    ) {
        let q = six_node(&full_params(pnp));
        let ctx = EvalCtx { limit, ..EvalCtx::default() };
        let mut st = DenseStamp::new(6);
        let mut s = [old[0], old[1]];
        q.eval(&v, &ctx, &mut s, &mut st);
        proptest::prop_assert!(st.i.iter().chain(&st.q).chain(&st.g).chain(&st.c).all(|x| x.is_finite()));
        proptest::prop_assert!(s.iter().all(|x| x.is_finite()));
        let info = q.op_info(&v, &ctx);
        proptest::prop_assert_eq!(info.len(), 12);
    }
}

/// The epitaxial collector (quasi-saturation) in the stamp: G and C
/// against central differences at biases from plain forward active
/// (junction side reverse biased: the layer is R_CO) through quasi-
/// saturation (junction side forward, contact side reverse) into full
/// saturation, npn and pnp, with the epi charge and avalanche on; KCL.
/// Seven unknowns: c b e ci bi ei cj. Same step and tolerance as above.
#[test]
fn epi_jacobians_match_finite_differences() {
    for pnp in [false, true] {
        let p = BjtParams {
            r_epi: 2.0,
            epi_gamma: 2e-11,
            epi_charge: 5e-10,
            bv_cbo: 60.0,
            avalanche_exp: 4.0,
            ..full_params(pnp)
        };
        let nodes = BjtNodes {
            c: Some(0),
            b: Some(1),
            e: Some(2),
            ci: Some(3),
            bi: Some(4),
            ei: Some(5),
            cj: Some(6),
            phase: [None, None],
        };
        let q = Bjt::new(tankwave_circuit::ElementId::new(0), nodes, &p, 1.0, 320.0);
        // (VBE, V_BCI, V_BCX): junction-side and contact-side BC voltages
        for &(vbe, vbci, vbcx) in &[
            (0.7, -5.0, -5.3),
            (0.75, 0.3, -0.6),
            (0.8, 0.6, -0.2),
            (0.85, 0.72, 0.1),
            (0.9, 0.8, 0.7),
            (0.3, -1.0, -1.0),
        ] {
            let sgn = if pnp { -1.0 } else { 1.0 };
            let vei = 0.1;
            let vbi = vei + vbe;
            let vcj = vbi - vbci;
            let vci = vbi - vbcx;
            let xb = [vci + 0.013, vbi + 0.007, vei - 0.002, vci, vbi, vei, vcj];
            let x: Vec<f64> = xb.iter().map(|v| sgn * v).collect();
            assert_fd_at(&q, &x, 7, &format!("epi, pnp {pnp} at {xb:?}"));
        }
    }
}

/// Current crowding (base resistance falling with the base current) in the
/// stamp: G against central differences at biases where the intrinsic base
/// current is large, small, zero-crossing and reverse (the smoothing keeps
/// the law differentiable there), npn and pnp. Same step and tolerance as
/// above.
#[test]
fn crowding_jacobians_match_finite_differences() {
    for pnp in [false, true] {
        let p = BjtParams {
            base_half_current: 0.05,
            r_base_min: 0.3,
            ..full_params(pnp)
        };
        let q = six_node(&p);
        for &(vbe, vbc) in &[
            (0.65, -5.0),
            (0.78, -2.0),
            (0.85, -1.0),
            (0.9, 0.5),
            (0.3, -1.0),
            (-1.0, -3.0),
            (0.0, 0.0),
        ] {
            let vei = 0.1;
            let vbi = vei + vbe;
            let vci = vbi - vbc;
            assert_fd(
                &q,
                pnp,
                [vci + 0.013, vbi + 0.02, vei - 0.002, vci, vbi, vei],
            );
        }
    }
}

/// A transistor with excess phase: c b e ci bi ei and the two states.
fn with_phase(p: &BjtParams) -> Bjt {
    let nodes = BjtNodes {
        c: Some(0),
        b: Some(1),
        e: Some(2),
        ci: Some(3),
        cj: Some(3),
        bi: Some(4),
        ei: Some(5),
        phase: [Some(6), Some(7)],
    };
    Bjt::new(tankwave_circuit::ElementId::new(0), nodes, p, 1.0, 320.0)
}

/// Excess phase in the stamp: G and C against central differences with the
/// delayed current away from its static value (y₁ ≠ I_CC, y₂ ≠ 0), with
/// avalanche on so that the delayed current's multiplication is checked
/// too, npn and pnp; KCL of the terminal rows. Same step and tolerance.
#[test]
fn excess_phase_jacobians_match_finite_differences() {
    for pnp in [false, true] {
        let p = BjtParams {
            excess_phase: 25.0,
            bv_cbo: 40.0,
            avalanche_exp: 4.0,
            ..full_params(pnp)
        };
        let q = with_phase(&p);
        for &(vbe, vbc, y1, y2) in &[
            (0.72, -10.0, 0.03, 0.01),
            (0.8, -25.0, 0.5, -0.2),
            (0.85, 0.6, 1.0, 0.3),
            (0.3, -1.0, 0.0, 0.0),
        ] {
            let sgn = if pnp { -1.0 } else { 1.0 };
            let vei = 0.1;
            let vbi = vei + vbe;
            let vci = vbi - vbc;
            let mut x: Vec<f64> = [vci + 0.013, vbi + 0.007, vei - 0.002, vci, vbi, vei]
                .iter()
                .map(|v| sgn * v)
                .collect();
            x.extend([y1, y2]);
            // the terminal rows (c b e ci bi ei) keep KCL, the state rows balance alone
            assert_fd_at(&q, &x, 6, &format!("excess phase, pnp {pnp} at {x:?}"));
        }
    }
}

/// The small-signal transfer of the excess-phase states is the
/// second-order Bessel form 3/(3 + 3 jωt_d − (ωt_d)²) of e^{−jωt_d}
/// (P. B. Weil, L. P. McNamee, "Simulation of excess phase in bipolar
/// transistors", IEEE Trans. Circuits and Systems 25(2), 1978, from memory),
/// evaluated by numpy over frequencies from 1 MHz to 3 GHz
/// (tests/reference/bjt/gen.py → phase.csv; 1e-12, the same closed form), so
/// at ω = 1/τ_F its phase is −φ_F to the approximation's error (1.1e-4 rad
/// at φ_F = 20°, worked from the form). Solved from the stamp's own G and C
/// at a bias with the junction voltages held: the states' rows give
/// y = −(G_yy + jωC_yy)⁻¹ G_yv v.
#[test]
fn excess_phase_is_a_second_order_bessel_delay() {
    let tf = 0.5e-9;
    let phi = 20f64.to_radians();
    let p = BjtParams {
        excess_phase: 20.0,
        ..full_params(false)
    };
    let q = with_phase(&p);
    let (vbe, vbc) = (0.75, -5.0);
    let vei = 0.1;
    let vbi = vei + vbe;
    let vci = vbi - vbc;
    let k = q.constants();
    let t = tankwave_devices::bjt::intrinsic(k, vbe, vbc, 0.0);
    let x = vec![vci, vbi, vei, vci, vbi, vei, t.icc, 0.0];
    let st = stamp(&q, &x, &exact());
    // the static point: the state rows balance
    assert!(
        st.i[6].abs() < 1e-15 && st.i[7].abs() < 1e-12 * t.icc,
        "{:?}",
        &st.i[6..]
    );
    let (g, c) = (|r, cc| st.g_at(r, cc), |r, cc| st.c_at(r, cc));
    let mul = |p: (f64, f64), q: (f64, f64)| (p.0 * q.0 - p.1 * q.1, p.0 * q.1 + p.1 * q.0);
    let sub = |p: (f64, f64), q: (f64, f64)| (p.0 - q.0, p.1 - q.1);
    let div = |p: (f64, f64), q: (f64, f64)| {
        let d = q.0 * q.0 + q.1 * q.1;
        ((p.0 * q.0 + p.1 * q.1) / d, (p.1 * q.0 - p.0 * q.1) / d)
    };
    // y1 for a unit wiggle of x_bi, over the undelayed ∂I_CC/∂v_bi
    let h_at = |w: f64| {
        let a = [
            [(g(6, 6), w * c(6, 6)), (g(6, 7), w * c(6, 7))],
            [(g(7, 6), w * c(7, 6)), (g(7, 7), w * c(7, 7))],
        ];
        let rhs = [(-g(6, 4), 0.0), (-g(7, 4), 0.0)];
        let det = sub(mul(a[0][0], a[1][1]), mul(a[0][1], a[1][0]));
        let y1 = div(sub(mul(rhs[0], a[1][1]), mul(a[0][1], rhs[1])), det);
        div(y1, (t.dicc_dvbe + t.dicc_dvbc, 0.0))
    };
    let csv = include_str!("../../../tests/reference/bjt/phase.csv");
    let mut rows = 0;
    for line in csv
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("freq"))
    {
        let f: Vec<f64> = line
            .split(',')
            .map(|v| v.parse().expect("number"))
            .collect();
        let h = h_at(2.0 * std::f64::consts::PI * f[0]);
        assert!(
            (h.0 - f[1]).abs() < 1e-12 && (h.1 - f[2]).abs() < 1e-12,
            "{h:?} vs ({}, {}) at {} Hz",
            f[1],
            f[2],
            f[0]
        );
        rows += 1;
    }
    assert_eq!(rows, 6);
    let h = h_at(1.0 / tf);
    let phase = h.1.atan2(h.0);
    assert!((phase + phi).abs() < 1.2e-4, "{phase} vs {}", -phi);
}
