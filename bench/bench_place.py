"""Placement search speed: positions per second, against a full screening run per position.

    python bench/bench_place.py [--spacing 10] [--naive-samples 4]

Runs `siting place` on the invented demo holding (about 50 ha) for house H2, then times two
baselines in the same process, each on a few sampled positions and extrapolated to all:
the naive approach (a full screening run of the scenario with the house moved there) and a
direct evaluation of the house at the site points only (the same answer without the kernel).
Prints seconds, positions per second and the ratios.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from siting.readers.resources import demo_dir
from siting.readers.site_points import site_outline_points
from siting.runs.placing import place
from siting.runs.screening_inputs import prepare
from siting.runs.screening_sites import BOUNDARY_SPACING_M
from siting.runs.screening_sources import _source_elements


def naive_seconds_per_position(prep, house_id: str, positions, samples: int) -> float:
    """Seconds per position of evaluating the house directly at every site point."""
    house = next(s for s in prep.scenario.sources if s.id == house_id)
    _, px, py = site_outline_points(prep.sites.geometry, BOUNDARY_SPACING_M)
    pick = positions.iloc[np.linspace(0, len(positions) - 1, samples).astype(int)]
    start = time.perf_counter()
    for x, y in zip(pick["x"], pick["y"]):
        elements, _ = _source_elements(house.model_copy(update={"x": x, "y": y}))
        prep.unit_concentration_ug_m3(house_id, elements, px, py)
    return (time.perf_counter() - start) / samples


def full_screen_seconds_per_position(
    scenario_path, house_id: str, positions, samples: int
) -> float:
    """Seconds per position of a full `screen` run with the house moved there."""
    from siting.readers.scenario import load_scenario
    from siting.runs.screening import screen

    scenario = load_scenario(scenario_path)
    pick = positions.iloc[np.linspace(0, len(positions) - 1, samples).astype(int)]
    start = time.perf_counter()
    for x, y in zip(pick["x"], pick["y"]):
        moved = [
            s.model_copy(update={"x": x, "y": y}) if s.id == house_id else s
            for s in scenario.sources
        ]
        screen(scenario.model_copy(update={"sources": moved}))
    return (time.perf_counter() - start) / samples


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--spacing", type=float, default=10.0)
    parser.add_argument("--naive-samples", type=int, default=2)
    args = parser.parse_args()
    scenario = demo_dir() / "scenario.toml"
    start = time.perf_counter()
    result = place(scenario, "H2", spacing_m=args.spacing)
    total_s = time.perf_counter() - start
    n = len(result.positions)
    prep = prepare(scenario)
    naive_each_s = naive_seconds_per_position(prep, "H2", result.positions, args.naive_samples)
    t = result.timings_s
    print(
        f"demo holding: {result.holding.area / 1e4:.1f} ha, allowed {result.allowed_area.area / 1e4:.1f} ha, "
        f"{n:,} positions at {args.spacing:g} m, {t['site_points']:,} site points, "
        f"{len(prep.sites)} sites"
    )
    print(f"{'':28}{'seconds':>10}{'positions/s':>14}")
    print(f"{'placement search (kernel)':28}{total_s:>10.2f}{n / total_s:>14,.0f}")
    print(f"{'  of which kernel':28}{t['kernel_s']:>10.2f}")
    full_each_s = full_screen_seconds_per_position(
        scenario, "H2", result.positions, args.naive_samples
    )
    for label, each_s in (
        ("naive: full screen each", full_each_s),
        ("direct at site points each", naive_each_s),
    ):
        print(
            f"{label:28}{each_s * n:>10.1f}{1 / each_s:>14,.1f}"
            f"   (extrapolated from {args.naive_samples} positions)"
        )
    print(
        f"ratio naive full screen / kernel: {full_each_s * n / total_s:,.0f}x; "
        f"direct at site points / kernel: {naive_each_s * n / total_s:,.0f}x"
    )


if __name__ == "__main__":
    main()
