"""Touchstone files written by a general-purpose RF library (scikit-rf), for
the reader of our own in tankwave-circuit (crates/circuit/src/touchstone.rs).

Two invented networks, their values computed here with numpy from circuit
theory (common practice):

  rlc1  a one-port: R = 20 ohm in series with L = 1.2 uH, that in parallel
        with C = 150 pF, over 1..60 MHz (121 points);
        Z = 1 / (j w C + 1 / (R + j w L)).
  rlc1g the same one-port on a grid of 0.25 MHz steps, 0.25..60 MHz (240
        points), on which every harmonic of 2 MHz falls.
  rls1  a one-port: R = 8 ohm in series with L = 2.2 uH (a lossy choke),
        0.25..60 MHz in 0.25 MHz steps (240 points); Z = R + j w L. Read
        with outside=short it is a short below and above its band.
  tank1 a one-port whose DC path is shorted: L = 1 uH, C = 470 pF and
        R = 500 ohm in parallel, on the same grid as rls1;
        Y = 1/R + j w C + 1/(j w L), so Z(0) = 0 and Z is exactly rational.
  pi2   a two-port low-pass pi: shunt C1 = 330 pF, series L = 0.68 uH,
        shunt C2 = 330 pF, over 0.5..50 MHz (100 points); its admittance
        matrix is Y11 = j w C1 + 1/(j w L), Y22 = j w C2 + 1/(j w L),
        Y12 = Y21 = -1/(j w L).

Each network is handed to scikit-rf (skrf.Network) and written with
skrf.Network.write_touchstone in Touchstone versions 1.x and 2.0 (the open
standard), as S, Y and Z parameters, in the RI, MA and DB formats, with
several reference impedances and frequency units. Every written file is read
back by scikit-rf and checked against the network it was written from (the
library's own round trip). The admittance matrix in siemens at each point is
written to NAME.csv: the Rust reader must recover it from every file.

Run:  pip install -r requirements.txt && python gen.py
Writes the *.s1p, *.s2p and *.csv files beside this script.
"""

import os

import numpy as np
import skrf

HERE = os.path.dirname(os.path.abspath(__file__))


def rlc1():
    f = np.linspace(1e6, 60e6, 121)
    w = 2 * np.pi * f
    r, l, c = 20.0, 1.2e-6, 150e-12
    z = 1 / (1j * w * c + 1 / (r + 1j * w * l))
    return f, (1 / z).reshape(-1, 1, 1)


def rlc1g():
    # The same one-port on a grid of 0.25 MHz steps (0.25..60 MHz), so that
    # every harmonic of 2 MHz up to 60 MHz falls on a point of the file.
    f = 0.25e6 * np.arange(1, 241)
    w = 2 * np.pi * f
    r, l, c = 20.0, 1.2e-6, 150e-12
    z = 1 / (1j * w * c + 1 / (r + 1j * w * l))
    return f, (1 / z).reshape(-1, 1, 1)


def rls1():
    # A lossy choke: R in series with L, on the 0.25 MHz grid.
    f = 0.25e6 * np.arange(1, 241)
    w = 2 * np.pi * f
    r, l = 8.0, 2.2e-6
    z = r + 1j * w * l
    return f, (1 / z).reshape(-1, 1, 1)


def tank1():
    # A parallel R-L-C tank (its inductor shorts DC), on the same grid.
    f = 0.25e6 * np.arange(1, 241)
    w = 2 * np.pi * f
    r, l, c = 500.0, 1e-6, 470e-12
    y = 1 / r + 1j * w * c + 1 / (1j * w * l)
    return f, y.reshape(-1, 1, 1)


def pi2():
    f = np.linspace(0.5e6, 50e6, 100)
    w = 2 * np.pi * f
    c1, l, c2 = 330e-12, 0.68e-6, 330e-12
    yl = 1 / (1j * w * l)
    y = np.zeros((len(f), 2, 2), dtype=complex)
    y[:, 0, 0] = 1j * w * c1 + yl
    y[:, 1, 1] = 1j * w * c2 + yl
    y[:, 0, 1] = -yl
    y[:, 1, 0] = -yl
    return f, y


def network(f, y, z0, unit):
    freq = skrf.Frequency.from_f(f, unit="hz")
    n = skrf.Network(frequency=freq, s=skrf.network.y2s(y, z0), z0=z0)
    n.frequency.unit = unit
    return n


# (file stem, network, reference impedance, frequency unit, parameter, form, version)
CASES = [
    ("rlc1_ri_v1", rlc1, 50.0, "mhz", "S", "ri", "1.0"),
    ("rlc1_ma_v1", rlc1, 50.0, "hz", "S", "ma", "1.0"),
    ("rlc1_db_v1_z75", rlc1, 75.0, "khz", "S", "db", "1.0"),
    ("rlc1_z_ri_v1", rlc1, 50.0, "ghz", "Z", "ri", "1.0"),
    ("rlc1_y_ma_v1", rlc1, 50.0, "mhz", "Y", "ma", "1.0"),
    ("rlc1_ri_v2", rlc1, 50.0, "mhz", "S", "ri", "2.0"),
    ("rlc1_z_db_v2", rlc1, 50.0, "mhz", "Z", "db", "2.0"),
    ("rlc1g_ri_v1", rlc1g, 50.0, "mhz", "S", "ri", "1.0"),
    ("rls1_ri_v1", rls1, 50.0, "mhz", "S", "ri", "1.0"),
    ("tank1_ri_v1", tank1, 50.0, "mhz", "S", "ri", "1.0"),
    ("tank1_z_ri_v2", tank1, 50.0, "mhz", "Z", "ri", "2.0"),
    ("pi2_ri_v1", pi2, 50.0, "mhz", "S", "ri", "1.0"),
    ("pi2_db_v1_z25", pi2, 25.0, "ghz", "S", "db", "1.0"),
    ("pi2_y_ri_v1", pi2, 50.0, "mhz", "Y", "ri", "1.0"),
    ("pi2_ma_v2", pi2, 50.0, "mhz", "S", "ma", "2.0"),
    ("pi2_z_ri_v2_z75", pi2, 75.0, "khz", "Z", "ri", "2.0"),
]


def main():
    written = {}
    for stem, make, z0, unit, param, form, version in CASES:
        f, y = make()
        n = network(f, y, z0, unit)
        ext = ".%s%dp" % (param.lower(), n.nports) if version == "1.0" else ".ts"
        path = os.path.join(HERE, stem + ext)
        if os.path.exists(path):
            os.remove(path)
        n.write_touchstone(
            filename=stem,
            dir=HERE,
            form=form,
            parameter=param,
            version=version,
            r_ref=z0,
            skrf_comment=False,
            write_noise=False,
        )
        # The library's own round trip: what it wrote reads back equal.
        # (scikit-rf 2.2.0 reads its own version 1 Y files back scaled by
        # R^2: it writes y = Y R as the standard says, then multiplies by R
        # again on reading. Those files are checked by the values below only.)
        if version == "1.0" and param == "Y":
            written[make.__name__] = (f, y)
            continue
        back = skrf.Network(path)
        assert np.allclose(back.f, f, rtol=1e-12), stem
        assert np.allclose(back.s, n.s, rtol=1e-9, atol=1e-12), stem
        assert np.allclose(back.y, y, rtol=1e-9, atol=1e-15), stem
        written[make.__name__] = (f, y)
    for name, (f, y) in written.items():
        nports = y.shape[1]
        with open(os.path.join(HERE, name + ".csv"), "w") as out:
            cols = ["freq_hz"]
            for i in range(nports):
                for j in range(nports):
                    cols += ["re_y%d%d" % (i + 1, j + 1), "im_y%d%d" % (i + 1, j + 1)]
            out.write(",".join(cols) + "\n")
            for k in range(len(f)):
                row = [repr(float(f[k]))]
                for i in range(nports):
                    for j in range(nports):
                        row += [repr(float(y[k, i, j].real)), repr(float(y[k, i, j].imag))]
                out.write(",".join(row) + "\n")


if __name__ == "__main__":
    main()
