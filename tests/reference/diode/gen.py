"""Reference values for the junction diode model (tankwave-devices, diode.rs).

Computes, at 41 junction voltages, the diode current I, its slope G = dI/dV,
the junction charge Q and C = dQ/dV from the closed forms below, written out
here independently of the Rust code with numpy:

  Thermal voltage  Vt = k T / q, k and q exact (CODATA 2018; E. Tiesinga et al.,
                   Rev. Mod. Phys. 93, 025010, 2021).
  Saturation current at T (I. Getreu, Modeling the Bipolar Transistor, 1976;
                   form from memory):
                   IS(T) = IS (T/Tm)^(XTI/n) exp((Eg q/(n k)) (1/Tm - 1/T))
  Shockley diode equation (W. Shockley, Bell Syst. Tech. J. 28, 1949):
                   If = A IS(T) (exp(V/(n Vt)) - 1)
  Reverse breakdown (common practice; scaled to pass through -A IBV at -BV):
                   Ib = -A IBV exp(-(V + BV)/(n Vt))
  Depletion capacitance of a graded junction (S. M. Sze, Physics of
                   Semiconductor Devices, ch. 2, from memory), linearised above
                   FC Vj (common practice):
                   C = A Cj0 (1 - V/Vj)^-m,                         V < FC Vj
                   C = A Cj0 (1-FC)^-(1+m) (1 - FC(1+m) + m V/Vj),  V >= FC Vj
                   Q = integral of C from 0 (closed form below).
  Diffusion charge (charge-control, common practice): Qd = tau If.

Run:  pip install -r requirements.txt && python gen.py
Writes diode.csv beside this file (parameters as '#param' lines first).
"""

import os

import numpy as np

K_B = 1.380649e-23
Q_E = 1.602176634e-19

P = dict(
    sat_current=2e-14,
    emission=1.3,
    area=2.0,
    temp=330.0,
    t_measured=300.15,
    sat_temp_exp=3.0,
    gap=1.11,
    cj0=3e-12,
    v_junction=0.75,
    grading=0.4,
    linear_from=0.5,
    transit=5e-9,
    breakdown=8.0,
    breakdown_current=1e-9,
)


def model(v):
    p = P
    t, tm, n, a = p["temp"], p["t_measured"], p["emission"], p["area"]
    vt = K_B * t / Q_E
    nvt = n * vt
    is_t = p["sat_current"] * (t / tm) ** (p["sat_temp_exp"] / n) * np.exp(
        (p["gap"] * Q_E / (n * K_B)) * (1.0 / tm - 1.0 / t)
    )
    i_f = a * is_t * np.expm1(v / nvt)
    g_f = a * is_t * np.exp(v / nvt) / nvt
    i_b = -a * p["breakdown_current"] * np.exp(-(v + p["breakdown"]) / nvt)
    g_b = a * p["breakdown_current"] * np.exp(-(v + p["breakdown"]) / nvt) / nvt

    cj0, vj, m, fc = a * p["cj0"], p["v_junction"], p["grading"], p["linear_from"]
    vc = fc * vj

    def q_pow(u):
        return cj0 * vj / (1.0 - m) * (1.0 - (1.0 - u / vj) ** (1.0 - m))

    below = v < vc
    vb = np.where(below, v, vc)  # keep the power law away from its pole
    c_low = cj0 * (1.0 - vb / vj) ** (-m)
    q_low = q_pow(vb)
    f2 = (1.0 - fc) ** (1.0 + m)
    f3 = 1.0 - fc * (1.0 + m)
    c_high = cj0 / f2 * (f3 + m * v / vj)
    q_high = q_pow(vc) + cj0 / f2 * (f3 * (v - vc) + m / (2.0 * vj) * (v * v - vc * vc))
    c_dep = np.where(below, c_low, c_high)
    q_dep = np.where(below, q_low, q_high)

    tau = p["transit"]
    return i_f + i_b, g_f + g_b, q_dep + tau * i_f, c_dep + tau * g_f


def main():
    v = np.concatenate(
        [np.linspace(-9.0, -7.5, 7), np.linspace(-7.0, 0.0, 8), np.linspace(0.05, 0.95, 26)]
    )
    i, g, q, c = model(v)
    out = os.path.join(os.path.dirname(os.path.abspath(__file__)), "diode.csv")
    with open(out, "w", encoding="utf-8") as f:
        for k, val in P.items():
            f.write(f"#param,{k},{val!r}\n")
        f.write("v,i,g,q,c\n")
        for row in zip(v, i, g, q, c):
            f.write(",".join(f"{x:.17e}" for x in row) + "\n")
    print(f"wrote {len(v)} points to {out}")


if __name__ == "__main__":
    main()
