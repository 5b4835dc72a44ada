"""Invented large-signal data for the generic tw_gen20 device of our own.

NOT MEASURED AND NOT FROM ANY REAL PART. power.csv stands in for a data
sheet's output-power curve: the output power and collector efficiency that
test-stage.tank gives with the device's *invented truth* (the parameters
make_curves.py made its curves from, written here as a part) at six input
powers, rounded to three figures, as a read-off of a printed curve would
be. `tankwave fit tw_gen20 ... --power power.csv --power-stage
test-stage.tank` then shows how far the model fitted to the small-signal
and d.c. curves is from it (docs/fit.md, "Large-signal check").

Run from the repository root, after `cargo build --release`:
    python3 netlists/models/fitted/make_power.py
"""

import json
import os
import subprocess
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.join(HERE, "..", "..", "..")
BIN = os.path.join(ROOT, "target", "release", "tankwave")

# the truth of make_curves.py's "tw-gen20", as a part
TRUTH = """
part tw_gen20 npn {
  transport { sat_current=3e-14A beta=60 beta_reverse=3 ideality=1 early_voltage=70V knee_current=2.5A }
  leakage { be_current=4e-12A be_ideality=1.8 }
  charge {
    be_capacitance=700pF be_potential=0.75V be_grading=0.35
    bc_capacitance=110pF bc_potential=0.6V bc_grading=0.4
    transit=0.45ns linear_from=0.5
  }
  resistance { collector=0.18Ohm }
  temperature { measured_at=25degC }
}
"""

# drive EMF amplitudes (V): available power V^2/(8*50 ohm)
DRIVES = [5.0, 6.0, 7.0, 8.0, 9.0, 10.0]


def find(o, key):
    if isinstance(o, dict):
        for k, v in o.items():
            if k == key:
                return v
            r = find(v, key)
            if r is not None:
                return r
    elif isinstance(o, list):
        for v in o:
            r = find(v, key)
            if r is not None:
                return r
    return None


def three(x):
    return float(f"{x:.3g}")


def main():
    stage = open(os.path.join(HERE, "tw-gen20", "test-stage.tank")).read()
    rows = []
    with tempfile.TemporaryDirectory() as d:
        path = os.path.join(d, "truth-stage.tank")
        with open(path, "w") as f:
            f.write(stage + "\n" + TRUTH)
        for v in DRIVES:
            out = subprocess.run(
                [BIN, "run", path, "--set", f"drive={v}V", "--format", "json"],
                check=True, capture_output=True, text=True,
            ).stdout
            j = json.loads(out)
            rows.append((three(find(j, "pavs_w")), three(find(j, "p1_w")),
                         three(find(j, "efficiency"))))
    with open(os.path.join(HERE, "tw-gen20", "power.csv"), "w", newline="") as f:
        f.write("# INVENTED large-signal data of the generic device tw_gen20 (not a real part),\n")
        f.write("# made by make_power.py: test-stage.tank with the invented truth parameters\n")
        f.write("pin[W],pout[W],efficiency\n")
        for r in rows:
            f.write(f"{r[0]},{r[1]},{r[2]}\n")


if __name__ == "__main__":
    main()
