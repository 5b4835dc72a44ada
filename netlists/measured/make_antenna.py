"""The invented antenna of the measured-load demo (antenna-7m1.tank).

An antenna of our own invention, not a measurement of any real one: a
resonant wire modelled as R = 42 ohm (radiation and loss) in series with
L = 3.1 uH and C = 162 pF (series resonance near 7.1 MHz), with 10 pF of
feed-point capacitance across it. Its impedance is written as S parameters
against 50 ohm, Touchstone 1.1, 1..200 MHz in 0.5 MHz steps (so that the
harmonics of a 7.1 MHz stage up to 170 MHz fall inside the file), by the
RF library scikit-rf.

Run:  pip install -r ../../tests/reference/touchstone/requirements.txt
      python make_antenna.py
Writes tw-antenna.s1p beside this script.
"""

import os

import numpy as np
import skrf

HERE = os.path.dirname(os.path.abspath(__file__))

f = 1e6 + 0.5e6 * np.arange(399)
w = 2 * np.pi * f
z_wire = 42.0 + 1j * w * 3.1e-6 + 1 / (1j * w * 162e-12)
y = 1j * w * 10e-12 + 1 / z_wire
z0 = 50.0
s = ((1 - y * z0) / (1 + y * z0)).reshape(-1, 1, 1)
n = skrf.Network(frequency=skrf.Frequency.from_f(f, unit="hz"), s=s, z0=z0)
n.frequency.unit = "mhz"
n.write_touchstone(
    filename="tw-antenna",
    dir=HERE,
    form="ma",
    r_ref=z0,
    skrf_comment=False,
    write_noise=False,
)
