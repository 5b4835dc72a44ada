"""Reference values for the tankwave-study tests.

Run from this directory:  python3 generate.py   (numpy/scipy pinned in requirements.txt)
Writes reference.json, which the Rust tests read. Sources:
  * numpy.linspace / numpy.logspace for sweep points;
  * numpy.percentile(method="linear") (Hyndman & Fan definition 7) for percentiles;
  * scipy.stats.truncnorm for the moments of a normal truncated at +-3 sigma;
  * scipy.stats.uniform for the moments of the uniform tolerance;
  * scipy.stats.spearmanr for the rank correlations of the sensitivity table.
"""
import json

import numpy as np
from scipy import stats

out = {"generator": "generate.py", "numpy": np.__version__}

linear = []
for a, b, n in [(1.0, 2.0, 11), (12.0, 15.0, 4), (-3.5, 7.25, 9), (10.0, 10.0, 1), (5.0, -5.0, 6)]:
    linear.append({"from": a, "to": b, "points": n, "values": np.linspace(a, b, n).tolist()})
out["linear"] = linear

log = []
for a, b, n in [(10.0, 100.0, 7), (1e-12, 1e-9, 13), (2.2e-6, 47e-6, 5), (1.8e6, 30e6, 25), (50.0, 5.0, 4)]:
    vals = np.logspace(np.log10(a), np.log10(b), n)
    log.append({"from": a, "to": b, "points": n, "values": vals.tolist()})
out["log"] = log

rng = np.random.default_rng(20261202)
pct = []
ps = [0.0, 1.0, 5.0, 25.0, 33.3, 50.0, 75.0, 95.0, 99.0, 100.0]
for n in [1, 2, 3, 10, 101, 1000]:
    data = rng.normal(10.0, 3.0, n)
    pct.append({
        "data": data.tolist(),
        "p": ps,
        "values": [float(np.percentile(data, p, method="linear")) for p in ps],
        "mean": float(np.mean(data)),
    })
# ties and a constant run
data = np.array([3.0, 1.0, 2.0, 2.0, 2.0, 5.0, 4.0, 4.0])
pct.append({"data": data.tolist(), "p": ps,
            "values": [float(np.percentile(data, p, method="linear")) for p in ps],
            "mean": float(np.mean(data))})
out["percentiles"] = pct

m, v, s, k = stats.truncnorm(-3.0, 3.0).stats(moments="mvsk")
tn = stats.truncnorm(-3.0, 3.0)
out["truncnorm3"] = {"mean": float(m), "var": float(v), "excess_kurtosis": float(k),
                     "beyond_1sigma": float(2.0 * tn.sf(1.0))}
m, v, s, k = stats.uniform(loc=-1.0, scale=2.0).stats(moments="mvsk")
out["uniform_pm1"] = {"mean": float(m), "var": float(v), "excess_kurtosis": float(k)}

# Spearman rank correlation (scipy.stats.spearmanr: Pearson correlation of
# the ranks, ties given their average rank).
rng2 = np.random.default_rng(20261204)
spear = []
x = rng2.normal(0.0, 1.0, 40)
for name, y in [
    ("linear_noisy", 2.0 * x + rng2.normal(0.0, 1.0, 40)),
    ("monotone_cubic", x ** 3),
    ("decreasing", -np.exp(x)),
    ("independent", rng2.normal(0.0, 1.0, 40)),
    ("ties", np.round(x)),
]:
    rho = stats.spearmanr(x, y).statistic
    spear.append({"name": name, "x": x.tolist(), "y": y.tolist(), "rho": float(rho)})
xt = np.array([1.0, 2.0, 2.0, 3.0, 3.0, 3.0, 4.0, 5.0])
yt = np.array([2.0, 1.0, 4.0, 3.0, 3.0, 6.0, 5.0, 5.0])
spear.append({"name": "ties_both", "x": xt.tolist(), "y": yt.tolist(),
              "rho": float(stats.spearmanr(xt, yt).statistic)})
out["spearman"] = spear

with open("reference.json", "w") as f:
    json.dump(out, f, indent=1)
    f.write("\n")
