"""tankwave against scipy on the same class-C stage, at the same accuracy.

The stage is tests/data/accuracy/sharp-pulse.tank, whose equations
sharp_pulse.py integrates independently (Radau, vectorised right-hand side,
analytic Jacobian, shooting with the monodromy matrix from the variational
equation). Its reference solution, sharp_pulse.txt (rtol 1e-12, own error
about 1e-11 relative in P1), is the truth both are measured against.

1. tankwave solves the stage as the file asks (method=auto, its default
   accuracy target); its errors against the reference are the accuracy to
   match: the relative error of P1 and the worst error of a harmonic level.
2. scipy solves the same stage at rtol = 1e-3, 1e-4, ... (atol rtol/100);
   the loosest rtol whose errors are both no larger than tankwave's is
   "the same accuracy" (scipy is given the benefit: it may be more accurate).
3. Both are timed, median of REPEATS runs each, alternating:
   - whole process: the command run from the shell (interpreter start,
     imports and the solve for scipy; the binary's whole run for tankwave,
     which also reads the file and writes its report);
   - excluding start-up: scipy's solve alone (perf_counter around
     steady(), after the imports); tankwave's "finished in" time, which
     counts from the start of its main to the end of the run.

Run from the repository root after `cargo build --release`:
    python3 tests/reference/solve/speed_vs_scipy.py
Writes speed_vs_scipy.txt beside this file (numpy 2.1.3, scipy 1.14.1;
requirements.txt). Timings depend on the machine: read the ratios.
"""
import json
import os
import re
import statistics
import subprocess
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.normpath(os.path.join(HERE, "..", "..", ".."))
BIN = os.path.join(ROOT, "target", "release", "tankwave")
STAGE = os.path.join(ROOT, "tests", "data", "accuracy", "sharp-pulse.tank")
SCRIPT = os.path.join(HERE, "sharp_pulse.py")
REPEATS = 5


def reference():
    p1, dbc = None, []
    for line in open(os.path.join(HERE, "sharp_pulse.txt")):
        if line.startswith("#"):
            continue
        q, v, _ = line.split()
        if q == "p1_W":
            p1 = float(v)
        else:
            dbc.append(float(v))
    return p1, dbc


def run_tankwave():
    t0 = time.perf_counter()
    p = subprocess.run([BIN, "run", STAGE, "--format", "json"],
                       capture_output=True, text=True, check=True)
    wall = time.perf_counter() - t0
    j = json.loads(p.stdout)
    m = re.search(r"finished in ([0-9.]+) (ms|s)", p.stderr)
    inner = float(m.group(1)) * (1e-3 if m.group(2) == "ms" else 1.0)
    out = j["steady"]["metrics"]["output"]
    p1 = out["p1_w"]
    dbc = [h["dbc"] for h in out["harmonics"][1:]]
    return wall, inner, p1, dbc


def run_scipy(rtol):
    t0 = time.perf_counter()
    p = subprocess.run([sys.executable, SCRIPT, "--time", repr(rtol)],
                       capture_output=True, text=True, check=True)
    wall = time.perf_counter() - t0
    vals = {}
    for line in p.stdout.splitlines():
        k, *rest = line.split()
        vals[k] = rest
    p1 = float(vals["p1_W"][0])
    dbc = [float(x) for x in vals["dbc"]]
    return wall, float(vals["solve_s"][0]), float(vals["import_s"][0]), p1, dbc


def errors(p1, dbc, ref_p1, ref_dbc):
    n = min(len(dbc), len(ref_dbc))
    worst = max((abs(a - b) for a, b in zip(dbc[:n], ref_dbc[:n]) if a is not None), default=0.0)
    return abs(p1 - ref_p1) / ref_p1, worst


def main():
    ref_p1, ref_dbc = reference()
    _, _, tp1, tdbc = run_tankwave()
    t_err = errors(tp1, tdbc, ref_p1, ref_dbc)
    lines = [f"tankwave (method=auto): P1 error {t_err[0]:.2e} relative, "
             f"worst harmonic {t_err[1]:.2e} dB"]
    chosen = None
    for rtol in [1e-3, 3e-4, 1e-4, 3e-5, 1e-5, 3e-6, 1e-6, 3e-7, 1e-7, 1e-8, 1e-9, 1e-10]:
        _, _, _, p1, dbc = run_scipy(rtol)
        e = errors(p1, dbc, ref_p1, ref_dbc)
        ok = e[0] <= t_err[0] and e[1] <= t_err[1]
        lines.append(f"scipy Radau rtol {rtol:.0e}: P1 error {e[0]:.2e}, "
                     f"worst harmonic {e[1]:.2e} dB{'  <- same accuracy' if ok else ''}")
        if ok:
            chosen = rtol
            break
    if chosen is None:
        lines.append("no rtol down to 1e-10 matched tankwave's accuracy")
        print("\n".join(lines))
        return
    tw_wall, tw_inner, sp_wall, sp_solve, sp_import = [], [], [], [], []
    for _ in range(REPEATS):
        w, i, _, _ = run_tankwave()
        tw_wall.append(w)
        tw_inner.append(i)
        w, s, imp, _, _ = run_scipy(chosen)
        sp_wall.append(w)
        sp_solve.append(s)
        sp_import.append(imp)
    med = statistics.median
    lines += [
        f"timed at rtol {chosen:.0e}, median of {REPEATS} alternating runs:",
        f"  tankwave whole process {med(tw_wall) * 1e3:.1f} ms, "
        f"its own run {med(tw_inner) * 1e3:.1f} ms",
        f"  scipy whole process {med(sp_wall) * 1e3:.1f} ms, "
        f"solve alone {med(sp_solve) * 1e3:.1f} ms (imports {med(sp_import) * 1e3:.1f} ms)",
        f"  ratio, whole process: {med(sp_wall) / med(tw_wall):.1f}x",
        f"  ratio, excluding start-up: {med(sp_solve) / med(tw_inner):.1f}x",
    ]
    text = "\n".join(lines)
    print(text)
    with open(os.path.join(HERE, "speed_vs_scipy.txt"), "w") as fh:
        fh.write("# made by speed_vs_scipy.py; timings depend on the machine, "
                 "read the ratios\n")
        fh.write(text + "\n")


if __name__ == "__main__":
    main()
