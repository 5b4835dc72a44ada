"""Independent reference for the curve fit of tankwave-fit.

Makes data-sheet-style curves from known bipolar-transistor parameters with
the published large-signal equations (numpy, float64), once exactly and once
with seeded noise, and fits the noisy set with scipy.optimize.least_squares
on the same residuals (weighted relative error) as a second, independent
optimiser. Writes, next to this file:

  clean/*.csv, noisy/*.csv   the curves (columns as docs/fit.md documents)
  truth.csv                  the parameters the curves were made from
  scipy_fit.csv              scipy's fit of the noisy curves

Sources (forms from memory):
  H. K. Gummel, H. C. Poon, Bell Syst. Tech. J. 49(5), 1970: transport
  current over the normalised base charge, qb = (q1/2)(1 + sqrt(1 + 4 q2)).
  L. W. Nagel, ERL M520, 1975: reciprocal Early factor q1 = 1/(1 - VBC/VA).
  I. Getreu, Modeling the Bipolar Transistor, 1976: base current with the
  base-emitter recombination term, depletion charge with the linear
  continuation above FC*phi, diffusion charge TF*IF/qb.
  Transition frequency of the hybrid-pi model, fT = gm / (2 pi (Cpi + Cmu)):
  P. R. Gray, P. J. Hurst, S. H. Lewis, R. G. Meyer, Analysis and Design of
  Analog Integrated Circuits, 5th ed., sec. 1.4.8.
  Saturation: the two junction equations solved together for (VBE, VBC) at
  the given IC and IB.
Physical constants: CODATA 2018 (exact), k = 1.380649e-23 J/K,
q = 1.602176634e-19 C. Temperature 25 degC.

Run:  python3 gen.py   (numpy 2.1.3, scipy 1.14.1; see requirements.txt)
"""

import csv
import os

import numpy as np
from scipy.optimize import least_squares

HERE = os.path.dirname(os.path.abspath(__file__))
VT = 1.380649e-23 * 298.15 / 1.602176634e-19
FC = 0.5

TRUTH = dict(
    IS=2e-14, NF=1.0, BF=80.0, ISE=1e-11, NE=1.8, VA=60.0, IKF=2.0, TF=0.4e-9,
    BR=3.0, RC=0.15, CJC=120e-12, VJC=0.6, MJC=0.4, CJE=600e-12, VJE=0.75,
    MJE=0.35,
)
# the order of the parameter vector; True: fitted in ln
ORDER = [("CJC", True), ("VJC", False), ("MJC", False), ("CJE", True),
         ("VJE", False), ("MJE", False), ("IS", True), ("NF", False),
         ("BF", True), ("ISE", True), ("NE", False), ("VA", True),
         ("IKF", True), ("TF", True), ("BR", True), ("RC", True)]
# bounds as in crates/fit/src/knob.rs
BOUNDS = dict(CJC=(1e-16, 1e-6), VJC=(0.2, 1.5), MJC=(0.1, 0.9),
              CJE=(1e-16, 1e-6), VJE=(0.2, 1.5), MJE=(0.1, 0.9),
              IS=(1e-20, 1e-6), NF=(0.9, 2.0), BF=(1.0, 5000.0),
              ISE=(1e-22, 1e-4), NE=(1.0, 4.0), VA=(2.0, 2000.0),
              IKF=(1e-6, 1e3), TF=(1e-13, 1e-6), BR=(0.01, 500.0),
              RC=(1e-5, 1e3))


def qdep(v, cj0, phi, m):
    """Depletion charge from 0 to v, linear capacitance above FC*phi."""
    v = np.asarray(v, dtype=float)
    vc = FC * phi
    below = cj0 * phi / (1 - m) * (1 - (1 - np.minimum(v, vc) / phi) ** (1 - m))
    f1 = (1 - FC) ** (-(1 + m))
    dv = np.maximum(v - vc, 0.0)
    above = cj0 * f1 * ((1 - FC * (1 + m)) * dv + m / (2 * phi) * ((vc + dv) ** 2 - vc ** 2))
    return below + above


def currents(p, vbe, vbc):
    i_f = p["IS"] * np.expm1(vbe / (p["NF"] * VT))
    i_r = p["IS"] * np.expm1(vbc / VT)
    q1 = 1.0 / (1.0 - vbc / p["VA"])
    q2 = i_f / p["IKF"]
    qb = q1 / 2 * (1 + np.sqrt(1 + 4 * q2))
    ic = (i_f - i_r) / qb - i_r / p["BR"]
    ib = i_f / p["BF"] + p["ISE"] * np.expm1(vbe / (p["NE"] * VT)) + i_r / p["BR"]
    qbe = qdep(vbe, p["CJE"], p["VJE"], p["MJE"]) + p["TF"] * i_f / qb
    qbc = qdep(vbc, p["CJC"], p["VJC"], p["MJC"])
    return ic, ib, qbe, qbc


def vbe_for(p, ic, vce):
    """V_BE carrying ic at the external vce (drop ic*RC), by bisection."""
    vce_i = vce - ic * p["RC"]
    lo = np.full_like(ic, -0.5)
    hi = np.full_like(ic, 3.0)
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        low = currents(p, mid, mid - vce_i)[0] < ic
        lo = np.where(low, mid, lo)
        hi = np.where(low, hi, mid)
    return hi, hi - vce_i


def gain(p, ic, vce):
    vbe, vbc = vbe_for(p, ic, vce)
    c = currents(p, vbe, vbc)
    return c[0] / c[1]


def vbe_curve(p, ic, vce):
    return vbe_for(p, ic, vce)[0]


def ft(p, ic, vce):
    vbe, vbc = vbe_for(p, ic, vce)
    h = 1e-7  # central differences: error ~1e-10 relative
    gm = (currents(p, vbe + h, vbc)[0] - currents(p, vbe - h, vbc)[0]) / (2 * h)
    cpi = (currents(p, vbe + h, vbc)[2] - currents(p, vbe - h, vbc)[2]) / (2 * h)
    cmu = (currents(p, vbe, vbc + h)[3] - currents(p, vbe, vbc - h)[3]) / (2 * h)
    return gm / (2 * np.pi * (cpi + cmu))


def cap(cj0, phi, m, vr):
    return cj0 * (1 + vr / phi) ** (-m)


def vbe_for_ib(p, ib, vbc):
    """V_BE with I_B(V_BE, vbc) = ib (I_B rises with V_BE), by bisection."""
    lo = np.full_like(vbc, -1.0)
    hi = np.full_like(vbc, 3.0)
    for _ in range(64):
        mid = 0.5 * (lo + hi)
        low = currents(p, mid, vbc)[1] < ib
        lo = np.where(low, mid, lo)
        hi = np.where(low, hi, mid)
    return hi


def vce_sat_bisect(p, ic, ib):
    """(V_BE, V_BC) carrying ic and ib: at the V_BE that gives ib, I_C falls
    as V_BC rises, so V_BC is found by an outer bisection (slow, sure: used
    for the curves made from the truth)."""
    lo = np.full_like(ic, -3.0)
    hi = np.full_like(ic, 3.0)
    for _ in range(64):
        mid = 0.5 * (lo + hi)
        vbe = vbe_for_ib(p, ib, mid)
        above = currents(p, vbe, mid)[0] > ic
        lo = np.where(above, mid, lo)
        hi = np.where(above, hi, mid)
    vbe = vbe_for_ib(p, ib, lo)
    c = currents(p, vbe, lo)
    assert np.all(np.abs(c[0] / ic - 1) < 1e-9), c[0] / ic
    return vbe - lo + ic * p["RC"]


def vce_sat(p, ic, ib):
    """The same bias by damped Newton on the two relative current errors
    (fast: used inside scipy's fit); checked to 1e-9 on the currents."""
    vbe = p["NF"] * VT * np.log(ic / p["IS"])
    vbc = vbe - 0.1
    h = 1e-7
    for _ in range(200):
        def f(a, c):
            i = currents(p, a, c)
            return (i[0] - ic) / ic, (i[1] - ib) / ib
        f1, f2 = f(vbe, vbc)
        a1, a2 = f(vbe + h, vbc)
        c1, c2 = f(vbe, vbc + h)
        j11, j21 = (a1 - f1) / h, (a2 - f2) / h
        j12, j22 = (c1 - f1) / h, (c2 - f2) / h
        det = j11 * j22 - j12 * j21
        dx = -(j22 * f1 - j12 * f2) / det
        dy = -(-j21 * f1 + j11 * f2) / det
        big = np.maximum(np.abs(dx), np.abs(dy))
        s = np.where(big > 0.05, 0.05 / np.maximum(big, 1e-300), 1.0)
        vbe, vbc = vbe + s * dx, vbc + s * dy
        if np.all(np.maximum(np.abs(f1), np.abs(f2)) < 1e-12):
            break
    f1, f2 = f(vbe, vbc)
    assert np.all(np.maximum(np.abs(f1), np.abs(f2)) < 1e-9), (f1, f2)
    return vbe - vbc + ic * p["RC"]


def grids():
    g = {}
    ic5 = np.logspace(-4, np.log10(5.0), 16)
    ic10 = np.logspace(-2, np.log10(4.0), 8)
    g["gain"] = (np.concatenate([ic5, ic10]), np.concatenate([np.full(16, 5.0), np.full(8, 10.0)]))
    g["vbe"] = (np.logspace(-4, np.log10(5.0), 12), np.full(12, 5.0))
    g["ft"] = (np.logspace(-2, np.log10(3.0), 10), np.full(10, 10.0))
    isat = np.logspace(-1, np.log10(5.0), 8)
    # forced gains of 10 and 20, as data sheets give
    g["vce-sat"] = (np.concatenate([isat, isat]), np.concatenate([isat / 10, isat / 20]))
    g["cap-bc"] = (np.logspace(np.log10(0.5), np.log10(40.0), 12), None)
    g["cap-be"] = (np.logspace(-1, np.log10(4.0), 8), None)
    return g


def model(p, kind, a, b):
    if kind == "gain":
        return gain(p, a, b)
    if kind == "vbe":
        return vbe_curve(p, a, b)
    if kind == "ft":
        return ft(p, a, b)
    if kind == "vce-sat":
        return vce_sat(p, a, b)
    if kind == "vce-sat-sure":
        return vce_sat_bisect(p, a, b)
    if kind == "cap-bc":
        return cap(p["CJC"], p["VJC"], p["MJC"], a)
    return cap(p["CJE"], p["VJE"], p["MJE"], a)


HEADERS = {
    "gain": ("ic[A]", "vce[V]", "gain"),
    "vbe": ("ic[A]", "vce[V]", "vbe[V]"),
    "ft": ("ic[A]", "vce[V]", "ft[Hz]"),
    "vce-sat": ("ic[A]", "ib[A]", "vce[V]"),
    "cap-bc": ("reverse[V]", "cap[F]"),
    "cap-be": ("reverse[V]", "cap[F]"),
}


def write_curves(folder, curves):
    os.makedirs(os.path.join(HERE, folder), exist_ok=True)
    for kind, (a, b, y) in curves.items():
        with open(os.path.join(HERE, folder, kind + ".csv"), "w", newline="") as f:
            f.write("# made by tests/reference/fit/gen.py from truth.csv\n")
            w = csv.writer(f, lineterminator="\n")
            w.writerow(HEADERS[kind])
            for i in range(len(a)):
                row = [repr(float(a[i]))] + ([repr(float(b[i]))] if b is not None else []) + [repr(float(y[i]))]
                w.writerow(row)


def to_vec(p):
    return np.array([np.log(p[k]) if lg else p[k] for k, lg in ORDER])


def from_vec(x):
    p = dict(TRUTH)
    for (k, lg), v in zip(ORDER, x):
        p[k] = float(np.exp(v)) if lg else float(v)
    return p


def main():
    rng = np.random.default_rng(20)
    clean, noisy = {}, {}
    for kind, (a, b) in grids().items():
        y = model(TRUTH, kind, a, b)
        if kind == "vce-sat":
            sure = model(TRUTH, "vce-sat-sure", a, b)
            assert np.all(np.abs(sure / y - 1) < 1e-9), sure / y - 1
        clean[kind] = (a, b, y)
        # 1 % relative noise (a careful read-off of a printed curve), 0.3 % on V_BE
        sd = 0.003 if kind == "vbe" else 0.01
        noisy[kind] = (a, b, y * (1 + sd * rng.standard_normal(len(y))))
    write_curves("clean", clean)
    write_curves("noisy", noisy)
    with open(os.path.join(HERE, "truth.csv"), "w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["param", "value"])
        for k, _ in ORDER:
            w.writerow([k, repr(TRUTH[k])])

    # scipy's fit of the noisy curves: every parameter at once, same
    # residuals, bounds as the Rust fit, from a start 30 % off the truth
    def resid(x):
        p = from_vec(x)
        r = []
        for kind, (a, b, y) in noisy.items():
            r.append((model(p, kind, a, b) - y) / y)
        return np.concatenate(r)

    lo = np.array([np.log(BOUNDS[k][0]) if lg else BOUNDS[k][0] for k, lg in ORDER])
    hi = np.array([np.log(BOUNDS[k][1]) if lg else BOUNDS[k][1] for k, lg in ORDER])
    start = dict(TRUTH)
    for k, lg in ORDER:
        start[k] = TRUTH[k] * (1.3 if lg else 1.05)
    sol = least_squares(resid, to_vec(start), bounds=(lo, hi), method="trf",
                        x_scale="jac", ftol=1e-15, xtol=1e-15, gtol=1e-15, max_nfev=20000)
    fitted = from_vec(sol.x)
    with open(os.path.join(HERE, "scipy_fit.csv"), "w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["param", "value"])
        for k, _ in ORDER:
            w.writerow([k, repr(fitted[k])])
        w.writerow(["cost", repr(float(sol.cost))])
    print("scipy:", sol.message, "cost", sol.cost, "nfev", sol.nfev)
    for k, _ in ORDER:
        print(f"  {k:4s} truth {TRUTH[k]:.6g}  scipy {fitted[k]:.6g}  ({fitted[k] / TRUTH[k] - 1:+.2%})")


if __name__ == "__main__":
    main()
