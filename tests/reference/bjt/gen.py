"""Independent reference for the bipolar transistor model of tankwave-devices.

Evaluates the published large-signal equations directly (numpy, float64) at
bias points spanning cut-off, forward active, saturation, reverse active and
high injection, and writes points.csv for crates/devices/tests/bjt_reference.rs.

Sources (forms from memory, as listed in the project's check-values):
  H. K. Gummel, H. C. Poon, "An integral charge control model of bipolar
  transistors", Bell Syst. Tech. J. 49(5), 1970 -- transport current over the
  normalised base charge qb, qb = (q1/2)(1 + sqrt(1 + 4 q2)).
  L. W. Nagel, ERL M520, 1975 -- reciprocal Early factor
  q1 = 1/(1 - VBC/VAF - VBE/VAR).
  I. Getreu, Modeling the Bipolar Transistor, 1976 -- base-current terms with
  the two low-current recombination components, depletion charge with the
  linear continuation above FC*Vj, diffusion charges, temperature scaling of
  IS, BF, BR, ISE, ISC.
  S. L. Miller, "Avalanche breakdown in germanium", Phys. Rev. 99, 1955 --
  multiplication M = 1/(1 - (V_CB/BV_CBO)^n); the generated current
  (M - 1) I_CT flows into the collector and out of the base; BV_CBO scaled
  linearly with temperature (common practice); above M = 100 the project
  continues M - 1 along its tangent in V_CB (tankwave's documented choice,
  written out again here from that description).
  G. M. Kull, L. W. Nagel, S.-W. Lee, P. Lloyd, E. J. Prendergast, H. Dirks,
  "A unified circuit model for bipolar transistors including quasi-saturation
  effects", IEEE Trans. Electron Devices 32(6), 1985 -- the epitaxial
  collector current with K = sqrt(1 + gamma exp(V/Vt)); the charge split
  Q_CO (K - 1) on each side after C. C. McAndrew et al., IEEE JSSC 31(10),
  1996; R_CO ~ T^xi_RC, gamma ~ T^3 exp(-Eg/kT). Written to epi.csv.
  J. R. Hauser, "The effects of distributed base potential on emitter-current
  injection density and effective base resistance for stripe transistor
  geometries", IEEE Trans. Electron Devices 11(5), 1964, in the form of
  Getreu 1976: r = r_BM + 3 (r_B - r_BM)(tan z - z)/(z tan^2 z),
  z = (-1 + sqrt(1 + 144 I_B/(pi^2 I_RB)))/((24/pi^2) sqrt(I_B/I_RB)), with
  I_B smoothed as sqrt(I_B^2 + eps^2) - eps, eps = 1e-3 I_RB (tankwave's
  documented choice). Written to crowding.csv.
  P. B. Weil, L. P. McNamee, "Simulation of excess phase in bipolar
  transistors", IEEE Trans. Circuits and Systems 25(2), 1978: the excess
  phase as the second-order Bessel approximation of a delay t_d,
  H(s) = 3/((s t_d)^2 + 3 s t_d + 3), t_d = phi_F tau_F. Its response over
  a grid of frequencies is written to phase.csv.
Physical constants: CODATA 2018 (exact), k = 1.380649e-23 J/K,
q = 1.602176634e-19 C.

Run:  python3 gen.py   (writes points.csv next to this file)
"""

import csv
import os

import numpy as np

K_BOLTZ = 1.380649e-23
Q_E = 1.602176634e-19

# Parameter sets. Keys are the stage-file parameter names of tankwave; the Rust
# test reads them back from the '# set' header lines of points.csv, so the two
# sides cannot drift apart. Every set is evaluated at 'temp' kelvin.
SETS = {
    # The check point of check-values.md plus charges and BC leakage.
    "A": dict(sat_current=1e-15, gain_fwd=100.0, gain_rev=1.0, emission_fwd=1.0,
              emission_rev=1.0, early_fwd=50.0, early_rev=10.0, knee_fwd=0.1,
              knee_rev=0.01, leak_be=1e-13, leak_be_emission=1.5, leak_bc=1e-14,
              leak_bc_emission=2.0, cj_be=500e-12, vj_be=0.75, grading_be=0.33,
              cj_bc=200e-12, vj_bc=0.6, grading_bc=0.4, linear_from=0.5,
              transit_fwd=1e-9, transit_rev=100e-9, gap=1.11, sat_temp_exp=3.0,
              gain_temp_exp=0.0, t_measured=300.15, temp=300.15, area=1.0),
    # An invented HF power transistor, non-ideal emission coefficients, area 2.
    "B": dict(sat_current=5e-13, gain_fwd=60.0, gain_rev=3.0, emission_fwd=1.02,
              emission_rev=1.05, early_fwd=80.0, early_rev=8.0, knee_fwd=3.0,
              knee_rev=0.5, leak_be=2e-11, leak_be_emission=1.7, leak_bc=1e-11,
              leak_bc_emission=1.9, cj_be=2e-9, vj_be=0.8, grading_be=0.35,
              cj_bc=300e-12, vj_bc=0.55, grading_bc=0.45, linear_from=0.6,
              transit_fwd=0.5e-9, transit_rev=50e-9, gap=1.11, sat_temp_exp=3.0,
              gain_temp_exp=1.5, t_measured=300.15, temp=300.15, area=2.0),
    # Set B at 350 K with parameters taken at 298.15 K: temperature scaling.
    "C": dict(sat_current=5e-13, gain_fwd=60.0, gain_rev=3.0, emission_fwd=1.02,
              emission_rev=1.05, early_fwd=80.0, early_rev=8.0, knee_fwd=3.0,
              knee_rev=0.5, leak_be=2e-11, leak_be_emission=1.7, leak_bc=1e-11,
              leak_bc_emission=1.9, cj_be=2e-9, vj_be=0.8, grading_be=0.35,
              cj_bc=300e-12, vj_bc=0.55, grading_bc=0.45, linear_from=0.6,
              transit_fwd=0.5e-9, transit_rev=50e-9, gap=1.11, sat_temp_exp=3.0,
              gain_temp_exp=1.5, t_measured=298.15, temp=350.0, area=1.0),
    # Set B with avalanche multiplication, at 330 K: BV_CBO(330 K) = 61.8 V.
    "D": dict(sat_current=5e-13, gain_fwd=60.0, gain_rev=3.0, emission_fwd=1.02,
              emission_rev=1.05, early_fwd=80.0, early_rev=8.0, knee_fwd=3.0,
              knee_rev=0.5, leak_be=2e-11, leak_be_emission=1.7, leak_bc=1e-11,
              leak_bc_emission=1.9, cj_be=2e-9, vj_be=0.8, grading_be=0.35,
              cj_bc=300e-12, vj_bc=0.55, grading_bc=0.45, linear_from=0.6,
              transit_fwd=0.5e-9, transit_rev=50e-9, gap=1.11, sat_temp_exp=3.0,
              gain_temp_exp=1.5, t_measured=300.15, temp=330.0, area=2.0,
              bv_cbo=60.0, avalanche_exp=4.0, bv_tempco=1e-3),
}

M_MAX = 100.0


def multiplication_minus_one(p, vcb):
    """M - 1 at a collector-base reverse voltage vcb (Miller's law), with the
    tangent continuation above M = M_MAX; 0 without avalanche."""
    bv0 = p.get("bv_cbo", float("inf"))
    if not np.isfinite(bv0) or vcb <= 0.0:
        return 0.0
    bv = bv0 * (1.0 + p["bv_tempco"] * (p["temp"] - p["t_measured"]))
    n = p["avalanche_exp"]
    g = lambda v: (v / bv) ** n / (1.0 - (v / bv) ** n)
    v0 = bv * (1.0 - 1.0 / M_MAX) ** (1.0 / n)
    if vcb <= v0:
        return g(vcb)
    # slope of u/(1-u) in V at v0, by the chain rule: n u / (V (1-u)^2)
    u0 = (v0 / bv) ** n
    slope = n * u0 / (v0 * (1.0 - u0) ** 2)
    return g(v0) + slope * (vcb - v0)


def depletion_charge(v, cj0, vj, m, fc):
    """Depletion charge Q(v) with Q(0) = 0: the integral of Cj0 (1 - v/Vj)^-m
    below fc*Vj and of its tangent-line continuation above (Getreu 1976)."""
    if cj0 == 0.0:
        return 0.0
    vlin = fc * vj
    if v < vlin:
        return cj0 * vj / (1.0 - m) * (1.0 - (1.0 - v / vj) ** (1.0 - m))
    q_lin = cj0 * vj / (1.0 - m) * (1.0 - (1.0 - fc) ** (1.0 - m))
    f2 = (1.0 - fc) ** (-1.0 - m)
    return q_lin + cj0 * f2 * ((1.0 - fc * (1.0 + m)) * (v - vlin)
                               + m / (2.0 * vj) * (v * v - vlin * vlin))


def evaluate(p, vbe, vbc):
    """IC, IB, IE (currents into the terminals) and the BE, BC charges."""
    t, tm = p["temp"], p["t_measured"]
    vt = K_BOLTZ * t / Q_E
    vt_m = K_BOLTZ * tm / Q_E
    ratio = t / tm
    a = p["area"]
    # IS(T) = IS (T/Tm)^XTI exp(Eg/k (1/Tm - 1/T))  (Getreu 1976, memory)
    is_t = p["sat_current"] * ratio ** p["sat_temp_exp"] * np.exp(
        p["gap"] / vt_m - p["gap"] / vt)
    # gains by (T/Tm)^XTB; ISE, ISC by (T/Tm)^-XTB (IS(T)/IS)^(1/n_leak)
    gain_f = p["gain_fwd"] * ratio ** p["gain_temp_exp"]
    gain_r = p["gain_rev"] * ratio ** p["gain_temp_exp"]
    is_ratio = is_t / p["sat_current"]
    ise_t = p["leak_be"] * ratio ** (-p["gain_temp_exp"]) * is_ratio ** (1.0 / p["leak_be_emission"])
    isc_t = p["leak_bc"] * ratio ** (-p["gain_temp_exp"]) * is_ratio ** (1.0 / p["leak_bc_emission"])
    i_s, ise, isc = a * is_t, a * ise_t, a * isc_t
    ikf, ikr = a * p["knee_fwd"], a * p["knee_rev"]

    i_f = i_s * np.expm1(vbe / (p["emission_fwd"] * vt))
    i_r = i_s * np.expm1(vbc / (p["emission_rev"] * vt))
    q1 = 1.0 / (1.0 - vbc / p["early_fwd"] - vbe / p["early_rev"])
    q2 = i_f / ikf + i_r / ikr
    qb = q1 / 2.0 * (1.0 + np.sqrt(1.0 + 4.0 * q2))
    i_ct = (i_f - i_r) / qb
    i_le = ise * np.expm1(vbe / (p["leak_be_emission"] * vt))
    i_lc = isc * np.expm1(vbc / (p["leak_bc_emission"] * vt))
    i_av = multiplication_minus_one(p, -vbc) * i_ct
    ib = i_f / gain_f + i_le + i_r / gain_r + i_lc - i_av
    ic = i_ct - i_r / gain_r - i_lc + i_av
    ie = -(ic + ib)
    q_be = (depletion_charge(vbe, a * p["cj_be"], p["vj_be"], p["grading_be"], p["linear_from"])
            + p["transit_fwd"] * i_f / qb)
    q_bc = (depletion_charge(vbc, a * p["cj_bc"], p["vj_bc"], p["grading_bc"], p["linear_from"])
            + p["transit_rev"] * i_r)
    return dict(q1=q1, q2=q2, qb=qb, ic=ic, ib=ib, ie=ie, qbe=q_be, qbc=q_bc)


# The epitaxial collector of an invented power transistor, at 330 K with
# parameters taken at 300.15 K, area 2.
EPI = dict(r_epi=1.5, epi_gamma=2e-11, epi_charge=4e-10, epi_temp_exp=2.42,
           gap=1.11, t_measured=300.15, temp=330.0, area=2.0)


def epi(p, vbci, vbcx):
    """Epi current (contact -> junction) and the two charges."""
    t, tm = p["temp"], p["t_measured"]
    vt = K_BOLTZ * t / Q_E
    vt_m = K_BOLTZ * tm / Q_E
    gamma = p["epi_gamma"] * (t / tm) ** 3 * np.exp(p["gap"] / vt_m - p["gap"] / vt)
    r = p["r_epi"] * (t / tm) ** p["epi_temp_exp"] / p["area"]

    def k_minus_1(v):
        # sqrt(1 + g e^x) - 1 without cancellation: expm1(log1p(g e^x)/2)
        return np.expm1(0.5 * np.log1p(gamma * np.exp(v / vt)))

    ki, kx = 1.0 + k_minus_1(vbci), 1.0 + k_minus_1(vbcx)
    i = (vbci - vbcx + vt * (ki - kx - np.log((1.0 + ki) / (1.0 + kx)))) / r
    q = p["epi_charge"] * p["area"]
    return dict(i=i, qi=q * k_minus_1(vbci), qx=q * k_minus_1(vbcx))


# Current crowding of an invented power transistor, area 2.
CROWD = dict(r_base=1.5, r_base_min=0.3, base_half_current=0.05, area=2.0)


def crowded_base_resistance(p, ib):
    a = p["area"]
    rb, rbm, irb = p["r_base"] / a, p["r_base_min"] / a, p["base_half_current"] * a
    eps = 1e-3 * irb
    x = (np.sqrt(ib * ib + eps * eps) - eps) / irb
    z = (-1.0 + np.sqrt(1.0 + 144.0 * x / np.pi ** 2)) / ((24.0 / np.pi ** 2) * np.sqrt(x))
    return rbm + 3.0 * (rb - rbm) * (np.tan(z) - z) / (z * np.tan(z) ** 2)


def bias_points():
    """(region, vbe, vbc) covering every operating region."""
    pts = []
    for vbe in (-2.0, -0.5, 0.0, 0.2, 0.3):
        for vbc in (-10.0, -1.0, 0.0):
            pts.append(("cutoff", vbe, vbc))
    for vbe in (0.55, 0.62, 0.68, 0.72, 0.76):
        for vbc in (-20.0, -5.0, -0.5):
            pts.append(("forward", vbe, vbc))
    for vbe, vbc in ((0.7, 0.5), (0.75, 0.6), (0.78, 0.7), (0.8, 0.75), (0.72, 0.65),
                     (0.66, 0.62), (0.85, 0.7), (0.9, 0.85)):
        pts.append(("saturation", vbe, vbc))
    for vbc in (0.55, 0.65, 0.72, 0.8):
        for vbe in (-5.0, -0.3):
            pts.append(("reverse", vbe, vbc))
    for vbe in (0.8, 0.86, 0.92, 0.98, 1.05):
        for vbc in (-10.0, -1.0):
            pts.append(("high", vbe, vbc))
    # up to and through the breakdown of set D (61.8 V; the tangent from 61.6 V)
    for vbe in (0.62, 0.72):
        for vbc in (-30.0, -45.0, -55.0, -60.0, -61.5, -62.0, -65.0):
            pts.append(("avalanche", vbe, vbc))
    return pts


def main():
    here = os.path.dirname(os.path.abspath(__file__))
    path = os.path.join(here, "points.csv")
    pts = bias_points()
    with open(path, "w", newline="") as f:
        f.write("# generated by tests/reference/bjt/gen.py (numpy %s); do not edit\n"
                % np.__version__)
        for name, p in SETS.items():
            f.write("# set %s: %s\n" % (name, " ".join("%s=%r" % kv for kv in p.items())))
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["set", "region", "vbe", "vbc", "q1", "q2", "qb", "ic", "ib", "ie",
                    "qbe", "qbc"])
        for name, p in SETS.items():
            for region, vbe, vbc in pts:
                r = evaluate(p, vbe, vbc)
                w.writerow([name, region, repr(vbe), repr(vbc)]
                           + ["%.17e" % r[k] for k in ("q1", "q2", "qb", "ic", "ib", "ie",
                                                       "qbe", "qbc")])
    path_epi = os.path.join(here, "epi.csv")
    with open(path_epi, "w", newline="") as f:
        f.write("# generated by tests/reference/bjt/gen.py (numpy %s); do not edit\n"
                % np.__version__)
        f.write("# set E: %s\n" % " ".join("%s=%r" % kv for kv in EPI.items()))
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["vbci", "vbcx", "i", "qi", "qx"])
        n = 0
        for vbci in (-20.0, -2.0, 0.0, 0.4, 0.55, 0.65, 0.72, 0.8, 0.9):
            for vbcx in (-20.0, -2.0, -0.3, 0.0, 0.5, 0.7, 0.85):
                r = epi(EPI, vbci, vbcx)
                w.writerow([repr(vbci), repr(vbcx)]
                           + ["%.17e" % r[k] for k in ("i", "qi", "qx")])
                n += 1
    print("wrote %d rows to %s" % (n, path_epi))
    path_crowd = os.path.join(here, "crowding.csv")
    with open(path_crowd, "w", newline="") as f:
        f.write("# generated by tests/reference/bjt/gen.py (numpy %s); do not edit\n"
                % np.__version__)
        f.write("# set F: %s\n" % " ".join("%s=%r" % kv for kv in CROWD.items()))
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["ib", "r"])
        n = 0
        for ib in (-1.0, -0.1, -3e-3, 3e-3, 1e-2, 0.03, 0.1, 0.3, 1.0, 3.0, 10.0, 100.0):
            w.writerow([repr(ib), "%.17e" % crowded_base_resistance(CROWD, ib)])
            n += 1
    print("wrote %d rows to %s" % (n, path_crowd))
    # excess phase: phi_F = 20 deg, tau_F = 0.5 ns
    path_phase = os.path.join(here, "phase.csv")
    td = np.deg2rad(20.0) * 0.5e-9
    with open(path_phase, "w", newline="") as f:
        f.write("# generated by tests/reference/bjt/gen.py (numpy %s); do not edit\n"
                % np.__version__)
        f.write("# excess_phase_deg=20.0 transit_s=5e-10\n")
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["freq_hz", "re", "im"])
        for fr in (1e6, 1e7, 1e8, 3.183098861837907e8, 1e9, 3e9):
            s = 2j * np.pi * fr * td
            h = 3.0 / (s * s + 3.0 * s + 3.0)
            w.writerow([repr(fr), "%.17e" % h.real, "%.17e" % h.imag])
    print("wrote 6 rows to %s" % path_phase)
    # The check point of check-values.md, printed for the record.
    chk = evaluate(SETS["A"], 0.80, -5.0)
    print("check point: q1 %.6f q2 %.7f qb %.6f IC %.4f mA IB %.6f mA" % (
        chk["q1"], chk["q2"], chk["qb"], chk["ic"] * 1e3, chk["ib"] * 1e3))
    print("wrote %d rows to %s" % (len(pts) * len(SETS), path))


if __name__ == "__main__":
    main()
