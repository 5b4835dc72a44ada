"""Reference values for the keying figures (crates/measure/tests/keying.rs).

Run: python3 gen.py   (numpy and scipy as pinned in requirements.txt; writes
lines.csv, band.csv and windows.csv beside this script).

1. The spectrum of one pulse with raised-cosine edges, half-amplitude width W
   and edge time t_r (0 to 1 over t_r as 1/2 (1 - cos(pi t / t_r))):

       |E(f)| = W |sinc(f W)| |cos(pi f t_r) / (1 - 4 f^2 t_r^2)|.

   This is the time-frequency dual of the raised-cosine spectrum and its
   pulse, J. G. Proakis, "Digital Communications", 4th ed., McGraw-Hill,
   2001, section 9.2 (from memory): the raised-cosine spectrum X(f) of
   roll-off beta has the pulse x(t) = sinc(t/T) cos(pi beta t/T) /
   (1 - 4 beta^2 t^2/T^2). Exchange t and f: a time pulse that is flat, then
   falls with a raised-cosine edge of width t_r = beta W, half amplitude at
   +-W/2 (W = 1/T), has E(f) = W sinc(f W) cos(pi beta W f) /
   (1 - 4 beta^2 W^2 f^2), the form above. (The same follows directly: the
   pulse is a rectangle of width W convolved with a half-sine of duration
   t_r and unit area, whose transform is cos(pi f t_r)/(1 - 4 f^2 t_r^2).)
   Checked here numerically: numpy FFT of a finely sampled pulse against the
   formula (the check fails the script if they differ).

2. A periodic dot train, one period T of N samples of the complex envelope
   a(t) = p(t) e^{j 0.3}: its lines |c_m| by numpy FFT (c = fft(a)/N), the
   formula's lines |E(m/T)|/T, the windowed lines through scipy's periodic
   Hann and Blackman-Harris windows (c = fft(w a)/sum(w)), and the view at
   RBW = 10/T: line powers (the Nyquist line split between both ends)
   convolved with the rectangular filter [1/2, 1 x 9, 1/2]; lines.csv
   keeps the lines within 600 of the carrier.

3. The 99 % occupied band (ITU Radio Regulations, Article 1, No. 1.153) of
   the raised-cosine train and of the same train keyed with square edges,
   by a brute-force cumulative sum: the lower limit is the first line whose
   cumulative power from below exceeds 0.5 % of the total, the upper the
   first from above.

4. Coherent gain sum(w)/N and equivalent noise bandwidth N sum(w^2)/sum(w)^2
   of the windows, from scipy.signal.windows (sym=False, the periodic form).
"""

import os

import numpy as np
from scipy.signal import windows

HERE = os.path.dirname(os.path.abspath(__file__))

# The dot train (INVENTED demo numbers, 25 wpm-like: 48 ms dots).
PERIOD = 0.096  # s
WIDTH = 0.048  # s, at half amplitude
EDGE = 0.005  # s, raised-cosine edge time
CENTRE = 0.030  # s, pulse centre inside the period
N = 4096
PHASE = 0.3  # rad
RBW_LINES = 10
CSV_LINES = 600  # lines.csv keeps |m| <= this (0 to 6.25 kHz)


def pulse(t, width=WIDTH, edge=EDGE, centre=CENTRE):
    u = np.abs(t - centre)
    flat = width / 2 - edge / 2
    x = np.clip((u - flat) / edge, 0.0, 1.0)
    return 0.5 * (1.0 + np.cos(np.pi * x))


def square(t, width=WIDTH, centre=CENTRE):
    return np.where(np.abs(t - centre) < width / 2, 1.0, 0.0)


def formula(f, width=WIDTH, edge=EDGE):
    f = np.asarray(f, dtype=float)
    den = 1.0 - 4.0 * f**2 * edge**2
    near = np.abs(den) < 1e-12
    # At f t_r = 1/2 the ratio is 0/0; its limit is pi/4.
    ratio = np.where(near, np.pi / 4, np.cos(np.pi * f * edge) / np.where(near, 1.0, den))
    return width * np.abs(np.sinc(f * width)) * np.abs(ratio)


def check_formula():
    # One pulse in a window of 1 s sampled every 1 us: dt * FFT is the
    # transform's rectangle rule, spectrally accurate for this smooth pulse.
    span, n = 1.0, 1 << 20
    dt = span / n
    t = np.arange(n) * dt
    e = dt * np.fft.fft(pulse(t, centre=0.5))
    f = np.fft.fftfreq(n, dt)
    keep = np.abs(f) < 5000.0
    err = np.max(np.abs(np.abs(e[keep]) - formula(f[keep])))
    assert err < 1e-9 * WIDTH, f"formula differs from the FFT by {err}"
    return float(err)


def line_powers(c):
    """|c_m|^2 for m = -N/2..N/2, the Nyquist bin's power split."""
    n = len(c)
    half = n // 2
    m = np.arange(-half, half + 1)
    p = np.abs(c[m % n]) ** 2
    if n % 2 == 0:
        p[0] *= 0.5
        p[-1] *= 0.5
    return m, p


def band(p, m, spacing):
    total = p.sum()
    tail = 0.005 * total
    lo = int(np.argmax(np.cumsum(p) > tail))
    hi = len(p) - 1 - int(np.argmax(np.cumsum(p[::-1]) > tail))
    return m[lo] * spacing, m[hi] * spacing


def main():
    err = check_formula()
    dt = PERIOD / N
    t = np.arange(N) * dt
    spacing = 1.0 / PERIOD
    a = pulse(t) * np.exp(1j * PHASE)
    c = np.fft.fft(a) / N
    m, p = line_powers(c)
    amp = np.abs(c[m % N])
    form = formula(m * spacing) / PERIOD
    wins = {}
    for name, w in [
        ("hann", windows.hann(N, sym=False)),
        ("blackman_harris", windows.blackmanharris(N, sym=False)),
    ]:
        cw = np.fft.fft(w * a) / w.sum()
        wins[name] = np.abs(cw[m % N])
    kernel = np.ones(RBW_LINES + 1)
    kernel[0] = kernel[-1] = 0.5
    view = np.convolve(p, kernel, mode="same")
    with open(os.path.join(HERE, "lines.csv"), "w") as out:
        out.write(
            f"# formula vs numpy FFT of a single pulse: largest difference {err!r} "
            f"(W = {WIDTH} s)\n"
        )
        out.write(
            f"# period {PERIOD} s, N {N}, width {WIDTH} s, edge {EDGE} s, centre {CENTRE} s, "
            f"phase {PHASE} rad, rbw {RBW_LINES} lines\n"
        )
        out.write("m,offset_hz,numpy_amp,formula_amp,hann_amp,blackman_harris_amp,rbw_power\n")
        for i in np.nonzero(np.abs(m) <= CSV_LINES)[0]:
            out.write(
                f"{m[i]},{float(m[i] * spacing)!r},{float(amp[i])!r},{float(form[i])!r},"
                f"{float(wins['hann'][i])!r},{float(wins['blackman_harris'][i])!r},"
                f"{float(view[i])!r}\n"
            )
    with open(os.path.join(HERE, "band.csv"), "w") as out:
        out.write("keying,lower_hz,upper_hz\n")
        for name, x in [("raised_cosine", pulse(t)), ("square", square(t))]:
            mm, pp = line_powers(np.fft.fft(x * np.exp(1j * PHASE)) / N)
            lo, hi = band(pp, mm, spacing)
            out.write(f"{name},{float(lo)!r},{float(hi)!r}\n")
    with open(os.path.join(HERE, "windows.csv"), "w") as out:
        out.write("window,n,coherent_gain,enbw_bins\n")
        for name, fn in [
            ("rectangular", lambda n: np.ones(n)),
            ("hann", lambda n: windows.hann(n, sym=False)),
            ("blackman_harris", lambda n: windows.blackmanharris(n, sym=False)),
        ]:
            for n in (64, 4096):
                w = fn(n)
                cg = w.sum() / n
                enbw = n * (w**2).sum() / w.sum() ** 2
                out.write(f"{name},{n},{float(cg)!r},{float(enbw)!r}\n")


if __name__ == "__main__":
    main()
