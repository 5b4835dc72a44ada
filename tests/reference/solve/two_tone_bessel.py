"""Reference spectrum of an exponential junction driven by two tones.

With v(t) = a*Vt*(cos w1 t + cos w2 t) across i = IS*(exp(v/Vt) - 1), the
generating function of the modified Bessel functions,
exp(x cos t) = I_0(x) + 2 sum_{k>=1} I_k(x) cos(k t) (M. Abramowitz,
I. A. Stegun, Handbook of Mathematical Functions, 1964, eq. 9.6.34), gives

    i(t) = IS * exp(a cos w1 t) * exp(a cos w2 t) - IS

so the two-sided coefficient of exp(j(m w1 + n w2) t) is IS*I_|m|(a)*I_|n|(a)
for (m, n) != (0, 0), and IS*(I_0(a)^2 - 1) at DC. This script writes the
products I_m(a)*I_n(a) for m, n = 0..15 at a = 0.5, 1, 2 (scipy.special.iv,
double precision) as the check's expected values.

Run: python3 two_tone_bessel.py  (writes two_tone_bessel.csv beside this file)
"""
import os

from scipy.special import iv

ORDERS = range(16)
LEVELS = (0.5, 1.0, 2.0)


def main():
    here = os.path.dirname(os.path.abspath(__file__))
    with open(os.path.join(here, "two_tone_bessel.csv"), "w") as f:
        f.write("a,m,n,im_in\n")
        for a in LEVELS:
            for m in ORDERS:
                for n in ORDERS:
                    f.write(f"{a!r},{m},{n},{iv(m, a) * iv(n, a):.17e}\n")


if __name__ == "__main__":
    main()
