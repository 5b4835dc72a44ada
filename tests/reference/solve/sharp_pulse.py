"""Periodic steady state of a class-C stage with a sharp collector pulse.

Circuit: tests/data/accuracy/sharp-pulse.tank (a scenario of our own; the
values below are the same numbers, written once more here because this
script must not read the stage file's language).

    vdrv: -0.6 V + 1.6 V sin(2 pi f0 t), f0 = 7 MHz, behind rs = 2 Ohm
    cb = 2 nF from the base to ground
    q1: npn, Gummel-Poon transport with I_S = 5 pA, beta_F = 50,
        beta_R = 3, V_A = 100 V, no knee, no leakage, no charges, no ohmic
        resistances (docs/models.md, "Bipolar transistor": with q2 = 0,
        qb = q1 = 1/(1 - VBC/V_A)); g_min = 1e-12 S across both junctions
        (the solver's junction_leak), T = 298.15 K (25 degC, parameters
        measured at 25 degC: no temperature scaling)
    lt = 113.7 nH with r = 0.05 Ohm from vcc = 12 V to the collector
    ct = 4.547 nF from the collector to ground
    rload = 25 Ohm from the collector to vcc (the output element)

State x = (v_base, v_coll, i_lt):
    cb v_base' = (vdrv(t) - v_base)/rs - I_B
    ct v_coll' = i_lt - I_C - (v_coll - vcc)/rload
    lt i_lt'   = vcc - v_coll - r i_lt
with VBE = v_base, VBC = v_base - v_coll,
    I_F = I_S (exp(VBE/V_t) - 1),  I_R = I_S (exp(VBC/V_t) - 1)
    I_B = I_F/beta_F + I_R/beta_R + g_min (VBE + VBC)
    I_C = (I_F - I_R)(1 - VBC/V_A) - I_R/beta_R - g_min VBC
(H. K. Gummel, H. C. Poon, Bell Syst. Tech. J. 49(5), 1970, from memory, as
written in docs/models.md). V_t from the exact CODATA 2018 constants
(E. Tiesinga et al., Rev. Mod. Phys. 93, 025010, 2021).

Method: scipy.integrate.solve_ivp, method "Radau" (implicit Runge-Kutta of
order 5; E. Hairer, G. Wanner, Solving Ordinary Differential Equations II,
Springer 1996), vectorised right-hand side, analytic Jacobian, rtol 1e-12,
atol 1e-14 V/A. The periodic state is found by shooting: 20 plain periods
from rest, then Newton on x(T) - x(0) with the monodromy matrix from the
variational equation integrated alongside (state plus 3x3 sensitivity), until
the relative periodicity error is below 1e-12. The period is then sampled
at 8192 points of the dense output and the voltage across rload transformed
by FFT: output power P_1 = |V_1|^2/(2 rload) and harmonic levels
20 log10(|V_n|/|V_1|) dBc.

Its own error is estimated by solving again at rtol 1e-10 (atol 1e-12)
with 4096 samples, and written to the data file (err_* columns are the
absolute differences of the two). Run: python3 sharp_pulse.py (writes
sharp_pulse.txt beside this file; requirements.txt pins numpy and scipy).
With --time [RTOL] it instead times one solve at RTOL (default 1e-10,
atol RTOL/100) and prints P1, the harmonic levels and the times; the speed
comparison with tankwave (speed_vs_scipy.py) runs it that way.
"""
import os
import sys
import time

T_START = time.perf_counter()

import numpy as np  # noqa: E402
from scipy.integrate import solve_ivp  # noqa: E402

T_IMPORTED = time.perf_counter()

K_B = 1.380649e-23
Q_E = 1.602176634e-19
VT = K_B * 298.15 / Q_E
JUNCTION_LEAK = 1e-12  # the solver's conductance across each junction (junction_leak), S
IS, BF, BR, VA = 5e-12, 50.0, 3.0, 100.0
F0 = 7e6
PERIOD = 1.0 / F0
V_OFF, V_AMP = -0.6, 1.6
RS, CB = 2.0, 2e-9
VCC = 12.0
L, R_L = 113.7e-9, 0.05
CT = 4.547e-9
RLOAD = 25.0
HARMONICS = 32


def drive(t):
    return V_OFF + V_AMP * np.sin(2 * np.pi * F0 * t)


def currents(vb, vc):
    """I_B, I_C and their partial derivatives by v_base and v_coll."""
    vbe, vbc = vb, vb - vc
    ef, er = np.exp(vbe / VT), np.exp(vbc / VT)
    i_f, i_r = IS * (ef - 1.0), IS * (er - 1.0)
    g_f, g_r = IS * ef / VT, IS * er / VT
    early = 1.0 - vbc / VA
    ib = i_f / BF + i_r / BR + JUNCTION_LEAK * (vbe + vbc)
    ic = (i_f - i_r) * early - i_r / BR - JUNCTION_LEAK * vbc
    # d/dVBE and d/dVBC
    dib_dbe, dib_dbc = g_f / BF + JUNCTION_LEAK, g_r / BR + JUNCTION_LEAK
    dic_dbe = g_f * early
    dic_dbc = -g_r * early - (i_f - i_r) / VA - g_r / BR - JUNCTION_LEAK
    # v_base enters both junctions, v_coll only VBC (with a minus sign)
    return (ib, ic,
            dib_dbe + dib_dbc, -dib_dbc,
            dic_dbe + dic_dbc, -dic_dbc)


def rhs(t, x):
    """Vectorised: x has shape (3,) or (3, m)."""
    vb, vc, il = x[0], x[1], x[2]
    ib, ic = currents(vb, vc)[:2]
    return np.array([
        ((drive(t) - vb) / RS - ib) / CB,
        (il - ic - (vc - VCC) / RLOAD) / CT,
        (VCC - vc - R_L * il) / L,
    ])


def jac(t, x):
    vb, vc = x[0], x[1]
    _, _, dib_b, dib_c, dic_b, dic_c = currents(vb, vc)
    return np.array([
        [(-1.0 / RS - dib_b) / CB, -dib_c / CB, 0.0],
        [-dic_b / CT, (-dic_c - 1.0 / RLOAD) / CT, 1.0 / CT],
        [0.0, -1.0 / L, -R_L / L],
    ])


def rhs_sens(t, y):
    """State and its 3x3 sensitivity, for the monodromy matrix."""
    x, s = y[:3], y[3:].reshape(3, 3)
    return np.concatenate([rhs(t, x), (jac(t, x) @ s).ravel()])


def jac_sens(t, y):
    x, s = y[:3], y[3:].reshape(3, 3)
    j = jac(t, x)
    big = np.zeros((12, 12))
    big[:3, :3] = j
    # d(J s)/ds: J acting on each column of s (s raveled row-major)
    for r in range(3):
        for k in range(3):
            for c in range(3):
                big[3 + 3 * r + c, 3 + 3 * k + c] = j[r, k]
    # d(J s)/dx is neglected: a Newton iteration on the periodic state only
    # needs an approximate monodromy matrix (the sensitivity rows themselves
    # are integrated to rtol; the Jacobian only steers Radau's Newton).
    return big


def period(x0, t0, rtol, atol, sens=False, dense=False):
    if sens:
        y0 = np.concatenate([x0, np.eye(3).ravel()])
        sol = solve_ivp(rhs_sens, (t0, t0 + PERIOD), y0, method="Radau",
                        jac=jac_sens, rtol=rtol, atol=atol)
        assert sol.success, sol.message
        return sol.y[:3, -1], sol.y[3:, -1].reshape(3, 3)
    sol = solve_ivp(rhs, (t0, t0 + PERIOD), x0, method="Radau", jac=jac,
                    vectorized=True, rtol=rtol, atol=atol, dense_output=dense)
    assert sol.success, sol.message
    return sol


def steady(rtol, atol, periodicity=1e-12, samples=8192):
    x = np.array([V_OFF, VCC, VCC / RLOAD * 0.0])
    t0 = 0.0
    for _ in range(20):
        x = period(x, t0, rtol, atol).y[:, -1]
    scale = np.array([1.0, VCC, 1.0])
    newton = 0
    for newton in range(1, 30):
        xt, phi = period(x, t0, rtol, atol, sens=True)
        r = xt - x
        dx = np.linalg.solve(phi - np.eye(3), -r)
        x = x + dx
        if np.max(np.abs(dx) / scale) < periodicity and \
                np.max(np.abs(r) / scale) < 1e3 * periodicity:
            break
    sol = period(x, t0, rtol, atol, dense=True)
    resid = np.max(np.abs(sol.y[:, -1] - x) / scale)
    t = t0 + np.arange(samples) * PERIOD / samples
    y = sol.sol(t)
    v_out = y[1] - VCC
    ph = np.fft.rfft(v_out) * 2.0 / samples
    p1 = abs(ph[1]) ** 2 / (2 * RLOAD)
    dbc = 20 * np.log10(np.abs(ph[2:HARMONICS + 1]) / abs(ph[1]))
    vbe = y[0]
    ict = IS * (np.exp(vbe / VT) - np.exp((vbe - y[1]) / VT)) * \
        (1 - (vbe - y[1]) / VA)
    return dict(p1=p1, dbc=dbc, x0=x, newton=newton, resid=resid,
                ic_peak=ict.max(),
                conducting=np.mean(ict > 0.01 * ict.max()) * 360.0)


def main():
    if "--time" in sys.argv:
        i = sys.argv.index("--time")
        rtol = float(sys.argv[i + 1]) if len(sys.argv) > i + 1 else 1e-10
        t1 = time.perf_counter()
        ref = steady(rtol, rtol / 100.0, samples=4096)
        t2 = time.perf_counter()
        print(f"p1_W {ref['p1']:.12e}")
        print("dbc " + " ".join(f"{d:.9f}" for d in ref["dbc"]))
        print(f"import_s {T_IMPORTED - T_START:.6f}")
        print(f"solve_s {t2 - t1:.6f}")
        return
    fine = steady(1e-12, 1e-14)
    coarse = steady(1e-10, 1e-12, samples=4096)
    err_p = abs(fine["p1"] - coarse["p1"])
    err_dbc = np.abs(fine["dbc"] - coarse["dbc"])
    out = os.path.join(os.path.dirname(os.path.abspath(__file__)),
                       "sharp_pulse.txt")
    with open(out, "w") as fh:
        fh.write("# class-C stage with a sharp collector pulse, see "
                 "sharp_pulse.py\n")
        fh.write(f"# newton {fine['newton']}, periodicity residual "
                 f"{fine['resid']:.3e}, peak transport current "
                 f"{fine['ic_peak']:.6f} A, conducting "
                 f"{fine['conducting']:.2f} deg (above 1 % of the peak)\n")
        fh.write("# quantity value own_error\n")
        fh.write(f"p1_W {fine['p1']:.15e} {err_p:.3e}\n")
        for n, (d, e) in enumerate(zip(fine["dbc"], err_dbc), start=2):
            fh.write(f"h{n}_dBc {d:.12f} {e:.3e}\n")
    print(f"P1 {fine['p1']:.12f} W (own error {err_p:.2e} W, "
          f"{err_p / fine['p1']:.2e} relative), peak I_CT "
          f"{fine['ic_peak']:.4f} A, conducting {fine['conducting']:.1f} deg")
    for n, (d, e) in enumerate(zip(fine["dbc"], err_dbc), start=2):
        print(f"h{n} {d:.4f} dBc (own error {e:.1e} dB)")


if __name__ == "__main__":
    main()
