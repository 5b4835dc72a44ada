"""Invented data-sheet curves for three generic HF npn devices of our own.

NOT MEASURED AND NOT FROM ANY REAL PART: the curves are made up from
invented parameters with the equations of tests/reference/fit/gen.py,
read off at the points a data sheet typically prints, with 1 % scatter
(a careful read-off of a printed curve), and an f_T that falls at high
current (as real power devices do, and as the model cannot follow), so
that `tankwave fit` has something realistic to show. Each folder gets one
CSV per curve kind; the fitted part beside them is written by
`tankwave fit` (see README.md in this folder).

Run:  python3 make_curves.py   (numpy 2.1.3, scipy 1.14.1)
"""

import csv
import os
import sys

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "..", "tests", "reference", "fit"))
import gen  # noqa: E402  (the reference equations)

DEVICES = {
    # a 1 W driver
    "tw-gen1": dict(
        params=dict(IS=4e-15, NF=1.0, BF=90.0, ISE=2e-13, NE=1.7, VA=80.0, IKF=0.35,
                    TF=0.25e-9, BR=4.0, RC=1.2, CJC=9e-12, VJC=0.6, MJC=0.38,
                    CJE=40e-12, VJE=0.75, MJE=0.33),
        ic=(1e-4, 0.5), vce=(5.0, 10.0), rev_bc=(1.0, 30.0), rev_be=(0.2, 3.0),
        ft_ic=(5e-3, 0.4), ft_vce=10.0, sat_ic=(0.02, 0.4),
    ),
    # a 10-20 W HF device
    "tw-gen20": dict(
        params=dict(IS=3e-14, NF=1.0, BF=60.0, ISE=4e-12, NE=1.8, VA=70.0, IKF=2.5,
                    TF=0.45e-9, BR=3.0, RC=0.18, CJC=110e-12, VJC=0.6, MJC=0.4,
                    CJE=700e-12, VJE=0.75, MJE=0.35),
        ic=(5e-4, 4.0), vce=(5.0, 12.5), rev_bc=(1.0, 40.0), rev_be=(0.2, 3.0),
        ft_ic=(0.02, 3.0), ft_vce=12.5, sat_ic=(0.2, 4.0),
    ),
    # a 50-100 W HF device
    "tw-gen80": dict(
        params=dict(IS=1.5e-13, NF=1.0, BF=40.0, ISE=3e-11, NE=1.9, VA=60.0, IKF=9.0,
                    TF=0.6e-9, BR=2.5, RC=0.05, CJC=450e-12, VJC=0.6, MJC=0.42,
                    CJE=3e-9, VJE=0.75, MJE=0.35),
        ic=(2e-3, 15.0), vce=(5.0, 12.5), rev_bc=(1.0, 50.0), rev_be=(0.2, 3.0),
        ft_ic=(0.1, 12.0), ft_vce=12.5, sat_ic=(1.0, 15.0),
    ),
}

HEADER = "# INVENTED curves of the generic device {name} (not a real part), made by make_curves.py\n"


def logs(lo, hi, n):
    return np.logspace(np.log10(lo), np.log10(hi), n)


def write(folder, kind, cols, rows, name):
    with open(os.path.join(folder, kind + ".csv"), "w", newline="") as f:
        f.write(HEADER.format(name=name))
        w = csv.writer(f, lineterminator="\n")
        w.writerow(cols)
        for r in rows:
            w.writerow([f"{v:.4g}" for v in r])


def main():
    rng = np.random.default_rng(7)
    for name, d in DEVICES.items():
        p = dict(gen.TRUTH)
        p.update(d["params"])
        folder = os.path.join(HERE, name)
        os.makedirs(folder, exist_ok=True)

        def noisy(y):
            return y * (1 + 0.01 * rng.standard_normal(len(y)))

        ic = logs(*d["ic"], 14)
        rows = []
        for vce in d["vce"]:
            g = noisy(gen.gain(p, ic, np.full_like(ic, vce)))
            rows += [(a * 1e3, vce, b) for a, b in zip(ic, g)]
        write(folder, "gain", ("ic[mA]", "vce[V]", "gain"), rows, name)

        vce = d["vce"][0]
        v = gen.vbe_curve(p, ic, np.full_like(ic, vce))
        v = v + 0.002 * rng.standard_normal(len(v))
        write(folder, "vbe", ("ic[mA]", "vce[V]", "vbe[V]"), [(a * 1e3, vce, b) for a, b in zip(ic, v)], name)

        for kind, (lo, hi), c0, phi, m in (
            ("cap-bc", d["rev_bc"], p["CJC"], p["VJC"], p["MJC"]),
            ("cap-be", d["rev_be"], p["CJE"], p["VJE"], p["MJE"]),
        ):
            vr = logs(lo, hi, 8)
            c = noisy(gen.cap(c0, phi, m, vr))
            write(folder, kind, ("reverse[V]", "cap[pF]"), [(a, b * 1e12) for a, b in zip(vr, c)], name)

        fic = logs(*d["ft_ic"], 10)
        f = gen.ft(p, fic, np.full_like(fic, d["ft_vce"]))
        # real power devices lose f_T at high current (base push-out); the
        # invented curve falls off past 60 % of its range to show that
        knee = d["ft_ic"][1] * 0.6
        f = noisy(f / (1 + (fic / knee) ** 3))
        write(folder, "ft", ("ic[mA]", "vce[V]", "ft[MHz]"),
              [(a * 1e3, d["ft_vce"], b / 1e6) for a, b in zip(fic, f)], name)

        sic = logs(*d["sat_ic"], 6)
        s = noisy(gen.vce_sat(p, sic, sic / 10))
        write(folder, "vce-sat", ("ic[mA]", "ib[mA]", "vce[V]"),
              [(a * 1e3, a * 1e2, b) for a, b in zip(sic, s)], name)


if __name__ == "__main__":
    main()
