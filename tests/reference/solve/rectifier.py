"""Reference waveform of a half-wave rectifier with an RC load.

Circuit (all values invented for this check):
    vs: 10 V peak, 1 kHz sine from 0 at t = 0 (no source resistance)
    d1: junction diode, I = IS*(exp(V/(n*Vt)) - 1) + junction_leak*V (W. Shockley,
        Bell Syst. Tech. J. 28(3), 1949; junction_leak is the solver's junction
        conductance, 1e-12 S), IS = 1e-14 A, n = 1, at 298.15 K
    load: R = 1 kOhm parallel C = 10 uF from the cathode to ground

State equation: C dv/dt = I_d(vs(t) - v) - v/R, v(0) = 0.
Solved with scipy.integrate.solve_ivp (Radau, rtol 1e-11, atol 1e-13),
dense output sampled every 1 us for 5 ms. Thermal voltage from CODATA 2018
exact constants (Tiesinga et al., Rev. Mod. Phys. 93, 025010, 2021).

Run: python3 rectifier.py  (writes rectifier.csv beside this file)
"""
import os

import numpy as np
from scipy.integrate import solve_ivp

K_B = 1.380649e-23
Q_E = 1.602176634e-19
T = 298.15
VT = K_B * T / Q_E
IS = 1e-14
N = 1.0
JUNCTION_LEAK = 1e-12
AMP, FREQ = 10.0, 1e3
R, C = 1e3, 10e-6
STOP, DT = 5e-3, 1e-6


def diode(u):
    return IS * np.expm1(u / (N * VT)) + JUNCTION_LEAK * u


def ddiode(u):
    return IS / (N * VT) * np.exp(u / (N * VT)) + JUNCTION_LEAK


def f(t, y):
    vs = AMP * np.sin(2 * np.pi * FREQ * t)
    return [(diode(vs - y[0]) - y[0] / R) / C]


def jac(t, y):
    vs = AMP * np.sin(2 * np.pi * FREQ * t)
    return [[(-ddiode(vs - y[0]) - 1.0 / R) / C]]


def main():
    sol = solve_ivp(f, (0.0, STOP), [0.0], method="Radau", jac=jac,
                    rtol=1e-11, atol=1e-13, dense_output=True,
                    max_step=2e-6)
    assert sol.success, sol.message
    t = np.arange(0, int(round(STOP / DT)) + 1) * DT
    v = sol.sol(t)[0]
    out = os.path.join(os.path.dirname(os.path.abspath(__file__)), "rectifier.csv")
    with open(out, "w") as fh:
        fh.write("# half-wave rectifier reference, see rectifier.py\n")
        fh.write("t_s,v_out_V\n")
        for ti, vi in zip(t, v):
            fh.write(f"{ti:.9e},{vi:.15e}\n")
    print(f"wrote {len(t)} points, peak {v.max():.6f} V, final {v[-1]:.6f} V")


if __name__ == "__main__":
    main()
