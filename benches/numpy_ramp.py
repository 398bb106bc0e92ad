"""`icefold trace` against the script a researcher would write instead,
measured side by side in one run: `python3 benches/numpy_ramp.py` (after
`cargo build --release`; needs numpy and scipy).

The comparison ramps the stellar flux of the default scenario up and then
down over the range `icefold trace` covers, in 0.5 W m-2 steps, and at every
flux time-steps the same energy balance on the same 90 bands (annual-mean
insolation, linear OLR A + B T, diffusive transport D d/dx[(1-x^2) dT/dx],
ice albedo where the band is below the threshold) with implicit
tridiagonal steps (transport and OLR implicit, albedo from the start of the
step; scipy.linalg.solve_banded) until the largest change is below 1e-4 K
per year: the usual way to find a hysteresis loop by forward simulation
(common practice, no source). It finds the jumps only to the 0.5 W m-2 of its
flux step and only the stable branches; the trace finds every branch and its
folds to the solver tolerance. Target (issue 14): the trace at least 100
times faster.

The insolation profile per unit flux is read from `icefold solve` (the
exact annual mean of the default orbit), so both sides solve the same
planet; the band-wise step albedo of the script is coarser than the trace's
sub-grid ice edge, so its jumps differ from the trace's folds by a few
W m-2 (printed beside them).
"""

import csv
import os
import statistics
import subprocess
import sys
import tempfile
import time
import tomllib
from pathlib import Path

import numpy as np
from scipy.linalg import solve_banded

ROOT = Path(__file__).resolve().parent.parent
BIN = Path(os.environ.get("CARGO_TARGET_DIR", ROOT / "target")) / "release" / "icefold"


def icefold(*args):
    subprocess.run([str(BIN), *args], check=True, capture_output=True)


def read_csv(path):
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


def main():
    work = Path(tempfile.mkdtemp(prefix="icefold-ramp-"))
    # the planet, as the trace resolves it, and its insolation per unit flux
    icefold("solve", "--figures", "none", "--quiet", "--out", str(work / "solve"))
    sc = tomllib.loads((work / "solve" / "scenario.toml").read_text())
    rows = [r for r in read_csv(work / "solve" / "profile.csv") if r["equilibrium"] == "1"]
    x = np.array([float(r["sin_latitude"]) for r in rows])
    s_unit = np.array([float(r["insolation_wm2"]) for r in rows]) / sc["orbit"]["flux"]
    n = len(x)
    faces = np.linspace(-1.0, 1.0, n + 1)  # equal steps in sin(latitude)
    dx = np.diff(faces)
    a, b = sc["radiation"]["a"], sc["radiation"]["b"]
    d = sc["transport"]["diffusivity"]
    cap = sc["seasons"]["mixed_layer_depth"] * 1025.0 * 3985.0 / 3.15576e7  # W yr m-2 K-1
    p2 = 0.5 * (3 * x**2 - 1)
    alpha_open = sc["albedo"]["open"] + sc["albedo"]["open_p2"] * p2
    alpha_ice, t_s = sc["albedo"]["ice"], sc["albedo"]["threshold"]

    # transport matrix L (tridiagonal): (L T)_i = [k_{i+1/2}(T_{i+1}-T_i) - k_{i-1/2}(T_i-T_{i-1})]/dx_i
    k = d * (1 - faces[1:-1] ** 2) / np.diff(x)
    dt = 0.25  # years
    ab = np.zeros((3, n))
    ab[1] = cap / dt + b
    ab[1, :-1] += k / dx[:-1]
    ab[1, 1:] += k / dx[1:]
    ab[0, 1:] = -k / dx[:-1]
    ab[2, :-1] = -k / dx[1:]

    # the trace: the default command, as a user runs it
    def trace(extra=()):
        icefold("trace", "--quiet", *extra, "--out", str(work / "trace"))

    trace()
    summary_range = read_csv(work / "trace" / "folds.csv")
    folds = sorted(float(r["orbit.flux"]) for r in summary_range)
    import json

    lo, hi = json.loads((work / "trace" / "summary.json").read_text())["range"]

    def ramp():
        t = np.full(n, 30.0)
        fluxes = np.concatenate([np.arange(lo, hi, 0.5), np.arange(hi, lo, -0.5)])
        ice_mean, steps = [], 0
        for s0 in fluxes:
            for _ in range(100000):
                coalbedo = np.where(t < t_s, 1 - alpha_ice, 1 - alpha_open)
                rhs = cap / dt * t + s0 * s_unit * coalbedo - a
                new = solve_banded((1, 1), ab, rhs)
                steps += 1
                change = np.max(np.abs(new - t)) / dt
                t = new
                if change < 1e-4:
                    break
            ice_mean.append(np.mean(t < t_s))
        return fluxes, np.array(ice_mean), steps

    # alternate: trace, ramp, trace, ... (the ramp once per round: it is slow)
    rounds = int(sys.argv[1]) if len(sys.argv) > 1 else 2
    traced, traced_nofig, ramped = [], [], []
    for _ in range(rounds):
        for _ in range(3):
            t0 = time.perf_counter()
            trace()
            traced.append(time.perf_counter() - t0)
            t0 = time.perf_counter()
            trace(("--figures", "none"))
            traced_nofig.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        fluxes, ice, steps = ramp()
        ramped.append(time.perf_counter() - t0)
    tr, tn, rp = statistics.median(traced), statistics.median(traced_nofig), statistics.median(ramped)
    print(f"default scenario, {n} bands, flux {lo:.2f} .. {hi:.2f} W m-2, {rounds} rounds:")
    print(f"  icefold trace (whole process, figures):    {tr * 1e3:9.1f} ms")
    print(f"  icefold trace --figures none:              {tn * 1e3:9.1f} ms")
    print(f"  numpy/scipy ramp, 0.5 W m-2, dt {dt} yr:    {rp * 1e3:9.1f} ms ({steps} implicit steps)")
    print(f"  the trace is {rp / tr:.0f} times faster ({rp / tn:.0f} without figures); target: at least 100")
    jumps = [
        0.5 * (fluxes[i] + fluxes[i + 1])
        for i in range(len(fluxes) - 1)
        if abs(ice[i + 1] - ice[i]) > 0.05
    ]
    print("  ramp jumps (W m-2):  " + ", ".join(f"{j:.2f}" for j in jumps))
    print("  trace folds (W m-2): " + ", ".join(f"{f:.6f}" for f in folds))


if __name__ == "__main__":
    main()
