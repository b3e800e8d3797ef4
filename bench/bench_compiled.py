"""Does a compiled (numba) loop pay for the engines' inner work here? Prints the measurements.

    python bench/bench_compiled.py

Two measurements, each on the same arrays three ways: plain numpy (what siting uses), a numba
loop (serial) and a numba parallel loop (2 threads), if numba is installed.

1. The hourly engine's inner term, concentration shape x depletion summed over wind speeds,
   C = sum_j f_j / u_j * exp(-0.5 (y/sy)^2) * exp(-(vd/u_j) I) per receptor.
2. The sector engine's per-receptor step (longterm._element_chunk): sector position, distance,
   node position and the two sectors' log-linear reads off an element's radial profiles, for
   the 40,000 receptors of the site benchmark and its 10 sources.

numba is not a dependency of siting: this script is how the choice was made, and can be
re-run on another machine.
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
    print(
        f"hourly engine, inner term: {n:,} receptors x {len(u)} speeds "
        f"({exps / 1e6:.0f} million exp)"
    )
    print(f"{'path':24}{'seconds':>10}{'Mexp/s':>10}{'vs numpy':>10}")
    for label, seconds in rows:
        print(f"{label:24}{seconds:>10.3f}{exps / seconds / 1e6:>10.0f}{base / seconds:>9.2f}x")


def lookup_rows() -> tuple[list, str]:
    """Time the sector engine's per-receptor step: numpy (siting) vs numba loops."""
    import sys
    from pathlib import Path

    sys.path.insert(0, str(Path(__file__).resolve().parent))
    import bench_runs

    from siting.dispersion.sector import _element_chunk, radial_profiles, receptor_range_m

    case = bench_runs.build_case("site", quick=False)
    rx, ry = case.receptor_x_m.ravel(), case.receptor_y_m.ravel()
    work = []
    for element in case.elements:
        near, far = receptor_range_m(rx, ry, element)
        work.append((element, radial_profiles(element, case.weather, case.settings, near, far)))
    weather = case.weather
    start = time.perf_counter()
    reference = [_element_chunk(rx, ry, e, weather, p) for e, p in work]
    rows = [("numpy (siting)", time.perf_counter() - start)]
    try:
        import numba
    except ImportError:
        return rows, "numba not installed: only the numpy path was timed"

    def loop(rx, ry, x0, y0, min_d, n_sec, c0, log_table, first, step, out):
        n_nodes = log_table.shape[1]
        for i in numba.prange(rx.size):
            dx, dy = rx[i] - x0, ry[i] - y0
            pos = math.atan2(-dx, -dy) * (n_sec / (2.0 * math.pi)) - c0
            pos = pos % n_sec
            k0 = min(int(pos), n_sec - 1)
            w1 = pos - k0
            at = math.log(max(math.hypot(dx, dy), min_d)) / step
            below = math.floor(at)
            w = at - below
            i0 = int(below) - first
            if i0 < 0:
                i0, w = 0, 0.0
            elif i0 > n_nodes - 2:
                i0, w = n_nodes - 2, 1.0
            a, b = log_table[k0, i0], log_table[k0, i0 + 1]
            c, d = log_table[k0 + 1, i0], log_table[k0 + 1, i0 + 1]
            out[i] = (1.0 - w1) * math.exp(a + (b - a) * w) + w1 * math.exp(c + (d - c) * w)

    n_sec = len(weather.sector_centres_deg)
    c0 = weather.sector_centres_deg[0] / weather.sector_width_deg
    for label, parallel in (("numba loop", False), ("numba parallel loop", True)):
        compiled = numba.njit(parallel=parallel, fastmath=False)(loop)
        out = np.empty_like(rx)
        e, p = work[0]
        compiled(
            rx[:10],
            ry[:10],
            e.x_m,
            e.y_m,
            e.min_distance_m,
            n_sec,
            c0,
            p.log_value,
            p.first_node,
            p.log_step,
            out[:10],
        )  # compile
        start = time.perf_counter()
        results = []
        for e, p in work:
            out = np.empty_like(rx)
            compiled(
                rx,
                ry,
                e.x_m,
                e.y_m,
                e.min_distance_m,
                n_sec,
                c0,
                p.log_value,
                p.first_node,
                p.log_step,
                out,
            )
            results.append(out)
        rows.append((label, time.perf_counter() - start))
        for got, want in zip(results, reference):
            assert np.allclose(got, want, rtol=1e-9, atol=0)
    return rows, f"{rx.size:,} receptors x {len(work)} sources"


def print_lookup() -> None:
    rows, what = lookup_rows()
    print()
    print(f"sector engine, per-receptor step: {what}")
    base = rows[0][1]
    print(f"{'path':24}{'seconds':>10}{'vs numpy':>10}")
    for label, seconds in rows:
        print(f"{label:24}{seconds:>10.4f}{base / seconds:>9.2f}x")


if __name__ == "__main__":
    main()
    print_lookup()
