"""Time `siting screen` on habitat layers of many small sites (prints figures; not a test).

    python bench/bench_many_sites.py [--sites 1000 10000]

Copies the bundled invented demo into a temporary folder and replaces its habitat layer with N
invented 30 m x 30 m sites scattered over the demo grid (habitat, designation and background
drawn from the demo's four sites; names "Site 0", "Site 1", ...). For each N it prints the
wall-clock seconds of the whole command (inputs, dispersion, sensitivity, every output), and
the ratio to the demo's own four-site run measured in the same session. It also times the
site sampling (site_sample_points, site_boundary_points, grid_nodes_in_sites) against a
per-site loop of shapely calls (the baseline it replaced) on the largest layer, with the ratio.
Target (issue 12): 10,000 sites under 30 s on 2 cores.
"""

from __future__ import annotations

import argparse
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np


def _layer(demo: Path, n: int, path: Path) -> None:
    import geopandas as gpd
    from shapely.geometry import box

    src = gpd.read_file(demo / "habitats.gpkg")
    minx, miny, maxx, maxy = src.total_bounds
    cx, cy = (minx + maxx) / 2, (miny + maxy) / 2
    rng = np.random.default_rng(1)
    xs, ys = cx + rng.uniform(-2400, 2400, n), cy + rng.uniform(-2400, 2400, n)
    rows = src.drop(columns="geometry").sample(n, replace=True, random_state=1)
    rows = rows.reset_index(drop=True)
    rows["name"] = [f"Site {i}" for i in range(n)]
    geometry = [box(x, y, x + 30, y + 30) for x, y in zip(xs, ys)]
    gpd.GeoDataFrame(rows, geometry=geometry, crs=src.crs).to_file(path)


def _screen_seconds(scenario: Path, out: Path) -> float:
    start = time.perf_counter()
    subprocess.run(
        [
            sys.executable,
            "-m",
            "siting",
            "screen",
            str(scenario),
            "--out",
            str(out),
            "--overwrite",
            "--quiet",
        ],
        check=True,
    )
    return time.perf_counter() - start


def _per_site_baseline(geoms, sources, spacing_m: float, grid) -> None:
    """The per-site loop the vectorised sampling replaced (same points, one site at a time)."""
    import shapely
    from shapely.ops import nearest_points

    gx, gy = grid.centres()
    for geom in geoms:
        for sx, sy in sources:
            nearest_points(geom.boundary, shapely.Point(sx, sy))
        geom.representative_point()
        minx, miny, maxx, maxy = geom.bounds
        lx, ly = np.meshgrid(
            np.arange(minx + spacing_m / 2, maxx, spacing_m),
            np.arange(miny + spacing_m / 2, maxy, spacing_m),
        )
        shapely.contains_xy(geom, lx.ravel(), ly.ravel())
        for ring in [geom.exterior, *geom.interiors]:
            n = max(8, int(np.ceil(ring.length / 10.0)))
            shapely.line_interpolate_point(ring, np.linspace(0, ring.length, n, endpoint=False))
        shapely.contains_xy(geom, gx.ravel(), gy.ravel())


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sites", type=int, nargs="+", default=[1000, 10000])
    args = parser.parse_args()

    import geopandas as gpd

    from siting.dispersion.grid import grid_around
    from siting.readers.resources import demo_dir
    from siting.readers.scenario import load_scenario
    from siting.readers.site_points import (
        grid_nodes_in_sites,
        site_boundary_points,
        site_sample_points,
    )

    demo = demo_dir()
    with tempfile.TemporaryDirectory() as tmp:
        work = Path(tmp) / "inputs"
        shutil.copytree(demo, work)
        base = _screen_seconds(work / "scenario.toml", Path(tmp) / "demo_out")
        print(f"demo (4 sites)      {base:7.1f} s   ratio 1.0")
        text = (work / "scenario.toml").read_text(encoding="utf-8")
        for n in args.sites:
            _layer(demo, n, work / f"habitats_{n}.gpkg")
            scenario = work / f"scenario_{n}.toml"
            scenario.write_text(
                text.replace('file = "habitats.gpkg"', f'file = "habitats_{n}.gpkg"'),
                encoding="utf-8",
            )
            seconds = _screen_seconds(scenario, Path(tmp) / f"out_{n}")
            print(
                f"{n:6d} sites        {seconds:7.1f} s   ratio {seconds / base:5.1f}   "
                f"{1000 * seconds / n:5.2f} ms per site"
            )
        n = max(args.sites)
        loaded = load_scenario(work / f"scenario_{n}.toml")
        geoms = gpd.read_file(work / f"habitats_{n}.gpkg").geometry.to_numpy()
        sources = [(s.x, s.y) for s in loaded.sources]
        grid = grid_around(
            [s[0] for s in sources],
            [s[1] for s in sources],
            loaded.grid.margin_m,
            loaded.grid.spacing_m,
            loaded.crs,
        )
        start = time.perf_counter()
        site_sample_points(
            geoms, [s[0] for s in sources], [s[1] for s in sources], loaded.grid.spacing_m
        )
        site_boundary_points(geoms, 10.0)
        grid_nodes_in_sites(geoms, grid)
        fast = time.perf_counter() - start
        start = time.perf_counter()
        _per_site_baseline(geoms, sources, loaded.grid.spacing_m, grid)
        slow = time.perf_counter() - start
        print(
            f"site sampling, {n} sites: vectorised {fast:6.2f} s, per-site loop {slow:6.2f} s,"
            f" ratio {slow / fast:5.1f}x"
        )


if __name__ == "__main__":
    main()
