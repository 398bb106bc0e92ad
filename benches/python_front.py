"""The cost of the Python front, measured side by side in one run:
`python3 benches/python_front.py` (after `pip install .`).

1. `icefold.trace()` of the default scenario from Python against the same
   library call in Rust (`_native.library_seconds`: the same command run
   in Rust, captured, figures off, no Python objects), alternating, the
   median of each; target: at most 10% more.
2. A 1,000-call ensemble (`icefold.solve` over 1,000 fluxes): the share
   of the time spent turning the command's tables into xarray Datasets.
"""

import statistics
import sys
import time

import icefold
from icefold import _native


def per_call(f, repeats):
    t = time.perf_counter()
    for _ in range(repeats):
        f()
    return (time.perf_counter() - t) / repeats


def main():
    rounds = int(sys.argv[1]) if len(sys.argv) > 1 else 15
    py, rust = [], []
    icefold.trace()  # warm up
    for _ in range(rounds):
        py.append(per_call(lambda: icefold.trace(), 3))
        rust.append(_native.library_seconds("trace", repeats=3))
    p, r = statistics.median(py), statistics.median(rust)
    print(f"trace (default scenario), medians of {rounds} rounds of 3 calls:")
    print(f"  Python icefold.trace(): {p * 1e3:.2f} ms per call")
    print(f"  library in Rust:        {r * 1e3:.2f} ms per call")
    print(f"  Python costs {100 * (p / r - 1):+.1f}% (target: at most +10%)")

    n = 1000
    fluxes = [1200.0 + 0.3 * k for k in range(n)]
    native = convert = 0.0
    t0 = time.perf_counter()
    for s in fluxes:
        t = time.perf_counter()
        text, files = icefold._call("solve", None, {"orbit.flux": s}, {})
        t1 = time.perf_counter()
        icefold._dataset("solve", text, files, {"profile.csv": "point"})
        t2 = time.perf_counter()
        native += t1 - t
        convert += t2 - t1
    total = time.perf_counter() - t0
    print(f"ensemble of {n} solve calls: {total:.2f} s; the library {native:.2f} s, "
          f"tables to xarray {convert:.2f} s ({100 * convert / total:.1f}% of the time)")


if __name__ == "__main__":
    main()
