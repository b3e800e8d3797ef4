"""Does a compiled (numba) loop pay for the plume's inner terms here? Prints the measurement.

    python bench/bench_compiled.py

Times the term that dominates the engines, concentration shape x depletion summed over wind
speeds, C = sum_j f_j / u_j * exp(-0.5 (y/sy)^2) * exp(-(vd/u_j) I) (per receptor), three ways on
the same arrays: plain numpy (what siting uses), a numba loop (serial) and a numba parallel
loop (2 threads), if numba is installed. numba is not a dependency of siting: this script is
how the choice was made, and can be re-run on another machine.
"""

from __future__ import annotations

import math
import time

import numpy as np


def numpy_terms(y, sy, integral, f, u, vd):
    total = np.zeros_like(y)
    shape = np.exp(-0.5 * (y / sy) ** 2)
    for fj, uj in zip(f, u):
        total += fj / uj * np.exp(-(vd / uj) * integral)
    return shape * total


def main() -> None:
    rng = np.random.default_rng(1)
    n = 2_000_000
    y = rng.normal(0, 50, n)
    sy = rng.uniform(10, 200, n)
    integral = rng.uniform(0, 50, n)
    f = rng.random(6)
    u = np.array([1.0, 2.0, 3.5, 5.0, 7.0, 10.0])
    vd = 0.02
    exps = n * (1 + len(u))
    rows = []
    start = time.perf_counter()
    reference = numpy_terms(y, sy, integral, f, u, vd)
    rows.append(("numpy (siting)", time.perf_counter() - start))
    try:
        import numba
    except ImportError:
        print("numba not installed: only the numpy path was timed")
        numba = None
    if numba is not None:
        def loop(y, sy, integral, f, u, vd, out):
            for i in numba.prange(y.size):
                acc = 0.0
                for j in range(f.size):
                    acc += f[j] / u[j] * math.exp(-(vd / u[j]) * integral[i])
                out[i] = math.exp(-0.5 * (y[i] / sy[i]) ** 2) * acc
        for label, parallel in (("numba loop", False), ("numba parallel loop", True)):
            compiled = numba.njit(parallel=parallel, fastmath=True)(loop)
            out = np.empty_like(y)
            compiled(y[:10], sy[:10], integral[:10], f, u, vd, out[:10])  # compile
            start = time.perf_counter()
            compiled(y, sy, integral, f, u, vd, out)
            rows.append((label, time.perf_counter() - start))
            assert np.allclose(out, reference, rtol=1e-12)
    base = rows[0][1]
    print(f"{n:,} receptors x {len(u)} speeds ({exps / 1e6:.0f} million exp)")
    print(f"{'path':24}{'seconds':>10}{'Mexp/s':>10}{'vs numpy':>10}")
    for label, seconds in rows:
        print(f"{label:24}{seconds:>10.3f}{exps / seconds / 1e6:>10.0f}{base / seconds:>9.2f}x")


if __name__ == "__main__":
    main()
