"""Reference Fourier coefficients of the truncated-cosine collector pulse.

Pulse (half angle theta, peak 1): i(x) = (cos x - cos theta)/(1 - cos theta)
for |x| < theta, 0 elsewhere. Coefficients by adaptive quadrature
(scipy.integrate.quad), independent of the closed forms in
S. C. Cripps, RF Power Amplifiers for Wireless Communications, 2nd ed.,
2006, ch. 3, and H. L. Krauss, C. W. Bostian, F. H. Raab, Solid State
Radio Engineering, 1980 (closed forms recalled from memory there).

alpha0 = (1/2pi) int i dx (DC), alphan = (1/pi) int i cos(nx) dx (peak
amplitude of harmonic n), mean_square = (1/2pi) int i^2 dx (for Parseval).
Run: python3 truncated_cosine.py > truncated_cosine.json
"""

import json

import numpy as np
from scipy.integrate import quad

ANGLES_DEG = [60, 90, 120, 150, 180, 200, 240, 270, 300, 330]
HARMONICS = 6


def pulse(x, th):
    return (np.cos(x) - np.cos(th)) / (1.0 - np.cos(th))


def main():
    rows = []
    for full in ANGLES_DEG:
        th = np.radians(full) / 2.0
        opts = dict(epsabs=1e-13, epsrel=1e-12, limit=200)
        a0 = quad(lambda x: pulse(x, th), -th, th, **opts)[0] / (2 * np.pi)
        an = [
            quad(lambda x: pulse(x, th) * np.cos(n * x), -th, th, **opts)[0] / np.pi
            for n in range(1, HARMONICS + 1)
        ]
        ms = quad(lambda x: pulse(x, th) ** 2, -th, th, **opts)[0] / (2 * np.pi)
        rows.append(
            {
                "full_angle_deg": full,
                "alpha": [a0] + an,
                "mean_square": ms,
                "efficiency_vc1_eq_vcc": 0.5 * an[0] / a0,
            }
        )
    print(json.dumps({"source": "scipy.integrate.quad", "rows": rows}, indent=1))


if __name__ == "__main__":
    main()
