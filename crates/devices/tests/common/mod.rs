//! Helpers shared by the device integration tests: circuit building, a
//! finite-difference Jacobian check and a small dense solver.
#![allow(dead_code)]

use tankwave_circuit::ir::{Circuit, Element, ElementKind, NodeId, Origin};
use tankwave_devices::{DenseStamp, Device, DeviceSet, EvalCtx};

/// A circuit with the given node names and elements (named e0, e1, ... unless given).
pub fn circuit(nodes: &[&str], elements: Vec<(&str, ElementKind)>) -> Circuit {
    Circuit {
        temperature_k: 300.15,
        nodes: nodes.iter().map(|s| s.to_string()).collect(),
        elements: elements
            .into_iter()
            .map(|(name, kind)| Element {
                name: name.to_string(),
                kind,
                origin: Origin::default(),
            })
            .collect(),
        ..Default::default()
    }
}

/// The node handle of node index `i` (`None` is ground).
pub fn nid(i: Option<usize>) -> NodeId {
    i.map(NodeId::node).unwrap_or(NodeId::GROUND)
}

/// Evaluate one device at `x`.
pub fn stamp(d: &dyn Device, n: usize, x: &[f64], ctx: &EvalCtx) -> DenseStamp {
    let mut st = vec![0.0; d.state_len()];
    d.init_state(&mut st);
    let mut s = DenseStamp::new(n);
    d.eval(x, ctx, &mut st, &mut s);
    s
}

/// Evaluate a whole set at `x` (no limiting).
pub fn stamp_all(set: &DeviceSet, x: &[f64], ctx: &EvalCtx) -> DenseStamp {
    let mut st = set.initial_state();
    let mut s = DenseStamp::new(set.n_unknowns);
    set.eval_all(x, ctx, &mut st, &mut s, tankwave_devices::Filter::All);
    s
}

/// Central-difference check of G = ∂i/∂x and C = ∂q/∂x of one device at `x`.
/// Step h_k = `rel`·max(|x_k|, `floor`); the error of a central difference is
/// O(h²·f'''), so the tolerance passed in says how smooth the model is there.
pub fn fd_check(d: &dyn Device, x: &[f64], ctx: &EvalCtx, rel: f64, floor: f64, tol: f64) {
    let n = x.len();
    let s0 = stamp(d, n, x, ctx);
    for k in 0..n {
        let h = rel * x[k].abs().max(floor);
        let mut xp = x.to_vec();
        xp[k] += h;
        let mut xm = x.to_vec();
        xm[k] -= h;
        let sp = stamp(d, n, &xp, ctx);
        let sm = stamp(d, n, &xm, ctx);
        for r in 0..n {
            let gfd = (sp.i[r] - sm.i[r]) / (2.0 * h);
            let cfd = (sp.q[r] - sm.q[r]) / (2.0 * h);
            let (g, c) = (s0.g_at(r, k), s0.c_at(r, k));
            // Rounding floor of a central difference: a few ulps of the row's
            // value divided by the step (the row may carry unrelated large currents).
            let inoise = 1e-15 * sp.i[r].abs().max(sm.i[r].abs()) / h;
            let qnoise = 1e-15 * sp.q[r].abs().max(sm.q[r].abs()) / h;
            let gs = g.abs().max(gfd.abs()).max(1e-15);
            let cs = c.abs().max(cfd.abs()).max(1e-24);
            assert!(
                (g - gfd).abs() <= tol * gs + inoise,
                "{d:?}: G[{r}][{k}] = {g:e}, finite difference {gfd:e} at x = {x:?}"
            );
            assert!(
                (c - cfd).abs() <= tol * cs + qnoise,
                "{d:?}: C[{r}][{k}] = {c:e}, finite difference {cfd:e} at x = {x:?}"
            );
        }
    }
}

/// Solve a dense real system by Gaussian elimination with partial pivoting.
pub fn solve(mut a: Vec<f64>, mut b: Vec<f64>) -> Vec<f64> {
    let n = b.len();
    for col in 0..n {
        let p = (col..n)
            .max_by(|&i, &j| a[i * n + col].abs().total_cmp(&a[j * n + col].abs()))
            .unwrap();
        assert!(a[p * n + col].abs() > 1e-300, "singular test matrix");
        if p != col {
            for c in 0..n {
                a.swap(p * n + c, col * n + c);
            }
            b.swap(p, col);
        }
        for r in col + 1..n {
            let f = a[r * n + col] / a[col * n + col];
            for c in col..n {
                a[r * n + c] -= f * a[col * n + c];
            }
            b[r] -= f * b[col];
        }
    }
    let mut x = vec![0.0; n];
    for r in (0..n).rev() {
        let mut s = b[r];
        for c in r + 1..n {
            s -= a[r * n + c] * x[c];
        }
        x[r] = s / a[r * n + r];
    }
    x
}
