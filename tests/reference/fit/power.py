"""Independent reference for the power-device stage of tankwave-fit: curves
of a transistor with an epitaxial collector (quasi-saturation) and
collector-base avalanche multiplication, made from known parameters with
the published equations (numpy, scipy's root finder), written to power/.

  power/gain.csv      static gain against I_C at V_CE = 10 V
  power/vbe.csv       base-emitter voltage against I_C at V_CE = 10 V
  power/vce-sat.csv   saturation voltage at forced gains of 10 and 20
  power/ic-vce.csv    output characteristics at three base currents, from
                      0.3 V (quasi-saturation) to 17 V (the avalanche rise)
  power/truth.csv     the parameters

Sources (forms from memory):
  the Gummel-Poon transport and base currents of gen.py (this directory);
  S. L. Miller, Phys. Rev. 99, 1955: M = 1/(1 - (V_CB/BV_CBO)^n), the
  generated current (M - 1) I_CT into the collector and out of the base;
  G. M. Kull, L. W. Nagel, S.-W. Lee, P. Lloyd, E. J. Prendergast,
  H. Dirks, IEEE Trans. Electron Devices 32(6), 1985: the epitaxial
  collector current [V_BCI - V_BCX + Vt (K_i - K_x - ln((1+K_i)/(1+K_x)))]/R_CO,
  K = sqrt(1 + gamma exp(V/Vt)).
Each point solves the junction voltages with scipy.optimize.fsolve and
checks the residuals to 1e-10.

Run:  python3 power.py   (numpy 2.1.3, scipy 1.14.1; see requirements.txt)
"""

import csv
import os

import numpy as np
from scipy.optimize import fsolve

import gen

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "power")
VT = gen.VT

TRUTH = dict(gen.TRUTH)
TRUTH.update(RCO=0.5, GAMMA=1e-11, BV=60.0, NAV=4.0)


def mult_minus_one(p, vcb):
    if vcb <= 0.0:
        return 0.0
    u = (vcb / p["BV"]) ** p["NAV"]
    assert u < 0.99, "past the law's tangent continuation"
    return u / (1.0 - u)


def currents(p, vbe, vbj):
    """I_C, I_B of the intrinsic transistor with avalanche, junction-side V_BC."""
    ic, ib, _, _ = gen.currents(p, vbe, vbj)
    # the transport current I_CT = I_C + I_R/BR (gen.currents folds I_R/BR in)
    i_r = p["IS"] * np.expm1(vbj / VT)
    ict = ic + i_r / p["BR"]
    g = mult_minus_one(p, -vbj)
    return ic + g * ict, ib - g * ict


def epi(p, vbj, vbx):
    ki = np.sqrt(1.0 + p["GAMMA"] * np.exp(vbj / VT))
    kx = np.sqrt(1.0 + p["GAMMA"] * np.exp(vbx / VT))
    return (vbj - vbx + VT * (ki - kx - np.log((1.0 + ki) / (1.0 + kx)))) / p["RCO"]


def solve(f, x0):
    x, info, ok, msg = fsolve(f, x0, full_output=True, xtol=1e-13)
    # fsolve may stop short of its xtol at machine precision: the residual decides
    r = np.max(np.abs(f(x)))
    assert r < 1e-10, (r, x)
    return x


def forward(p, ic, vce):
    """(V_BE, V_BCJ) carrying ic at the external vce."""
    def f(x):
        vbe, vbj = x
        i, _ = currents(p, vbe, vbj)
        vbx = vbe - (vce - ic * p["RC"])
        return [(i - ic) / ic, (epi(p, vbj, vbx) - ic) / ic]
    v0 = VT * np.log(ic / p["IS"])
    return solve(f, [v0, v0 - vce + ic * (p["RC"] + p["RCO"])])


def vce_sat(p, ic, ib):
    """At saturation the junction side is forward biased (no avalanche):
    (V_BE, V_BCJ) carrying ic and ib by the bisections of gen.py, then the
    contact-side V_BC at which the epi layer carries ic."""
    lo, hi = -3.0, 3.0
    for _ in range(100):
        mid = 0.5 * (lo + hi)
        vbe = gen.vbe_for_ib(p, ib, np.array([mid]))[0]
        if gen.currents(p, vbe, mid)[0] > ic:
            lo = mid
        else:
            hi = mid
    vbj = lo
    vbe = gen.vbe_for_ib(p, ib, np.array([vbj]))[0]
    i, b = currents(p, vbe, vbj)
    assert abs(i / ic - 1) < 1e-9 and abs(b / ib - 1) < 1e-9, (i, b)
    vbx = solve(lambda x: [(epi(p, vbj, x[0]) - ic) / ic], [vbj - ic * p["RCO"]])[0]
    return vbe - vbx + ic * p["RC"]


def output(p, vce, ib, start):
    def f(x):
        vbe, vbj = x
        i, b = currents(p, vbe, vbj)
        vbx = vbe - (vce - i * p["RC"])
        return [(b - ib) / ib, (epi(p, vbj, vbx) - i) / max(i, ib)]
    vbe, vbj = solve(f, start)
    return currents(p, vbe, vbj)[0], (vbe, vbj)


def write(name, header, rows):
    with open(os.path.join(OUT, name), "w", newline="") as fh:
        fh.write("# made by tests/reference/fit/power.py from power/truth.csv\n")
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(header)
        for r in rows:
            w.writerow([repr(float(v)) for v in r])


def main():
    os.makedirs(OUT, exist_ok=True)
    p = TRUTH
    ics = np.logspace(-3, np.log10(4.0), 14)
    g, v = [], []
    for ic in ics:
        vbe, vbj = forward(p, ic, 10.0)
        i, b = currents(p, vbe, vbj)
        g.append((ic, 10.0, i / b))
        v.append((ic, 10.0, vbe))
    write("gain.csv", ["ic[A]", "vce[V]", "gain"], g)
    write("vbe.csv", ["ic[A]", "vce[V]", "vbe[V]"], v)
    isat = np.logspace(-1, np.log10(4.0), 8)
    s = [(ic, ic / f, vce_sat(p, ic, ic / f)) for f in (10.0, 20.0) for ic in isat]
    write("vce-sat.csv", ["ic[A]", "ib[A]", "vce[V]"], s)
    rows = []
    for ib in (5e-3, 20e-3, 50e-3):
        # from the top down, each point starting from the one before
        vces = [17.0, 16.0, 15.0, 14.0, 12.0, 10.0, 8.0, 6.0, 4.0, 3.0, 2.5, 2.0,
                1.5, 1.0, 0.6, 0.3]
        v0 = VT * np.log(ib * p["BF"] / p["IS"])
        start = [v0, v0 - 17.0]
        for vce in vces:
            ic, start = output(p, vce, ib, start)
            rows.append((vce, ib, ic))
    write("ic-vce.csv", ["vce[V]", "ib[A]", "ic[A]"], rows)
    with open(os.path.join(OUT, "truth.csv"), "w", newline="") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(["param", "value"])
        for k, val in TRUTH.items():
            w.writerow([k, repr(val)])
    print("wrote", OUT)


if __name__ == "__main__":
    main()
