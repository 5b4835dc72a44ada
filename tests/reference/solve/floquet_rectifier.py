"""Reference Floquet multiplier of a half-wave rectifier's periodic steady state.

Circuit (all values invented for this check):
    vs: 10 V peak, 1 kHz sine, through RS = 100 Ohm
    d1: junction diode, I = IS*(exp(V/(n*Vt)) - 1) + junction_leak*V (W. Shockley,
        Bell Syst. Tech. J. 28(3), 1949; junction_leak is the solver's junction
        conductance, 1e-12 S), IS = 1e-14 A, n = 1, at 298.15 K
    load: R = 1 kOhm parallel C = 1 uF from the cathode to ground

State equation: C dv/dt = I - v/R =: C f(t, v), where the diode current I
solves I = I_d(u) with u = vs(t) - v - RS*I (found by scipy.optimize.brentq
on u, xtol 1e-15); df/dv = (-1/(RS + 1/I_d'(u)) - 1/R)/C. The circuit has
one state, so its monodromy "matrix" over a period T is the scalar
    mu = dv(T)/dv(0) = exp( integral_0^T df/dv dt )
along the periodic orbit (Floquet theory; for the variational equation
d(dv)/dt = (df/dv) dv, e.g. E. A. Coddington, N. Levinson, Theory of
Ordinary Differential Equations, 1955, ch. 3, from memory).

The periodic orbit is found by shooting on v(0): v(T; v0) - v0 = 0 solved
with scipy.optimize.brentq (xtol 1e-14); each v(T; v0) and the variational
equation are integrated together with scipy.integrate.solve_ivp (Radau,
rtol 1e-12, atol 1e-14). Thermal voltage from CODATA 2018 exact constants
(Tiesinga et al., Rev. Mod. Phys. 93, 025010, 2021).

Run: python3 floquet_rectifier.py  (writes floquet_rectifier.txt beside this file)
"""
import os

import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

K_B = 1.380649e-23
Q_E = 1.602176634e-19
T_K = 298.15
VT = K_B * T_K / Q_E
IS = 1e-14
N = 1.0
JUNCTION_LEAK = 1e-12
AMP, FREQ = 10.0, 1e3
R, C = 1e3, 1e-6
RS = 100.0
PERIOD = 1.0 / FREQ


def diode(u):
    return IS * np.expm1(u / (N * VT)) + JUNCTION_LEAK * u


def ddiode(u):
    return IS / (N * VT) * np.exp(u / (N * VT)) + JUNCTION_LEAK


def diode_voltage(t, v):
    """The diode voltage u with I_d(u) = (vs - v - u)/RS."""
    vs = AMP * np.sin(2 * np.pi * FREQ * t)
    g = lambda u: diode(u) - (vs - v - u) / RS
    lo, hi = min(vs - v, 0.0) - 1.0, max(vs - v, 0.0) + 1.0
    return brentq(g, lo, hi, xtol=1e-15)


def f(t, y):
    v, s = y
    u = diode_voltage(t, v)
    i = diode(u)
    dfdv = (-1.0 / (RS + 1.0 / ddiode(u)) - 1.0 / R) / C
    return [(i - v / R) / C, dfdv * s]


def period_map(v0):
    sol = solve_ivp(f, (0.0, PERIOD), [v0, 1.0], method="Radau",
                    rtol=1e-12, atol=1e-14, max_step=PERIOD / 2000)
    assert sol.success, sol.message
    return sol.y[0, -1], sol.y[1, -1]


def main():
    v0 = brentq(lambda v: period_map(v)[0] - v, 0.0, AMP, xtol=1e-14)
    v_end, mu = period_map(v0)
    out = os.path.join(os.path.dirname(os.path.abspath(__file__)), "floquet_rectifier.txt")
    with open(out, "w") as fh:
        fh.write("# half-wave rectifier Floquet multiplier, see floquet_rectifier.py\n")
        fh.write(f"v_start_V {v0:.15e}\n")
        fh.write(f"multiplier {mu:.15e}\n")
    print(f"v(0) = {v0:.12f} V (v(T) - v(0) = {v_end - v0:.2e}), mu = {mu:.12f}")


if __name__ == "__main__":
    main()
