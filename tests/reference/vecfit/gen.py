"""Reference fits by the vector fitting of a general-purpose RF library
(scikit-rf, skrf.vectorFitting.VectorFitting), for the fit of our own in
tankwave-circuit (crates/circuit/src/rational), checked by
crates/circuit/tests/vecfit_reference.rs.

Three invented networks, their values computed here with numpy from
circuit theory (transmission-line and lumped formulas; common practice):

  feed1   a one-port: an antenna-like load (R = 42 ohm, L = 3.1 uH,
          C = 162 pF in series, 10 pF across) seen through 3 m of 50 ohm
          line with velocity factor 0.66 and skin-effect loss
          alpha = 0.02 Np/m at 1 MHz, growing as sqrt(f); 1..30 MHz,
          300 points. Not a rational function of s (the line and the
          sqrt(f) loss), so every fit has an error; it measures the method.
  line2   a two-port: 5 m of the same line, Y11 = Y22 = coth(g l)/Z0,
          Y12 = Y21 = -1/(Z0 sinh(g l)); 1..60 MHz, 400 points (through its
          first resonances). Not rational either.
  bp2n    a two-port: a series R-L-C between the ports (5 ohm, 1 uH,
          500 pF: a pole pair near 7.1 MHz), a series R-L-C trap from each
          port to ground (3 ohm, 0.5 uH, 200 pF: a pair near 15.9 MHz) and
          20 pF across each port; 1..30 MHz, 200 points, with seeded
          measurement noise of 1e-3 relative (numpy default_rng(19)) on
          each S entry: a rational network (two pole pairs, the 20 pF as
          the proportional term) whose poles the fits must find.

And one file for a stage test (crates/solve/tests/measured_stage.rs), not
fitted here:

  lp5     the 5-pole low-pass ladder of netlists/measured/antenna-7m1.tank
          (shunt 365 pF, series 1.091 uH, shunt 629 pF, series 1.091 uH,
          shunt 365 pF) with each inductor's loss as a series resistance
          2 pi 7 MHz L / 200 (its q=200 at the stage's 7.0 MHz), as a
          two-port from 0 Hz to 200 MHz in 0.5 MHz steps; from ABCD
          matrices (cascade of shunt and series elements, textbook).

Each network is written as a Touchstone 1.1 file by scikit-rf (S, RI,
50 ohm), read back, and fitted by scikit-rf's VectorFitting on its
admittance (parameter_type='y') with the stated number of complex pole
pairs, linear initial spacing, a constant term and a proportional term
only for bp2n (enforce_dc=False: the data do not reach 0 Hz). Its model response Y at
each point of the file is written to NAME.fit.csv (freq_hz, then re, im of
Y11[, Y12, Y21, Y22]) and its poles to NAME.poles.csv (re, im, rad/s).

Run:  pip install -r requirements.txt && python gen.py
Writes the files beside this script.
"""

import os

import numpy as np
import skrf
from skrf.vectorFitting import VectorFitting

HERE = os.path.dirname(os.path.abspath(__file__))
Z0 = 50.0


def line_gamma(f):
    w = 2 * np.pi * f
    v = 0.66 * 299792458.0
    alpha = 0.02 * np.sqrt(f / 1e6)
    return alpha + 1j * w / v


def feed1():
    f = np.linspace(1e6, 30e6, 300)
    w = 2 * np.pi * f
    zl = 1 / (1j * w * 10e-12 + 1 / (42.0 + 1j * w * 3.1e-6 + 1 / (1j * w * 162e-12)))
    t = np.tanh(line_gamma(f) * 3.0)
    z = Z0 * (zl + Z0 * t) / (Z0 + zl * t)
    y = (1 / z).reshape(-1, 1, 1)
    return f, y


def line2():
    f = np.linspace(1e6, 60e6, 400)
    gl = line_gamma(f) * 5.0
    y11 = 1 / (Z0 * np.tanh(gl))
    y12 = -1 / (Z0 * np.sinh(gl))
    y = np.stack([np.stack([y11, y12], -1), np.stack([y12, y11], -1)], -2)
    return f, y


def bp2n():
    f = np.linspace(1e6, 30e6, 200)
    s_ = 2j * np.pi * f
    ys = 1 / (5.0 + s_ * 1e-6 + 1 / (s_ * 500e-12))
    yt = 1 / (3.0 + s_ * 0.5e-6 + 1 / (s_ * 200e-12)) + s_ * 20e-12
    y = np.stack([np.stack([ys + yt, -ys], -1), np.stack([-ys, ys + yt], -1)], -2)
    s = skrf.network.y2s(y, z0=Z0)
    rng = np.random.default_rng(19)
    noise = 1e-3 * (rng.standard_normal(s.shape) + 1j * rng.standard_normal(s.shape))
    return f, skrf.network.s2y(s * (1 + noise), z0=Z0)


def lp5():
    f = np.arange(401) * 0.5e6
    s_ = 2j * np.pi * f
    r = 2 * np.pi * 7e6 * 1.091e-6 / 200
    one = np.ones_like(s_)
    zero = np.zeros_like(s_)

    def shunt(c):
        return np.array([[one, zero], [s_ * c, one]])

    def series(l):
        return np.array([[one, r + s_ * l], [zero, one]])

    m = None
    for e in [shunt(365e-12), series(1.091e-6), shunt(629e-12), series(1.091e-6), shunt(365e-12)]:
        e = np.moveaxis(e, -1, 0)
        m = e if m is None else m @ e
    a, b, c, d = m[:, 0, 0], m[:, 0, 1], m[:, 1, 0], m[:, 1, 1]
    # Y from ABCD (textbook): Y11 = D/B, Y12 = (BC - AD)/B, Y21 = -1/B, Y22 = A/B
    y = np.stack([np.stack([d / b, (b * c - a * d) / b], -1), np.stack([-1 / b, a / b], -1)], -2)
    sp = skrf.network.y2s(y, z0=Z0)
    n = skrf.Network(frequency=skrf.Frequency.from_f(f, unit="hz"), s=sp, z0=Z0)
    n.frequency.unit = "mhz"
    n.write_touchstone(filename="lp5", dir=HERE, form="ri", r_ref=Z0, skrf_comment=False, write_noise=False)
    back = skrf.Network(os.path.join(HERE, "lp5.s2p"))
    assert np.allclose(back.s, sp, rtol=1e-12, atol=1e-14)


def write(name, f, y, pairs, proportional=False):
    s = skrf.network.y2s(y, z0=Z0)
    n = skrf.Network(frequency=skrf.Frequency.from_f(f, unit="hz"), s=s, z0=Z0)
    n.frequency.unit = "mhz"
    ports = y.shape[1]
    n.write_touchstone(
        filename=name, dir=HERE, form="ri", r_ref=Z0, skrf_comment=False, write_noise=False
    )
    back = skrf.Network(os.path.join(HERE, f"{name}.s{ports}p"))
    assert np.allclose(back.s, s, rtol=1e-12, atol=1e-14), name
    vf = VectorFitting(back)
    vf.vector_fit(
        n_poles_real=0,
        n_poles_cmplx=pairs,
        init_pole_spacing="lin",
        parameter_type="y",
        fit_constant=True,
        fit_proportional=proportional,
        enforce_dc=False,
    )
    fr = back.f
    cols = [fr]
    for i in range(ports):
        for j in range(ports):
            r = vf.get_model_response(i, j, fr)
            cols += [r.real, r.imag]
    head = "freq_hz," + ",".join(
        f"re_y{i + 1}{j + 1},im_y{i + 1}{j + 1}" for i in range(ports) for j in range(ports)
    )
    np.savetxt(
        os.path.join(HERE, f"{name}.fit.csv"),
        np.column_stack(cols),
        delimiter=",",
        header=head,
        comments="",
        fmt="%.17g",
    )
    p = vf.poles
    np.savetxt(
        os.path.join(HERE, f"{name}.poles.csv"),
        np.column_stack([p.real, p.imag]),
        delimiter=",",
        header="re_rad_s,im_rad_s",
        comments="",
        fmt="%.17g",
    )
    # scikit-rf's own error of its model against the data, for the record
    # (the Rust test computes both errors with one measure)
    print(name, "pairs", pairs, "rms abs error (Y)", vf.get_rms_error(parameter_type="y"))


if __name__ == "__main__":
    write("feed1", *feed1(), pairs=5)
    write("line2", *line2(), pairs=6)
    write("bp2n", *bp2n(), pairs=2, proportional=True)
    lp5()
